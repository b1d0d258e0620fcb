#!/usr/bin/python3
"""Independent check of an evidence file (tests/unit/evidence/evidence_test.cc).

Reads the corpus file itself (gzip module for .gz), goes to each reported offset,
decodes the record with Python's json module and re-tokenizes the reported span with
its own simple tokenizer (case fold, runs of letters/digits); shares no code with
tidemark. Usage:
  evidence_check.py BENCH.jsonl CORPUS[.gz] EVIDENCE.jsonl   -> 'ok N' or a problem
  evidence_check.py pairs BENCH.jsonl CORPUS                  -> 'ITEM RECORD' lines
"""
import gzip
import json
import re
import sys

N = 13
WORD = re.compile(r"[^\W_]+")


def toks(s):
    return WORD.findall(s.casefold())


def read(path):
    return gzip.open(path).read() if path.endswith(".gz") else open(path, "rb").read()


def items(bench):
    out = {}
    for line in open(bench, encoding="utf-8"):
        o = json.loads(line)
        out[o["id"]] = toks(o["question"])
    return out


def contiguous_in(sub, seq):
    return any(seq[i:i + len(sub)] == sub for i in range(len(seq) - len(sub) + 1))


def check(bench, corpus, evidence):
    its = items(bench)
    data = read(corpus)
    n = 0
    for raw in open(evidence, encoding="utf-8"):
        e = json.loads(raw)
        if e["type"] != "occurrence":
            continue
        n += 1
        where = "%s line %d" % (e["id"], e["line"])
        start = e["line_offset"]
        if start != 0 and data[start - 1:start] != b"\n":
            return print(where + ": line_offset is not a line start")
        end = data.find(b"\n", start)
        rec = json.loads(data[start:end if end >= 0 else len(data)])
        if rec["id"] != e["record_id"]:
            return print(where + ": record id %s != %s" % (rec["id"], e["record_id"]))
        text = rec["text"].encode("utf-8")
        span = text[e["text_begin"]:e["text_end"]].decode("utf-8")
        st = toks(span)
        if len(st) != e["tokens"] or len(st) < N:
            return print(where + ": span has %d tokens, reported %d" % (len(st), e["tokens"]))
        if not contiguous_in(st, its[e["id"]]):
            return print(where + ": span tokens are not a run of the item: " + span)
        rawspan = data[e["raw_begin"]:e["raw_end"]].decode("utf-8")
        if toks(json.loads('"' + rawspan + '"')) != st:
            return print(where + ": raw file bytes do not hold the span: " + rawspan)
        snip = e["snippet"].encode("utf-8")
        a, b = e["snippet_match"]
        if snip[a:b] != text[e["text_begin"]:e["text_end"]]:
            return print(where + ": snippet does not hold the span")
    print("ok", n)


def pairs(bench, corpus):
    """Every (item, record) pair sharing a 13-gram."""
    grams = {}
    for i, t in items(bench).items():
        for k in range(len(t) - N + 1):
            grams.setdefault(tuple(t[k:k + N]), set()).add(i)
    out = set()
    for line in read(corpus).split(b"\n"):
        if not line.strip():
            continue
        rec = json.loads(line)
        t = toks(rec["text"])
        for k in range(len(t) - N + 1):
            for i in grams.get(tuple(t[k:k + N]), ()):
                out.add((i, rec["id"]))
    for i, r in sorted(out):
        print(i, r)


if __name__ == "__main__":
    if sys.argv[1] == "pairs":
        pairs(sys.argv[2], sys.argv[3])
    else:
        check(sys.argv[1], sys.argv[2], sys.argv[3])
