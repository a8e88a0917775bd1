#!/usr/bin/env bash
# browser_report.sh — renders the demo's report.html in headless Chromium:
# every section and every chart must be in the rendered DOM with a non-empty
# SVG, the page must log no console message (no script runs, nothing is
# fetched: the page's Content-Security-Policy would log any attempt), and the
# screenshot must not be blank. The heat maps' colour legends read increasing
# ticks, the baseline days are hatched in the class-mix chart, and the
# reliability text explains both directions. The demo's page and a page of 12
# members with long names (invented, gen_many_members.py) are measured at
# 1280 and 700 px (page_layout.py): nothing past the page's edge except inside
# a scroll box, no label clipped by its chart, no two labels overlapping.
# The screenshot is kept at ARTIFACTS/report.png (and a half-scale copy at
# ARTIFACTS/report-small.png), the many-members page at ARTIFACTS/many-members.png.
# Usage: browser_report.sh CONCORD ARTIFACTS_DIR    (exit 77 = no Chromium: skipped)
set -euo pipefail
CONCORD=$1
ART=$2
HERE=$(cd "$(dirname "$0")" && pwd)
CHROMIUM=$(command -v chromium || command -v chromium-browser || true)
if [ -z "$CHROMIUM" ]; then
  echo "browser_report: no chromium installed (scripts/deps.sh installs it); skipped"
  exit 77
fi
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
mkdir -p "$ART"
"$CONCORD" demo --dir "$T/demo" > /dev/null
PAGE="file://$T/demo/report.html"
run_chromium() {
  timeout -k 10 600 "$CHROMIUM" --headless --no-sandbox --disable-gpu --disable-quic \
    --no-first-run --disable-background-networking --disable-component-update --disable-sync \
    --disable-extensions --hide-scrollbars --user-data-dir="$(mktemp -d -p "$T")" "$@"
}
run_chromium --enable-logging=stderr --v=0 --dump-dom "$PAGE" > "$T/dom.html" 2> "$T/chromium.log"
if grep -E ':CONSOLE|Refused to|Uncaught' "$T/chromium.log"; then
  echo "FAIL: the page logged console messages (above)" >&2
  exit 1
fi
run_chromium --window-size=1280,4000 --screenshot="$ART/report.png" "$PAGE" 2> /dev/null
run_chromium --window-size=1280,1800 --force-device-scale-factor=0.5 \
  --screenshot="$ART/report-small.png" "$PAGE" 2> /dev/null
python3 - "$T/dom.html" <<'PY'
import html.parser, sys
dom = open(sys.argv[1], encoding="utf-8").read()
sections = ["status", "daily", "slices", "pairs", "classmix", "reliability", "contested", "review"]
charts = ["chart-disagreement", "chart-mutual-information", "chart-entropy", "chart-accuracy",
          "chart-label-coverage", "chart-class-mix-psi", "chart-class-mix-daily",
          "heat-dis-baseline", "heat-dis-range", "heat-dis-last", "heat-kappa-baseline",
          "heat-kappa-range", "heat-kappa-last", "heat-q-baseline", "heat-q-range", "heat-q-last",
          "chart-class-mix", "chart-reliability", "chart-contested", "heat-confusion"]
lists = ["list-wrong", "list-helped", "list-hurt", "list-top-mi", "list-low-margin"]
class Dom(html.parser.HTMLParser):
    def __init__(self):
        super().__init__(); self.ids = {}; self.stack = []; self.marks = {}; self.tags = set()
    def handle_starttag(self, tag, attrs):
        a = dict(attrs); self.tags.add(tag)
        if "id" in a: self.ids[a["id"]] = tag
        for s in self.stack:
            if tag in ("rect", "circle", "line", "polyline", "text", "path"):
                self.marks[s] = self.marks.get(s, 0) + 1
        if tag == "svg": self.stack.append(a.get("id", "?"))
    def handle_endtag(self, tag):
        if tag == "svg" and self.stack: self.stack.pop()
d = Dom(); d.feed(dom)
bad = [s for s in sections if d.ids.get(s) != "section"]
bad += [f"{c}: no svg" for c in charts if d.ids.get(c) != "svg"]
bad += [f"{c}: {d.marks.get(c, 0)} marks" for c in charts if d.ids.get(c) == "svg" and d.marks.get(c, 0) < 8]
bad += [f"{l}: missing" for l in lists if l not in d.ids]
bad += [f"<{t}> in the page" for t in ("script", "img", "iframe", "link", "object") if t in d.tags]
# the slice section: a table row per packing line, and small charts per line
slice_charts = [i for i, t in d.ids.items() if i.startswith("chart-slice-") and t == "svg"]
if len(slice_charts) != 6: bad.append(f"slice charts: {len(slice_charts)}, expected 2 figures x 3 lines")
bad += [f"{c}: {d.marks.get(c, 0)} marks" for c in slice_charts if d.marks.get(c, 0) < 8]
for line in ("line-1", "line-2", "line-3"):
    if f'<th scope="row">{line}</th>' not in dom: bad.append(f"slice table: no row {line}")
