# lib.sh — sourced by the serve tests: starting `concord serve` on a free
# loopback port (port 0; the server says which one it got) and stopping it.
# Needs CONCORD, T (a temporary folder) and HANG_GUARD (seconds) set.

# start_server LOG ARGS...: starts the server in the background; sets SPID
# and SPORT. Returns 1 when it exits or does not listen within HANG_GUARD.
start_server() {
  local log=$1 i=0
  shift
  # the log exists before the server starts: the background job opens it
  # only when it runs, and on a loaded machine the first read below can come
  # first (a failed sed would end a caller running under set -e -o pipefail)
  : > "$log"
  "$CONCORD" serve "$@" 2> "$log" &
  SPID=$!
  SPORT=
  while [ $i -lt $((HANG_GUARD * 10)) ]; do
    SPORT=$(sed -n 's/.*listening on https\{0,1\}:\/\/[^ ]*:\([0-9][0-9]*\) .*/\1/p' "$log" | head -1)
    [ -n "$SPORT" ] && return 0
    if ! kill -0 "$SPID" 2> /dev/null; then
      echo "server exited at start: $(cat "$log")" >&2
      return 1
    fi
    sleep 0.1
    i=$((i + 1))
  done
  echo "HANG: the server did not say where it listens within ${HANG_GUARD}s" >&2
  return 1
}

# stop_server: SIGTERM, then the exit status of the server in $?
stop_server() {
  kill -TERM "$SPID" 2> /dev/null || true
  local rc=0
  wait "$SPID" || rc=$?
  SPID=
  return $rc
}

# post KIND MODEL FILE [CURL ARGS...]: POSTs FILE as JSON Lines; the answer
# goes to stdout, the status code to $T/status; QUERY (e.g. '?strict=true')
# is appended to the path.
post() {
  local kind=$1 model=$2 file=$3 answer
  shift 3
  answer=$(mktemp "$T/answer.XXXXXX")
  curl -s -m "$HANG_GUARD" -o "$answer" -w '%{http_code}' -X POST \
    -H 'Content-Type: application/x-ndjson' --data-binary @"$file" "$@" \
    "http://127.0.0.1:$SPORT/v1/models/$model/$kind${QUERY:-}" > "$answer.status" || true
  cat "$answer"
  mv "$answer.status" "$T/status" # the last request's (for callers that post one at a time)
  rm -f "$answer"
}

# field JSON NAME: a top-level field of a JSON document
field() { /usr/bin/python3 -c 'import json,sys; v=json.loads(sys.argv[1])[sys.argv[2]]; print(json.dumps(v) if isinstance(v,(list,dict,bool)) or v is None else v)' "$1" "$2"; }

# failures are counted, and the script ends with finish NAME
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
expect() { # expect WHAT GOT WANT
  [ "$2" = "$3" ] || fail "$1: got '$2', want '$3'"
}
finish() {
  if [ $fails -gt 0 ]; then
    echo "$1: $fails failure(s)" >&2
    exit 1
  fi
  echo "$1: ok${2:+ ($2)}"
}
