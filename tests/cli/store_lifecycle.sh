#!/usr/bin/env bash
# store_lifecycle.sh — the store's edges through the real binary: a reading
# command never creates a database; a schema version past 32 bits is refused
# as newer and left as it is; verify finds a deleted summary, a summary
# without rows, and labels or classes out of range, and --deep runs
# integrity_check; prune keeps every report byte for byte, verify still
# proves every day, review and show say the range was pruned, and a
# re-ingest cannot count pruned events twice; backup taken during an ingest
# is consistent; files are created owner-only.
# Usage: store_lifecycle.sh CONCORD
set -euo pipefail
C=$1
export CONCORD_NOW=1790000000
umask 022   # what a usual login has: concord must still make its files owner-only
T=$(mktemp -d)
IPID=
cleanup() {
  if [ -n "$IPID" ]; then kill "$IPID" 2> /dev/null || true; wait "$IPID" 2> /dev/null || true; fi
  rm -rf "$T"
}
trap cleanup EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
expect_rc() { # WANT WHAT COMMAND...
  local want=$1 what=$2 rc; shift 2
  set +e; "$@" > "$T/out" 2> "$T/err"; rc=$?; set -e
  [ "$rc" = "$want" ] || fail "$what: exit $rc, expected $want: $(head -c 300 "$T/err")"
}
mode() { stat -c %a "$1"; }
wait_for() { # WHAT SECONDS COMMAND...
  local what=$1 until=$(( $(date +%s) + $2 )); shift 2
  while ! "$@"; do
    if [ "$(date +%s)" -ge "$until" ]; then echo "HANG: $what" >&2; return 1; fi
    sleep 0.05
  done
}

"$C" demo --dir "$T/d" --per-day 300 > /dev/null
EV=$T/d/events.jsonl
CL=premium,extra,class-1,class-2,juice,cull
DB=$T/s.db
"$C" ingest --db "$DB" --model g --classes "$CL" "$EV" 2> /dev/null
"$C" label --db "$DB" --model g "$T/d/labels.jsonl" 2> /dev/null
"$C" baseline --db "$DB" --model g --from 2026-10-05 --to 2026-10-11 2> /dev/null

# --- file modes: database, WAL and its index, outputs, demo files
"$C" report --db "$DB" --model g --format json -o "$T/before.json"   # a reader leaves -wal and -shm
for f in "$DB" "$DB-wal" "$DB-shm" "$T/before.json" "$T/d/demo.db" "$T/d/events.jsonl" "$T/d/report.html"; do
  if [ -e "$f" ]; then [ "$(mode "$f")" = 600 ] || fail "$f has mode $(mode "$f"), expected 600"
  else fail "$f was not made"; fi
done
[ "$(mode "$T/d")" = 700 ] || fail "the demo folder has mode $(mode "$T/d"), expected 700"

