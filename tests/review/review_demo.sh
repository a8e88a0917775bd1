#!/usr/bin/env bash
# review_demo.sh — `concord review` and `concord show` through the real binary
# on the demo database (invented data): the fog days' most uncertain events
# are from the fog days, averaging helps on clean days and hardly any more
# after the retrain, the per-day counts equal the report's (which come from
# the summaries, not the rows), every format is well formed, and bad
# arguments give the documented exit codes.
# Usage: review_demo.sh CONCORD
set -euo pipefail
CONCORD=$1
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
"$CONCORD" demo --dir "$T" > "$T/demo.txt"
grep -q 'concord review --db' "$T/demo.txt"
DB=$T/demo.db
R=("$CONCORD" review --db "$DB" --model apple-grader)

# the 50 events of the 28 days with the highest mutual information
"${R[@]}" --from 2026-10-05 --to 2026-11-01 --where top-mi --limit 50 --format json \
  -o "$T/top_mi.json"
# one review per day with every list, JSON, and the report's per-day figures
"$CONCORD" report --db "$DB" --model apple-grader --format json -o "$T/report.json"
for day in $(seq 0 27); do
  d=$(date -u -d "2026-10-05 + $day days" +%F)
  "${R[@]}" --from "$d" --to "$d" --where all --limit 5 --format json -o "$T/day_$d.json"
done
python3 - "$T" <<'PY'
import glob, json, math, os, sys
T = sys.argv[1]
top = json.load(open(f"{T}/top_mi.json"))["lists"]["top-mi"]
assert top["matched"] == 42000 and len(top["events"]) == 50, top["matched"]
days = sorted({e["time"][:10] for e in top["events"]})
# the whole-house fog (days 9-11), and line-2's fog (days 19-20), on that line only
assert set(days) <= {"2026-10-13", "2026-10-14", "2026-10-15", "2026-10-23", "2026-10-24"}, days
assert all(e["segment"] == "line-2" for e in top["events"] if e["time"][:10] >= "2026-10-23"), \
    [e["segment"] for e in top["events"] if e["time"][:10] >= "2026-10-23"]
mis = [e["mutual_information"] for e in top["events"]]
assert mis == sorted(mis, reverse=True), "top-mi not in descending order"

report = {w["from"]: w for w in json.load(open(f"{T}/report.json"))["windows"]}
bad = []
for path in sorted(glob.glob(f"{T}/day_*.json")):
    r = json.load(open(path)); d = r["from"][:10]; n = int(d[8:]) - 4 if d[5:7] == "10" else int(d[8:]) + 27
    s, w = r["summary"], report[d]
    acc = w["accuracy"]
    # rows (review) against summaries (report): same events, same labels, same best member
    if s["events"] != w["events"] or s["labeled"] != w["labeled"]: bad.append(f"{d}: counts")
    if r["members"][acc["best_member"]] != s["best_member"]: bad.append(f"{d}: best member")
    if s["counts"]["helped"] != acc["mcnemar"]["ensemble_only"]: bad.append(f"{d}: helped")
    if s["counts"]["hurt"] != acc["mcnemar"]["best_only"]: bad.append(f"{d}: hurt")
    right = sum(s["confusion"][i][i] for i in range(len(r["classes"])))
    if abs(right / s["labeled"] - acc["ensemble"]) > 1e-12: bad.append(f"{d}: accuracy")
    if s["counts"]["wrong"] != s["labeled"] - right: bad.append(f"{d}: wrong")
    if [p["count"] for p in s["contested_pairs"]] != [p["count"] for p in w["contested_pairs"]]:
        bad.append(f"{d}: contested pairs")
    # averaging helps on clean days and hardly at all once the members are copies (day 23+)
    helped = s["counts"]["helped"]
    if n >= 23 and helped > 15: bad.append(f"{d} (day {n}): {helped} helped after the retrain")
    if n < 23 and helped < 30: bad.append(f"{d} (day {n}): only {helped} helped")
    lists = r["lists"]
    if n < 23 and not lists["helped"]["events"]: bad.append(f"{d}: empty helped list")
    for e in lists["helped"]["events"]:
        best = next(m for m in e["members"] if m["name"] == s["best_member"])
        if not (e["ensemble"]["right"] is True and best["right"] is False): bad.append(f"{d}: helped event {e['id']}")
    for e in lists["hurt"]["events"]:
        best = next(m for m in e["members"] if m["name"] == s["best_member"])
        if not (e["ensemble"]["right"] is False and best["right"] is True): bad.append(f"{d}: hurt event {e['id']}")
    for e in lists["wrong"]["events"]:
        if e["ensemble"]["right"] is not False or e["label"] is None: bad.append(f"{d}: wrong event {e['id']}")
    margins = [e["ensemble"]["margin"] for e in lists["wrong"]["events"]]
    if margins != sorted(margins, reverse=True): bad.append(f"{d}: wrong list order")
    low = lists["low-margin"]["events"]
    if any(e["label"] is not None for e in low): bad.append(f"{d}: labelled event in low-margin")
    if [e["ensemble"]["margin"] for e in low] != sorted(e["ensemble"]["margin"] for e in low):
        bad.append(f"{d}: low-margin order")
    for e in lists["top-disagreement"]["events"]:
        if e["disagreement"] < lists["top-disagreement"]["events"][-1]["disagreement"]: bad.append(f"{d}: disagreement order")
    for lst in lists.values():
        for e in lst["events"]:
            if not e["time"].startswith(d): bad.append(f"{d}: event {e['id']} at {e['time']}")
