#!/usr/bin/env bash
# demo_alerts.sh — the default rules on the invented demo: the fog days raise
# mutual-information-rise, the retrain days raise diversity-collapse, the
# grade-mix days raise class-mix-drift, the days when member 'size' runs an
# old model (14-15) raise member-departs naming it and nothing else, and the
# clean days raise nothing. Once through
# `concord demo` (its timeline and file receiver), once day by day through
# `concord check` on a copy with the alert state cleared, once as a dry-run
# replay (`check --from --to`) on another copy: all three agree.
# Usage: demo_alerts.sh CONCORD TESTDIR
set -euo pipefail
C=$1
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }

"$C" demo --dir "$T" > "$T/demo.txt"
# the page's status line names the rules still raised at the end of the demo
grep -q 'diversity-collapse (high): raised since 2026-10-27' "$T/report.html" ||
  { echo "FAIL: report.html does not list the raised diversity-collapse rule" >&2; exit 1; }
grep -q '^alert timeline' "$T/demo.txt" || fail "demo prints no alert timeline"
grep -qE '^  9 +2026-10-13 mutual-information-rise +raised' "$T/demo.txt" || fail "timeline lacks the fog alert"
"$C" rules init > "$T/default.jsonc"
cmp -s "$T/default.jsonc" "$T/rules.jsonc" || fail "the demo's rules.jsonc is not the default set"

cp "$T/demo.db" "$T/cli.db"
sqlite3 "$T/cli.db" "DELETE FROM outbox; DELETE FROM notifications; DELETE FROM rule_state;"
cp "$T/cli.db" "$T/replay.db"
set +e
"$C" check --db "$T/replay.db" --rules "$T/rules.jsonc" --from 2026-10-05 --to 2026-11-01 \
  --dry-run --format json > "$T/replay.json" 2> "$T/err"
echo $? > "$T/replay.rc"
set -e
[ "$(sqlite3 "$T/replay.db" "SELECT count(*) FROM rule_state")" = 0 ] || fail "a dry-run replay stored states"
for d in $(seq 0 27); do
  day=$(date -u -d "2026-10-05 + $d days" +%F)
  set +e
  "$C" check --db "$T/cli.db" --rules "$T/rules.jsonc" --day "$day" --format json \
    --webhook "file:$T/cli-sink.jsonl" > "$T/day$((d + 1)).json" 2> "$T/err"
  rc=$?
  set -e
  echo "$rc" > "$T/rc$((d + 1))"
  case $rc in 0|10|11) ;; *) fail "check $day: exit $rc: $(cat "$T/err")" ;; esac
done

python3 - "$T" <<'PY' || fail "demo alert assertions"
import json, os, sys
T = sys.argv[1]
days = {}
for d in range(1, 29):
    o = json.load(open(os.path.join(T, f"day{d}.json")))
    assert o["exit_code"] == int(open(os.path.join(T, f"rc{d}")).read()), d
    days[d] = {r["rule"]: r for r in o["results"]}
    days[d]["_exit"] = o["exit_code"]
bad = []
def outcome(d, rule): return days[d][rule]["outcome"]
def state(d, rule): return days[d][rule]["state"]
fog, mix, retrain, broken = range(9, 12), range(16, 29), range(23, 29), range(14, 16)
clean = list(range(1, 9)) + [12, 13]
MI = "mutual-information-rise"
# the incidents raise their rules on their first day and keep them raised
if outcome(9, MI) != "raised": bad.append(f"fog day 9: {MI} not raised")
bad += [f"fog day {d}: {MI} {state(d, MI)}" for d in fog if state(d, MI) != "raised"]
if outcome(16, "class-mix-drift") != "raised": bad.append("mix day 16: class-mix-drift not raised")
bad += [f"mix day {d}: class-mix-drift {state(d, 'class-mix-drift')}" for d in mix
        if state(d, "class-mix-drift") != "raised"]
if outcome(23, "diversity-collapse") != "raised": bad.append("retrain day 23: diversity-collapse not raised")
bad += [f"retrain day {d}: diversity-collapse {state(d, 'diversity-collapse')}" for d in retrain
        if state(d, "diversity-collapse") != "raised"]
