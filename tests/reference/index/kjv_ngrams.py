#!/usr/bin/python3
"""Independent reference for the index: the word n-gram multiset of a real text.

Reads the King James Bible from Debian's bible-kjv (`bible -f gen1:1-rev22:21`, one
verse per line, ASCII only), writes it as JSON Lines (one verse a record, with an
"id") to CORPUS, and prints for every distinct n-gram fingerprint
"<fp as 16 hex digits> <occurrences> <verses containing it>", in ascending order.

Shares no code with tidemark. For ASCII text the text rules (docs/text_rules.md)
reduce to: maximal runs of [A-Za-z0-9] are the words, lower-cased; token hash =
XXH3-64(word, seed) (python3-xxhash); fingerprint = fmix64(p ^ seed), where p is the
sum of the n token hashes h[j] * B^(n-1-j) mod 2^64, B = 0x9E3779B97F4A7C15, and fmix64
is MurmurHash3's 64-bit finalizer (text rules version 2). Python integers, no rolling.

usage: kjv_ngrams.py N SEED CORPUS [DUPLICATES]
DUPLICATES > 0 appends that many verses again (whole records repeated, and one
record with a verse twice inside it), so counts > 1 and docs < count occur.
"""
import json
import re
import subprocess
import sys

import xxhash

n = int(sys.argv[1])
seed = int(sys.argv[2])
corpus = sys.argv[3]
dups = int(sys.argv[4]) if len(sys.argv) > 4 else 0

text = subprocess.run(["bible", "-f", "gen1:1-rev22:21"], check=True,
                      capture_output=True).stdout.decode("ascii")
verses = [line for line in text.split("\n") if line.strip()]
records = list(verses)
for i in range(dups):
    records.append(verses[(i * 7919) % len(verses)])
if dups:
    records.append(verses[0] + " " + verses[0])

MASK = (1 << 64) - 1
B = 0x9E3779B97F4A7C15


def fmix64(k):
    k ^= k >> 33
    k = (k * 0xFF51AFD7ED558CCD) & MASK
    k ^= k >> 33
    k = (k * 0xC4CEB9FE1A85EC53) & MASK
    k ^= k >> 33
    return k


POWERS = [pow(B, n - 1 - j, 1 << 64) for j in range(n)]


def fingerprint(hashes):
    p = sum(h * b for h, b in zip(hashes, POWERS)) & MASK
    return fmix64(p ^ seed)


word = re.compile(r"[A-Za-z0-9]+")
counts = {}
docs = {}
with open(corpus, "w", encoding="ascii") as out:
    for i, rec in enumerate(records):
        out.write(json.dumps({"id": i, "text": rec}) + "\n")
        hashes = [xxhash.xxh3_64_intdigest(w.lower().encode("ascii"), seed=seed)
                  for w in word.findall(rec)]
        seen = set()
        for j in range(len(hashes) - n + 1):
            fp = fingerprint(hashes[j:j + n])
            counts[fp] = counts.get(fp, 0) + 1
            seen.add(fp)
        for fp in seen:
            docs[fp] = docs.get(fp, 0) + 1

for fp in sorted(counts):
    sys.stdout.write("%016x %d %d\n" % (fp, counts[fp], docs[fp]))
