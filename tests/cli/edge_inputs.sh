#!/usr/bin/env bash
# edge_inputs.sh — input edge cases, each a regression case: a directory or
# /dev/zero among the inputs, event times outside the accepted range, leap
# seconds, invalid UTF-8 and control characters in names, spreadsheet
# formulas in CSV cells, a summary of an unknown layout version, repeated
# and out-of-range options, an over-long demo folder.
# Usage: edge_inputs.sh CONCORD
set -euo pipefail
CONCORD=$1
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
run() { set +e; "$@" > "$T/out" 2> "$T/err"; rc=$?; set -e; }

ev() { # id, ts (JSON value), extra members
  printf '{"id":%s,"ts":%s,"probs":[[0.7,0.2,0.1],[0.6,0.3,0.1]]%s}\n' "$1" "$2" "${3:-}"
}
events() { sqlite3 "$1" "SELECT count(*) FROM events"; }

# 1. a directory between two good files: named, no line-number garbage, the
#    other files' lines stored (nothing rolled back), exit 3
ev '"a1"' '"2026-11-03T10:00:00Z"' > "$T/a.jsonl"
ev '"c1"' '"2026-11-04T10:00:00Z"' > "$T/c.jsonl"
mkdir "$T/dir"
run "$CONCORD" ingest --db "$T/d.db" --model m "$T/a.jsonl" "$T/dir" "$T/c.jsonl"
[ $rc -eq 3 ] || fail "directory input: exit $rc, expected 3"
grep -q "$T/dir: is a directory" "$T/err" || fail "directory input: message: $(cat "$T/err")"
[ "$(events "$T/d.db")" = 2 ] || fail "directory input: $(events "$T/d.db") events stored, expected 2 (other files kept)"
"$CONCORD" verify --db "$T/d.db" --model m > /dev/null || fail "directory input: verify"
# under --strict an unreadable file stores nothing
run "$CONCORD" ingest --db "$T/ds.db" --model m --strict "$T/a.jsonl" "$T/dir"
[ $rc -eq 3 ] || fail "directory input, strict: exit $rc"

# 2. /dev/zero: one endless line without a newline; given up after the cap
#    (hang guard: 10 minutes, far above the seconds it takes)
run timeout 600 "$CONCORD" ingest --db "$T/z.db" --model m "$T/a.jsonl" /dev/zero
[ $rc -ne 124 ] || fail "/dev/zero: still reading after 10 minutes (hang)"
[ $rc -eq 3 ] || fail "/dev/zero: exit $rc, expected 3"
grep -q "/dev/zero:1: line longer than 64 MiB" "$T/err" || fail "/dev/zero: message: $(cat "$T/err")"
[ "$(events "$T/z.db")" = 1 ] || fail "/dev/zero: the other file's line was not kept"

# 3. event times: default range 2000-01-01..2099-12-31, strings and numbers alike
{
  ev '"t1"' '"1999-12-31T23:59:59Z"'
  ev '"t2"' '"1969-07-20T20:17:00Z"'
  ev '"t3"' '-86400'
  ev '"t4"' '0'
  ev '"t5"' '1790000000000'
  ev '"t6"' '"2100-01-01T00:00:00Z"'
  ev '"t7"' '"2016-12-31T23:59:60Z"'
  ev '"t8"' '"2026-11-03T12:30:60Z"'
  ev '"t9"' '"2000-01-01T00:00:00Z"'
  ev '"t10"' '"0001-01-01T00:30:00+01:00"'
} > "$T/ts.jsonl"
run "$CONCORD" ingest --db "$T/ts.db" --model m "$T/ts.jsonl"
[ $rc -eq 1 ] || fail "time range: exit $rc, expected 1"
for l in 1 2 3 4 5 6; do
  grep -q "ts.jsonl:$l: rejected: field 'ts': .*outside the accepted range 2000-01-01..2099-12-31" "$T/err" ||
    fail "time range: line $l not refused for its range: $(grep "ts.jsonl:$l:" "$T/err")"
done
grep -q "ts.jsonl:8: rejected: field 'ts': second 60 is a leap second only at 23:59:60 UTC" "$T/err" ||
  fail "leap second at 12:30:60: $(grep "ts.jsonl:8:" "$T/err")"
grep -q "ts.jsonl:10: rejected: field 'ts': outside the years 0001..9999" "$T/err" ||
  fail "year 0: $(grep "ts.jsonl:10:" "$T/err")"
[ "$(sqlite3 "$T/ts.db" "SELECT group_concat(id) FROM (SELECT id FROM events ORDER BY id)")" = "t7,t9" ] ||
  fail "time range: stored $(sqlite3 "$T/ts.db" "SELECT group_concat(id) FROM events")"
