#!/usr/bin/python3
"""Independent reference for tidemark's text rules, version 1 (docs/text_rules.md).

Built only on Python's unicodedata (Unicode 14.0 in Debian 12) and the Unicode 15.0
data files of package unicode-data; it shares no code with the C++ tokenizer.

Normalization: drop Default_Ignorable_Code_Point (DerivedCoreProperties.txt), then
NFKC, full case fold (str.casefold), NFKC again, repeated until stable. With
--strip-accents: NFD, drop Mn, NFC.
Clusters: a character starts a new cluster unless its own normalization is empty or
begins with a mark (M*), a character of non-zero canonical combining class, or a
Hangul medial/final jamo. Each cluster is normalized on its own and the result is
checked against normalizing the whole record.
Tokens: L*/N* form words, M* and Hangul medial/final jamo join the token before them,
letters/numbers in the CJK blocks are tokens of their own, everything else separates.
A token's span is from the first to the last byte of the clusters it came from.

Input (stdin or a file): records framed as "<byte length>\\n<bytes>\\n".
Output: per record "R <index> <tokens> <invalid bytes> <flags>" then one line per token
"<begin> <end> <normalized UTF-8 as hex>". Flags: "u15" = the record holds a character
new in Unicode 15.0 (unknown to unicodedata 14.0), "cm" = cluster-by-cluster
normalization differs from whole-record normalization; "-" = none.
"""
import codecs
import sys
import unicodedata

UCD = "/usr/share/unicode/"


def load_ranges(path, want):
    out = set()
    with open(path, encoding="utf-8") as f:
        for line in f:
            line = line.split("#", 1)[0].strip()
            if not line:
                continue
            fields = [x.strip() for x in line.split(";")]
            if not want(fields):
                continue
            r = fields[0].split("..")
            lo = int(r[0], 16)
            hi = int(r[-1], 16)
            out.update(range(lo, hi + 1))
    return out


DEFAULT_IGNORABLE = load_ranges(
    UCD + "DerivedCoreProperties.txt", lambda f: f[1] == "Default_Ignorable_Code_Point")
NEW_IN_15 = load_ranges(UCD + "DerivedAge.txt", lambda f: f[1] == "15.0")

# Blocks.txt (Unicode 15.0) ranges whose letters and numbers are one-character tokens.
CJK_BLOCKS = [
    (0x1100, 0x115F),    # Hangul Jamo (initial consonants)
    (0x2E80, 0x2FDF),    # CJK Radicals Supplement, Kangxi Radicals
    (0x3000, 0x303F),    # CJK Symbols and Punctuation
    (0x3040, 0x309F),    # Hiragana
    (0x30A0, 0x30FF),    # Katakana
    (0x3130, 0x318F),    # Hangul Compatibility Jamo
    (0x3190, 0x319F),    # Kanbun
    (0x31F0, 0x31FF),    # Katakana Phonetic Extensions
    (0x3200, 0x32FF),    # Enclosed CJK Letters and Months
    (0x3300, 0x33FF),    # CJK Compatibility
    (0x3400, 0x4DBF),    # CJK Unified Ideographs Extension A
    (0x4DC0, 0x4DFF),    # Yijing Hexagram Symbols
    (0x4E00, 0x9FFF),    # CJK Unified Ideographs
    (0xA960, 0xA97F),    # Hangul Jamo Extended-A
    (0xAC00, 0xD7AF),    # Hangul Syllables
    (0xD7B0, 0xD7FF),    # Hangul Jamo Extended-B
    (0xF900, 0xFAFF),    # CJK Compatibility Ideographs
    (0x16FE0, 0x16FFF),  # Ideographic Symbols and Punctuation
    (0x1AFF0, 0x1AFFF),  # Kana Extended-B
    (0x1B000, 0x1B0FF),  # Kana Supplement
    (0x1B100, 0x1B12F),  # Kana Extended-A
    (0x1B130, 0x1B16F),  # Small Kana Extension
    (0x20000, 0x2FFFF),  # Supplementary Ideographic Plane
    (0x30000, 0x3FFFF),  # Tertiary Ideographic Plane
]


def in_cjk_block(cp):
    return any(lo <= cp <= hi for lo, hi in CJK_BLOCKS)


def hangul_medial_or_final(cp):
    return 0x1160 <= cp <= 0x11FF or 0xD7B0 <= cp <= 0xD7FF


def drop_ignorable(s):
    return "".join(c for c in s if ord(c) not in DEFAULT_IGNORABLE)


