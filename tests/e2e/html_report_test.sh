#!/usr/bin/env bash
# The HTML report of the demo audit, rendered in a real headless browser (Debian's
# chromium): the page loads from a file with no network, has the expected sections,
# references no external asset, and a screenshot is kept as a test artefact.
# Usage: html_report_test.sh TIDEMARK SOURCE_DIR SCRATCH_DIR ARTEFACT_DIR
set -euo pipefail
tm="$1"; src="$2"; work="$3"; art="$4"
rm -rf "$work"; mkdir -p "$work" "$art"
browser=/usr/bin/chromium
[[ -x $browser ]] || { echo "chromium missing: run scripts/setup.sh"; exit 1; }

"$tm" -q index build -o "$work/index" --field title --field text --id-field id "$src/data/demo/corpus"
"$tm" -q probe --plan "$src/data/demo/audit.toml" -i "$work/index" -o "$work/report" --evidence \
  --results tidequiz="$src/data/demo/model_results.jsonl" > /dev/null
page="$work/report/report.html"

# Self-contained: no script, no external stylesheet, image or link target.
if grep -Eqi '<script|<link|src=|https?://' "$page"; then
  echo "report.html references something outside itself:"
  grep -Eoi '<script[^>]*>|<link[^>]*>|src="[^"]*"|https?://[^" <]*' "$page" | head
  exit 1
fi

flags=(--headless --no-sandbox --disable-gpu --disable-quic --no-first-run
       --disable-background-networking --disable-component-update --disable-sync
       --user-data-dir="$work/profile")
timeout 120 "$browser" "${flags[@]}" --dump-dom "file://$page" > "$work/dom.html" 2> "$work/dump.err"
timeout 120 "$browser" "${flags[@]}" --window-size=1200,3000 --screenshot="$art/report.png" \
  "file://$page" > /dev/null 2> "$work/shot.err"
[[ -s "$art/report.png" ]] || { echo "no screenshot"; cat "$work/shot.err"; exit 1; }
cp "$page" "$art/report.html"
# Page errors (a failed load, a bad URL) show up as console errors on stderr.
if grep -E "ERR_|Uncaught|net::" "$work/dump.err" "$work/shot.err"; then
  echo "browser reported page errors"; exit 1
fi

/usr/bin/python3 - "$work/dom.html" <<'PY'
import sys
from html.parser import HTMLParser

class P(HTMLParser):
    def __init__(self):
        super().__init__()
        self.ids, self.svgs, self.marks, self.text = set(), 0, 0, []
    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if "id" in a: self.ids.add(a["id"])
        if tag == "svg": self.svgs += 1
        if tag == "mark": self.marks += 1
    def handle_data(self, d): self.text.append(d)

p = P()
p.feed(open(sys.argv[1], encoding="utf-8").read())
text = " ".join(p.text)
missing = [i for i in ("caution", "rates", "impact", "bench-0", "bench-1", "bench-2") if i not in p.ids]
assert not missing, f"sections missing from the rendered page: {missing}"
assert "not proof of a clean model" in text, "caution missing"
assert p.svgs >= 4, f"{p.svgs} charts (want the whisker chart and a histogram per benchmark)"
assert p.marks >= 11, f"{p.marks} highlighted spans"
for name in ("tidequiz", "harborread", "polyglot", "Most contaminated items", "evidence:"):
    assert name in text, f"{name!r} not on the page"
print(f"html: sections ok, {p.svgs} charts, {p.marks} highlighted spans")
PY
echo "html e2e: ok (screenshot: $art/report.png)"
