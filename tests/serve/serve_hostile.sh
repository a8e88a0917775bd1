#!/usr/bin/env bash
# serve_hostile.sh — `concord serve` against requests it must refuse, and
# clients that misbehave: a non-loopback address without a token, missing
# and wrong tokens, read versus write tokens, oversized bodies (plain,
# chunked, a gzip bomb), broken gzip, wrong content types, unknown paths,
# models and methods, no Content-Length, a full queue (429 with
# Retry-After, readyz 503; the writer held at a testpoint), slow clients
# (dropped: bounded-time checks) and 1,000 idle connections.
# Every error answer is JSON {"error":{"status":N,"message":...}}.
# Usage: serve_hostile.sh CONCORD
set -euo pipefail
CONCORD=$1
T=$(mktemp -d)
SPID=
trap '[ -n "$SPID" ] && kill -9 $SPID 2> /dev/null; rm -rf "$T"' EXIT
HANG_GUARD=300
export HANG_GUARD
HERE=$(dirname "$0")
. "$HERE/lib.sh"

# call NAME WANT_STATUS CURL_ARGS... : the status, and an error body that
# carries the same status
call() {
  local name=$1 want=$2 code
  shift 2
  code=$(curl -s -m $HANG_GUARD -o "$T/body" -w '%{http_code}' "$@" || true)
  expect "$name: status" "$code" "$want"
  if [ "$want" -ge 400 ]; then
    local st
    st=$(/usr/bin/python3 -c 'import json,sys; print(json.load(open(sys.argv[1]))["error"]["status"])' "$T/body" 2> /dev/null || echo "not JSON")
    expect "$name: error body's status" "$st" "$want"
  fi
}

# refused at start: a non-loopback address without a write token (exit 2)
rc=0
"$CONCORD" serve --db "$T/x.db" --listen 0.0.0.0:0 2> "$T/refuse.log" || rc=$?
expect "non-loopback without a token: exit" "$rc" 2
grep -q "without a write token" "$T/refuse.log" || fail "the refusal does not say why: $(cat "$T/refuse.log")"
rc=0
"$CONCORD" serve --db "$T/x.db" --token secret 2> /dev/null || rc=$?
expect "a token on the command line is no option" "$rc" 2

printf 'w-7f3a9c1e\n' > "$T/w.tok"
printf 'r-22b8d0aa\n' > "$T/r.tok"
URL=
start_server "$T/s.log" --db "$T/s.db" --listen 127.0.0.1:0 --token-file "$T/w.tok" \
  --read-token-file "$T/r.tok" --max-body 1 --max-decoded 4 --idle-timeout 2 \
  --request-timeout 4
URL=http://127.0.0.1:$SPORT
W=(-H 'Authorization: Bearer w-7f3a9c1e')
R=(-H 'Authorization: Bearer r-22b8d0aa')
J=(-H 'Content-Type: application/x-ndjson')
echo '{"id":"a1","ts":"2026-11-20T10:00:00Z","probs":[[0.5,0.5],[0.5,0.5]]}' > "$T/one.jsonl"

call "healthz needs no token" 200 "$URL/v1/healthz"
call "readyz" 200 "$URL/v1/readyz"
call "POST without a token" 401 "${J[@]}" --data-binary @"$T/one.jsonl" "$URL/v1/models/m/events"
call "POST with a wrong token" 403 "${J[@]}" -H 'Authorization: Bearer nope' --data-binary @"$T/one.jsonl" "$URL/v1/models/m/events"
call "POST with the read token" 403 "${J[@]}" "${R[@]}" --data-binary @"$T/one.jsonl" "$URL/v1/models/m/events"
call "POST with the write token" 200 "${J[@]}" "${W[@]}" --data-binary @"$T/one.jsonl" "$URL/v1/models/m/events"
call "GET metrics without a token" 401 "$URL/v1/metrics"
call "GET metrics, read token" 200 "${R[@]}" "$URL/v1/metrics"
call "GET models, write token" 200 "${W[@]}" "$URL/v1/models"
call "POST text/plain" 415 -H 'Content-Type: text/plain' "${W[@]}" --data-binary @"$T/one.jsonl" "$URL/v1/models/m/events"
call "POST application/jsonl" 200 -H 'Content-Type: application/jsonl' "${W[@]}" --data-binary @"$T/one.jsonl" "$URL/v1/models/m/events"
call "POST with Content-Encoding br" 415 "${J[@]}" -H 'Content-Encoding: br' "${W[@]}" --data-binary @"$T/one.jsonl" "$URL/v1/models/m/events"
call "unknown model's report" 404 "${R[@]}" "$URL/v1/models/nope/report"
call "a model name of 300 bytes" 400 "${R[@]}" "$URL/v1/models/$(head -c 300 /dev/zero | tr '\0' n)/report"
call "unknown path" 404 "${R[@]}" "$URL/v2/anything"
call "GET on the events path" 405 "${R[@]}" "$URL/v1/models/m/events"
grep -qi '^allow: POST' <(curl -s -m $HANG_GUARD -D - -o /dev/null "${R[@]}" "$URL/v1/models/m/events") ||
  fail "405 without an Allow header"