# --ts-range widens (or narrows) it
run "$CONCORD" ingest --db "$T/ts2.db" --model m --ts-range 1960-01-01,2099-12-31 "$T/ts.jsonl"
[ "$(events "$T/ts2.db")" = 6 ] || fail "--ts-range 1960..: $(events "$T/ts2.db") events, expected 6: $(cat "$T/err")"
run "$CONCORD" ingest --db "$T/ts3.db" --model m --ts-range 2026-01-01,2020-01-01 "$T/ts.jsonl"
[ $rc -eq 2 ] || fail "--ts-range backwards: exit $rc"
run "$CONCORD" ingest --db "$T/ts3.db" --model m --ts-range 2026-01-01 "$T/ts.jsonl"
[ $rc -eq 2 ] || fail "--ts-range one date: exit $rc"

# 4. invalid UTF-8 in names: refused with the field named
{
  ev '"u1\xc0\xaf"' '"2026-11-03T10:00:00Z"'
  ev '"u2"' '"2026-11-03T10:00:00Z"' ',"segment":"\xed\xa0\x80"'
  ev '"u3"' '"2026-11-03T10:00:00Z"' ',"model":"m\xf4\x90\x80\x80"'
  ev '"u4"' '"2026-11-03T10:00:00Z"' ',"label":"\xff"'
  ev '"u5"' '"2026-11-03T10:00:00Z"' ',"model":"m\\u001b[31m"'
  ev '"ok-\xe2\x82\xac"' '"2026-11-03T10:00:00Z"'
} > "$T/u.raw"
printf "$(cat "$T/u.raw")\n" > "$T/u.jsonl"
run "$CONCORD" ingest --db "$T/u.db" --model m "$T/u.jsonl"
[ $rc -eq 1 ] || fail "utf-8: exit $rc"
for want in "u.jsonl:1: rejected: field 'id': not valid UTF-8" "u.jsonl:2: rejected: field 'segment': not valid UTF-8" \
            "u.jsonl:3: rejected: field 'model': not valid UTF-8" "u.jsonl:4: rejected: field 'label': not valid UTF-8" \
            "u.jsonl:5: rejected: field 'model': control character 0x1b"; do
  grep -qF "$want" "$T/err" || fail "utf-8: lacks '$want': $(cat "$T/err")"
done
[ "$(events "$T/u.db")" = 1 ] || fail "utf-8: $(events "$T/u.db") events stored, expected 1"
printf '{"id":"u6","label":"x\\u0000y"}\n{"id":"u6","label":"\xc3"}\n' > "$T/ul.jsonl"
run "$CONCORD" label --db "$T/u.db" --model m "$T/ul.jsonl"
grep -q "ul.jsonl:1: rejected: field 'label': class name contains a NUL character" "$T/err" || fail "label NUL: $(cat "$T/err")"
grep -q "ul.jsonl:2: rejected: field 'label': not valid UTF-8" "$T/err" || fail "label utf-8: $(cat "$T/err")"
for opt in "--classes a,$(printf 'b\xc0\x80')" "--members $(printf 'x\xed\xa0\x80'),y" "--model $(printf 'm\xff')" \
           "--model $(printf 'm\x1b')"; do
  # shellcheck disable=SC2086
  run "$CONCORD" ingest --db "$T/u2.db" $opt "$T/a.jsonl"
  [ $rc -eq 2 ] || fail "option '$opt': exit $rc, expected 2"
done

