#!/usr/bin/env bash
# kill_ingest.sh — kill -9 in the middle of an ingest leaves a consistent
# database (summaries equal rows), and re-running the same file ends with
# exactly the summaries of an uninterrupted run.
# Usage: kill_ingest.sh CONCORD
set -euo pipefail
# a fixed arrival time for delayed labels, so reports of separate runs can be compared
export CONCORD_NOW=1790000000
CONCORD=$1
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }

"$CONCORD" demo --dir "$T/d" --per-day 4000 > /dev/null
EV=$T/d/events.jsonl
total=$(wc -l < "$EV")
CLASSES=premium,extra,class-1,class-2,juice,cull
"$CONCORD" ingest --db "$T/ref.db" --model g --classes "$CLASSES" "$EV" 2> /dev/null
"$CONCORD" label --db "$T/ref.db" --model g "$T/d/labels.jsonl" 2> /dev/null
"$CONCORD" report --db "$T/ref.db" --model g --format json -o "$T/ref.json"

killed_midway=0
for delay in 0.15 0.4 0.8; do
  db=$T/crash-$delay.db
  "$CONCORD" ingest --db "$db" --model g --classes "$CLASSES" --batch 1000 "$EV" 2> /dev/null &
  pid=$!
  sleep "$delay"
  if kill -9 "$pid" 2> /dev/null; then killed_midway=$((killed_midway + 1)); fi
  wait "$pid" 2> /dev/null || true
  if [ -f "$db" ] && sqlite3 "$db" "SELECT 1 FROM sqlite_master WHERE name='events'" | grep -q 1; then
    stored=$(sqlite3 "$db" "SELECT count(*) FROM events")
    summed=$(sqlite3 "$db" "SELECT coalesce(sum(events),0) FROM summaries")
    [ "$stored" = "$summed" ] || fail "after kill at $delay s: $stored rows but summaries count $summed"
    echo "killed after $delay s: $stored of $total events committed"
    if [ "$stored" -gt 0 ]; then
      "$CONCORD" verify --db "$db" --model g > "$T/verify" || fail "verify after kill at $delay s: $(grep -v ' ok$' "$T/verify")"
    fi
  fi
  # re-run the same file, then the labels: must equal the uninterrupted run
  # --classes again: under load the kill can come before the model was created
  "$CONCORD" ingest --db "$db" --model g --classes "$CLASSES" "$EV" 2> "$T/err" || fail "re-run after kill at $delay s: $(cat "$T/err")"
  "$CONCORD" label --db "$db" --model g "$T/d/labels.jsonl" 2> /dev/null
  "$CONCORD" report --db "$db" --model g --format json -o "$T/again.json"
  cmp -s "$T/ref.json" "$T/again.json" || fail "report after kill at $delay s and re-run differs from an uninterrupted run"
  "$CONCORD" verify --db "$db" --model g > /dev/null || fail "verify after re-run ($delay s)"
done
[ $killed_midway -ge 1 ] || fail "no ingest was still running when killed: the test proved nothing"

if [ $fails -ne 0 ]; then echo "kill_ingest: $fails failures" >&2; exit 1; fi
echo "kill_ingest: ok ($killed_midway of 3 runs killed mid-way)"
