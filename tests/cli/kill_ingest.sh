#!/usr/bin/env bash
# kill_ingest.sh — kill -9 in the middle of an ingest leaves a consistent
# database (summaries equal rows, exactly the committed batches stored), and
# re-running the same file ends with exactly the summaries of an
# uninterrupted run.
#
# The kills are deterministic: the ingest runs with CONCORD_TESTPOINT set
# (util/testpoint.h), stops at the named point and says so on standard error;
# only then is it killed. No sleeps, no timing.
# Usage: kill_ingest.sh CONCORD
set -euo pipefail
# a fixed arrival time for delayed labels, so reports of separate runs can be compared
export CONCORD_NOW=1790000000
CONCORD=$1
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
HANG_GUARD=600   # seconds to wait for a testpoint before calling it a hang

"$CONCORD" demo --dir "$T/d" --per-day 400 > /dev/null
EV=$T/d/events.jsonl
total=$(wc -l < "$EV")
BATCH=1000
CLASSES=premium,extra,class-1,class-2,juice,cull
"$CONCORD" ingest --db "$T/ref.db" --model g --classes "$CLASSES" "$EV" 2> /dev/null
"$CONCORD" label --db "$T/ref.db" --model g "$T/d/labels.jsonl" 2> /dev/null
"$CONCORD" report --db "$T/ref.db" --model g --format json -o "$T/ref.json"

# run_to POINT DB: starts an ingest of $EV into DB (with --threads $THREADS),
# waits until it reports
# the testpoint POINT (NAME:N), then kills it with SIGKILL. Returns 1 (and
# says why) when the ingest ended or hung without reaching the point.
run_to() {
  local point=$1 db=$2 fifo=$T/stderr.fifo line reached=0
  rm -f "$fifo"; mkfifo "$fifo"
  CONCORD_TESTPOINT=$point "$CONCORD" ingest --db "$db" --model g --classes "$CLASSES" \
    --batch $BATCH --threads "$THREADS" "$EV" 2> "$fifo" &
  local pid=$!
  while IFS= read -r -t $HANG_GUARD line; do
    case $line in
      "concord: testpoint ${point%:*} ${point#*:} reached") reached=1; break ;;
    esac
  done < "$fifo"
  kill -9 "$pid" 2> /dev/null || true
  wait "$pid" 2> /dev/null || true
  if [ $reached -eq 0 ]; then
    echo "ingest did not report testpoint $point (it ended, or hung for $HANG_GUARD s)"
    return 1
  fi
}

# point -> events that must be committed when the process dies there; with
# one thread, and with three threads parsing ahead of the writer (their
# parsed but unstored chunks die with the process)
for THREADS in 1 4; do
for case in ingest-batch-written:1=0 ingest-batch-committed:3=3000 ingest-batch-written:7=6000; do
  point=${case%=*}; want=${case#*=}
  db=$T/crash-${point//:/-}-t$THREADS.db
  if ! why=$(run_to "$point" "$db"); then
    fail "$why"
    continue
  fi
  stored=$(sqlite3 "$db" "SELECT count(*) FROM events" 2> /dev/null || echo "no events table")
  summed=$(sqlite3 "$db" "SELECT coalesce(sum(events),0) FROM summaries" 2> /dev/null || echo "no summaries table")
  [ "$stored" = "$want" ] || fail "killed at $point: expected $want committed rows, found $stored"
  [ "$stored" = "$summed" ] || fail "killed at $point: $stored rows but the summaries count $summed"
  echo "killed at $point (--threads $THREADS): $stored of $total events committed"
  if [ "$stored" != 0 ]; then
    "$CONCORD" verify --db "$db" --model g > "$T/verify" ||
      fail "verify after the kill at $point: expected every day ok, saw: $(grep -v ' ok$' "$T/verify")"
  fi
  # re-run the same file, then the labels: must equal the uninterrupted run
  "$CONCORD" ingest --db "$db" --model g --classes "$CLASSES" --threads "$THREADS" "$EV" 2> "$T/err" ||
    fail "re-run after the kill at $point: expected exit 0, saw: $(cat "$T/err")"
  "$CONCORD" label --db "$db" --model g "$T/d/labels.jsonl" 2> /dev/null
  "$CONCORD" report --db "$db" --model g --format json -o "$T/again.json"
  cmp -s "$T/ref.json" "$T/again.json" ||
    fail "report after the kill at $point and a re-run differs from an uninterrupted run: $(diff "$T/ref.json" "$T/again.json" | head -5)"
  "$CONCORD" verify --db "$db" --model g > "$T/verify" ||
    fail "verify after the re-run ($point): $(grep -v ' ok$' "$T/verify")"
  [ "$(sqlite3 "$db" "SELECT count(*) FROM events")" = "$total" ] ||
    fail "after the kill at $point (--threads $THREADS) and a re-run: $(sqlite3 "$db" "SELECT count(*) FROM events") events, expected each of $total once"
done
done

if [ $fails -ne 0 ]; then echo "kill_ingest: $fails failures" >&2; exit 1; fi
echo "kill_ingest: ok (3 kills at chosen points with 1 and with 4 threads, committed counts exact, re-runs equal the uninterrupted run)"
