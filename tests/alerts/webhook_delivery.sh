#!/usr/bin/env bash
# webhook_delivery.sh — notifications to a real HTTP receiver on loopback
# (receiver.py, python3's http.server): body schema; the Standard Webhooks
# 1.0 signature checked with python3's hmac and base64 modules (first on the
# specification's own example) and with `openssl dgst`; receiver down during
# the check, then up: delivered exactly once; HTTP 302/500 retried with
# backoff, then a dead letter, re-queued and delivered; a receiver that
# never answers costs one timeout per run and loses nothing; a crash between
# send and mark repeats the send with the same webhook-id; 100 transitions
# give 100 notifications with 100 distinct keys; an HTTPS receiver with a
# certificate the system does not trust is refused.
# Usage: webhook_delivery.sh CONCORD TESTDIR
set -euo pipefail
C=$1
SRC=$2
T=$(mktemp -d)
RPID=
cleanup() {
  if [ -n "$RPID" ]; then kill "$RPID" 2> /dev/null || true; wait "$RPID" 2> /dev/null || true; fi
  rm -rf "$T"
}
trap cleanup EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
# a Standard Webhooks secret: base64 key bytes after "whsec_" (invented key)
export CC_TEST_SECRET='whsec_c2VjcmV0IGtleSBvZiB0aGUgdGVzdHMhIQ=='

