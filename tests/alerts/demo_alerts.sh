#!/usr/bin/env bash
# demo_alerts.sh — the default rules on the invented demo: the fog days raise
# mutual-information-rise, the retrain days raise diversity-collapse, the
# grade-mix days raise class-mix-drift, the days when member 'size' runs an
# old model (14-15) raise member-departs naming it and nothing else, and the
# clean days raise nothing. line-2's fogged camera (days 19-20) raises the
# slice rule slice-mutual-information-rise for line-2 alone, on exactly those
# days, while the whole-model rules stay quiet for it; the alert names the
# slice in the text timeline, the check JSON, the webhook body and the
# rule-state key. Once through
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
grep -qE '^  19 +2026-10-23 slice-mutual-information-rise@line-2 +raised' "$T/demo.txt" ||
  fail "timeline lacks line-2's fog alert"
keys=$(sqlite3 "$T/demo.db" "SELECT rule FROM rule_state WHERE rule LIKE 'slice-mutual-information-rise@%' ORDER BY rule" | tr '\n' ' ')
[ "$keys" = "slice-mutual-information-rise@line-1 slice-mutual-information-rise@line-2 slice-mutual-information-rise@line-3 " ] ||
  fail "rule-state keys of the slice rule: '$keys'"
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
    # a slice rule's results are one per slice: keyed by their state key
    days[d] = {r.get("state_key", r["rule"]): r for r in o["results"]}
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
# line-2's fog (days 19-20): the slice rule breaches for line-2 on exactly those days
# (from day 12 on, after the whole-house fog), never for the other lines, and is
# raised on day 19; no whole-model rule is raised or building on those days, and
# the whole model's mutual information stays under its bound
SL = "slice-mutual-information-rise@"
line_fog = (19, 20)
for d in range(12, 29):
    for line in ("line-1", "line-2", "line-3"):
        r = days[d][SL + line]
        if r.get("slice") != line or r["rule"] != "slice-mutual-information-rise":
            bad.append(f"day {d}: {SL + line} names slice {r.get('slice')!r}, rule {r['rule']!r}")
        breach = r["value"] is not None and r["value"] > r["bound"]
        if breach != (line == "line-2" and d in line_fog):
            bad.append(f"day {d}: {SL + line} value {r['value']} bound {r['bound']}")
if outcome(19, SL + "line-2") != "raised": bad.append(f"day 19: {SL}line-2 not raised")
if state(20, SL + "line-2") != "raised": bad.append(f"day 20: {SL}line-2 {state(20, SL + 'line-2')}")
for d in line_fog:
    for key, r in days[d].items():
        if key != "_exit" and "slice" not in r and r["outcome"] in ("raised", "building"):
            bad.append(f"line-fog day {d}: whole-model {key} {r['outcome']}")
    if not days[d][MI]["value"] < days[d][MI]["bound"]:
        bad.append(f"line-fog day {d}: whole-model MI {days[d][MI]['value']} not under {days[d][MI]['bound']}")
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
got = {(r["day"], r.get("state_key", r["rule"])): (r["outcome"], r["state"], r["value"])
       for r in rep["results"]}
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
sliced = []
for l in open(os.path.join(T, "alerts.jsonl")):
    b = json.loads(l)
    assert b["schema"] == "concord.notice/2" and b["model"] == "apple-grader" and b["evidence"]
    if b["rule"] == "slice-mutual-information-rise" and b["checked_day"] >= "2026-10-18":
        sliced.append(b)
# the webhook bodies of line-2's fog: raised on 10-23, cleared on 10-26, naming the slice
assert [(b["kind"], b["checked_day"], b["slice"], b["scope"], b["state_key"]) for b in sliced] == [
    ("raised", "2026-10-23", "line-2", "each-slice", "slice-mutual-information-rise@line-2"),
    ("cleared", "2026-10-26", "line-2", "each-slice", "slice-mutual-information-rise@line-2")], sliced
assert sliced[0]["notice_id"] == "apple-grader/slice-mutual-information-rise@line-2/raised/2026-10-23"
assert "segment 'line-2'" in sliced[0]["sentence"], sliced[0]["sentence"]
print(f"demo_alerts: {len(cli)} notifications, incidents raise on their days, clean days quiet")
PY
[ $fails -eq 0 ] || { echo "demo_alerts: $fails failure(s)" >&2; exit 1; }
echo "demo_alerts: ok (28 daily checks)"
