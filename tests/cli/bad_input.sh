#!/usr/bin/env bash
# bad_input.sh — every kind of bad line is refused with its file, line and
# reason; the good lines around it are stored; nothing is counted twice.
# Usage: bad_input.sh CONCORD
set -euo pipefail
CONCORD=$1
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }

good() { # id, day offset
  printf '{"id":"%s","ts":"2026-11-0%dT10:00:00Z","probs":[[0.7,0.2,0.1],[0.6,0.3,0.1]]}\n' "$1" "${2:-3}"
}
events() { sqlite3 "$1" "SELECT count(*) FROM events"; }
summary_events() { sqlite3 "$1" "SELECT coalesce(sum(events),0) FROM summaries"; }

# case NAME BAD_LINE REASON_SUBSTRING: good line, the bad line at line 2, good line
case_line() {
  local name=$1 bad=$2 reason=$3 db=$T/$1.db f=$T/$1.jsonl
  { good a; printf '%s\n' "$bad"; good b; } > "$f"
  set +e
  "$CONCORD" ingest --db "$db" --model m "$f" 2> "$T/err"
  local rc=$?
  set -e
  [ $rc -eq 1 ] || fail "$name: exit $rc, expected 1"
  grep -q "$f:2: rejected: .*$reason" "$T/err" || fail "$name: stderr lacks '$f:2: ... $reason': $(cat "$T/err")"
  [ "$(events "$db")" = 2 ] || fail "$name: $(events "$db") events stored, expected 2"
  [ "$(summary_events "$db")" = 2 ] || fail "$name: summaries count $(summary_events "$db"), expected 2"
  [ "$(sqlite3 "$db" "SELECT count(*) FROM rejects WHERE line = 2 AND kind = 'event' AND length(reason) > 10 AND length(text) > 0")" = 1 ] ||
    fail "$name: rejects table lacks the line"
}

case_line malformed '{"id":"x","ts":0,"probs":[[0.5,0.5,0' 'malformed JSON'
case_line missing_id '{"ts":0,"probs":[[0.7,0.2,0.1],[0.6,0.3,0.1]]}' "'id': missing"
case_line missing_ts '{"id":"x","probs":[[0.7,0.2,0.1],[0.6,0.3,0.1]]}' "'ts': missing"
case_line missing_probs '{"id":"x","ts":0}' "'probs': missing"
case_line wrong_m '{"id":"x","ts":1790000000,"probs":[[0.7,0.2,0.1]]}' "1 members x 3 classes, but model 'm' has 2 x 3"
case_line wrong_k '{"id":"x","ts":1790000000,"probs":[[0.5,0.5],[0.5,0.5]]}' "2 members x 2 classes, but model 'm' has 2 x 3"
case_line negative '{"id":"x","ts":0,"probs":[[-0.1,0.6,0.5],[0.6,0.3,0.1]]}' 'outside \[0, 1\]'
case_line above_one '{"id":"x","ts":0,"probs":[[1.2,-0.1,-0.1],[0.6,0.3,0.1]]}' 'outside \[0, 1\]'
case_line nan '{"id":"x","ts":0,"probs":[[NaN,0.5,0.5],[0.6,0.3,0.1]]}' 'malformed JSON'
case_line not_finite '{"id":"x","ts":0,"probs":[[1e999,0.5,0.5],[0.6,0.3,0.1]]}' 'not a finite number'
case_line row_sum '{"id":"x","ts":0,"probs":[[0.5,0.5,0.5],[0.6,0.3,0.1]]}' 'sums to 1.5'
case_line unknown_class '{"id":"x","ts":1790000000,"probs":[[0.7,0.2,0.1],[0.6,0.3,0.1]],"label":"pear"}' "unknown class name 'pear' for model 'm'; classes: '0', '1', '2'"
case_line label_range '{"id":"x","ts":1790000000,"probs":[[0.7,0.2,0.1],[0.6,0.3,0.1]],"label":3}' 'out of range 0..2'