# --- a reading command never creates a database
for cmd in "report --model g" "review --model g --from 2026-10-05T00:00:00Z --to 2026-10-06T00:00:00Z" \
           "show --model g x" "verify --model g" "alerts --format text" "prune --model g --before 2026-10-08 --dry-run"; do
  expect_rc 3 "${cmd%% *} of a missing database" "$C" ${cmd%% *} --db "$T/missing.db" ${cmd#* }
  grep -q 'no such database' "$T/err" || fail "${cmd%% *} of a missing database: unclear message: $(cat "$T/err")"
done
expect_rc 3 "backup of a missing database" "$C" backup --db "$T/missing.db" "$T/x.db"
expect_rc 3 "label into a missing database" "$C" label --db "$T/missing.db" --model g "$T/d/labels.jsonl"
[ ! -e "$T/missing.db" ] || fail "a missing database was created"

# --- the schema version is a 64-bit number: 2^32 + 1 is newer, not 1
V=$T/v.db
cp "$DB" "$V"
sqlite3 "$V" "UPDATE meta SET value = '4294967297' WHERE key = 'schema_version'"
expect_rc 3 "report of schema version 4294967297" "$C" report --db "$V" --model g
grep -q 'schema version 4294967297 is newer' "$T/err" || fail "report: $(cat "$T/err")"
expect_rc 3 "ingest into schema version 4294967297" "$C" ingest --db "$V" --model g "$EV"
grep -q 'schema version 4294967297 is newer' "$T/err" || fail "ingest: $(cat "$T/err")"
[ "$(sqlite3 "$V" "SELECT value FROM meta WHERE key = 'schema_version'")" = 4294967297 ] ||
  fail "the newer schema version was overwritten"

# --- verify: what it must find
"$C" verify --db "$DB" --model g --deep > "$T/v" || fail "verify of a sound database: $(grep -v ' ok' "$T/v")"
grep -q '^integrity_check: ok$' "$T/v" || fail "verify --deep printed no integrity_check result"
day_n() { sqlite3 "$DB" "SELECT day FROM summaries ORDER BY day LIMIT 1 OFFSET $1"; }
cp "$DB" "$T/v1.db"; sqlite3 "$T/v1.db" "DELETE FROM summaries WHERE day = $(day_n 3)"
expect_rc 1 "verify of a deleted summary row" "$C" verify --db "$T/v1.db" --model g
grep -q 'MISSING SUMMARY' "$T/out" || fail "verify did not name the day without a summary: $(tail -n 2 "$T/out")"
grep -q '1 days with rows but no summary' "$T/out" || fail "verify's count of days without a summary: $(tail -n 1 "$T/out")"
cp "$DB" "$T/v2.db"; sqlite3 "$T/v2.db" "DELETE FROM events WHERE day = $(day_n 4)"
expect_rc 1 "verify of a summary whose rows were deleted" "$C" verify --db "$T/v2.db" --model g
grep -q 'a summary without event rows and without a pruned record' "$T/out" || fail "verify of a summary without rows: $(grep -v ' ok' "$T/out")"
cp "$DB" "$T/v3.db"
id1=$(sqlite3 "$T/v3.db" "SELECT id FROM events WHERE label IS NOT NULL ORDER BY id LIMIT 1")
id2=$(sqlite3 "$T/v3.db" "SELECT id FROM events ORDER BY id LIMIT 1 OFFSET 7")
sqlite3 "$T/v3.db" "UPDATE events SET label = 6 WHERE id = '$id1'; UPDATE events SET pred = -1 WHERE id = '$id2';"
expect_rc 1 "verify of out-of-range classes" "$C" verify --db "$T/v3.db" --model g
grep -q "label 6 of event '$id1' is outside 0..K-1" "$T/out" || fail "verify missed label 6 (K = 6): $(grep -v ' ok' "$T/out")"
grep -q "pred -1 of event '$id2' is outside 0..K-1" "$T/out" || fail "verify missed pred -1: $(grep -v ' ok' "$T/out")"
grep -q '2 class indexes out of range' "$T/out" || fail "verify's count of bad class indexes: $(tail -n 1 "$T/out")"

# --- prune
first_id=$(head -n 1 "$EV" | sed 's/.*"id":"\([^"]*\)".*/\1/')
before_rows=$(sqlite3 "$DB" "SELECT count(*) FROM events")
pruned_rows=$(sqlite3 "$DB" "SELECT count(*) FROM events WHERE day < (SELECT day FROM summaries ORDER BY day LIMIT 1 OFFSET 3)")
"$C" prune --db "$DB" --model g --before 2026-10-08 > "$T/p" 2> "$T/e" || fail "prune: $(cat "$T/e")"
grep -q "3 days before 2026-10-08 pruned, $pruned_rows event rows deleted" "$T/e" || fail "prune's summary line: $(cat "$T/e")"
[ "$(sqlite3 "$DB" "SELECT count(*) FROM events")" = $((before_rows - pruned_rows)) ] || fail "prune deleted the wrong rows"
"$C" report --db "$DB" --model g --format json -o "$T/after.json"
cmp -s "$T/before.json" "$T/after.json" || fail "the report changed after pruning"
"$C" report --db "$DB" --model g --by all --format json -o "$T/all.json" || fail "report --by all after pruning"
"$C" verify --db "$DB" --model g > "$T/v" || fail "verify after pruning: $(grep -v ' ok' "$T/v")"
[ "$(grep -c ' ok (pruned)$' "$T/v")" = 3 ] || fail "verify does not show the three pruned days as proven: $(head -n 4 "$T/v")"
"$C" review --db "$DB" --model g --from 2026-10-05T00:00:00Z --to 2026-10-06T23:59:59Z > "$T/r" 2> "$T/e" || fail "review of a pruned range: exit $?"
grep -q 'note: 2 days from 2026-10-05 to 2026-10-06 were pruned: the event rows of 600 events are gone' "$T/e" || fail "review did not say the range was pruned: $(cat "$T/e")"
expect_rc 4 "show of a pruned event" "$C" show --db "$DB" --model g "$first_id"
grep -q 'were pruned' "$T/err" || fail "show did not say days were pruned: $(cat "$T/err")"
# re-reading the whole file: pruned days are refused, nothing is counted twice
expect_rc 1 "re-ingest after pruning" "$C" ingest --db "$DB" --model g "$EV"
grep -q "model 'g' was pruned up to 2026-10-07" "$T/err" || fail "re-ingest: no reason for pruned days: $(head -n 2 "$T/err")"
grep -q "$pruned_rows rejected" "$T/err" || fail "re-ingest: expected $pruned_rows rejected lines: $(tail -n 2 "$T/err")"
"$C" report --db "$DB" --model g --format json -o "$T/again.json"
cmp -s "$T/before.json" "$T/again.json" || fail "the report changed after re-reading the file into a pruned database"
"$C" verify --db "$DB" --model g --deep > "$T/v" || fail "verify after the re-ingest: $(grep -v ' ok' "$T/v")"
# pruning again is a no-op; a later date prunes on
"$C" prune --db "$DB" --model g --before 2026-10-08 > /dev/null 2> "$T/e" || fail "prune again"
grep -q '0 days before' "$T/e" || fail "pruning again pruned something: $(cat "$T/e")"
expect_rc 2 "prune without --before" "$C" prune --db "$DB" --model g
expect_rc 4 "prune of an unknown model" "$C" prune --db "$DB" --model nope --before 2026-10-08

# --- backup while an ingest runs: the ingest has stored its first file and
# waits, with an open write transaction, for its second, a pipe
B=$T/b.db
mkfifo "$T/feed"
head -n 1000 "$EV" > "$T/first.jsonl"
"$C" ingest --db "$B" --model g --classes "$CL" --batch 50 "$T/first.jsonl" "$T/feed" > /dev/null 2> "$T/ingest.err" &
IPID=$!
thousand() { [ "$(sqlite3 "$B" "SELECT count(*) FROM events" 2> /dev/null || echo 0)" = 1000 ]; }
wait_for "the ingest committing its first 1000 lines" 120 thousand || fail "the first 20 batches were not committed"
has_lock() { ! sqlite3 "$B" ".timeout 0" "BEGIN IMMEDIATE;" "ROLLBACK;" > /dev/null 2>&1; }
wait_for "the ingest holding the write lock" 120 has_lock || fail "the ingest holds no write transaction"
"$C" backup --db "$B" "$T/copy.db" 2> "$T/e" || fail "backup during ingest: $(cat "$T/e")"
kill -0 "$IPID" 2> /dev/null || fail "the ingest was not running during the backup"
timeout 120 sh -c 'tail -n +1001 "$1" > "$2"' sh "$EV" "$T/feed" || fail "the ingest did not read its second file"
wait "$IPID" || fail "the ingest beside the backup failed: $(cat "$T/ingest.err")"
IPID=
"$C" verify --db "$T/copy.db" --model g --deep > "$T/v" || fail "the copy taken during an ingest: $(grep -v ' ok' "$T/v")"
[ "$(sqlite3 "$T/copy.db" "PRAGMA integrity_check")" = ok ] || fail "the copy fails integrity_check"
copied=$(sqlite3 "$T/copy.db" "SELECT count(*) FROM events")
[ "$copied" = 1000 ] || fail "the copy holds $copied events, expected the 1000 committed before it"
[ "$(sqlite3 "$T/copy.db" "SELECT sum(events) FROM summaries")" = 1000 ] || fail "the copy's summaries do not count its 1000 rows"
[ "$(sqlite3 "$B" "SELECT count(*) FROM events")" = "$(wc -l < "$EV")" ] || fail "the ingest did not finish after the backup"
[ "$(mode "$T/copy.db")" = 600 ] || fail "the copy has mode $(mode "$T/copy.db")"
ls "$T" | grep -q 'copy.db.tmp' && fail "a temporary file of the backup was left"
expect_rc 3 "backup over an existing file" "$C" backup --db "$B" "$T/copy.db"
grep -q 'exists already' "$T/err" || fail "backup over an existing file: $(cat "$T/err")"

if [ $fails -ne 0 ]; then echo "store_lifecycle: $fails failures" >&2; exit 1; fi
echo "store_lifecycle: ok (the copy taken while an ingest held its write transaction holds the $copied events committed before it)"
