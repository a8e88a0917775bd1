#!/usr/bin/env bash
# demo_alerts.sh — the default rules on the invented demo: the fog days fire
# the disagreement-spike rule, the retrain days fire diversity collapse, the
# grade-mix days fire class-mix drift, and the clean days fire nothing. Once
# through `concord demo` (its timeline and file receiver), once day by day
# through `concord check` on a copy with the alert state cleared; both runs
# must produce the same notifications.
# Usage: demo_alerts.sh CONCORD TESTDIR
set -euo pipefail
C=$1
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }

"$C" demo --dir "$T" > "$T/demo.txt"
# the page's status line names the rules still firing at the end of the demo
grep -q 'diversity-collapse (critical): firing since 2026-10-27' "$T/report.html" ||
  { echo "FAIL: report.html does not list the firing diversity-collapse rule" >&2; exit 1; }
grep -q '^alert timeline' "$T/demo.txt" || fail "demo prints no alert timeline"
grep -qE '^  9 +2026-10-13 disagreement-spike +fired' "$T/demo.txt" || fail "timeline lacks the fog alert"
"$C" rules init > "$T/default.json"
cmp -s "$T/default.json" "$T/rules.json" || fail "the demo's rules.json is not the default set"

cp "$T/demo.db" "$T/cli.db"
sqlite3 "$T/cli.db" "DELETE FROM outbox; DELETE FROM notifications; DELETE FROM rule_state;"
for d in $(seq 0 27); do
  day=$(date -u -d "2026-10-05 + $d days" +%F)
  set +e
  "$C" check --db "$T/cli.db" --rules "$T/rules.json" --day "$day" --format json \
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
fog, mix, retrain = range(9, 12), range(16, 29), range(23, 29)
# days 14-15: one member runs an old model (the fourth incident); no rule of this
# set watches a single member, and score drift (per-class KS on the averaged
# output) fires on day 15, so those days are neither clean nor asserted here
clean = list(range(1, 9)) + [12, 13]
# the incidents fire their rules on their first day and keep them firing
if outcome(9, "disagreement-spike") != "fired": bad.append("fog day 9: disagreement-spike did not fire")
bad += [f"fog day {d}: disagreement-spike {state(d, 'disagreement-spike')}" for d in fog
        if state(d, "disagreement-spike") != "firing"]
if outcome(16, "class-mix-drift") != "fired": bad.append("mix day 16: class-mix-drift did not fire")
bad += [f"mix day {d}: class-mix-drift {state(d, 'class-mix-drift')}" for d in mix
        if state(d, "class-mix-drift") != "firing"]
if outcome(23, "diversity-collapse") != "fired": bad.append("retrain day 23: diversity-collapse did not fire")
bad += [f"retrain day {d}: diversity-collapse {state(d, 'diversity-collapse')}" for d in retrain
        if state(d, "diversity-collapse") != "firing"]
# clean days fire nothing (a resolution of the fog alerts may fall on them)
for d in clean:
    for rule, r in days[d].items():
        if rule != "_exit" and r["outcome"] in ("fired", "reminder"):
            bad.append(f"clean day {d}: {rule} {r['outcome']} (value {r['value']}, bound {r['bound']})")
    if days[d]["_exit"] == 10: bad.append(f"clean day {d}: exit 10")
bad += [f"day {d}: exit {days[d]['_exit']}, expected 0" for d in range(1, 9) if days[d]["_exit"] != 0]
# outside their incidents these rules never breach
for d in range(1, 29):
    if d not in fog and days[d]["disagreement-spike"]["outcome"] in ("fired", "pending"):
        bad.append(f"day {d}: disagreement-spike breached outside the fog")
    if d not in retrain and days[d]["diversity-collapse"]["outcome"] in ("fired", "pending"):
        bad.append(f"day {d}: diversity-collapse breached before the retrain")
    if d not in mix and days[d]["class-mix-drift"]["outcome"] in ("fired", "pending"):
        bad.append(f"day {d}: class-mix-drift breached before the grade mix")
for b in bad: print("FAIL:", b)
assert not bad
# the demo's own run and this one sent the same notifications
def keys(name): return sorted(json.loads(l)["dedupe_key"] for l in open(os.path.join(T, name)))
demo, cli = keys("alerts.jsonl"), keys("cli-sink.jsonl")
assert demo == cli, (demo, cli)
assert len(set(cli)) == len(cli)
for l in open(os.path.join(T, "alerts.jsonl")):
    b = json.loads(l)
    assert b["schema"] == "concord.alert/1" and b["model"] == "apple-grader" and b["evidence"]
print(f"demo_alerts: {len(cli)} notifications, incidents fire on their days, clean days quiet")
PY
[ $fails -eq 0 ] || { echo "demo_alerts: $fails failure(s)" >&2; exit 1; }
echo "demo_alerts: ok (28 daily checks)"