start_receiver() { # MODE LOG [PORT] -> RPID, PORT
  rm -f "$T/port"
  timeout 320 python3 "$SRC/receiver.py" --mode "$1" --log "$2" --port-file "$T/port" \
    --lifetime 300 ${3:+--port "$3"} &
  RPID=$!
  # hang guard only: a loaded machine may take long to start python
  for _ in $(seq 2400); do [ -s "$T/port" ] && break; sleep 0.05; done
  [ -s "$T/port" ] || { echo "FAIL: the test receiver did not start within 120 s" >&2; exit 1; }
  PORT=$(cat "$T/port")
}
stop_receiver() {
  kill "$RPID" 2> /dev/null || true
  wait "$RPID" 2> /dev/null || true
  RPID=
}
free_port() { python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1",0)); print(s.getsockname()[1])'; }
lines() { [ -f "$1" ] && wc -l < "$1" | tr -d ' ' || echo 0; }

rules() { # FILE URL TIMEOUT N_RULES [CONNECT_TIMEOUT, default 30]
  # generous timeouts (a loaded machine answers slowly) except where the
  # timeout itself is under test
  python3 - "$@" <<'PY'
import json, sys
path, url, timeout, n = sys.argv[1], sys.argv[2], float(sys.argv[3]), int(sys.argv[4])
connect = float(sys.argv[5]) if len(sys.argv) > 5 else 30.0
rules = [{"name": "split" if n == 1 else f"r{i:02d}", "metric": "diversity.disagreement.mean",
          "above": 0.5, "min_events": 10, "urgency": "high", "action": "review_members"}
         for i in range(n)]
json.dump({"webhooks": [{"url": url}],
           "delivery": {"secret_env": "CC_TEST_SECRET", "connect_timeout_seconds": connect,
                        "timeout_seconds": timeout, "max_attempts": 3, "backoff_seconds": 10,
                        "max_backoff_seconds": 40},
           "rules": rules}, open(path, "w"), indent=1)
PY
}
run() { set +e; "$@" > "$T/out" 2> "$T/err"; RC=$?; set -e; }

# data: day 1 agree, 2-3 split, 4 agree, 5 split, 6 agree (2 members, 40 events a day)
python3 "$SRC/gen_days.py" "$T/events.jsonl" --start 2026-03-01 --pattern agree,split,split,agree,split,agree
"$C" ingest --db "$T/base.db" --model m "$T/events.jsonl" 2> /dev/null
fresh() { rm -f "$T/$1.db"*; cp "$T/base.db" "$T/$1.db"; }
NOW=$(date +%s)

# --- 1. schema and signature; transitions only ---------------------------
fresh sig
start_receiver ok "$T/sig.log"
rules "$T/sig.json" "http://127.0.0.1:$PORT/hook" 120 1
run "$C" check --db "$T/sig.db" --rules "$T/sig.json" --day 2026-03-01
[ $RC -eq 0 ] || fail "sig: day 1 exit $RC, expected 0 (healthy)"
run "$C" check --db "$T/sig.db" --rules "$T/sig.json" --day 2026-03-02 --format json
[ $RC -eq 10 ] || fail "sig: day 2 exit $RC, expected 10 (raised)"
python3 - "$T/out" <<'PY' || fail "sig: check --format json"
import json, sys
o = json.load(open(sys.argv[1]))
r = o["results"][0]
assert o["exit_code"] == 10 and o["counts"]["raised"] == 1, o["counts"]
assert r["rule"] == "split" and r["metric"] == "diversity.disagreement.mean"
assert r["value"] == 1.0 and r["bound"] == 0.5 and r["state"] == "raised" and r["outcome"] == "raised"
assert r["notice_id"] == "m/split/raised/2026-03-02"
assert o["delivery"]["sent"] == 1, o["delivery"]
PY
run "$C" check --db "$T/sig.db" --rules "$T/sig.json" --day 2026-03-02
[ $RC -eq 11 ] || fail "sig: day 2 again exit $RC, expected 11 (still raised, nothing new)"
grep -q 'already checked' "$T/out" || fail "sig: re-check not reported as already checked"
run "$C" check --db "$T/sig.db" --rules "$T/sig.json" --day 2026-03-03
[ $RC -eq 11 ] || fail "sig: day 3 exit $RC, expected 11"
run "$C" check --db "$T/sig.db" --rules "$T/sig.json" --day 2026-03-04
[ $RC -eq 0 ] || fail "sig: day 4 exit $RC, expected 0 (cleared)"
grep -q 'CLEARED' "$T/out" || fail "sig: day 4 not cleared: $(cat "$T/out")"
stop_receiver
[ "$(lines "$T/sig.log")" = 2 ] || fail "sig: $(lines "$T/sig.log") posts, expected 2 (raised, cleared)"
python3 - "$T/sig.log" "$T" <<'PY' || fail "sig: body schema or signature"
import base64, hashlib, hmac, json, os, sys
def sign(secret, msg_id, ts, body):
    # Standard Webhooks 1.0: HMAC-SHA256 with the base64-decoded secret over
    # "<id>.<timestamp>.<body>", sent as "v1,<base64>"
    key = base64.b64decode(secret.removeprefix("whsec_"))
    mac = hmac.new(key, f"{msg_id}.{ts}.".encode() + body, hashlib.sha256).digest()
    return "v1," + base64.b64encode(mac).decode()
# the specification's own example
assert sign("whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw", "msg_p5jXN8AQM9LWM0D4loKWxJek", 1614265330,
            b'{"test": 2432232314}') == "v1,g0hM9SsE+OTPJTGt/tmIKtSyZlE3uFJELVlNIOLJ1OE="
secret = os.environ["CC_TEST_SECRET"]
posts = [json.loads(l) for l in open(sys.argv[1])]
kinds = []
for i, p in enumerate(posts):
    h, raw = p["headers"], p["body"]
    ts, msg_id = h["webhook-timestamp"], h["webhook-id"]
    want = sign(secret, msg_id, ts, raw.encode())
    assert hmac.compare_digest(h["webhook-signature"], want), (h["webhook-signature"], want)
    assert h["content-type"] == "application/json"
    assert not any(k.startswith("x-concord") for k in h), h
    b = json.loads(raw)
    assert msg_id == b["notice_id"]
    for key, typ in [("schema", str), ("kind", str), ("notice_id", str), ("episode", str),
                     ("rule", str), ("urgency", str), ("model", str), ("window", dict),
                     ("metric", str), ("value", (int, float)), ("condition", dict), ("state", dict),
                     ("sentence", str), ("evidence", list), ("action", dict),
                     ("created_at", str), ("sender", str)]:
        assert isinstance(b[key], typ), (key, b.get(key))
    for old in ("dedupe_key", "incident_key", "summary", "severity", "source"):
        assert old not in b, old
    assert b["schema"] == "concord.notice/2" and b["model"] == "m" and b["urgency"] == "high"
    assert b["condition"]["type"] == "above" and b["condition"]["bound"] == 0.5
    assert b["condition"]["days"] == 1 and b["condition"]["clear_days"] == 1
    assert b["window"]["events"] == 40 and b["window"]["from"] == b["window"]["to"]
    assert "baseline" in b and b["baseline"] is None   # no baseline set, fixed bound
    assert len(b["sentence"]) > 20 and b["action"]["code"] and b["action"]["text"]
    assert any(e["kind"] == "contested_pair" for e in b["evidence"]) or b["kind"] == "cleared"
    assert all("text" in e and "kind" in e for e in b["evidence"])
    kinds.append((b["kind"], b["notice_id"], b["episode"]))
    open(os.path.join(sys.argv[2], f"body{i}"), "w").write(raw)
    open(os.path.join(sys.argv[2], f"ts{i}"), "w").write(ts)
    open(os.path.join(sys.argv[2], f"id{i}"), "w").write(msg_id)
assert kinds == [("raised", "m/split/raised/2026-03-02", "m/split/2026-03-02"),
                 ("cleared", "m/split/cleared/2026-03-04", "m/split/2026-03-02")], kinds
PY
# the same signature with openssl, as a receiver in shell would compute it
key_hex=$(printf '%s' "${CC_TEST_SECRET#whsec_}" | base64 -d | od -An -tx1 | tr -d ' \n')
sig=$( { printf '%s.%s.' "$(cat "$T/id0")" "$(cat "$T/ts0")"; cat "$T/body0"; } |
  openssl dgst -sha256 -mac HMAC -macopt "hexkey:$key_hex" -binary | base64)
head -1 "$T/sig.log" | grep -qF "\"webhook-signature\": \"v1,$sig\"" || fail "sig: openssl HMAC $sig differs from the header"
echo "webhook_delivery: schema and signature ok"

# --- 2. receiver down during the check, then up: exactly once ------------
fresh down
P=$(free_port)
rules "$T/down.json" "http://127.0.0.1:$P/hook" 120 1
run "$C" check --db "$T/down.db" --rules "$T/down.json" --day 2026-03-02
[ $RC -eq 10 ] || fail "down: exit $RC, expected 10 (the alert was raised; delivery is separate)"
grep -q 'failed (attempt 1)' "$T/err" || fail "down: no delivery failure reported: $(cat "$T/err")"
"$C" alerts --db "$T/down.db" --format json > "$T/alerts.json"
python3 - "$T/alerts.json" <<'PY' || fail "down: alerts listing"
import json, sys
o = json.load(open(sys.argv[1]))
n = o["notifications"]
assert len(n) == 1 and n[0]["notice_id"] == "m/split/raised/2026-03-02"
d = n[0]["deliveries"][0]
assert d["status"] == "pending" and d["attempts"] == 1 and d["last_error"], d
assert [s["state"] for s in o["rule_states"]] == ["raised"]
PY
start_receiver ok "$T/down.log" "$P"
run env CONCORD_NOW=$NOW "$C" deliver --db "$T/down.db"
[ $RC -eq 0 ] && [ "$(lines "$T/down.log")" = 0 ] || fail "down: sent before the backoff (exit $RC)"
run env CONCORD_NOW=$((NOW + 100)) "$C" deliver --db "$T/down.db"
[ $RC -eq 0 ] || fail "down: deliver exit $RC: $(cat "$T/out")"
run env CONCORD_NOW=$((NOW + 200)) "$C" deliver --db "$T/down.db" --retry-now
run "$C" check --db "$T/down.db" --rules "$T/down.json" --day 2026-03-03
[ $RC -eq 11 ] || fail "down: day 3 exit $RC, expected 11"
stop_receiver
[ "$(lines "$T/down.log")" = 1 ] || fail "down: $(lines "$T/down.log") posts, expected exactly 1"
grep -q '"webhook-id": "m/split/raised/2026-03-02"' "$T/down.log" || fail "down: wrong key"
echo "webhook_delivery: receiver down then up: delivered once"

# --- 3. HTTP 302 and 500: retried with backoff, dead letter, re-queued ----
fresh err
start_receiver status:302 "$T/err1.log"
P=$PORT
rules "$T/err.json" "http://127.0.0.1:$P/hook" 120 1
run env CONCORD_NOW=$NOW "$C" check --db "$T/err.db" --rules "$T/err.json" --day 2026-03-02
[ $RC -eq 10 ] || fail "err: exit $RC"
grep -q 'HTTP 302' "$T/err" || fail "err: a redirect must not count as delivered: $(cat "$T/err")"
stop_receiver
start_receiver status:500 "$T/err2.log" "$P"
next1=$(sqlite3 "$T/err.db" "SELECT next_at - $NOW FROM outbox")
[ "$next1" -ge 5 ] && [ "$next1" -le 10 ] || fail "err: first backoff $next1 s, expected 5..10"
run env CONCORD_NOW=$((NOW + 100)) "$C" deliver --db "$T/err.db"
[ $RC -eq 12 ] || fail "err: deliver after a 500 exit $RC, expected 12"
next2=$(sqlite3 "$T/err.db" "SELECT next_at - $((NOW + 100)) FROM outbox")
[ "$next2" -ge 10 ] && [ "$next2" -le 20 ] || fail "err: second backoff $next2 s, expected 10..20"
run env CONCORD_NOW=$((NOW + 1000)) "$C" deliver --db "$T/err.db"
grep -q '^dead' "$T/out" || fail "err: third failure did not make a dead letter: $(cat "$T/out")"
run env CONCORD_NOW=$((NOW + 5000)) "$C" deliver --db "$T/err.db"
[ "$(lines "$T/err2.log")" = 2 ] || fail "err: $(lines "$T/err2.log") posts after the dead letter, expected 2"
"$C" alerts --db "$T/err.db" --delivery dead > "$T/dead.txt"
grep -q 'dead .*3 attempt(s).*HTTP 500' "$T/dead.txt" || fail "err: dead letter not listed: $(cat "$T/dead.txt")"
stop_receiver
start_receiver ok "$T/err3.log" "$P"
run env CONCORD_NOW=$((NOW + 6000)) "$C" deliver --db "$T/err.db" --requeue-dead
[ $RC -eq 0 ] || fail "err: requeue exit $RC: $(cat "$T/out")"
run env CONCORD_NOW=$((NOW + 7000)) "$C" deliver --db "$T/err.db" --retry-now
stop_receiver
[ "$(lines "$T/err3.log")" = 1 ] || fail "err: requeued letter posted $(lines "$T/err3.log") times"
[ "$(sqlite3 "$T/err.db" "SELECT status || attempts FROM outbox")" = sent1 ] || fail "err: outbox row not sent"
echo "webhook_delivery: 302 and 500 retried, dead letter kept and re-sent"

# --- 4. a receiver that never answers: timeouts respected, nothing lost ----
fresh hang
start_receiver hang "$T/hang.log"
P=$PORT
rules "$T/hang.json" "http://127.0.0.1:$P/hook" 2 3 1
t0=$(date +%s%N)
run "$C" check --db "$T/hang.db" --rules "$T/hang.json" --day 2026-03-02
ms=$(( ($(date +%s%N) - t0) / 1000000 ))
[ $RC -eq 10 ] || fail "hang: exit $RC"
# the 2 s timeout must not fire early; no upper bound (a loaded machine is slow),
# the rows below show that only one send waited for it
[ $ms -ge 1800 ] || fail "hang: check took $ms ms; expected at least the 2 s timeout"
[ "$(sqlite3 "$T/hang.db" "SELECT count(*) FROM outbox WHERE status = 'pending'")" = 3 ] || fail "hang: rows not pending"
[ "$(sqlite3 "$T/hang.db" "SELECT sum(attempts) FROM outbox")" = 1 ] || fail "hang: the other rows should wait, not time out too"
sqlite3 "$T/hang.db" "SELECT last_error FROM outbox WHERE attempts = 1" | grep -qi 'timed\? out' || fail "hang: no timeout error recorded"
stop_receiver
start_receiver ok "$T/hang2.log" "$P"
run "$C" deliver --db "$T/hang.db" --retry-now
stop_receiver
[ "$(lines "$T/hang2.log")" = 3 ] || fail "hang: $(lines "$T/hang2.log") posts once the receiver answers, expected 3"
[ "$(sqlite3 "$T/hang.db" "SELECT count(*) FROM outbox WHERE status = 'sent'")" = 3 ] || fail "hang: not all sent"
echo "webhook_delivery: unanswered receiver: $ms ms for the check, all 3 delivered later"

# --- 5. crash between send and mark: repeated, not lost --------------------
# the deliver stops at the testpoint "deliver-sent" (util/testpoint.h): the
# receiver has the notification, the outbox does not know yet; then SIGKILL
fresh crash
start_receiver ok "$T/crash.log"
rules "$T/crash.json" "http://127.0.0.1:$PORT/hook" 120 1
run env CONCORD_NOW=$NOW "$C" check --db "$T/crash.db" --rules "$T/crash.json" --day 2026-03-02 --no-deliver
rm -f "$T/deliver.fifo"; mkfifo "$T/deliver.fifo"
env CONCORD_NOW=$NOW CONCORD_TESTPOINT=deliver-sent:1 "$C" deliver --db "$T/crash.db" \
  > /dev/null 2> "$T/deliver.fifo" &
DPID=$!
reached=0
while IFS= read -r -t 600 line; do
  case $line in "concord: testpoint deliver-sent 1 reached") reached=1; break ;; esac
