#!/usr/bin/python3
"""Independent exact reference for the probe's per-item overlap (tidemark issue 4).

Builds the test inputs from real open texts in Debian packages and computes, with
Python sets of token tuples (no hashing, no Bloom filter, nothing shared with the
C++ code), each item's n-gram count, hits, hit fraction, token coverage and longest
matched run.

  corpus: The Collaborative International Dictionary of English (GCIDE 0.48, package
          dict-gcide, /usr/share/dictd/gcide.dict.dz, a gzip-compatible dictzip file),
          which quotes the King James Bible among much else; split into documents of
          40 paragraphs.
  items:  King James Bible verses (package bible-kjv, `bible -f`), and the sentences
          of the US Declaration of Independence (package miscfiles,
          /usr/share/state/us-declaration.gz).

Tokenizer (text rules version 2, docs/text_rules.md): NFKC_Casefold, approximated here
as NFKC(casefold(NFKC(s))) minus default-ignorable code points (read from Unicode's
DerivedCoreProperties.txt); letters, marks and numbers form words; Han, Hiragana,
Katakana and Hangul characters are single tokens; everything else separates.

Usage:
  exact_overlap.py inputs OUTDIR          writes OUTDIR/corpus.jsonl, OUTDIR/items.jsonl
  exact_overlap.py expect OUTDIR N        writes OUTDIR/expected-N.tsv: id, tokens,
                                          ngrams, hits, hit fraction, coverage,
                                          longest run (tab-separated, no header)
"""
import gzip
import json
import os
import re
import subprocess
import sys
import unicodedata

ASCII_WORD = re.compile(r"[a-z0-9]+")
DERIVED = "/usr/share/unicode/DerivedCoreProperties.txt"


def load_default_ignorables():
    out = set()
    with open(DERIVED, encoding="utf-8") as f:
        for line in f:
            line = line.split("#", 1)[0].strip()
            if not line:
                continue
            cps, prop = [x.strip() for x in line.split(";")[:2]]
            if prop != "Default_Ignorable_Code_Point":
                continue
            if ".." in cps:
                a, b = cps.split("..")
                out.update(range(int(a, 16), int(b, 16) + 1))
            else:
                out.add(int(cps, 16))
    return out


IGNORABLE = None


def single_char_token(cp):
    return (0x4E00 <= cp <= 0x9FFF or 0x3400 <= cp <= 0x4DBF or 0x20000 <= cp <= 0x323AF
            or 0xF900 <= cp <= 0xFAFF or 0x3040 <= cp <= 0x309F or 0x30A0 <= cp <= 0x30FF
            or 0x31F0 <= cp <= 0x31FF or 0xAC00 <= cp <= 0xD7AF or 0x1100 <= cp <= 0x11FF
            or 0x3130 <= cp <= 0x318F)


def tokenize(text):
    if text.isascii():
        return ASCII_WORD.findall(text.lower())
    global IGNORABLE
    if IGNORABLE is None:
        IGNORABLE = load_default_ignorables()
    s = unicodedata.normalize("NFKC", text)
    s = unicodedata.normalize("NFKC", s.casefold())
    s = "".join(c for c in s if ord(c) not in IGNORABLE)
    toks, cur = [], []
    for c in s:
        cat = unicodedata.category(c)[0]
        if cat in "LMN":
            if single_char_token(ord(c)) and cat != "M":
                if cur:
                    toks.append("".join(cur))
                    cur = []
                toks.append(c)
            else:
                cur.append(c)
        elif cur:
            toks.append("".join(cur))
            cur = []
    if cur:
        toks.append("".join(cur))
    return toks


def make_inputs(outdir):
    os.makedirs(outdir, exist_ok=True)
    with gzip.open("/usr/share/dictd/gcide.dict.dz", "rt", encoding="utf-8",
                   errors="replace") as f:
        paras = [p for p in f.read().split("\n\n") if p.strip()]
    with open(os.path.join(outdir, "corpus.jsonl"), "w", encoding="utf-8") as f:
        for i in range(0, len(paras), 40):
            f.write(json.dumps({"id": f"gcide-{i // 40}", "text": "\n\n".join(paras[i:i + 40])},
                               ensure_ascii=False) + "\n")
    items = []
    verses = subprocess.run(["bible", "-f", "gen1:1-gen50:26", "ps1:1-ps150:6",
                             "prov1:1-prov31:31", "matt1:1-matt28:20", "john1:1-john21:25"],
                            capture_output=True, text=True, check=True).stdout
    for line in verses.splitlines():
        m = re.match(r"^(\S+)\s+(.*)$", line.strip())
        if m:
            items.append({"id": "kjv:" + m.group(1), "text": m.group(2)})
    with gzip.open("/usr/share/state/us-declaration.gz", "rt", encoding="utf-8",
                   errors="replace") as f:
        decl = re.sub(r"\s+", " ", f.read())
    for k, sent in enumerate(re.split(r"(?<=[.;:])\s+", decl)):
        if sent.strip():
            items.append({"id": f"decl:{k}", "text": sent.strip()})
    with open(os.path.join(outdir, "items.jsonl"), "w", encoding="utf-8") as f:
        for it in items:
            f.write(json.dumps(it, ensure_ascii=False) + "\n")


def expect(outdir, n):
    grams = set()
    with open(os.path.join(outdir, "corpus.jsonl"), encoding="utf-8") as f:
        for line in f:
            t = tokenize(json.loads(line)["text"])
            for i in range(len(t) - n + 1):
                grams.add(tuple(t[i:i + n]))
    with open(os.path.join(outdir, "items.jsonl"), encoding="utf-8") as f, \
            open(os.path.join(outdir, f"expected-{n}.tsv"), "w", encoding="utf-8") as out:
        for line in f:
            it = json.loads(line)
            t = tokenize(it["text"])
            ng = max(0, len(t) - n + 1)
            covered = [False] * len(t)
            hits = 0
            for i in range(ng):
                if tuple(t[i:i + n]) in grams:
                    hits += 1
                    for k in range(i, i + n):
                        covered[k] = True
            longest = run = 0
            for c in covered:
                run = run + 1 if c else 0
                longest = max(longest, run)
            out.write("\t".join([
                it["id"], str(len(t)), str(ng), str(hits),
                repr(hits / ng if ng else 0.0),
                repr(sum(covered) / len(t) if t else 0.0), str(longest)]) + "\n")


if __name__ == "__main__":
    if sys.argv[1] == "inputs":
        make_inputs(sys.argv[2])
    elif sys.argv[1] == "expect":
        expect(sys.argv[2], int(sys.argv[3]))
    else:
        sys.exit(__doc__)
