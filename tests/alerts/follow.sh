#!/usr/bin/env bash
# follow.sh — `concord follow`: lines appended in pieces (a half-written
# line waits for its end), a file that appears late, rotation (lines still
# written to the old file are read before the new one), truncation, the
# check when a UTC day closes (CONCORD_NOW starts the clock seconds before
# midnight), SIGTERM stopping cleanly, and a stop in the middle of a burst
# losing no line: the committed offset matches the stored events, and a
# restart resumes there without re-reading.
# Usage: follow.sh CONCORD TESTDIR
set -euo pipefail
C=$1
SRC=$2
T=$(mktemp -d)
FPID=
cleanup() {
  if [ -n "$FPID" ]; then kill "$FPID" 2> /dev/null || true; wait "$FPID" 2> /dev/null || true; fi
  rm -rf "$T"
}
trap cleanup EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
count() { sqlite3 "$1" "SELECT count(*) FROM events" 2> /dev/null || echo 0; }
count_is() { [ "$(count "$1")" = "$2" ]; }
count_above() { [ "$(count "$1")" -gt "$2" ]; }
# hang guards only (generous: a loaded machine is slow); no step is timed
wait_for() { # SECONDS COMMAND...: until the command succeeds
  local until=$(( $(date +%s) + $1 )); shift
  while ! "$@"; do [ "$(date +%s)" -lt "$until" ] || return 1; sleep 0.1; done
}
stop_follow() { # SIGNAL -> FRC
  kill "-$1" "$FPID"
  set +e; wait "$FPID"; FRC=$?; set -e
  FPID=
}

python3 "$SRC/gen_days.py" "$T/d1.jsonl" --start 2026-03-01 --pattern agree --prefix a
python3 "$SRC/gen_days.py" "$T/d2.jsonl" --start 2026-03-02 --pattern split --prefix b
python3 "$SRC/gen_days.py" "$T/o1.jsonl" --start 2026-03-02 --pattern split --prefix c --per-day 5
python3 "$SRC/gen_days.py" "$T/o2.jsonl" --start 2026-03-02 --pattern split --prefix d --per-day 5
cat > "$T/rules.jsonc" <<'JSON'
{"rules": [{"name": "split", "metric": "diversity.disagreement.mean", "above": 0.5,
            "min_events": 10, "urgency": "high"}]}
JSON
DB=$T/f.db
E=$T/events.jsonl
{ cat "$T/d1.jsonl"; sed -n 1,10p "$T/d2.jsonl"; sed -n 11p "$T/d2.jsonl" | head -c 30; } > "$E"
# the clock starts 20 s before 2026-03-03 00:00 UTC; day 2026-03-02 closes then.
# The rule fires on that day's first 10 events, which the first chunks store
# well before (the count 50 below is reached first on any machine).
NOW=$(( $(date -u -d 2026-03-03 +%s) - 20 ))
CONCORD_NOW=$NOW timeout 900 "$C" follow --db "$DB" --model m --rules "$T/rules.jsonc" \
  --webhook "file:$T/sink.jsonl" --interval 100 --grace 0 --chunk 7 "$E" "$T/other.jsonl" \
  > "$T/out" 2> "$T/err" &
FPID=$!
wait_for 180 count_is "$DB" 50 || fail "first lines: $(count "$DB") events, expected 50"
grep -q 'other.jsonl: not there yet' "$T/err" || fail "the missing file is not reported"
# finish the half-written line, append more
{ sed -n 11p "$T/d2.jsonl" | tail -c +31; sed -n 12,20p "$T/d2.jsonl"; } >> "$E"
wait_for 180 count_is "$DB" 60 || fail "appended lines: $(count "$DB") events, expected 60"
# rotation: one more line reaches the old file after the rename
mv "$E" "$E.1"
sed -n 21p "$T/d2.jsonl" >> "$E.1"
sed -n 22,30p "$T/d2.jsonl" > "$E"
wait_for 180 count_is "$DB" 70 || fail "rotation: $(count "$DB") events, expected 70"
grep -q 'events.jsonl: rotated' "$T/err" || fail "rotation not reported"
# a file that appears late, then is truncated and rewritten
cp "$T/o1.jsonl" "$T/other.jsonl"
wait_for 180 count_is "$DB" 75 || fail "late file: $(count "$DB") events, expected 75"
: > "$T/other.jsonl"
wait_for 180 grep -q 'other.jsonl: truncated' "$T/err" || fail "truncation not reported"
cp "$T/o2.jsonl" "$T/other.jsonl"
wait_for 180 count_is "$DB" 80 || fail "after truncation: $(count "$DB") events, expected 80"
# the day closes: the check runs for 2026-03-02 and the rule fires once
wait_for 180 grep -q '^concord check 2026-03-02' "$T/out" || fail "no check after the day closed: $(cat "$T/out")"
wait_for 180 test -s "$T/sink.jsonl" || fail "no notification delivered"
grep -q '^concord check 2026-03-01' "$T/out" || fail "the day already closed at start was not checked"
stop_follow TERM
[ "$FRC" -eq 0 ] || fail "follow exit $FRC after SIGTERM: $(cat "$T/err")"
grep -q 'concord follow: stopped; 80 lines, 80 events stored, 0 duplicates, 0 rejected' "$T/err" ||
  fail "summary: $(tail -1 "$T/err")"
