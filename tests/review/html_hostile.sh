#!/usr/bin/env bash
# html_hostile.sh — names that came from the logs (model, class and member
# names, ids, segments) full of markup, quotes and ampersands must reach the
# HTML page only as text, and the review's CSV and JSON must still parse.
# The two hostile segments make two slices: the page's slice table lists
# them escaped, and Chromium (when installed) reads them back as plain text.
# Usage: html_hostile.sh CONCORD
set -euo pipefail
CONCORD=$1
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
python3 - "$T" <<'PY'
import json, random, sys
random.seed(5)
out = sys.argv[1]
SEGS = ["<img src=x onerror=alert(2)>&\"seg'", "<script>s2</script>&'b"]
with open(f"{out}/events.jsonl", "w") as f:
    for day in range(1, 6):
        for i in range(120):
            y = random.randrange(3)
            probs = []
            for m in range(3):
                top = y if random.random() < 0.7 else random.randrange(3)
                v = [0.15, 0.15, 0.15]; v[top] = 0.7; probs.append(v)
            ev = {"id": f"<b>id</b>&\"{day}'{i}", "ts": f"2026-03-0{day}T{i % 24:02d}:{i % 60:02d}:00Z",
                  "segment": SEGS[i % 2], "probs": probs}
            if i % 3 == 0:
                ev["label"] = y
            f.write(json.dumps(ev) + "\n")
PY
MODEL='<i>m</i>&"x'"'"
"$CONCORD" ingest --db "$T/h.db" --model "$MODEL" \
  --classes '<script>alert(1)</script>,a&b,"q"' --members "<u>u</u>,o'k,x&y" \
  "$T/events.jsonl" > /dev/null 2>&1
"$CONCORD" baseline --db "$T/h.db" --model "$MODEL" --from 2026-03-01 --to 2026-03-03 > /dev/null
"$CONCORD" report --db "$T/h.db" --model "$MODEL" --format html -o "$T/h.html"
R=("$CONCORD" review --db "$T/h.db" --model "$MODEL" --from 2026-03-01 --to 2026-03-05)
"${R[@]}" --where all --format csv -o "$T/h.csv"
"${R[@]}" --where all --format json -o "$T/h.json"
"${R[@]}" --where 'pair:<script>alert(1)</script>,a&b' > /dev/null
python3 - "$T" <<'PY'
import csv, html.parser, json, sys
T = sys.argv[1]
page = open(f"{T}/h.html", encoding="utf-8").read()
hostile = ["<script>alert(1)</script>", "a&b", '"q"', "<u>u</u>", "o'k", "x&y", "<i>m</i>",
           "<b>id</b>", "<img src=x onerror=alert(2)>"]
# nothing hostile appears raw: only escaped
for raw in ("<script", "<img", "<u>", "<i>", "<b>id", "a&b", "x&y", "o'k", '"q"'):
    assert raw not in page, f"raw {raw!r} in the page"
for esc in ("&lt;script&gt;alert(1)&lt;/script&gt;", "a&amp;b", "&quot;q&quot;", "o&#39;k",
            "&lt;img src=x onerror=alert(2)&gt;", "&lt;i&gt;m&lt;/i&gt;&amp;&quot;x&#39;"):
    assert esc in page, f"escaped form {esc!r} missing"
allowed = {"html", "head", "meta", "title", "style", "body", "main", "header", "footer", "nav",
           "section", "div", "p", "h1", "h2", "h3", "b", "a", "ul", "li", "span", "sup",
           "figure", "figcaption", "table", "thead", "tbody", "tr", "th", "td", "svg", "defs",
           "pattern", "lineargradient", "stop", "rect", "line", "circle", "polyline", "text",
           "g"}
class Check(html.parser.HTMLParser):
    def __init__(self):
        super().__init__(); self.tags = set(); self.text = []; self.attrs = []
    def handle_starttag(self, tag, attrs):
        self.tags.add(tag); self.attrs += attrs
    def handle_data(self, data):
        self.text.append(data)
c = Check(); c.feed(page)
assert c.tags <= allowed, c.tags - allowed
assert not [a for a, _ in c.attrs if a.startswith("on")], "event handler attribute"
assert not [v for a, v in c.attrs if a in ("href", "src") and v and not v.startswith("#")], "link out"
text = "".join(c.text)
for raw in hostile:
    assert raw in text or raw in "".join(v or "" for _, v in c.attrs), f"{raw!r} not shown as text"
rows = list(csv.DictReader(open(f"{T}/h.csv", newline="", encoding="utf-8")))
assert rows and {r["segment"] for r in rows} == {"<img src=x onerror=alert(2)>&\"seg'",
                                                "<script>s2</script>&'b"}
# the slice table: both slices, escaped, as row headers
sl = page[page.find('<section id="slices">'):]
sl = sl[:sl.find("</section>")]
assert sl, "no slice section"
for esc in ("&lt;img src=x onerror=alert(2)&gt;&amp;&quot;seg&#39;", "&lt;script&gt;s2&lt;/script&gt;&amp;&#39;b"):
    assert f'<th scope="row">{esc}</th>' in sl, f"slice row {esc!r} missing"
assert "chart-slice-" in sl, "no per-slice charts"
assert "<u>u</u>.class" in rows[0] and "o'k.p" in rows[0]
j = json.load(open(f"{T}/h.json", encoding="utf-8"))
assert j["model"] == "<i>m</i>&\"x'" and j["classes"][0] == "<script>alert(1)</script>"
print(f"html_hostile: {len(hostile)} hostile names only as text; csv {len(rows)} rows, json ok")
PY
# in a browser: the slice table's row headers read back as the raw names, as text
CHROMIUM=$(command -v chromium || command -v chromium-browser || true)
if [ -n "$CHROMIUM" ]; then
  timeout -k 10 600 "$CHROMIUM" --headless --no-sandbox --disable-gpu --no-first-run \
    --disable-background-networking --disable-component-update --disable-sync --disable-extensions \
    --user-data-dir="$(mktemp -d -p "$T")" --dump-dom "file://$T/h.html" > "$T/dom.html" 2> /dev/null
  python3 - "$T/dom.html" <<'PY'
import html.parser, sys
class Rows(html.parser.HTMLParser):
    def __init__(self):
        super().__init__(); self.in_sl = 0; self.th = None; self.names = []; self.tags = set()
    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "table" and a.get("class") == "slices": self.in_sl = 1
        if self.in_sl: self.tags.add(tag)
        if self.in_sl and tag == "th" and a.get("scope") == "row": self.th = ""
    def handle_data(self, data):
        if self.th is not None: self.th += data
    def handle_endtag(self, tag):
        if tag == "th" and self.th is not None: self.names.append(self.th); self.th = None
        if tag == "table": self.in_sl = 0
d = Rows(); d.feed(open(sys.argv[1], encoding="utf-8").read())
want = sorted(["<img src=x onerror=alert(2)>&\"seg'", "<script>s2</script>&'b"])
assert sorted(d.names) == want, d.names
assert not d.tags & {"img", "script"}, d.tags
print("html_hostile: Chromium reads the slice table's hostile names back as text")
PY
else
  echo "html_hostile: no chromium; the browser check of the slice table is skipped"
fi
