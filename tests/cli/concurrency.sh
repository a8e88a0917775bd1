#!/usr/bin/env bash
# concurrency.sh — ingest, label and follow write while report, review,
# show, verify, check and alerts run, all at once, three rounds on fresh
# databases. Every read must succeed (a reader never waits for a writer),
# every verify taken in the middle must find its snapshot consistent, check
# must only ever wait (exit 0, 10 or 11, never 3), and at the end the counts
# and the whole JSON report must equal those of a run that did the same work
# one command after the other.
# Usage: concurrency.sh CONCORD
set -euo pipefail
C=$1
export CONCORD_NOW=1790000000   # the arrival time of delayed labels, so runs compare
T=$(mktemp -d)
PIDS=()
cleanup() {
  for p in "${PIDS[@]}"; do kill "$p" 2> /dev/null || true; wait "$p" 2> /dev/null || true; done
  rm -rf "$T"
}
trap cleanup EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
wait_for() { # WHAT SECONDS COMMAND...: until the command succeeds; the guard only catches hangs
  local what=$1 until=$(( $(date +%s) + $2 )); shift 2
  while ! "$@"; do
    if [ "$(date +%s)" -ge "$until" ]; then echo "HANG: $what" >&2; return 1; fi
    sleep 0.05
  done
}

"$C" demo --dir "$T/d" --per-day 600 > /dev/null
EV=$T/d/events.jsonl
LAB=$T/d/labels.jsonl
CL=premium,extra,class-1,class-2,juice,cull
total=$(wc -l < "$EV")
split=$(( total * 6 / 10 ))
head -n "$split" "$EV" > "$T/a.jsonl"           # read by ingest
tail -n +"$((split + 1))" "$EV" > "$T/b.jsonl"  # appended to the file follow tails
nb=$(wc -l < "$T/b.jsonl")
first_id=$(head -n 1 "$EV" | sed 's/.*"id":"\([^"]*\)".*/\1/')
"$C" rules init -o "$T/rules.json" > /dev/null 2>&1

# the reference: the same work, one command after the other
REF=$T/ref.db
"$C" ingest --db "$REF" --model g --classes "$CL" "$T/a.jsonl" 2> /dev/null
"$C" ingest --db "$REF" --model g "$T/b.jsonl" 2> /dev/null
"$C" label --db "$REF" --model g "$LAB" 2> /dev/null
"$C" report --db "$REF" --model g --format json -o "$T/ref.json"
ref_labeled=$(sqlite3 "$REF" "SELECT count(*) FROM events WHERE label IS NOT NULL")
ref_pending=$(sqlite3 "$REF" "SELECT count(*) FROM pending_labels")

