#!/usr/bin/env bash
# serve_rules_tls.sh — two things `concord serve` does besides ingest:
#   --rules: the day-close check runs as in follow mode (a closed UTC day is
#     checked, the raised rule is delivered to a file: receiver through the
#     outbox, and the metrics' stateset shows it raised);
#   --tls-cert/--tls-key: HTTPS with a self-signed certificate (skipped,
#     with the reason, when this libmicrohttpd has no TLS).
# Usage: serve_rules_tls.sh CONCORD
set -euo pipefail
CONCORD=$1
T=$(mktemp -d)
SPID=
trap '[ -n "$SPID" ] && kill -9 $SPID 2> /dev/null; rm -rf "$T"' EXIT
HANG_GUARD=300
HERE=$(dirname "$0")
GEN=$HERE/../alerts/gen_days.py
. "$HERE/lib.sh"
wait_for() { # SECONDS COMMAND...: until the command succeeds (a hang guard, not a timing)
  local until=$(( $(date +%s) + $1 )); shift
  while ! "$@"; do [ "$(date +%s)" -lt "$until" ] || return 1; sleep 0.1; done
}

/usr/bin/python3 "$GEN" "$T/d1.jsonl" --start 2026-03-01 --pattern agree --prefix a
/usr/bin/python3 "$GEN" "$T/d2.jsonl" --start 2026-03-02 --pattern split --prefix b
cat > "$T/rules.jsonc" <<'JSON'
{"rules": [{"name": "split", "metric": "diversity.disagreement.mean", "above": 0.5,
            "min_events": 10, "urgency": "high"}]}
JSON
# the clock starts 30 s before 2026-03-03 00:00 UTC: 2026-03-02 closes then,
# after both days' events are stored (each POST is answered once committed)
NOW=$(( $(date -u -d 2026-03-03 +%s) - 30 ))
CONCORD_NOW=$NOW "$CONCORD" serve --db "$T/r.db" --listen 127.0.0.1:0 --rules "$T/rules.jsonc" \
  --webhook "file:$T/sink.jsonl" --grace 0 > "$T/out" 2> "$T/err" &
SPID=$!
wait_for $HANG_GUARD grep -q 'listening on' "$T/err" || fail "HANG: the server did not start: $(cat "$T/err")"
SPORT=$(sed -n 's/.*listening on http:\/\/[^ ]*:\([0-9][0-9]*\) .*/\1/p' "$T/err")
post events m "$T/d1.jsonl" > /dev/null
post events m "$T/d2.jsonl" > /dev/null
[ "$(cat "$T/status")" = 200 ] || fail "POST: status $(cat "$T/status")"
wait_for $HANG_GUARD grep -q '^concord check 2026-03-02' "$T/out" ||
  fail "no check after the day closed: $(cat "$T/out") $(cat "$T/err")"
wait_for $HANG_GUARD test -s "$T/sink.jsonl" || fail "no notification delivered"
grep -q '"notice_id":"m/split/raised/2026-03-02"' "$T/sink.jsonl" || fail "sink: $(cat "$T/sink.jsonl")"
curl -s -m $HANG_GUARD "http://127.0.0.1:$SPORT/v1/metrics" |
  grep -q '^concord_alert_state{model="m",rule="split",concord_alert_state="raised"} 1$' ||
  fail "the raised rule is not in the metrics"
stop_server || fail "serve with rules did not exit 0 on SIGTERM"

# TLS
openssl req -x509 -newkey rsa:2048 -nodes -keyout "$T/key.pem" -out "$T/cert.pem" -days 2 \
  -subj /CN=127.0.0.1 -addext subjectAltName=IP:127.0.0.1 2> /dev/null
"$CONCORD" serve --db "$T/t.db" --listen 127.0.0.1:0 --tls-cert "$T/cert.pem" \
  --tls-key "$T/key.pem" 2> "$T/tls.err" &
SPID=$!
wait_for $HANG_GUARD grep -q 'listening on\|has no TLS' "$T/tls.err" || { kill -0 $SPID 2> /dev/null || true; }
if grep -q 'has no TLS' "$T/tls.err"; then
  echo "serve_rules_tls: TLS part skipped: this libmicrohttpd has no TLS"
  wait $SPID 2> /dev/null || true
  SPID=
else
  SPORT=$(sed -n 's/.*listening on https:\/\/[^ ]*:\([0-9][0-9]*\) .*/\1/p' "$T/tls.err")
  [ -n "$SPORT" ] || fail "TLS server: $(cat "$T/tls.err")"
  code=$(curl -s -m $HANG_GUARD --cacert "$T/cert.pem" -o /dev/null -w '%{http_code}' \
    -H 'Content-Type: application/x-ndjson' --data-binary @"$T/d1.jsonl" \
    "https://127.0.0.1:$SPORT/v1/models/m/events" || true)
  [ "$code" = 200 ] || fail "POST over HTTPS: $code"
  code=$(curl -s -m $HANG_GUARD -o /dev/null -w '%{http_code}' "http://127.0.0.1:$SPORT/v1/healthz" || true)
  [ "$code" != 200 ] || fail "plain HTTP answered on the HTTPS port"
  stop_server || fail "TLS serve did not exit 0 on SIGTERM"
  [ "$(sqlite3 "$T/t.db" 'SELECT count(*) FROM events')" = "$(wc -l < "$T/d1.jsonl")" ] ||
    fail "events posted over HTTPS not stored"
fi

finish serve_rules_tls