# clean days raise nothing (a clearing of the fog alerts may fall on them)
for d in clean:
    for rule, r in days[d].items():
        if rule != "_exit" and r["outcome"] in ("raised", "reminder"):
            bad.append(f"clean day {d}: {rule} {r['outcome']} (value {r['value']}, bound {r['bound']})")
    if days[d]["_exit"] == 10: bad.append(f"clean day {d}: exit 10")
bad += [f"day {d}: exit {days[d]['_exit']}, expected 0" for d in range(1, 9) if days[d]["_exit"] != 0]
# the old model in 'size' (days 14-15): member-departs raised on its first day,
# naming the member, and no other rule raised on those days
if outcome(14, "member-departs") != "raised": bad.append("broken day 14: member-departs not raised")
elif days[14]["member-departs"].get("subject") != "size":
    bad.append(f"broken day 14: member-departs names {days[14]['member-departs'].get('subject')!r}, not 'size'")
bad += [f"broken day {d}: member-departs {state(d, 'member-departs')}" for d in broken
        if state(d, "member-departs") != "raised"]
for d in broken:
    for rule, r in days[d].items():
        if rule not in ("_exit", "member-departs") and r["outcome"] in ("raised", "building", "reminder"):
            bad.append(f"broken day {d}: {rule} {r['outcome']} (value {r['value']}, bound {r['bound']})")
# outside their incidents these rules never breach
for d in range(1, 29):
    if d not in fog and days[d][MI]["outcome"] in ("raised", "building"):
        bad.append(f"day {d}: {MI} breached outside the fog")
    if d not in retrain and days[d]["diversity-collapse"]["outcome"] in ("raised", "building"):
        bad.append(f"day {d}: diversity-collapse breached before the retrain")
    if d not in mix and days[d]["class-mix-drift"]["outcome"] in ("raised", "building"):
        bad.append(f"day {d}: class-mix-drift breached before the grade mix")
    if d not in broken and days[d]["member-departs"]["outcome"] in ("raised", "building"):
        bad.append(f"day {d}: member-departs breached outside the broken-member days")
    # with a baseline and hundreds of events a day, every rule is evaluated
    # except those that wait for labels or need a second day
    for rule, r in days[d].items():
        if rule != "_exit" and r["outcome"] == "not_evaluated" and "label" not in r.get("reason", ""):
            bad.append(f"day {d}: {rule} not evaluated: {r.get('reason')}")
# the dry-run replay over the whole range equals the day-by-day checks
rep = json.load(open(os.path.join(T, "replay.json")))
got = {(r["day"], r["rule"]): (r["outcome"], r["state"], r["value"]) for r in rep["results"]}
for d in range(1, 29):
    for rule, r in days[d].items():
        if rule == "_exit": continue
        want = (r["outcome"], r["state"], r["value"])
        if got.get((r["day"], rule)) != want:
            bad.append(f"replay day {d} {rule}: {got.get((r['day'], rule))} != {want}")
if rep["exit_code"] != int(open(os.path.join(T, "replay.rc")).read()):
    bad.append("replay exit code")
for b in bad: print("FAIL:", b)
assert not bad
# the demo's own run and this one sent the same notifications
def keys(name): return sorted(json.loads(l)["notice_id"] for l in open(os.path.join(T, name)))
demo, cli = keys("alerts.jsonl"), keys("cli-sink.jsonl")
assert demo == cli, (demo, cli)
assert len(set(cli)) == len(cli)
for l in open(os.path.join(T, "alerts.jsonl")):
    b = json.loads(l)
    assert b["schema"] == "concord.notice/2" and b["model"] == "apple-grader" and b["evidence"]
print(f"demo_alerts: {len(cli)} notifications, incidents raise on their days, clean days quiet")
PY
[ $fails -eq 0 ] || { echo "demo_alerts: $fails failure(s)" >&2; exit 1; }
echo "demo_alerts: ok (28 daily checks)"
