#!/usr/bin/env bash
# slices.sh — slices through the real binary: a model created with
# --max-slices 2 keeps two segments apart and sums the others in one
# overflow slice, warned about once per run (naming the model and the
# limit) and noted in the report; a model exactly at its limit has no
# overflow; the limit belongs to the run that creates the model; an unknown
# --segment is exit 4 with the model's slices listed; verify proves the sums.
# Usage: slices.sh CONCORD
set -euo pipefail
C=$1
export CONCORD_NOW=1790000000
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }

# 4 days x 24 events over four segments (and a few without one)
ev() { # ID DAY SEGMENT
  local seg=""
  [ "$3" != - ] && seg="\"segment\":\"$3\","
  printf '{"id":"%s","ts":"2026-10-%02dT%02d:00:00Z",%s"probs":[[0.6,0.3,0.1],[0.5,0.4,0.1]],"label":%d}\n' \
    "$1" "$2" $(( ${1#e} % 24 )) "$seg" $(( ${1#e} % 3 ))
}
segs=(a b c d -)
for i in $(seq 0 95); do ev "e$i" $((5 + i / 24)) "${segs[i % 5]}"; done > "$T/e.jsonl"

"$C" ingest --db "$T/x.db" --model x --max-slices 2 "$T/e.jsonl" 2> "$T/err" || fail "ingest: $(cat "$T/err")"
[ "$(grep -c "warning: model 'x' has reached its limit of 2 slices" "$T/err")" = 1 ] ||
  fail "overflow warning not given once: $(cat "$T/err")"
# segments c and d: i % 5 in {2, 3}: 38 of 96 events (i % 5 = 0 has 20, the others 19)
grep -q "; 38 new events of further segments were summed in its overflow slice" "$T/err" ||
  fail "overflow count: $(cat "$T/err")"
"$C" models --db "$T/x.db" --format json > "$T/m.json"
/usr/bin/python3 - "$T/m.json" <<'PY' || fail "models: $(cat "$T/m.json")"
import json, sys
m = json.load(open(sys.argv[1]))["models"][0]
got = {s["segment"]: (s["kind"], s["events"]) for s in m["slices"]}
assert m["slice_limit"] == 2, m["slice_limit"]
assert got == {"a": ("segment", 20), "b": ("segment", 19), "(none)": ("none", 19),
               "(overflow)": ("overflow", 38)}, got
assert m["events"] == 96 and m["labeled"] == 96
PY
"$C" report --db "$T/x.db" --model x --by all > "$T/r.txt"
grep -q "note: the model reached its limit of 2 slices; 38 events of further segments are summed in the slice (overflow)" "$T/r.txt" ||
  fail "report does not note the overflow: $(head -n 5 "$T/r.txt")"
"$C" verify --db "$T/x.db" --model x > "$T/v" || fail "verify: $(cat "$T/v")"
grep -q "^slices: 4, 16 slice-days checked, 0 mismatched, 0 days where" "$T/v" || fail "verify's slice line: $(tail -n 1 "$T/v")"

# a second run: the warning again (once), the limit cannot change
for i in $(seq 96 99); do ev "e$i" 9 "${segs[i % 5]}"; done > "$T/e2.jsonl"
rc=0; "$C" ingest --db "$T/x.db" --model x --max-slices 3 "$T/e2.jsonl" 2> "$T/err" || rc=$?
[ $rc = 1 ] || fail "--max-slices on an existing model: exit $rc, expected 1"
grep -q "already has a slice limit of 2; --max-slices applies only to the run that creates a model" "$T/err" ||
  fail "--max-slices on an existing model: $(cat "$T/err")"
"$C" ingest --db "$T/x.db" --model x "$T/e2.jsonl" 2> "$T/err" || fail "second ingest: $(cat "$T/err")"
[ "$(grep -c "warning: model 'x' has reached its limit of 2 slices; 2 new events" "$T/err")" = 1 ] ||
  fail "second run's warning: $(cat "$T/err")"

# unknown --segment: exit 4, the slices listed
rc=0; "$C" report --db "$T/x.db" --model x --segment c 2> "$T/err" > /dev/null || rc=$?
[ $rc = 4 ] || fail "unknown segment: exit $rc, expected 4"
grep -q "model 'x' has no segment 'c'; its slices: 'a', 'b', '(overflow)', '(none)'" "$T/err" ||
  fail "unknown segment message: $(cat "$T/err")"
rc=0; "$C" report --db "$T/x.db" --model nope 2> "$T/err" > /dev/null || rc=$?
[ $rc = 4 ] || fail "unknown model: exit $rc, expected 4"
grep -q "no model named 'nope'; models: 'x'" "$T/err" || fail "unknown model message: $(cat "$T/err")"
"$C" report --db "$T/x.db" --model x --segment '(overflow)' --by all --format json > "$T/o.json" ||
  fail "report --segment (overflow)"
/usr/bin/python3 -c "import json,sys; d=json.load(open(sys.argv[1])); assert d['segment']=='(overflow)' and d['windows'][0]['events']==40, d['windows'][0]['events']" "$T/o.json" ||
  fail "the overflow slice's report"
rc=0; "$C" report --db "$T/x.db" --model x --segment a --by-segment 2> /dev/null || rc=$?
[ $rc = 2 ] || fail "--segment with --by-segment: exit $rc, expected 2"
rc=0; "$C" ingest --db "$T/y.db" --max-slices 0 "$T/e.jsonl" 2> /dev/null || rc=$?
[ $rc = 2 ] || fail "--max-slices 0: exit $rc, expected 2"

# exactly at the limit: two segments, limit 2, no overflow slice, no warning
grep -E '"segment":"(a|b)"' "$T/e.jsonl" > "$T/ab.jsonl"
"$C" ingest --db "$T/y.db" --model y --max-slices 2 "$T/ab.jsonl" 2> "$T/err" || fail "ingest at the limit: $(cat "$T/err")"
grep -q warning "$T/err" && fail "a warning at the limit: $(cat "$T/err")"
"$C" models --db "$T/y.db" > "$T/m.txt"
grep -q "slices   2 (2 named, limit 2)" "$T/m.txt" || fail "models at the limit: $(cat "$T/m.txt")"
grep -q overflow "$T/m.txt" && fail "an overflow slice at the limit"
# duplicates (ids already stored) with a new segment make no slice and no overflow
sed 's/"segment":"a"/"segment":"q"/' "$T/ab.jsonl" > "$T/dup.jsonl"
"$C" ingest --db "$T/y.db" --model y "$T/dup.jsonl" 2> "$T/err" || fail "duplicates: $(cat "$T/err")"
grep -q warning "$T/err" && fail "duplicates warned of overflow: $(cat "$T/err")"
"$C" models --db "$T/y.db" > "$T/m.txt"
grep -q "slices   2 (2 named, limit 2)" "$T/m.txt" || fail "duplicates changed the slices: $(cat "$T/m.txt")"

[ $fails = 0 ] && echo "slices: ok" || { echo "slices: $fails failures"; exit 1; }
