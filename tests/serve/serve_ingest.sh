#!/usr/bin/env bash
# serve_ingest.sh — events and labels POSTed to `concord serve` are stored
# exactly as file ingest stores the same lines: the report's JSON is the
# same bytes and verify finds summaries equal to the rows. Also: per-line
# rejects, duplicates, gzip bodies, strict (all-or-nothing) requests, labels
# that arrive before their events, concurrent requests (group commit), the
# model list, reports in every format, and SIGTERM (exit 0).
# Usage: serve_ingest.sh CONCORD
set -euo pipefail
export CONCORD_NOW=1790000000   # fixed arrival time of delayed labels in both stores
CONCORD=$1
T=$(mktemp -d)
SPID=
trap '[ -n "$SPID" ] && kill -9 $SPID 2> /dev/null; rm -rf "$T"' EXIT
HANG_GUARD=300
. "$(dirname "$0")/lib.sh"

"$CONCORD" demo --dir "$T/d" --per-day 200 > /dev/null
EV=$T/d/events.jsonl
CLASSES=premium,extra,class-1,class-2,juice,cull
total=$(wc -l < "$EV")
head -n 200 "$EV" > "$T/first.jsonl"
tail -n +201 "$EV" > "$T/rest.jsonl"
split -n l/6 -d "$T/rest.jsonl" "$T/part."

# the reference: file ingest of every line, then the labels
"$CONCORD" ingest --db "$T/ref.db" --model g --classes "$CLASSES" "$EV" 2> /dev/null
"$CONCORD" label --db "$T/ref.db" --model g "$T/d/labels.jsonl" 2> /dev/null || true
"$CONCORD" report --db "$T/ref.db" --model g --format json -o "$T/ref.json"

# the server's database: the model made by file ingest of the first day's
# lines (to carry the class names), the rest over HTTP
"$CONCORD" ingest --db "$T/s.db" --model g --classes "$CLASSES" "$T/first.jsonl" 2> /dev/null
start_server "$T/server.log" --db "$T/s.db" --listen 127.0.0.1:0
# six requests at once, two of them gzip: the writer may combine them
pids=()
for p in "$T"/part.*; do
  case $p in
    *0|*3) gzip -c "$p" > "$p.gz"
           post events g "$p.gz" -H 'Content-Encoding: gzip' > "$p.answer" &
           ;;
    *) post events g "$p" > "$p.answer" & ;;
  esac
  pids+=($!)
done
for pid in "${pids[@]}"; do wait "$pid"; done
sum=0
for a in "$T"/part.*.answer; do
  expect "committed in $a" "$(field "$(cat "$a")" committed)" true
  sum=$((sum + $(field "$(cat "$a")" accepted)))
done
# events stored = those of the first file ingest + those the requests accepted
n_events() { /usr/bin/python3 -c 'import json,sys; print(sum(w["events"] for w in json.load(open(sys.argv[1]))["windows"]))' "$1"; }
"$CONCORD" ingest --db "$T/first.db" --model g --classes "$CLASSES" "$T/first.jsonl" 2> /dev/null
"$CONCORD" report --db "$T/first.db" --model g --format json -o "$T/first.json"
expect "events accepted over six requests" "$sum" $(($(n_events "$T/ref.json") - $(n_events "$T/first.json")))
ans=$(post labels g "$T/d/labels.jsonl")
expect "labels status" "$(cat "$T/status")" 200
expect "labels set" "$(field "$ans" labels_set)" "$(wc -l < "$T/d/labels.jsonl")"
curl -s -m $HANG_GUARD "http://127.0.0.1:$SPORT/v1/models/g/report?format=json" > "$T/http.json"
stop_server || fail "serve did not exit 0 on SIGTERM"
"$CONCORD" report --db "$T/s.db" --model g --format json -o "$T/s.json"
cmp -s "$T/ref.json" "$T/s.json" || fail "report of the served database differs from file ingest"
cmp -s "$T/ref.json" "$T/http.json" || fail "GET report differs from concord report"
for m in g; do
  "$CONCORD" verify --db "$T/s.db" --model $m > /dev/null || fail "verify of the served database"
done

# the same again is all duplicates
start_server "$T/server2.log" --db "$T/s.db" --listen 127.0.0.1:0
ans=$(post events g "$T/part.01")
expect "duplicates" "$(field "$ans" duplicates)" "$(wc -l < "$T/part.01")"
expect "accepted on a repeat" "$(field "$ans" accepted)" 0

# per-line rejects: line 2 is not JSON, line 3 has the wrong shape, line 5 a
# probability row that does not sum to 1; line 4 is blank (skipped)
{
  echo '{"id":"r1","ts":"2026-11-20T10:00:00Z","probs":[[0.5,0.5],[0.5,0.5]]}'
  echo '{"id":"r2",'
  echo '{"id":"r3","ts":"2026-11-20T10:00:00Z","probs":[[1,0,0],[1,0,0]]}'
  echo
  echo '{"id":"r5","ts":"2026-11-20T10:00:00Z","probs":[[0.9,0.3],[0.5,0.5]]}'
  printf '%s' '{"id":"r6","ts":"2026-11-20T10:00:00Z","probs":[[0.2,0.8],[0.5,0.5]]}'
} > "$T/mixed.jsonl"
ans=$(post events r "$T/mixed.jsonl")
expect "mixed: accepted" "$(field "$ans" accepted)" 2
expect "mixed: rejected" "$(field "$ans" rejected)" 3
lines=$(/usr/bin/python3 -c 'import json,sys; print(",".join(str(r["line"]) for r in json.loads(sys.argv[1])["rejects"]))' "$ans")
expect "mixed: rejected line numbers" "$lines" "2,3,5"
reason3=$(/usr/bin/python3 -c 'import json,sys; print(json.loads(sys.argv[1])["rejects"][1]["reason"])' "$ans")
case $reason3 in *"field 'probs'"*) ;; *) fail "line 3's reason does not name the field: $reason3" ;; esac
"$CONCORD" ingest --db "$T/r.db" --model r "$T/mixed.jsonl" 2> /dev/null || true