# duplicate id: counted, not double-counted, exit 0
f=$T/dup.jsonl; db=$T/dup.db
{ good a; good b; good a 4; } > "$f"
"$CONCORD" ingest --db "$db" "$f" 2> "$T/err" || fail "dup: nonzero exit"
grep -q '3 lines, 2 events stored, 1 duplicates skipped, 0 rejected' "$T/err" || fail "dup: tally: $(cat "$T/err")"
[ "$(summary_events "$db")" = 2 ] || fail "dup: summaries count $(summary_events "$db")"
[ "$(sqlite3 "$db" "SELECT day FROM events WHERE id='a'")" = "$(sqlite3 "$db" "SELECT min(day) FROM summaries")" ] || fail "dup: first copy must win"

# a 10 MB line: refused by length, the rest kept
f=$T/huge.jsonl; db=$T/huge.db
{ good a; printf '{"id":"big","ts":0,"probs":[[0.5,0.5]],"pad":"'; head -c 10485760 /dev/zero | tr '\0' 'x'; printf '"}\n'; good b; } > "$f"
set +e; "$CONCORD" ingest --db "$db" "$f" 2> "$T/err"; rc=$?; set -e
[ $rc -eq 1 ] || fail "huge: exit $rc"
grep -q "$f:2: rejected: line is 104858.. bytes, longer than the limit" "$T/err" || fail "huge: $(cat "$T/err")"
[ "$(events "$db")" = 2 ] || fail "huge: events $(events "$db")"

# an empty file: a warning, exit 0, nothing stored
: > "$T/empty.jsonl"
"$CONCORD" ingest --db "$T/empty.db" "$T/empty.jsonl" 2> "$T/err" || fail "empty: nonzero exit"
grep -q 'warning: 1 input file(s) had no lines' "$T/err" || fail "empty: $(cat "$T/err")"

# no final newline: the last line still counts
f=$T/nonl.jsonl; db=$T/nonl.db
{ good a; good b | tr -d '\n'; } > "$f"
"$CONCORD" ingest --db "$db" "$f" 2> "$T/err" || fail "no newline: exit $?"
[ "$(events "$db")" = 2 ] || fail "no newline: events $(events "$db")"

# truncated last line (a writer died mid-line): refused, the rest kept
f=$T/trunc.jsonl; db=$T/trunc.db
{ good a; good b; good c | head -c 40; } > "$f"
set +e; "$CONCORD" ingest --db "$db" "$f" 2> "$T/err"; rc=$?; set -e
[ $rc -eq 1 ] || fail "truncated: exit $rc"
grep -q "$f:3: rejected: malformed JSON" "$T/err" || fail "truncated: $(cat "$T/err")"
[ "$(events "$db")" = 2 ] || fail "truncated: events $(events "$db")"

# --strict: one bad line, nothing stored at all (rows, summaries, models), rejects kept
f=$T/strict.jsonl; db=$T/strict.db
{ good a; good b; echo '{"id":"c","ts":0}'; good d; } > "$f"
set +e; "$CONCORD" ingest --db "$db" --strict "$f" 2> "$T/err"; rc=$?; set -e
[ $rc -eq 1 ] || fail "strict: exit $rc"
grep -q 'nothing was stored' "$T/err" || fail "strict: $(cat "$T/err")"
[ "$(events "$db")" = 0 ] && [ "$(summary_events "$db")" = 0 ] || fail "strict: something was stored"
[ "$(sqlite3 "$db" "SELECT count(*) FROM models")" = 0 ] || fail "strict: model was created"
[ "$(sqlite3 "$db" "SELECT count(*) FROM rejects")" = 1 ] || fail "strict: reject not recorded"
# the same file without the bad line goes in whole under --strict
grep -v '"id":"c"' "$f" > "$T/strict_ok.jsonl"
"$CONCORD" ingest --db "$db" --strict "$T/strict_ok.jsonl" 2> "$T/err" || fail "strict ok: exit $?"
[ "$(events "$db")" = 3 ] || fail "strict ok: events $(events "$db")"