done < "$T/deliver.fifo"
kill -9 "$DPID" 2> /dev/null || true; wait "$DPID" 2> /dev/null || true
[ $reached = 1 ] || fail "crash: deliver did not reach the testpoint deliver-sent (ended, or hung 600 s)"
[ "$(lines "$T/crash.log")" = 1 ] || fail "crash: expected the receiver to have 1 post before the kill, saw $(lines "$T/crash.log")"
[ "$(sqlite3 "$T/crash.db" "SELECT status || attempts FROM outbox")" = pending0 ] || fail "crash: row should still be pending"
run env CONCORD_NOW=$((NOW + 10)) "$C" deliver --db "$T/crash.db"
[ "$(lines "$T/crash.log")" = 1 ] || fail "crash: re-sent while the claim was still fresh"
run env CONCORD_NOW=$((NOW + 500)) "$C" deliver --db "$T/crash.db"
stop_receiver
[ "$(lines "$T/crash.log")" = 2 ] || fail "crash: $(lines "$T/crash.log") posts, expected 2 (one repeat)"
[ "$(grep -c '"webhook-id": "m/split/raised/2026-03-02"' "$T/crash.log")" = 2 ] || fail "crash: the repeat must carry the same webhook-id"
echo "webhook_delivery: crash between send and mark: one repeat with the same key"

