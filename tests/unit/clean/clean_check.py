#!/usr/bin/python3
"""Independent checks for the cleaning tests (tests/unit/clean/clean_test.cc).

Builds the test inputs from real text in Debian packages and re-checks tidemark's
output with its own simple tokenizer and Python's json module, sharing no code with
tidemark:
  * benchmark: KJV verses, `bible -f gen1:1-gen3:24` (package bible-kjv);
  * corpus: paragraphs of the GCIDE dictionary, /usr/share/dictd/gcide.dict.dz
    (package dict-gcide; Webster 1913 quotes the Bible).

Tokenizer here: Unicode case fold, then runs of letters/digits ([^\\W_]+). For this
English text it agrees with tidemark's NFKC_Casefold word rule.
"""
import gzip
import json
import re
import subprocess
import sys

N = 13
WORD = re.compile(r"[^\W_]+")


def toks(s):
    return WORD.findall(s.casefold())


def grams(tokens, n=N):
    return {tuple(tokens[i:i + n]) for i in range(len(tokens) - n + 1)}


def make_bench(out):
    text = subprocess.run(["bible", "-f", "gen1:1-gen3:24"], check=True,
                          capture_output=True, text=True).stdout
    with open(out, "w", encoding="utf-8") as f:
        for line in text.splitlines():
            ref, _, verse = line.partition(" ")
            if verse:
                f.write(json.dumps({"id": ref, "question": verse, "source": "KJV"}) + "\n")


def make_corpus(out):
    data = gzip.open("/usr/share/dictd/gcide.dict.dz").read().decode("utf-8", "replace")
    paras = data.split("\n\n")
    picked = [i for i, p in enumerate(paras)
              if re.search(r"Gen\. i", p) or i % 500 == 0]
    with open(out, "w", encoding="utf-8") as f:
        for k, i in enumerate(picked):
            rec = {"id": "gcide-%d" % i,
                   "meta": {"source": "gcide", "para": i, "note": "caf\u00e9 \"q\""},
                   "text": paras[i],
                   "tags": ["dict", str(k % 7)]}
            # Alternate escaped (\\uXXXX) and raw UTF-8 records, so the tool must
            # locate and decode JSON strings with escapes.
            f.write(json.dumps(rec, ensure_ascii=(k % 2 == 0)) + "\n")
            if k % 97 == 0:
                f.write("\n")  # a blank line: must survive byte for byte


def bench_grams(bench):
    out = {}
    for line in open(bench, encoding="utf-8"):
        o = json.loads(line)
        for g in grams(toks(o["question"])):
            out.setdefault(g, set()).add(o["id"])
    return out


def lines_of(path):
    with open(path, "rb") as f:
        return f.read().split(b"\n")


def audit(bench, corpus):
    """Prints the ids of corpus records sharing a 13-gram with the benchmark, and
    the benchmark ids found, one per line: 'record ID' / 'item ID'."""
    bg = bench_grams(bench)
    items = set()
    for raw in lines_of(corpus):
        if not raw.strip():
            continue
        o = json.loads(raw)
        hit = grams(toks(o["text"])) & bg.keys()
        if hit:
            print("record", o["id"])
            for g in hit:
                items |= bg[g]
    for i in sorted(items):
        print("item", i)


def compare(inp, out, log, mode):
    """Checks the cleaned file against the input: untouched lines byte-identical and
    in order; dropped/redacted lines are exactly those in the log; for redaction,
    every field but 'text' is unchanged (json module) and the text holds the
    replacement. Prints 'ok N M' (records in, lines changed) or the first problem."""
    logged = {}
    for raw in lines_of(log):
        if raw.strip():
            e = json.loads(raw)
            logged[e["line"]] = e
    a, b = lines_of(inp), lines_of(out)
    j = 0
    changed = 0
    for i, line in enumerate(a, start=1):
        e = logged.get(i)
        if e is None:
            if j >= len(b) or b[j] != line:
                print("line %d differs from output line %d" % (i, j + 1))
                return
            j += 1
            continue
        changed += 1
        if e["action"] == "drop":
            continue
        if mode != "redact":
            print("line %d: action %s in mode %s" % (i, e["action"], mode))
            return
        x, y = json.loads(line), json.loads(b[j])
        tx, ty = x.pop("text"), y.pop("text")
        if x != y:
            print("line %d: fields other than text changed" % i)
            return
        if "[REDACTED]" not in ty or tx == ty:
            print("line %d: text not redacted" % i)
            return
        j += 1
    if j != len(b):
        print("output has %d extra lines" % (len(b) - j))
        return
    print("ok", len(a), changed)


def subset(bench, clean_subset, found_items):
    """The clean subset must be exactly the benchmark lines whose id is not in
    found_items (a file of ids) and that have at least N tokens (shorter items
    cannot be judged, so they are never clean), byte for byte and in order."""
    found = set(open(found_items).read().split())
    want = [l for l in lines_of(bench) if l.strip() and json.loads(l)["id"] not in found
            and len(toks(json.loads(l)["question"])) >= N]
    got = [l for l in lines_of(clean_subset) if l.strip()]
    print("ok" if want == got else "subset differs: want %d got %d" % (len(want), len(got)),
          len(got))


if __name__ == "__main__":
    cmd = sys.argv[1]
    if cmd == "make-bench":
        make_bench(sys.argv[2])
    elif cmd == "make-corpus":
        make_corpus(sys.argv[2])
    elif cmd == "audit":
        audit(sys.argv[2], sys.argv[3])
    elif cmd == "compare":
        compare(sys.argv[2], sys.argv[3], sys.argv[4], sys.argv[5])
    elif cmd == "subset":
        subset(sys.argv[2], sys.argv[3], sys.argv[4])
    else:
        sys.exit("unknown command " + cmd)
