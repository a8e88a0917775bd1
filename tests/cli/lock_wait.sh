#!/usr/bin/env bash
# lock_wait.sh — a writer holding the database lock (the sqlite3 shell in
# BEGIN IMMEDIATE, for longer than any wait bound) blocks no reader: report,
# review, show, verify, alerts and backup succeed while it holds it. A
# one-shot writer says once that it waits, waits --wait seconds, then fails
# with exit 3 and a clear message. `follow` does not exit: it says it backs
# off, keeps what it read, and stores it once the lock is released.
# Every step waits for a condition (with a generous hang guard), not a time.
# Usage: lock_wait.sh CONCORD
set -euo pipefail
C=$1
export CONCORD_NOW=1790000000
T=$(mktemp -d)
FPID=
HOLDER=
cleanup() {
  if [ -n "$FPID" ]; then kill "$FPID" 2> /dev/null || true; wait "$FPID" 2> /dev/null || true; fi
  if [ -n "$HOLDER" ]; then exec 3>&- || true; kill "$HOLDER" 2> /dev/null || true; wait "$HOLDER" 2> /dev/null || true; fi
  rm -rf "$T"
}
trap cleanup EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
count() { sqlite3 "$DB" "SELECT count(*) FROM events" 2> /dev/null || echo 0; }
count_is() { [ "$(count)" = "$1" ]; }
wait_for() { # WHAT SECONDS COMMAND...: until the command succeeds; the guard only catches hangs
  local what=$1 until=$(( $(date +%s) + $2 )); shift 2
  while ! "$@"; do
    if [ "$(date +%s)" -ge "$until" ]; then echo "HANG: $what" >&2; return 1; fi
    sleep 0.05
  done
}
locked() { ! sqlite3 "$DB" ".timeout 0" "BEGIN IMMEDIATE;" "ROLLBACK;" > /dev/null 2>&1; }

"$C" demo --dir "$T/d" --per-day 200 > /dev/null
EV=$T/d/events.jsonl
CL=premium,extra,class-1,class-2,juice,cull
DB=$T/w.db
head -n 2000 "$EV" > "$T/part1.jsonl"
sed -n 2001,2600p "$EV" > "$T/part2.jsonl"
sed -n 2601,3000p "$EV" > "$T/part3.jsonl"
"$C" ingest --db "$DB" --model g --classes "$CL" "$T/part1.jsonl" 2> /dev/null
"$C" baseline --db "$DB" --model g --from 2026-10-05 --to 2026-10-11 2> /dev/null
"$C" rules init -o "$T/rules.json" > /dev/null 2>&1

# follow: with a 1 s bound per attempt, on a file that grows
: > "$T/live.jsonl"
"$C" follow --db "$DB" --model g --wait 1 --interval 50 "$T/live.jsonl" > "$T/follow.out" 2> "$T/follow.err" &
FPID=$!
cat "$T/part2.jsonl" >> "$T/live.jsonl"
wait_for "follow storing its first lines" 120 count_is 2600 || fail "follow stored $(count) events, expected 2600"

# the sqlite3 shell takes the write lock and keeps it until told
mkfifo "$T/ctl"
sqlite3 "$DB" < "$T/ctl" > "$T/holder.out" 2>&1 &
HOLDER=$!
exec 3> "$T/ctl"
echo ".timeout 60000" >&3
echo "BEGIN IMMEDIATE;" >&3
wait_for "the sqlite3 shell taking the lock" 120 locked || fail "the sqlite3 shell did not take the lock"

# readers go on
"$C" report --db "$DB" --model g --format json -o "$T/r.json" 2> "$T/e" || fail "report while locked: $(cat "$T/e")"
"$C" review --db "$DB" --model g --from 2026-10-05T00:00:00Z --to 2026-10-20T00:00:00Z > /dev/null 2> "$T/e" || fail "review while locked: $(cat "$T/e")"
"$C" show --db "$DB" --model g "$(head -n 1 "$EV" | sed 's/.*"id":"\([^"]*\)".*/\1/')" > /dev/null 2> "$T/e" || fail "show while locked: $(cat "$T/e")"
"$C" verify --db "$DB" --model g --deep > /dev/null 2> "$T/e" || fail "verify while locked: $(cat "$T/e")"
"$C" alerts --db "$DB" > /dev/null 2> "$T/e" || fail "alerts while locked: $(cat "$T/e")"
"$C" backup --db "$DB" "$T/copy.db" 2> "$T/e" || fail "backup while locked: $(cat "$T/e")"
grep -q waiting "$T/e" && fail "a reader said it waits: $(cat "$T/e")"

# a one-shot writer waits its bound, says so once, then gives up with exit 3
set +e
"$C" ingest --db "$DB" --model g --wait 1 "$T/part3.jsonl" > /dev/null 2> "$T/ing.err"
irc=$?
CONCORD_WAIT=1 "$C" check --db "$DB" --rules "$T/rules.json" --day 2026-10-12 > /dev/null 2> "$T/chk.err"
crc=$?
set -e
[ $irc = 3 ] || fail "ingest against a held lock: exit $irc, expected 3"
[ "$(grep -c 'waiting for the database lock held by another writer' "$T/ing.err")" = 1 ] ||
  fail "ingest did not say once that it waits: $(cat "$T/ing.err")"
grep -q 'another writer held the database lock for more than 1 s; gave up' "$T/ing.err" ||
  fail "ingest's message on giving up: $(cat "$T/ing.err")"
[ $crc = 3 ] || fail "check (CONCORD_WAIT=1) against a held lock: exit $crc, expected 3: $(cat "$T/chk.err")"
grep -q 'waiting for the database lock' "$T/chk.err" || fail "check did not say it waits"

# follow meets the lock with new lines: it backs off (twice at least) and stays up
cat "$T/part3.jsonl" >> "$T/live.jsonl"
backed_off() { [ "$(grep -c 'backing off' "$T/follow.err")" -ge 2 ]; }
wait_for "follow backing off" 120 backed_off || fail "follow did not report backing off: $(cat "$T/follow.err")"
kill -0 "$FPID" 2> /dev/null || fail "follow exited on a locked database: $(cat "$T/follow.err")"
[ "$(count)" = 2600 ] || fail "rows appeared while the lock was held"

# release: follow stores what it read
echo "COMMIT;" >&3
exec 3>&-
wait "$HOLDER" || true
HOLDER=
wait_for "follow storing the lines read while locked" 120 count_is 3000 || fail "after the release follow stored $(count) events, expected 3000"
kill -TERM "$FPID"
set +e; wait "$FPID"; frc=$?; set -e
FPID=
[ $frc = 0 ] || fail "follow stopped with exit $frc: $(cat "$T/follow.err")"
"$C" verify --db "$DB" --model g > "$T/v" || fail "verify after the run: $(tail -n 3 "$T/v")"
"$C" verify --db "$T/copy.db" --model g --deep > "$T/v" || fail "the backup taken while locked: $(tail -n 3 "$T/v")"
[ "$(sqlite3 "$T/copy.db" "SELECT count(*) FROM events")" = 2600 ] || fail "the backup does not hold the 2600 committed events"

if [ $fails -ne 0 ]; then echo "lock_wait: $fails failures" >&2; exit 1; fi
echo "lock_wait: ok (readers unblocked; ingest and check gave up after --wait with exit 3; follow backed off and stored all 3000 events)"
