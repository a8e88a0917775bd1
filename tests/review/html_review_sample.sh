#!/usr/bin/env bash
# html_review_sample.sh — the HTML page's review is bounded: with more events
# in the range than --review-max, it reads a deterministic sample (rowids that
# are multiples of ceil(events / max)), says so on the page, and the counts it
# shows are those of exactly the sampled events, recomputed here in Python from
# the input lines (a fresh database stores the lines' events as rowids 1..N).
# Without a bound (the default at this size, or --review-max all) there is no
# note and the counts are of every event. Usage: html_review_sample.sh CONCORD
set -euo pipefail
CONCORD=$1
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
python3 - "$T" <<'PY'
import json, random, sys
random.seed(14)
with open(f"{sys.argv[1]}/events.jsonl", "w") as f:
    n = 0
    while n < 1000:
        probs = []
        for m in range(3):
            v = [random.random() + 0.05 for _ in range(3)]
            s = sum(v); probs.append([round(x / s, 4) for x in v])
        avg = sorted((sum(p[c] for p in probs) / 3 for c in range(3)), reverse=True)
        if avg[0] - avg[1] < 0.01:
            continue  # no near-ties: the stored float32 values pick the same class
        n += 1
        ev = {"id": f"e{n:05d}", "ts": f"2026-04-0{1 + (n - 1) // 200}T{(n % 24):02d}:{n % 60:02d}:00Z",
              "probs": probs}
        if n % 3 == 0:
            ev["label"] = random.randrange(3)
        f.write(json.dumps(ev) + "\n")
PY
"$CONCORD" ingest --db "$T/s.db" --model m --quiet "$T/events.jsonl"
"$CONCORD" report --db "$T/s.db" --model m --format html --review-max 100 -o "$T/sample.html"
"$CONCORD" report --db "$T/s.db" --model m --format html -o "$T/default.html"
"$CONCORD" report --db "$T/s.db" --model m --format html --review-max all -o "$T/all.html"
"$CONCORD" report --db "$T/s.db" --model m --format html --review-max 300 -o "$T/s300.html"
set +e
"$CONCORD" report --db "$T/s.db" --model m --format html --review-max 0 -o "$T/x.html" 2> "$T/err"
rc=$?
set -e
[ "$rc" -eq 2 ] || { echo "FAIL: --review-max 0 gave exit $rc, expected 2 (usage)"; exit 1; }
grep -q "review-max" "$T/err" || { echo "FAIL: the usage error does not name --review-max"; exit 1; }
python3 - "$T" <<'PY'
import json, re, sys
T = sys.argv[1]
events = [json.loads(l) for l in open(f"{T}/events.jsonl")]

def truth(every):
    """events, labelled and wrong among rowids that are multiples of every"""
    kept = [e for i, e in enumerate(events, start=1) if i % every == 0]
    lab = [e for e in kept if "label" in e]
    wrong = 0
    for e in lab:
        avg = [sum(p[c] for p in e["probs"]) / 3 for c in range(3)]
        wrong += max(range(3), key=lambda c: (avg[c], -c)) != e["label"]
    return len(kept), len(lab), wrong

def shown(name):
    page = open(f"{T}/{name}", encoding="utf-8").read()
    lede = re.search(r"From the stored events of \S+ to \S+: (\d+) events, (\d+) labelled", page)
    wrong = re.search(r"wrong: the ensemble wrong</td><td class=\"num\">(\d+)<", page)
    assert lede and wrong, f"{name}: review counts not found"
    return page, (int(lede.group(1)), int(lede.group(2)), int(wrong.group(1)))

for name, every in (("sample.html", 10), ("s300.html", 4)):
    page, got = shown(name)
    want = truth(every)
    assert got == want, f"{name}: shown (events, labelled, wrong) {got}, recomputed {want}"
    note = re.search(r'id="review-sample">(.*?)</p>', page, re.S)
    assert note, f"{name}: no sample note"
    text = re.sub(r"<[^>]+>", "", note.group(1))
    for part in ("1000 events", f"read the {want[0]} ", f"multiple of {every}",
                 "concord review", "--review-max all"):
        assert part in text, f"{name}: the note lacks {part!r}: {text}"
for name in ("default.html", "all.html"):
    page, got = shown(name)
    assert got == truth(1), f"{name}: shown {got}, recomputed {truth(1)}"
    assert 'id="review-sample"' not in page, f"{name}: a sample note without sampling"
print("html_review_sample: sample of 100 and of 250 (1 in 10, 1 in 4) with the note and true "
      "counts; default and 'all' read all 1000 events")
PY