# --- 6. 100 transitions -> 100 notifications, no duplicate key -------------
fresh many
start_receiver ok "$T/many.log"
rules "$T/many.json" "http://127.0.0.1:$PORT/hook" 120 25
for d in 01 02 03 04 05 06; do
  run "$C" check --db "$T/many.db" --rules "$T/many.json" --day 2026-03-$d
  [ $RC -eq 0 ] || [ $RC -eq 10 ] || [ $RC -eq 11 ] || fail "many: day $d exit $RC: $(cat "$T/err")"
done
run "$C" deliver --db "$T/many.db" --retry-now
stop_receiver
python3 - "$T/many.log" <<'PY' || fail "many: notifications"
import json, sys
keys = [json.loads(json.loads(l)["body"])["notice_id"] for l in open(sys.argv[1])]
assert len(keys) == 100, len(keys)
assert len(set(keys)) == 100, "duplicate keys"
want = {f"m/r{i:02d}/{k}/2026-03-{d}" for i in range(25)
        for k, d in [("raised", "02"), ("cleared", "04"), ("raised", "05"), ("cleared", "06")]}
assert set(keys) == want
PY
[ "$(sqlite3 "$T/many.db" "SELECT count(*) FROM notifications")" = 100 ] || fail "many: notifications table"
[ "$(sqlite3 "$T/many.db" "SELECT count(*) FROM outbox WHERE status = 'sent'")" = 100 ] || fail "many: outbox"
echo "webhook_delivery: 100 transitions, 100 notifications, 100 distinct keys"