# 5. control characters from the logs: escaped in text output and on stderr,
#    JSON stays JSON, CSV formulas neutralised
{
  ev '"esc\u001b]0;owned\u0007"' '"2026-11-03T10:00:00Z"' ',"segment":"=HYPERLINK(\"http://x\")","label":0'
  ev '"cr\r\nfake line"' '"2026-11-03T11:00:00Z"' ',"segment":"+1\u009b2J","label":1'
  ev '"@sum"' '"2026-11-03T12:00:00Z"' ',"segment":"-2","label":2'
  ev '"bad-label"' '"2026-11-03T13:00:00Z"' ',"label":"\u001b[2J\u0007"'
} > "$T/ctl.jsonl"
run "$CONCORD" ingest --db "$T/ctl.db" --model m --classes a,b,c "$T/ctl.jsonl"
[ $rc -eq 1 ] || fail "control: ingest exit $rc"
if grep -q $'\x1b\|\x07' "$T/err"; then fail "control: raw ESC/BEL on stderr"; fi
grep -qF 'ctl.jsonl:4: rejected: ' "$T/err" && grep -qF '\x1b[2J\x07' "$T/err" || fail "control: reject reason not escaped visibly: $(cat -v "$T/err")"
R=(--db "$T/ctl.db" --model m --from 2026-11-03 --to 2026-11-03 --where all)
run "$CONCORD" review "${R[@]}"
[ $rc -eq 0 ] || fail "control: review text exit $rc"
if LC_ALL=C grep -q $'[\x01-\x08\x0b-\x1f\x7f]\|\xc2[\x80-\x9f]' "$T/out"; then fail "control: raw control characters in review text: $(cat -v "$T/out" | head -5)"; fi
grep -qF 'esc\x1b]0;owned\x07' "$T/out" || fail "control: review text does not show the id escaped"
"$CONCORD" show --db "$T/ctl.db" --model m "$(printf 'esc\x1b]0;owned\x07')" > "$T/show" || fail "control: show exit"
if LC_ALL=C grep -q $'[\x01-\x08\x0b-\x1f\x7f]' "$T/show"; then fail "control: raw control characters in show text"; fi
for cmd in "review ${R[*]} --format json" "show --db $T/ctl.db --model m --format json @sum" "report --db $T/ctl.db --model m --format json"; do
  # shellcheck disable=SC2086
  "$CONCORD" $cmd > "$T/j.json" || fail "control: '$cmd' exit"
  python3 -c 'import json,sys; json.load(open(sys.argv[1], encoding="utf-8"))' "$T/j.json" || fail "control: '$cmd' is not valid JSON"
done
"$CONCORD" review "${R[@]}" --format csv > "$T/v.csv"
python3 - "$T/v.csv" <<'PY' || fail "control: CSV cells not neutralised"
import csv, sys
rows = list(csv.reader(open(sys.argv[1], newline="", encoding="utf-8")))
head = rows[0]
bad = [c for r in rows[1:] for c in (r[head.index("id")], r[head.index("segment")])
       if c[:1] in ("=", "+", "-", "@", "\t", "\r")]
want = {"'=HYPERLINK(\"http://x\")", "'@sum", "'-2"}
seen = {c for r in rows[1:] for c in r}
if bad or not want <= seen:
    print("formula cells:", bad, "missing:", want - seen)
    sys.exit(1)
PY

# 6. a summary of an unknown layout version is reported with that version
cp "$T/d.db" "$T/v99.db"
sqlite3 "$T/v99.db" "UPDATE summaries SET version = 99"
run "$CONCORD" report --db "$T/v99.db" --model m
[ $rc -eq 3 ] || fail "version 99: exit $rc"
grep -q "layout version 99," "$T/err" || fail "version 99: $(cat "$T/err")"
sqlite3 "$T/v99.db" "UPDATE summaries SET version = 4294967297"
run "$CONCORD" report --db "$T/v99.db" --model m
grep -q "layout version 4294967297," "$T/err" || fail "version 2^32+1: $(cat "$T/err")"

# 7. options: repeated, out of range, not numbers, an over-long demo folder
"$CONCORD" rules init -o "$T/rules.json" 2> /dev/null
for args in "check --db $T/d.db --rules $T/rules.json --webhook file:$T/a --webhook file:$T/b" \
            "ingest --db $T/o.db --batch 99999999999 $T/a.jsonl" "ingest --db $T/o.db --batch 12x $T/a.jsonl" \
            "ingest --db $T/o.db --batch 0 $T/a.jsonl" "ingest --db $T/o.db --batch -1 $T/a.jsonl" \
            "ingest --db $T/o.db --model a --model b $T/a.jsonl" \
            "review --db $T/d.db --model m --from 2026-11-03 --to 2026-11-03 --limit 4294967297" \
            "alerts --db $T/d.db --limit 1e3" "follow --db $T/o.db --chunk 99999999999 $T/a.jsonl" \
            "demo --dir $T/x --per-day 2147483658" "demo --dir $T/x --seed 18446744073709551617"; do
  # shellcheck disable=SC2086
  run "$CONCORD" $args
  [ $rc -eq 2 ] || fail "'$args': exit $rc, expected 2 ($(head -1 "$T/err"))"
done
[ ! -e "$T/o.db" ] || fail "a refused option still created the database"
long=$T/$(head -c 4085 /dev/zero | tr '\0' 'd')
run "$CONCORD" demo --dir "$long"
[ $rc -eq 2 ] || fail "demo --dir of $((${#long})) bytes: exit $rc, expected 2"
grep -q "at most 4000 bytes" "$T/err" || fail "demo --dir: $(head -c 300 "$T/err")"

[ $fails -eq 0 ] && echo "edge_inputs: all cases passed"
exit $((fails > 0))