for b in bad: print("FAIL:", b)
assert not bad
print(f"browser_report: {len(sections)} sections and {len(charts)} charts rendered "
      f"({sum(d.marks.get(c, 0) for c in charts)} SVG marks)")
PY
python3 - "$T/dom.html" <<'PY'
import html.parser, re, sys
dom = open(sys.argv[1], encoding="utf-8").read()
class Marks(html.parser.HTMLParser):
    def __init__(self):
        super().__init__(); self.svg = None; self.text = None; self.texts = {}; self.rects = {}
    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "svg": self.svg = a.get("id")
        elif self.svg and tag == "text": self.text = [a.get("class", ""), ""]
        elif self.svg and tag == "rect": self.rects.setdefault(self.svg, []).append(a)
    def handle_data(self, data):
        if self.text is not None: self.text[1] += data
    def handle_endtag(self, tag):
        if tag == "text" and self.text is not None:
            self.texts.setdefault(self.svg, []).append(self.text); self.text = None
        elif tag == "svg": self.svg = None
d = Marks(); d.feed(dom)
bad = []
# colour legends: the last three numeric tick texts of every heat map increase
# (the confusion matrix's read "0 ... 0 ... 1" before)
for svg, texts in d.texts.items():
    if not svg.startswith("heat-"): continue
    nums = [t for c, t in texts if "tick" in c.split() and re.fullmatch(r"-?\d+(\.\d+)?", t.strip())]
    ticks = [float(t) for t in nums[-3:]]
    if len(ticks) != 3 or not ticks[0] < ticks[1] < ticks[2]:
        bad.append(f"{svg}: legend ticks {nums[-3:]}")
conf = [t for c, t in d.texts.get("heat-confusion", []) if "tick" in c.split()]
if [t.strip() for t in conf[-4:-1]] != ["0.0", "0.5", "1.0"]:
    bad.append(f"heat-confusion: legend ticks {conf[-4:-1]}, expected 0.0, 0.5, 1.0")
# the demo's baseline is days 1-7: seven hatched columns in the class-mix chart
hatched = [r for r in d.rects.get("chart-class-mix-daily", []) if "base-day" in r.get("class", "")]
if len(hatched) != 7 or any(r.get("fill") != "url(#chart-class-mix-daily-over)" for r in hatched):
    bad.append(f"chart-class-mix-daily: {len(hatched)} hatched baseline columns, expected 7")
if 'id="chart-class-mix-daily-over"' not in dom:
    bad.append("chart-class-mix-daily: no hatch pattern")
rel = dom[dom.find('id="reliability"'):dom.find('id="contested"')]
for word in ("over-confident", "under-confident"):
    if word not in rel: bad.append(f"reliability: the text does not explain {word}")
for b in bad: print("FAIL:", b)
assert not bad
print("browser_report: legend ticks increase, 7 baseline columns hatched, reliability explains both directions")
PY
# layout: the demo's page and a page of 12 members with long names
python3 "$HERE/gen_many_members.py" "$T/many.jsonl" > "$T/members.txt"
"$CONCORD" ingest --db "$T/many.db" --model many-members --members "$(cat "$T/members.txt")" \
  --classes premium-grade,extra-grade,class-one,class-two,juice-grade,cull-grade "$T/many.jsonl" > /dev/null
"$CONCORD" baseline --db "$T/many.db" --model many-members --from 2026-05-29 --to 2026-06-02 > /dev/null
"$CONCORD" report --db "$T/many.db" --model many-members --format html -o "$T/many.html"
mkdir -p "$T/layout"
python3 "$HERE/page_layout.py" "$CHROMIUM" "$T/demo/report.html" "$T/layout" 1280 700
python3 "$HERE/page_layout.py" "$CHROMIUM" "$T/many.html" "$T/layout" 1280 700
run_chromium --window-size=1280,4000 --screenshot="$ART/many-members.png" "file://$T/many.html" 2> /dev/null
read -r w h colours sd < <(python3 "$HERE/png_stats.py" "$ART/report.png")
echo "browser_report: screenshot ${w}x${h}, $colours distinct colours, grey-level sd $sd"
python3 -c "import sys; w,h,c,sd=sys.argv[1:]; sys.exit(0 if int(c) > 50 and float(sd) > 10 else 1)" \
  "$w" "$h" "$colours" "$sd" || { echo "FAIL: the screenshot looks blank" >&2; exit 1; }
echo "browser_report: screenshot kept at $ART/report.png"