def nfkc_casefold(s, strip):
    t = drop_ignorable(s)
    for _ in range(4):
        u = drop_ignorable(unicodedata.normalize("NFKC", unicodedata.normalize("NFKC", t).casefold()))
        if u == t:
            break
        t = u
    if strip:
        t = unicodedata.normalize(
            "NFC", "".join(c for c in unicodedata.normalize("NFD", t)
                           if unicodedata.category(c) != "Mn"))
    return t


_starts = {}


def starts_cluster(c):
    r = _starts.get(c)
    if r is None:
        d = drop_ignorable(unicodedata.normalize("NFKD", unicodedata.normalize("NFKD", c).casefold()))
        if not d:
            r = False
        else:
            f = d[0]
            r = (unicodedata.combining(f) == 0 and not unicodedata.category(f).startswith("M")
                 and not hangul_medial_or_final(ord(f)))
        _starts[c] = r
    return r


SEP, WORD, ATTACH, IDEO = range(4)
_class = {}


def char_class(c):
    r = _class.get(c)
    if r is None:
        cat = unicodedata.category(c)
        if cat[0] in "LN":
            if hangul_medial_or_final(ord(c)):
                r = ATTACH
            else:
                r = IDEO if in_cjk_block(ord(c)) else WORD
        elif cat[0] == "M":
            r = ATTACH
        else:
            r = SEP
        _class[c] = r
    return r


_errors = []


def _record_error(e):
    _errors.append((e.start, e.end))
    return ("\ufffd", e.end)


codecs.register_error("tidemark_reference", _record_error)


def decode(data):
    """Characters with their byte offsets; ill-formed subparts become U+FFFD."""
    _errors.clear()
    text = data.decode("utf-8", "tidemark_reference")
    out = []
    pos = 0
    k = 0
    invalid = 0
    for ch in text:
        if k < len(_errors) and _errors[k][0] == pos:
            n = _errors[k][1] - _errors[k][0]
            invalid += n
            k += 1
        else:
            n = len(ch.encode("utf-8"))
        out.append((ch, pos, n))
        pos += n
    assert pos == len(data)
    return out, invalid


_norm_cache = {}


def tokenize(data, strip):
    chars, invalid = decode(data)
    flags = []
    if any(ord(ch) in NEW_IN_15 for ch, _, _ in chars):
        flags.append("u15")
    clusters = []  # (text, begin, end)
    for ch, pos, n in chars:
        if clusters and not (ch < "\x80" or starts_cluster(ch)):
            t, b, _ = clusters[-1]
            clusters[-1] = (t + ch, b, pos + n)
        else:
            clusters.append((ch, pos, pos + n))
    pieces = []
    for t, b, e in clusters:
        key = (t, strip)
        nt = _norm_cache.get(key)
        if nt is None:
            nt = nfkc_casefold(t, strip)
            _norm_cache[key] = nt
        pieces.append((nt, b, e))
    whole = nfkc_casefold("".join(ch for ch, _, _ in chars), strip)
    if "".join(p for p, _, _ in pieces) != whole:
        flags.append("cm")
    tokens = []
    cur = None  # [text, begin, end, is_ideograph]
    for nt, b, e in pieces:
        for c in nt:
            k = char_class(c)
            if k == SEP:
                if cur:
                    tokens.append(cur)
                cur = None
                continue
            if k == IDEO:
                if cur:
                    tokens.append(cur)
                cur = [c, b, e, True]
                continue
            if k == WORD and cur and cur[3]:
                tokens.append(cur)
                cur = None
            if cur is None:
                cur = [c, b, e, False]
            else:
                cur[0] += c
                cur[2] = e
    if cur:
        tokens.append(cur)
    return tokens, invalid, flags


def read_records(f):
    while True:
        header = f.readline()
        if not header:
            return
        n = int(header)
        data = f.read(n)
        f.read(1)
        yield data


def main():
    strip = "--strip-accents" in sys.argv[1:]
    paths = [a for a in sys.argv[1:] if not a.startswith("--")]
    src = open(paths[0], "rb") if paths else sys.stdin.buffer
    out = sys.stdout
    for i, data in enumerate(read_records(src)):
        tokens, invalid, flags = tokenize(data, strip)
        out.write("R %d %d %d %s\n" % (i, len(tokens), invalid, ",".join(flags) or "-"))
        for t, b, e, _ in tokens:
            out.write("%d %d %s\n" % (b, e, t.encode("utf-8").hex()))


if __name__ == "__main__":
    main()