# strict: one bad line and nothing of the request is stored
{
  echo '{"id":"s1","ts":"2026-11-20T10:00:00Z","probs":[[0.5,0.5],[0.5,0.5]]}'
  echo '{"id":"s2","ts":"not a time","probs":[[0.5,0.5],[0.5,0.5]]}'
} > "$T/strict_bad.jsonl"
ans=$(QUERY='?strict=true' post events r "$T/strict_bad.jsonl")
expect "strict: status" "$(cat "$T/status")" 200
expect "strict: committed" "$(field "$ans" committed)" false
expect "strict: accepted" "$(field "$ans" accepted)" 0
expect "strict: rejected" "$(field "$ans" rejected)" 1
head -n 1 "$T/strict_bad.jsonl" > "$T/strict_good.jsonl"
ans=$(QUERY='?strict=true' post events r "$T/strict_good.jsonl")
expect "strict good: accepted" "$(field "$ans" accepted)" 1
expect "strict good: committed" "$(field "$ans" committed)" true

# labels before their events: pending, then applied when the events come
/usr/bin/python3 - "$T" <<'PY'
import json, sys
t = sys.argv[1]
with open(t + "/late_events.jsonl", "w") as ev, open(t + "/early_labels.jsonl", "w") as lab:
    for i in range(40):
        p = [0.7, 0.2, 0.1] if i % 3 else [0.1, 0.3, 0.6]
        ev.write(json.dumps({"id": "e%d" % i, "ts": "2026-11-21T%02d:00:00Z" % (i % 24),
                             "probs": [p, p[::-1]]}) + "\n")
        if i % 2 == 0:
            lab.write(json.dumps({"id": "e%d" % i, "label": i % 3}) + "\n")
PY
# the model must exist for labels: its first event by file
head -n 1 "$T/late_events.jsonl" > "$T/late_first.jsonl"
tail -n +2 "$T/late_events.jsonl" > "$T/late_rest.jsonl"
"$CONCORD" ingest --db "$T/s.db" --model h "$T/late_first.jsonl" 2> /dev/null
"$CONCORD" ingest --db "$T/lref.db" --model h "$T/late_first.jsonl" 2> /dev/null
ans=$(post labels h "$T/early_labels.jsonl")
expect "early labels: pending" "$(field "$ans" labels_pending)" 19
expect "early labels: set (e0 exists)" "$(field "$ans" labels_set)" 1
ans=$(post events h "$T/late_rest.jsonl")
expect "late events: accepted" "$(field "$ans" accepted)" 39
"$CONCORD" label --db "$T/lref.db" --model h "$T/early_labels.jsonl" 2> /dev/null
"$CONCORD" ingest --db "$T/lref.db" --model h "$T/late_rest.jsonl" 2> /dev/null

# the model list and the report's other forms and errors
models=$(curl -s -m $HANG_GUARD "http://127.0.0.1:$SPORT/v1/models")
names=$(/usr/bin/python3 -c 'import json,sys; d=json.loads(sys.argv[1]); print(",".join(m["name"] for m in d["models"]), ",".join(d["models"][0]["classes"]))' "$models")
expect "model list" "$names" "g,h,r $CLASSES"
for fmt in text html; do
  curl -s -m $HANG_GUARD -o "$T/http.$fmt" "http://127.0.0.1:$SPORT/v1/models/g/report?format=$fmt&from=2026-10-06&to=2026-10-09&by=week"
done
"$CONCORD" report --db "$T/s.db" --model g --format text --from 2026-10-06 --to 2026-10-09 --by week -o "$T/cli.text"
cmp -s "$T/cli.text" "$T/http.text" || fail "GET report text differs from concord report"
grep -q '<svg' "$T/http.html" || fail "GET report html is not the page"
code=$(curl -s -m $HANG_GUARD -o /dev/null -w '%{http_code}' "http://127.0.0.1:$SPORT/v1/models/g/report?by=month")
expect "report ?by=month" "$code" 400
stop_server || fail "serve did not exit 0 on SIGTERM (second run)"
"$CONCORD" report --db "$T/s.db" --model h --format json -o "$T/h.json"
"$CONCORD" report --db "$T/lref.db" --model h --format json -o "$T/href.json"
cmp -s "$T/h.json" "$T/href.json" || fail "labels-before-events: report differs from file ingest"
"$CONCORD" report --db "$T/s.db" --model r --format json -o "$T/rs.json"
"$CONCORD" ingest --db "$T/r.db" --model r "$T/strict_good.jsonl" 2> /dev/null
"$CONCORD" report --db "$T/r.db" --model r --format json -o "$T/rr.json"
cmp -s "$T/rs.json" "$T/rr.json" || fail "rejects and strict: report differs from file ingest"
for m in g h r; do
  "$CONCORD" verify --db "$T/s.db" --model $m > /dev/null || fail "verify of model $m after the second run"
done

finish serve_ingest
