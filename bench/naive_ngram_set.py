#!/usr/bin/python3
"""Naive baseline for index_bench: a Python set of hashed word 13-grams.

Reads a JSON Lines file, lower-cases each record's "text", splits it into runs of
letters and digits, hashes every 13-gram with XXH3-64 (python3-xxhash) and adds the
hash to one set. Prints the number of distinct 13-grams. No spilling, no counts.
"""
import json
import re
import sys

import xxhash

word = re.compile(r"[^\W_]+")
seen = set()
with open(sys.argv[1], encoding="utf-8") as f:
    for line in f:
        words = word.findall(json.loads(line)["text"].lower())
        for i in range(len(words) - 12):
            seen.add(xxhash.xxh3_64_intdigest(" ".join(words[i:i + 13])))
print(len(seen))