# bodies over the caps: 1 MiB on the wire, 4 MiB decoded
head -c $((2 << 20)) /dev/zero | tr '\0' ' ' > "$T/big"
call "2 MiB body (Content-Length)" 413 "${J[@]}" "${W[@]}" --data-binary @"$T/big" "$URL/v1/models/m/events"
call "2 MiB body (chunked)" 413 "${J[@]}" "${W[@]}" -H 'Transfer-Encoding: chunked' --data-binary @"$T/big" "$URL/v1/models/m/events"
/usr/bin/python3 -c '
import sys, zlib
z = zlib.compressobj(9, zlib.DEFLATED, 31)
out = open(sys.argv[1], "wb")
chunk = b"\n" * (1 << 20)
for _ in range(256):               # 256 MiB of newlines
    out.write(z.compress(chunk))
out.write(z.flush())' "$T/bomb.gz"
[ "$(stat -c %s "$T/bomb.gz")" -lt $((1 << 20)) ] || fail "the gzip bomb is not under the wire cap"
call "gzip bomb" 413 "${J[@]}" "${W[@]}" -H 'Content-Encoding: gzip' --data-binary @"$T/bomb.gz" "$URL/v1/models/m/events"
call "not gzip" 400 "${J[@]}" "${W[@]}" -H 'Content-Encoding: gzip' --data-binary @"$T/one.jsonl" "$URL/v1/models/m/events"
gzip -c "$T/one.jsonl" | head -c 20 > "$T/cut.gz"
call "gzip cut short" 400 "${J[@]}" "${W[@]}" -H 'Content-Encoding: gzip' --data-binary @"$T/cut.gz" "$URL/v1/models/m/events"
expect "no Content-Length" "$(TOKEN=w-7f3a9c1e /usr/bin/python3 "$HERE/hostile.py" no_length "$SPORT")" 411

# slow clients are dropped: headers that never end (idle timeout 2 s), a
# body trickled forever (request timeout 4 s)
expect "slow headers" "$(/usr/bin/python3 "$HERE/hostile.py" slow_headers "$SPORT")" closed
expect "slow body" "$(TOKEN=w-7f3a9c1e /usr/bin/python3 "$HERE/hostile.py" slow_body "$SPORT")" closed
# 1,000 idle connections, and the server still answers
expect "answers beside 1,000 idle connections" \
  "$(TOKEN=w-7f3a9c1e /usr/bin/python3 "$HERE/hostile.py" idle "$SPORT" 1000)" "200 200"
call "still answering" 200 "$URL/v1/healthz"
stop_server || fail "serve did not exit 0 on SIGTERM"

# a full queue: the writer is held at a testpoint after its first commit
# (its request is not answered), one request waits in the queue (--queue 1),
# the next is refused with 429 and Retry-After, and readyz says 503
fifo=$T/tp.fifo
mkfifo "$fifo"
CONCORD_TESTPOINT=serve-group-committed:1 "$CONCORD" serve --db "$T/q.db" --listen 127.0.0.1:0 \
  --queue 1 2> "$fifo" &
SPID=$!
SPORT=
reached=0
post1=
while IFS= read -r -t $HANG_GUARD line; do
  case $line in
    *"listening on http://"*)
      SPORT=${line##*:}; SPORT=${SPORT%% *}
      curl -s -m $HANG_GUARD "${J[@]}" --data-binary @"$T/one.jsonl" "http://127.0.0.1:$SPORT/v1/models/q/events" > /dev/null &
      post1=$!
      ;;
    *"testpoint serve-group-committed 1 reached"*) reached=1; break ;;
  esac
done < "$fifo"
expect "writer held at the testpoint" "$reached" 1
URL=http://127.0.0.1:$SPORT
sed 's/a1/a2/' "$T/one.jsonl" > "$T/two.jsonl"
curl -s -m $HANG_GUARD "${J[@]}" --data-binary @"$T/two.jsonl" "$URL/v1/models/q/events" > /dev/null &
post2=$!
i=0
while [ "$(curl -s -m $HANG_GUARD -o /dev/null -w '%{http_code}' "$URL/v1/readyz")" != 503 ]; do
  i=$((i + 1))
  [ $i -lt $((HANG_GUARD * 10)) ] || { fail "HANG: readyz never said 503 with a full queue"; break; }
  sleep 0.1
done
call "POST to a full queue" 429 "${J[@]}" --data-binary @"$T/one.jsonl" "$URL/v1/models/q/events"
grep -qi '^retry-after: [0-9]' <(curl -s -m $HANG_GUARD -D - -o /dev/null "${J[@]}" --data-binary @"$T/one.jsonl" "$URL/v1/models/q/events") ||
  fail "429 without Retry-After"
kill -9 $SPID 2> /dev/null || true
wait $SPID 2> /dev/null || true
SPID=
wait $post1 $post2 2> /dev/null || true

finish serve_hostile