reads=0 overlapped=0
for round in 1 2 3; do
  DB=$T/c$round.db
  # the model exists first (its class names), with the first day
  head -n 600 "$T/a.jsonl" | "$C" ingest --db "$DB" --model g --classes "$CL" - 2> /dev/null
  : > "$T/live$round.jsonl"
  "$C" follow --db "$DB" --model g --interval 20 --chunk 300 "$T/live$round.jsonl" \
    > /dev/null 2> "$T/follow$round.err" &
  FPID=$!; PIDS+=("$FPID")
  "$C" ingest --db "$DB" --model g --batch 25 "$T/a.jsonl" > /dev/null 2> "$T/ingest$round.err" &
  IPID=$!; PIDS+=("$IPID")
  "$C" label --db "$DB" --model g --batch 25 "$LAB" > /dev/null 2> "$T/label$round.err" &
  LPID=$!; PIDS+=("$LPID")
  piece=$(( (nb + 4) / 5 )) appended=0 n=0
  while :; do
    if [ $appended -lt "$nb" ]; then  # follow's file grows a piece per pass
      sed -n "$((appended + 1)),$((appended + piece))p" "$T/b.jsonl" >> "$T/live$round.jsonl"
      appended=$(( appended + piece ))
    fi
    busy=0
    if kill -0 "$IPID" 2> /dev/null || kill -0 "$LPID" 2> /dev/null; then busy=1; fi
    [ "$(sqlite3 "$DB" "SELECT count(*) FROM events")" = "$total" ] || busy=1
    n=$((n + 1))
    "$C" report --db "$DB" --model g --format json -o "$T/mid.json" 2> "$T/e" || fail "round $round: report while writing: $(cat "$T/e")"
    "$C" review --db "$DB" --model g --from 2026-10-01T00:00:00Z --to 2026-12-01T00:00:00Z --limit 5 > /dev/null 2> "$T/e" || fail "round $round: review while writing: $(cat "$T/e")"
    "$C" show --db "$DB" --model g "$first_id" > /dev/null 2> "$T/e" || fail "round $round: show while writing: $(cat "$T/e")"
    "$C" verify --db "$DB" --model g > "$T/v" 2> "$T/e" || fail "round $round: verify of a snapshot taken while writing: $(grep -v ' ok' "$T/v" | head -n 3) $(cat "$T/e")"
    "$C" alerts --db "$DB" > /dev/null 2> "$T/e" || fail "round $round: alerts while writing: $(cat "$T/e")"
    set +e
    "$C" check --db "$DB" --rules "$T/rules.json" --day "$(printf "2026-10-%02d" $((5 + n % 20)))" > /dev/null 2> "$T/e"
    crc=$?
    set -e
    case $crc in 0|10|11) ;; *) fail "round $round: check while writing: exit $crc: $(cat "$T/e")" ;; esac
    reads=$((reads + 6))
    [ $busy = 1 ] && overlapped=$((overlapped + 1))
    [ $busy = 1 ] || [ $appended -lt "$nb" ] || [ "$(sqlite3 "$DB" "SELECT count(*) FROM events")" != "$total" ] || break
  done
  set +e; wait "$IPID"; irc=$?; wait "$LPID"; lrc=$?; set -e
  [ $irc = 0 ] || fail "round $round: ingest exit $irc: $(cat "$T/ingest$round.err")"
  [ $lrc = 0 ] || fail "round $round: label exit $lrc: $(cat "$T/label$round.err")"
  all_in() { [ "$(sqlite3 "$DB" "SELECT count(*) FROM events" 2> /dev/null)" = "$total" ]; }
  wait_for "round $round: follow storing its file" 300 all_in || fail "round $round: $(sqlite3 "$DB" "SELECT count(*) FROM events") events stored, expected $total"
  kill -TERM "$FPID"
  set +e; wait "$FPID"; frc=$?; set -e
  [ $frc = 0 ] || fail "round $round: follow exit $frc: $(cat "$T/follow$round.err")"
  # labels that found no event while their event was still on its way were
  # applied when it arrived; any left now have no event in either run
  labeled=$(sqlite3 "$DB" "SELECT count(*) FROM events WHERE label IS NOT NULL")
  pending=$(sqlite3 "$DB" "SELECT count(*) FROM pending_labels")
  [ "$labeled" = "$ref_labeled" ] || fail "round $round: $labeled labelled events, the reference has $ref_labeled"
  [ "$pending" = "$ref_pending" ] || fail "round $round: $pending labels still waiting, the reference has $ref_pending"
  "$C" report --db "$DB" --model g --format json -o "$T/final.json"
  cmp -s "$T/ref.json" "$T/final.json" || fail "round $round: the final report differs from the one-after-the-other run"
  "$C" verify --db "$DB" --model g --deep > "$T/v" || fail "round $round: final verify: $(grep -v ' ok' "$T/v" | head -n 3)"
  echo "round $round: $n passes of six reads, $total events and $labeled labels exact"
done

if [ $fails -ne 0 ]; then echo "concurrency: $fails failures" >&2; exit 1; fi
echo "concurrency: ok ($reads reads and checks, $overlapped passes while ingest, label or follow still had work; every read succeeded; final reports identical to a sequential run)"
