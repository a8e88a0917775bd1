#!/usr/bin/env bash
# serve_durability.sh — "a 2xx means committed", through stops and crashes.
# Four clients post 200,000 invented events in 1,000-event gzip batches and
# retry every batch until it is answered with 2xx (post_batches.py). Under
# that load the server is
#   1. stopped with SIGTERM: it exits 0, and every batch answered so far is
#      stored, whole;
#   2. restarted, and killed with SIGKILL at a point the test chooses: just
#      after its 10th group transaction committed, before that group is
#      answered (testpoint serve-group-committed:10);
#   3. restarted, and left to serve until the clients are done.
# At the end every batch was answered, each batch's 1,000 events are stored
# exactly once (200,000 rows, 200,000 distinct ids), verify finds summaries
# equal to the rows, and the batches committed but not answered at the kill
# came back as duplicates when retried.
# Usage: serve_durability.sh CONCORD
set -euo pipefail
CONCORD=$1
T=$(mktemp -d)
SPID=
CPID=
trap '[ -n "$SPID" ] && kill -9 $SPID 2> /dev/null; [ -n "$CPID" ] && kill $CPID 2> /dev/null; rm -rf "$T"' EXIT
HANG_GUARD=900
export HANG_GUARD
HERE=$(dirname "$0")
. "$HERE/lib.sh"
DB=$T/d.db
EVENTS=${SERVE_DURABILITY_EVENTS:-200000}
BATCHES=$((EVENTS / 1000))

# every batch acknowledged in ACK_FILE so far has its 1,000 rows
check_acked() {
  local what=$1 bad
  cut -d' ' -f1 "$T/acks" | sort -un > "$T/acked"
  sqlite3 "$DB" "SELECT substr(id, 1, instr(id, '-e') - 1), count(*) FROM events GROUP BY 1" |
    sed 's/^c[0-9]*-b//' | sort -t'|' -k1,1n > "$T/stored"
  bad=$(awk -F'|' 'NR == FNR { n[$1] = $2; next } n[$1] != 1000 { print $1 }' "$T/stored" "$T/acked" | head -5)
  [ -z "$bad" ] || fail "$what: acknowledged batches not stored whole: $bad"
  echo "$what: $(wc -l < "$T/acked") batches acknowledged, all stored whole"
}

start_server "$T/a.log" --db "$DB" --listen 127.0.0.1:0
echo "$SPORT" > "$T/port"
: > "$T/acks"
/usr/bin/python3 "$HERE/post_batches.py" "$T/port" "$T/acks" --events "$EVENTS" > "$T/clients.out" &
CPID=$!

# 1. SIGTERM once 20 batches are answered
i=0
while [ "$(wc -l < "$T/acks")" -lt 20 ]; do
  i=$((i + 1))
  [ $i -lt $((HANG_GUARD * 10)) ] || { fail "HANG: 20 batches not answered"; exit 1; }
  kill -0 $CPID 2> /dev/null || { fail "the clients ended early"; exit 1; }
  sleep 0.1
done
stop_server || fail "SIGTERM under load: exit status not 0"
check_acked "after SIGTERM"

# 2. restart; SIGKILL just after the 10th commit, before its answers
fifo=$T/tp.fifo
mkfifo "$fifo"
CONCORD_TESTPOINT=serve-group-committed:10 "$CONCORD" serve --db "$DB" --listen 127.0.0.1:0 2> "$fifo" &
SPID=$!
reached=0
while IFS= read -r -t $HANG_GUARD line; do
  case $line in
    *"listening on http://"*) p=${line##*:}; echo "${p%% *}" > "$T/port" ;;
    *"testpoint serve-group-committed 10 reached"*) reached=1; break ;;
  esac
done < "$fifo"
expect "killed at the testpoint" "$reached" 1
kill -9 $SPID
wait $SPID 2> /dev/null || true
SPID=
check_acked "after SIGKILL"

# 3. restart and let the clients finish
start_server "$T/c.log" --db "$DB" --listen 127.0.0.1:0
echo "$SPORT" > "$T/port"
crc=0
wait $CPID || crc=$?
CPID=
expect "clients ended" "$crc" 0
stop_server || fail "final SIGTERM: exit status not 0"

expect "batches answered" "$(cut -d' ' -f1 "$T/acks" | sort -u | wc -l)" "$BATCHES"
expect "rows, distinct ids" "$(sqlite3 "$DB" 'SELECT count(*), count(DISTINCT id) FROM events')" "$EVENTS|$EVENTS"
check_acked "at the end"
dups=$(awk '$3 > 0' "$T/acks" | wc -l)
[ "$dups" -ge 1 ] || fail "no batch came back as duplicates after the kill between commit and answer"
# each batch's one answer: accepted + duplicates = 1,000 (duplicates where
# the first attempt had committed unanswered)
expect "accepted + duplicates over all answers" "$(awk '{ s += $2 + $3 } END { print s }' "$T/acks")" "$EVENTS"
"$CONCORD" verify --db "$DB" --model d > /dev/null || fail "verify"

finish serve_durability "$dups batches were retried after the kill and found stored"