[ -f "$T/sink.jsonl" ] && [ "$(wc -l < "$T/sink.jsonl")" -eq 1 ] && grep -q '"notice_id":"m/split/raised/2026-03-02"' "$T/sink.jsonl" ||
  fail "sink: $(cat "$T/sink.jsonl")"
[ "$(sqlite3 "$DB" "SELECT count(DISTINCT id) FROM events")" = 80 ] || fail "ids not unique"
echo "follow: pieces, rotation, truncation, late file, day-close check ok"

# a stop in the middle of a burst loses nothing; a restart resumes there
python3 "$SRC/gen_days.py" "$T/burst.jsonl" --start 2026-03-01 --pattern agree --per-day 20000 --prefix z
B=$T/b.db
timeout 900 "$C" follow --db "$B" --model m --interval 50 --chunk 20 "$T/burst.jsonl" 2> "$T/err1" &
FPID=$!
wait_for 180 count_above "$B" 0 || fail "burst: nothing stored"
stop_follow INT
[ "$FRC" -eq 0 ] || fail "burst: exit $FRC after SIGINT"
n1=$(count "$B")
line1=$(sqlite3 "$B" "SELECT line FROM follow_offsets")
off1=$(sqlite3 "$B" "SELECT offset FROM follow_offsets")
[ "$n1" = "$line1" ] || fail "burst: $n1 events stored but the committed offset says $line1 lines"
[ "$off1" = "$(head -n "$line1" "$T/burst.jsonl" | wc -c)" ] || fail "burst: offset $off1 is not the end of line $line1"
timeout 900 "$C" follow --db "$B" --model m --interval 50 --chunk 5000 "$T/burst.jsonl" 2> "$T/err2" &
FPID=$!
wait_for 180 count_is "$B" 20000 || fail "burst: restart stored $(count "$B") of 20000"
stop_follow TERM
grep -q "$((20000 - n1)) events stored, 0 duplicates" "$T/err2" || fail "burst: the restart re-read lines: $(tail -1 "$T/err2")"
echo "follow: stopped after $n1 of 20000 lines with the offset committed; restart completed without duplicates"

# a bad line is refused under its own file name and line number
R=$T/r.db
{ sed -n 1,3p "$T/d1.jsonl"; echo '{"id":"bad","ts":0}'; sed -n 4,5p "$T/d1.jsonl"; } > "$T/bad.jsonl"
timeout 900 "$C" follow --db "$R" --model m --interval 50 "$T/bad.jsonl" 2> "$T/err3" &
FPID=$!
wait_for 180 count_is "$R" 5 || fail "bad line: $(count "$R") events, expected 5"
stop_follow TERM
grep -q "$T/bad.jsonl:4: rejected: field 'probs': missing" "$T/err3" || fail "bad line message: $(cat "$T/err3")"
[ "$(sqlite3 "$R" "SELECT source || ':' || line FROM rejects")" = "$T/bad.jsonl:4" ] ||
  fail "rejects table: $(sqlite3 "$R" "SELECT source, line FROM rejects")"
echo "follow: a bad line is refused with its file and line"

[ $fails -eq 0 ] || { echo "follow: $fails failure(s)" >&2; exit 1; }
echo "follow: ok"
