#!/usr/bin/python3
"""Seeded synthetic English-like JSON Lines corpus, for benchmarks.

Each line is {"id": ..., "text": ..., "meta": {...}}; documents have 200-2000 words
(log-uniform), drawn Zipf-like (weight 1/rank, Zipf 1949) from a vocabulary: ~150
common English function words first, then the words of /usr/share/dict/words (or
/usr/share/dict/web2, or a small built-in list) in a seeded random order. Sentences of
6-28 words get a capital letter and a full stop, some a comma. The same seed gives
byte-identical files.

Usage: scripts/gen_corpus.py --out-dir DIR [--files N] [--total-mb M] [--zstd]
       [--keep-plain] [--seed S] [--jobs J] [--prefix NAME]
Files are DIR/NAME-00000.jsonl (or .jsonl.zst with --zstd, compressed with the zstd
CLI; --keep-plain keeps the .jsonl too). Stdlib only; each file is made of ~8 MiB
chunks with their own seeded generator, produced in parallel (--jobs processes) and
written in order.
"""
import argparse
import bisect
import itertools
import json
import math
import multiprocessing
import os
import random
import subprocess
import sys

COMMON = (
    "the of and to a in is that it was for on are as with his they be at one have this "
    "from or had by not word but what some we can out other were all there when up use "
    "your how said an each she which do their time if will way about many then them "
    "write would like so these her long make thing see him two has look more day could "
    "go come did number sound no most people my over know water than call first who may "
    "down side been now find any new work part take get place made live where after back "
    "little only round man year came show every good me give our under name very through "
    "just form sentence great think say help low line differ turn cause much mean before "
    "move right boy old too same tell does set three want air well also play small end "
    "put home read hand port large spell add even land here must big high such follow act "
    "why ask men change went light kind off need house picture try us again animal point"
).split()

BUILTIN = (
    "river harbour market winter summer garden window letter mountain valley forest "
    "station engine bridge doctor teacher village city council meeting report evidence "
    "language history science music number problem question answer system method result "
    "paper model data table figure chapter section record measure value level price cost"
).split()


def load_vocabulary(seed):
    words = None
    for path in ("/usr/share/dict/words", "/usr/share/dict/web2"):
        if os.path.exists(path):
            with open(path, encoding="utf-8", errors="replace") as f:
                words = [w.strip() for w in f if w.strip().isalpha() and w.strip().isascii()]
            break
    if not words:
        words = list(BUILTIN)
    common = set(COMMON)
    rest = sorted(set(w.lower() for w in words) - common)
    random.Random(seed).shuffle(rest)
    vocab = COMMON + rest
    # Zipf weights 1/rank as cumulative sums, for random.choices(cum_weights=...).
    cum = list(itertools.accumulate(1.0 / r for r in range(1, len(vocab) + 1)))
    return vocab, cum


def make_document(rng, vocab, cum):
    n = int(math.exp(rng.uniform(math.log(200), math.log(2000))))
    words = rng.choices(vocab, cum_weights=cum, k=n)
    out = []
    i = 0
    while i < n:
        k = rng.randint(6, 28)
        sentence = words[i:i + k]
        i += k
        sentence[0] = sentence[0].capitalize()
        if len(sentence) > 8 and rng.random() < 0.4:
            c = rng.randint(3, len(sentence) - 3)
            sentence[c] += ","
        out.append(" ".join(sentence) + ".")
    return " ".join(out), n


CHUNK_BYTES = 8 << 20  # each chunk has its own seeded RNG, so chunks run in parallel

_VOCAB = None


def make_chunk(job):
    """Documents of about CHUNK_BYTES for (file, chunk); returns (text, bytes, docs)."""
    global _VOCAB
    target, seed, file_index, chunk_index, vocab_seed = job
    if _VOCAB is None:
        _VOCAB = load_vocabulary(vocab_seed)
    vocab, cum = _VOCAB
    rng = random.Random((seed * 1000003 + file_index) * 1000003 + chunk_index)
    lines = []
    size = 0
    doc = 0
    while size < target:
        text, n = make_document(rng, vocab, cum)
        doc += 1
        line = json.dumps({
            "id": "f%05d-c%05d-d%05d" % (file_index, chunk_index, doc),
            "text": text,
            "meta": {"source": "synthetic", "words": n, "file": file_index},
        }) + "\n"
        lines.append(line)
        size += len(line)
    return "".join(lines), size, doc


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--out-dir", required=True)
    ap.add_argument("--files", type=int, default=1)
    ap.add_argument("--total-mb", type=float, default=100.0,
                    help="uncompressed size of all files together, MB (10^6 bytes)")
    ap.add_argument("--zstd", action="store_true", help="compress each file with the zstd CLI")
    ap.add_argument("--keep-plain", action="store_true", help="with --zstd, keep the .jsonl too")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--jobs", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--prefix", default="synth")
    args = ap.parse_args()
    if args.files < 1 or args.total_mb <= 0:
        ap.error("--files and --total-mb must be positive")
    os.makedirs(args.out_dir, exist_ok=True)
    per_file = int(args.total_mb * 1e6 / args.files)
    total = docs = 0
    compressors = []
    with multiprocessing.Pool(max(1, args.jobs)) as pool:
        for i in range(args.files):
            path = os.path.join(args.out_dir, "%s-%05d.jsonl" % (args.prefix, i))
            n_chunks = max(1, -(-per_file // CHUNK_BYTES))
            sizes = [per_file // n_chunks + (1 if k < per_file % n_chunks else 0)
                     for k in range(n_chunks)]
            jobs = [(sizes[k], args.seed, i, k, args.seed) for k in range(n_chunks)]
            with open(path, "w", encoding="utf-8") as f:
                for text, size, n in pool.imap(make_chunk, jobs):
                    f.write(text)
                    total += size
                    docs += n
            if args.zstd:
                cmd = ["zstd", "-q", "-f", "-3", "-T1", path, "-o", path + ".zst"]
                if not args.keep_plain:
                    cmd.insert(2, "--rm")
                compressors.append(subprocess.Popen(cmd))
                # At most --jobs compressors at a time.
                while len(compressors) >= max(1, args.jobs):
                    compressors.pop(0).wait()
    for c in compressors:
        if c.wait() != 0:
            sys.exit("gen_corpus: zstd failed")
    print("gen_corpus: %d files, %d documents, %.1f MB uncompressed, seed %d"
          % (args.files, docs, total / 1e6, args.seed), file=sys.stderr)


if __name__ == "__main__":
    main()
