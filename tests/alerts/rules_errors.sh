#!/usr/bin/env bash
# rules_errors.sh — `concord rules` and the rules-file errors through the
# binary: init writes the default file (and does not overwrite it), check
# validates it, every bad file exits 1 naming the rule and the key, and the
# check command's other errors keep their documented exit codes.
# Usage: rules_errors.sh CONCORD TESTDIR
set -euo pipefail
C=$1
SRC=$2
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
run() { set +e; "$@" > "$T/out" 2> "$T/err"; RC=$?; set -e; }

run "$C" rules init
[ $RC -eq 0 ] && grep -q '"diversity-collapse"' "$T/out" || fail "init to stdout"
cp "$T/out" "$T/std.json"
run "$C" rules init -o "$T/rules.jsonc"
[ $RC -eq 0 ] && cmp -s "$T/rules.jsonc" "$T/std.json" || fail "init -o differs from stdout"
run "$C" rules init -o "$T/rules.jsonc"
[ $RC -eq 3 ] && grep -q 'use --force' "$T/err" || fail "init over an existing file: exit $RC $(cat "$T/err")"
run "$C" rules init -o "$T/rules.jsonc" --force
[ $RC -eq 0 ] || fail "init --force: exit $RC"
run "$C" rules check "$T/rules.jsonc"
[ $RC -eq 0 ] && grep -q '14 rule(s)' "$T/out" || fail "check of the default file: $(cat "$T/out" "$T/err")"
run "$C" rules paths
[ $RC -eq 0 ] && grep -q '^uncertainty.mutual_information *window *sigmas ok' "$T/out" &&
  grep -q '^drift.per_class.min_p_bonferroni *window *bounds' "$T/out" && grep -q '^by_member.departure *member *sigmas ok' "$T/out" || fail "rules paths"

python3 "$SRC/gen_days.py" "$T/e.jsonl" --start 2026-03-01 --pattern agree --per-day 5
"$C" ingest --db "$T/t.db" --model m "$T/e.jsonl" 2> /dev/null

bad() { # NAME TEXT EXPECTED-SUBSTRING...
  local name=$1 text=$2
  shift 2
  printf '%s\n' "$text" > "$T/$name.json"
  run "$C" check --db "$T/t.db" --rules "$T/$name.json" --day 2026-03-01
  [ $RC -eq 1 ] || fail "$name: exit $RC, expected 1"
  for want in "$@"; do
    grep -qF -- "$want" "$T/err" || fail "$name: message lacks '$want': $(cat "$T/err")"
  done
  run "$C" rules check "$T/$name.json"
  [ $RC -eq 1 ] || fail "$name: rules check exit $RC, expected 1"
}
R='{"rules": ['
bad syntax $'{"rules": [\n  {"name": "a", "metric": "events", "below": 1,}\n]}' "syntax.json:2:" "not valid JSON"
bad typo "$R"'{"name": "spike", "metric": "uncertainty.mutual_information", "sigma_above": 4}]}' \
  "rule 'spike': key 'sigma_above': unknown key"
bad path "$R"'{"name": "p", "metric": "uncertainty.mutual_info", "above": 1}]}' \
  "rule 'p': key 'metric': unknown metric path 'uncertainty.mutual_info'" "concord rules paths"
bad two "$R"'{"name": "t", "metric": "events", "above": 1, "below": 0}]}' "rule 't': key 'below'" "exactly one"
bad none "$R"'{"name": "n", "metric": "events"}]}' "rule 'n'" "give one of above, below"
bad sigma_untracked "$R"'{"name": "s", "metric": "drift.class_mix.p_value", "sigmas_below": 3}]}' \
  "rule 's': key 'sigmas_below'" "use above/below"
bad scope "$R"'{"name": "sc", "metric": "events", "below": 1, "scope": "slices"}]}' \
  "rule 'sc': key 'scope'" '"model"' '"each-slice"'
bad scope_derived "$R"'{"name": "sd", "metric": "labels.age_days", "above": 3, "scope": "each-slice"}]}' \
  "rule 'sd': key 'scope'" "whole model only"
bad days0 "$R"'{"name": "f", "metric": "events", "below": 1, "days": 0}]}' "rule 'f': key 'days'"
bad urgency "$R"'{"name": "v", "metric": "events", "below": 1, "urgency": "urgent"}]}' \
  "rule 'v': key 'urgency'"
bad dup "$R"'{"name": "d", "metric": "events", "below": 1}, {"name": "d", "metric": "labeled", "below": 1}]}' \
  "rule 'd': key 'name'" "unique"
bad noname "$R"'{"name": "ok", "metric": "events", "below": 1}, {"metric": "labeled", "below": 1}]}' \
  "rule #2: key 'name': missing"
bad shift "$R"'{"name": "m", "metric": "events", "below": 1, "min_shift": 1}]}' "rule 'm': key 'min_shift'"
bad url '{"webhooks": [{"url": "hooks.example/x"}], "rules": []}' "key 'webhooks[0].url'"
bad secret '{"delivery": {"secret_env": "hunter2!"}, "rules": []}' "key 'delivery.secret_env'" \
  "not hold the secret itself"
bad toplevel '{"rule": []}' "key 'rule': unknown key"
bad norules '{"webhooks": []}' "key 'rules': missing"

run "$C" check --db "$T/missing.db" --rules "$T/rules.jsonc"
[ $RC -eq 3 ] || fail "missing database: exit $RC, expected 3"
run "$C" check --db "$T/t.db" --rules "$T/nope.json"
[ $RC -eq 3 ] || fail "missing rules file: exit $RC, expected 3"
run "$C" check --db "$T/t.db" --rules "$T/rules.jsonc" --model nobody
[ $RC -eq 4 ] || fail "unknown model: exit $RC, expected 4"
run "$C" check --db "$T/t.db" --rules "$T/rules.jsonc" --webhook ftp://x
[ $RC -eq 2 ] || fail "bad --webhook: exit $RC, expected 2"
run "$C" check --db "$T/t.db" --rules "$T/rules.jsonc" --day 2026-13-01
[ $RC -eq 2 ] || fail "bad --day: exit $RC, expected 2"
run "$C" check --db "$T/t.db" --rules "$T/rules.jsonc" --day 2026-03-01
[ $RC -eq 0 ] || fail "healthy day with the default rules: exit $RC: $(cat "$T/out")"
# no baseline: the traffic-scaled minimum falls back to 100 events; the rules
# that cannot judge the day say so and are listed as not evaluated, never quiet
grep -q 'not-evaluated .*class-mix-drift .*(not evaluated: too few events (5 < 100))' "$T/out" ||
  fail "not-evaluated reason not printed: $(cat "$T/out")"
run "$C" alerts --db "$T/t.db" --state not_evaluated --format json
python3 - "$T/out" <<'PY' || fail "alerts: not_evaluated states"
import json, sys
o = json.load(open(sys.argv[1]))
names = {s["rule"] for s in o["rule_states"]}
assert "class-mix-drift" in names and "no-events" not in names, names
assert all(s["state"] == "not_evaluated" for s in o["rule_states"])
PY

[ $fails -eq 0 ] || { echo "rules_errors: $fails failure(s)" >&2; exit 1; }
echo "rules_errors: ok"