# --- 7. TLS: a certificate the system does not trust is refused ----------
openssl req -x509 -newkey ec -pkeyopt ec_paramgen_curve:prime256v1 -nodes -days 1 \
  -subj /CN=127.0.0.1 -addext subjectAltName=IP:127.0.0.1 \
  -keyout "$T/key.pem" -out "$T/cert.pem" 2> /dev/null
fresh tls
rm -f "$T/port"
timeout 320 python3 "$SRC/receiver.py" --mode ok --log "$T/tls.log" --port-file "$T/port" \
  --lifetime 300 --tls-cert "$T/cert.pem" --tls-key "$T/key.pem" &
RPID=$!
for _ in $(seq 2400); do [ -s "$T/port" ] && break; sleep 0.05; done
[ -s "$T/port" ] || { echo "FAIL: the TLS test receiver did not start within 120 s" >&2; exit 1; }
PORT=$(cat "$T/port")
rules "$T/tls.json" "https://127.0.0.1:$PORT/hook" 120 1
run "$C" check --db "$T/tls.db" --rules "$T/tls.json" --day 2026-03-02
[ $RC -eq 10 ] || fail "tls: exit $RC"
grep -qi 'certificate' "$T/err" || fail "tls: a self-signed certificate must be refused: $(cat "$T/err")"
[ "$(sqlite3 "$T/tls.db" "SELECT status FROM outbox")" = pending ] || fail "tls: the notification must wait"
stop_receiver
[ "$(lines "$T/tls.log")" = 0 ] || fail "tls: the body reached an unverified receiver"
echo "webhook_delivery: an untrusted TLS certificate is refused, the notification kept"

[ $fails -eq 0 ] || { echo "webhook_delivery: $fails failure(s)" >&2; exit 1; }
echo "webhook_delivery: ok"