for b in bad: print("FAIL:", b)
assert not bad
print("review_demo: 28 days agree with the report; top-MI events all on", ", ".join(days))
PY

# text, CSV, a partial day, a segment, a class pair
"${R[@]}" --from 2026-10-14 --to 2026-10-14 > "$T/review.txt"
grep -q 'best member of the range' "$T/review.txt"
grep -q 'confusion of the ensemble' "$T/review.txt"
grep -q 'lone right or lone wrong' "$T/review.txt"
grep -q 'contested class pairs' "$T/review.txt"
"${R[@]}" --from 2026-10-14T06:00:00Z --to 2026-10-14T11:59:59Z --where all --segment line-2 \
  --limit 7 --format csv -o "$T/part.csv"
"${R[@]}" --from 2026-10-14 --to 2026-10-16 --where pair:extra,class-1 --limit 30 --format json \
  -o "$T/pair.json"
python3 - "$T" <<'PY'
import csv, json, sys
T = sys.argv[1]
rows = list(csv.DictReader(open(f"{T}/part.csv", newline="")))
assert rows, "empty CSV"
lists = {r["list"] for r in rows}
assert lists == {"wrong", "helped", "hurt", "top-mi", "top-disagreement", "low-margin"}, lists
for r in rows:
    assert "2026-10-14T06:00:00Z" <= r["time"] <= "2026-10-14T11:59:59Z", r["time"]
    assert r["segment"] == "line-2", r["segment"]
    for m in ("hue", "shape", "blemish", "size", "wide"):
        assert r[f"{m}.class"] and 0 <= float(r[f"{m}.p"]) <= 1, r
    assert 0 <= float(r["margin"]) <= 1
assert max(sum(1 for r in rows if r["list"] == l) for l in lists) <= 7
p = json.load(open(f"{T}/pair.json"))["lists"]["pair"]
assert p["pair"] == ["extra", "class-1"] and p["matched"] >= len(p["events"]) == 30, p["matched"]
for e in p["events"]:
    assert {e["ensemble"]["class"], e["ensemble"]["runner_up"]} == {"extra", "class-1"}, e["id"]
m = [e["ensemble"]["margin"] for e in p["events"]]
assert m == sorted(m), "pair list not by ascending margin"
print(f"review_demo: csv ({len(rows)} rows), partial day, segment and pair lists ok")
PY

# show: text and JSON of one event from a list
id=$(python3 -c 'import json,sys; print(json.load(open(sys.argv[1]))["lists"]["top-mi"]["events"][0]["id"])' "$T/top_mi.json")
"$CONCORD" show --db "$DB" --model apple-grader "$id" > "$T/show.txt"
grep -q "^event $id of apple-grader" "$T/show.txt"
grep -q '^average ' "$T/show.txt"
grep -q '^votes ' "$T/show.txt"
grep -q 'mutual information' "$T/show.txt"
"$CONCORD" show --db "$DB" --model apple-grader --format json "$id" > "$T/show.json"
python3 - "$T/show.json" <<'PY'
import json, sys
e = json.load(open(sys.argv[1]))
k = len(e["classes"])
avg = [sum(m["probs"][c] for m in e["members"]) / len(e["members"]) for c in range(k)]
assert all(abs(a - b) < 1e-6 for a, b in zip(avg, e["averaged"])), "averaged vector"
assert e["classes"][max(range(k), key=lambda c: (e["averaged"][c], -c))] == e["ensemble"]["class"]
assert sum(e["votes"]) == len(e["members"])
assert all(m["agrees"] == (m["class"] == e["ensemble"]["class"]) for m in e["members"])
print("review_demo: show", e["id"], "ok")
PY

# exit codes: 2 usage, 4 unknown model or event
code() { set +e; "$@" > /dev/null 2>&1; echo $?; set -e; }
[ "$(code "${R[@]}" --from 2026-10-14 --to 2026-10-14 --where nonsense)" = 2 ]
[ "$(code "${R[@]}" --from 2026-10-14 --to 2026-10-14 --where pair:extra,extra)" = 2 ]
[ "$(code "${R[@]}" --from 2026-10-14 --to 2026-10-14 --where pair:extra,plum)" = 2 ]
[ "$(code "${R[@]}" --from 2026-10-15 --to 2026-10-14)" = 2 ]
[ "$(code "${R[@]}" --from 2026-13-01 --to 2026-10-14)" = 2 ]
[ "$(code "${R[@]}" --from 2026-10-14)" = 2 ]
[ "$(code "${R[@]}" --from 2026-10-14 --to 2026-10-14 --limit -1)" = 2 ]
[ "$(code "$CONCORD" review --db "$DB" --model plum --from 2026-10-14 --to 2026-10-14)" = 4 ]
[ "$(code "$CONCORD" show --db "$DB" --model apple-grader no-such-id)" = 4 ]
[ "$(code "$CONCORD" show --db "$DB" --model apple-grader)" = 2 ]
echo "review_demo: exit codes ok"
