#!/usr/bin/env bash
# End to end on the demo scenario (data/demo/, written by scripts/make_demo_data.py):
# every planted leak is found, every other judged item is clean, too-short items
# are reported apart, the evidence points at the right corpus documents, exit codes
# are the documented ones, and cleaning the vendor file drops exactly its leaks.
# Usage: demo_test.sh TIDEMARK SOURCE_DIR SCRATCH_DIR
set -euo pipefail
tm="$1"; src="$2"; work="$3"
rm -rf "$work"; mkdir -p "$work"
py=/usr/bin/python3

"$tm" -q index build -o "$work/index" --field title --field text --id-field id "$src/data/demo/corpus"
"$tm" -q probe --plan "$src/data/demo/audit.toml" -i "$work/index" -o "$work/report" --evidence \
  --results tidequiz="$src/data/demo/model_results.jsonl" > "$work/table.txt"
grep -q "caution: n-gram overlap finds verbatim" "$work/table.txt"

$py - "$src/data/demo/expected.json" "$work/report" <<'PY'
import json, sys
expected = json.load(open(sys.argv[1]))
out = sys.argv[2]
items = {(r["benchmark"], r["id"]): r for r in map(json.loads, open(out + "/items.jsonl"))}
planted = {(p["benchmark"], p["id"]): p for p in expected["planted"]}
short = {tuple(s.split("/")) for s in expected["too_short"]}
bad = []
for key, r in items.items():
    v = r["item"]["verdicts"]["gpt3"]
    if key in planted:
        if v != "contaminated": bad.append(f"planted leak not found: {key}")
    elif key in short:
        if v != "too_short": bad.append(f"short item not too_short: {key} {v}")
    elif v != "clean" or r["item"]["hits"] != 0:
        bad.append(f"clean item flagged: {key} {r['item']['hits']} hits")
for key in planted:
    if key not in items: bad.append(f"planted item missing from items.jsonl: {key}")
# Evidence: each planted leak occurs in the corpus document it was planted in.
occ = {}
for line in open(out + "/evidence.jsonl"):
    e = json.loads(line)
    if e.get("type") == "occurrence":
        occ.setdefault((e["benchmark"], e["id"]), set()).add(e["record_id"])
for key, p in planted.items():
    if p["corpus_doc"] not in occ.get(key, set()):
        bad.append(f"evidence for {key} does not name {p['corpus_doc']}: {occ.get(key)}")
report = json.load(open(out + "/report.json"))
assert report["schema_version"] == 1
assert "not proof of a clean model" in report["caution"]
rates = {b["name"]: b["scopes"][0]["rules"][0] for b in report["benchmarks"]}
for name in ("tidequiz", "harborread", "polyglot"):
    n = sum(1 for k in planted if k[0] == name)
    if rates[name]["contaminated"] != n:
        bad.append(f"{name}: {rates[name]['contaminated']} contaminated, {n} planted")
impact = json.load(open(out + "/impact.json"))
assert impact, "impact.json is empty"
if bad:
    print("\n".join(bad)); sys.exit(1)
print(f"demo: {len(planted)} planted leaks found, {len(items) - len(planted) - len(short)} clean, {len(short)} too short")
PY

# --fail-above: exit 3 when a rate is above the limit, 0 when none is.
set +e
"$tm" -q probe --plan "$src/data/demo/audit.toml" -i "$work/index" --fail-above 0.05 > /dev/null
rc=$?
[[ $rc -eq 3 ]] || { echo "--fail-above 0.05: exit $rc, want 3"; exit 1; }
"$tm" -q probe --plan "$src/data/demo/audit.toml" -i "$work/index" --fail-above 0.9 > /dev/null
rc=$?
[[ $rc -eq 0 ]] || { echo "--fail-above 0.9: exit $rc, want 0"; exit 1; }
# An index built with n=13 probed as n=8: exit 5, naming n.
"$tm" probe --plan "$src/data/demo/audit.toml" -i "$work/index" -n 8 > /dev/null 2> "$work/mismatch.err"
rc=$?
[[ $rc -eq 5 ]] || { echo "-n 8 on a 13-gram index: exit $rc, want 5"; cat "$work/mismatch.err"; exit 1; }
grep -q "index built with n=13, asked for n=8" "$work/mismatch.err"
# A rule published for 8-grams on a 13-gram index: usage error naming the n to build.
"$tm" probe --plan "$src/data/demo/audit.toml" -i "$work/index" -r palm > /dev/null 2> "$work/palm.err"
rc=$?
[[ $rc -eq 2 ]] || { echo "-r palm on a 13-gram index: exit $rc, want 2"; cat "$work/palm.err"; exit 1; }
grep -q -- "-n 8" "$work/palm.err" || { echo "palm error does not say -n 8:"; cat "$work/palm.err"; exit 1; }
# A missing benchmark file: exit 1 naming it.
"$tm" probe -i "$work/index" -b "$work/nope.jsonl" > /dev/null 2> "$work/missing.err"
rc=$?
[[ $rc -eq 1 ]] || { echo "missing benchmark: exit $rc, want 1"; exit 1; }
grep -q "nope.jsonl" "$work/missing.err"
set -e

# Vetting the vendor file: exactly its three quiz leaks are dropped.
"$tm" -q clean --benchmark "$src/data/demo/benchmarks/tidequiz.jsonl" \
  --benchmark-field question --benchmark-field /choices --benchmark-id id \
  --field prompt --field response --id-field uid --mode drop \
  -o "$work/vendor-clean" "$src/data/demo/vendor_finetune.jsonl"
$py - "$src/data/demo/expected.json" "$work/vendor-clean" "$src/data/demo/vendor_finetune.jsonl" <<'PY'
import json, sys, os
want = {v["uid"] for v in json.load(open(sys.argv[1]))["vendor_leaks"]}
log = [json.loads(l) for l in open(os.path.join(sys.argv[2], "tidemark-clean-log.jsonl"))]
got = {e.get("record_id") or e.get("id") for e in log if e.get("action") in ("drop", "dropped")}
assert got == want, f"dropped {got}, want {want}"
kept = [json.loads(l)["uid"] for l in open(os.path.join(sys.argv[2], "vendor_finetune.jsonl"))]
orig = [json.loads(l)["uid"] for l in open(sys.argv[3])]
assert kept == [u for u in orig if u not in want], "kept records differ"
print(f"clean: dropped {sorted(got)}")
PY
echo "demo e2e: ok"