# labels: unknown id waits, then applies at ingest; bad label lines refused
db=$T/lab.db
good a > "$T/a.jsonl"
"$CONCORD" ingest --db "$db" --model m --classes ripe,firm,soft "$T/a.jsonl" 2> /dev/null
printf '{"id":"a","label":"firm"}\n{"id":"later","label":2}\n{"id":"a","label":"pear"}\n{"label":1}\n' > "$T/l.jsonl"
set +e; CONCORD_NOW=1800000000 "$CONCORD" label --db "$db" --model m "$T/l.jsonl" 2> "$T/err"; rc=$?; set -e
[ $rc -eq 1 ] || fail "labels: exit $rc"
grep -q "l.jsonl:3: rejected: field 'label': unknown class name 'pear' for model 'm'; classes: 'ripe', 'firm', 'soft'" "$T/err" || fail "labels: $(cat "$T/err")"
grep -q "l.jsonl:4: rejected: field 'id': missing" "$T/err" || fail "labels: $(cat "$T/err")"
grep -q '1 labels applied .* 1 waiting for their event' "$T/err" || fail "labels tally: $(cat "$T/err")"
good later > "$T/later.jsonl"
CONCORD_NOW=1800009999 "$CONCORD" ingest --db "$db" --model m "$T/later.jsonl" 2> "$T/err"
[ "$(sqlite3 "$db" "SELECT label FROM events WHERE id='later'")" = 2 ] || fail "pending label not applied"
[ "$(sqlite3 "$db" "SELECT label_at FROM events WHERE id='later'")" = 1800000000 ] || fail "a waiting label must keep the time it arrived"
[ "$(sqlite3 "$db" "SELECT count(*) FROM pending_labels")" = 0 ] || fail "pending label not cleared"
"$CONCORD" verify --db "$db" --model m > /dev/null || fail "labels: summaries differ from rows"
# --classes that contradict the stored model are refused
set +e; "$CONCORD" ingest --db "$db" --model m --classes a,b,c "$T/a.jsonl" 2> "$T/err"; rc=$?; set -e
[ $rc -eq 1 ] && grep -q 'other class names' "$T/err" || fail "conflicting --classes: rc $rc $(cat "$T/err")"

# usage errors and unreadable files
set +e
"$CONCORD" ingest "$T/a.jsonl" 2> /dev/null; [ $? -eq 2 ] || fail "missing --db: not exit 2"
"$CONCORD" ingest --db "$T/x.db" --bogus "$T/a.jsonl" 2> /dev/null; [ $? -eq 2 ] || fail "unknown option: not exit 2"
"$CONCORD" ingest --db "$T/x.db" "$T/nope.jsonl" 2> "$T/err"; [ $? -eq 3 ] || fail "missing file: not exit 3"
grep -q 'nope.jsonl: cannot open' "$T/err" || fail "missing file message: $(cat "$T/err")"
"$CONCORD" report --db "$T/lab.db" --model nosuch 2> /dev/null; [ $? -eq 4 ] || fail "unknown model: not exit 4"
"$CONCORD" report --db "$T/lab.db" --model m --by month 2> /dev/null; [ $? -eq 2 ] || fail "bad --by: not exit 2"
"$CONCORD" frobnicate 2> /dev/null; [ $? -eq 2 ] || fail "unknown command: not exit 2"
set -e
for c in ingest label baseline report verify demo; do
  "$CONCORD" $c --help | grep -q "usage: concord $c" || fail "$c --help"
done

if [ $fails -ne 0 ]; then echo "bad_input: $fails failures" >&2; exit 1; fi
echo "bad_input: ok"
