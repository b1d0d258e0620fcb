#!/usr/bin/env bash
# The main job on the invented demo data (data/demo/, scripts/make_demo_data.py):
# build tidemark, index the demo corpus, probe three benchmarks against it with the
# evidence pass, and vet an invented vendor's fine-tuning file. Leaves everything in
# demo-out/ (or the folder given as $1). Installs what it needs on Debian 12.
set -euo pipefail
cd "$(dirname "$0")/.."
out="${1:-demo-out}"

scripts/setup.sh --build-only
cmake -S . -B build -G Ninja -DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
cmake --build build --target tidemark
tm=build/src/cli/tidemark

rm -rf "$out"
mkdir -p "$out"

echo
echo "== 1. index the corpus (3 files, JSONL and .jsonl.zst)"
"$tm" index build -o "$out/index" --field title --field text --id-field id data/demo/corpus

echo
echo "== 2. probe the benchmarks (plan: data/demo/audit.toml), with evidence"
set +e
"$tm" probe --plan data/demo/audit.toml -i "$out/index" -o "$out/report" --evidence \
  --results tidequiz=data/demo/model_results.jsonl
rc=$?
set -e
if [[ $rc -ne 0 ]]; then exit $rc; fi

echo
echo "== 3. vet third-party fine-tuning data against the quiz (no index needed)"
"$tm" clean --benchmark data/demo/benchmarks/tidequiz.jsonl \
  --benchmark-field question --benchmark-field /choices --benchmark-id id \
  --field prompt --field response --id-field uid --mode drop \
  -o "$out/vendor-clean" data/demo/vendor_finetune.jsonl

echo
echo "Reports: $out/report/ (report.json, report.html, summary.md, items.jsonl, items.csv, evidence.jsonl, impact.json)"
echo "Cleaned vendor data: $out/vendor-clean/ (with tidemark-clean-log.jsonl)"
echo "HTML report: $out/report/report.html"
