#!/usr/bin/env bash
# store_publish.sh — one ClickHouse server (a one-shard cluster,
# ch_fixture.sh) and the demo's invented fruit-grading days:
#  - models, verify, check and rules validate read the cluster through
#    --store clickhouse:// and agree with the same commands on the SQLite
#    file that was published (models: every count and name; check: every
#    rule's state, value and outcome, reals within json_same.py's 1e-9
#    relative); verify finds a slice vector that was doubled in the cluster;
#  - writing commands refuse a cluster (exit 2, naming publish);
#  - follow --publish: after follow ingests, the cluster's report equals the
#    local one; with the server stopped follow goes on ingesting and says
#    the publish failed, and after the restart the next publish catches up:
#    the cluster then holds each event once (count() FINAL = local count,
#    no id twice) and the same report;
#  - serve --publish: events POSTed to the server reach the cluster, and
#    /v1/readyz tells the publish state.
# Usage: store_publish.sh CONCORD SOURCE_DIR
set -euo pipefail
C=$1
SRC=$2
HERE=$SRC/tests/cluster
export CONCORD_NOW=1790000000
HANG_GUARD=${HANG_GUARD:-300}   # seconds: waits for a condition end with a HANG message after this
T=$(mktemp -d "${TMPDIR:-/tmp}/concord-chp.XXXXXX")
. "$HERE/ch_fixture.sh"
ch_setup "$T/ch" 1
ch_start 1
FPID=
SPID=
cleanup() {
  [ -n "$FPID" ] && kill -9 "$FPID" 2> /dev/null
  [ -n "$SPID" ] && kill -9 "$SPID" 2> /dev/null
  ch_stop_all
  rm -rf "$T"
}
trap cleanup EXIT
U=$CH_URL_1
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
same() { /usr/bin/python3 "$HERE/json_same.py" "$1" "$2" "$3" || fail "$3"; }
# wait_for WHAT COMMAND...: runs COMMAND every 0.2 s until it succeeds
wait_for() {
  local what=$1 i=0
  shift
  until "$@" > /dev/null 2>&1; do
    i=$((i + 1))
    if [ $i -gt $((HANG_GUARD * 5)) ]; then
      echo "HANG: $what not reached within ${HANG_GUARD}s" >&2
      return 1
    fi
    sleep 0.2
  done
}
count() { ch_query 1 "SELECT count() FROM concord.$1 FINAL WHERE model = '$2'"; }

CL=premium,extra,class-1,class-2,juice,cull
"$C" demo --dir "$T/d" --per-day 120 > /dev/null
"$C" ingest --db "$T/h.db" --model grader --classes $CL --quiet "$T/d/events.jsonl"
"$C" label --db "$T/h.db" --model grader "$T/d/labels.jsonl" > /dev/null
"$C" baseline --db "$T/h.db" --model grader --from 2026-10-05 --to 2026-10-11 2> /dev/null
"$C" publish --db "$T/h.db" --store "$U" --source host-1 > /dev/null || fail "publish h.db"

# ---- models: the cluster's catalog equals the file's (a cluster has no
# pruned days and no waiting labels; the demo has neither)
"$C" models --db "$T/h.db" --format json > "$T/models-sq.json"
"$C" models --store "$U" --format json > "$T/models-ch.json" || fail "models --store"
same "$T/models-sq.json" "$T/models-ch.json" "models --store equals models --db"
"$C" models --store "$U" > "$T/models-ch.txt" || fail "models --store (text)"
grep -q "grader" "$T/models-ch.txt" || fail "models --store text: $(cat "$T/models-ch.txt")"
"$C" models --store "sqlite:$T/h.db" --format json > "$T/models-url.json"
cmp -s "$T/models-sq.json" "$T/models-url.json" || fail "models --store sqlite:PATH differs from --db"

# ---- verify on the cluster: the slices add up to the model on every day
rc=0; "$C" verify --store "$U" --model grader > "$T/verify.out" 2>&1 || rc=$?
[ $rc = 0 ] || fail "verify --store: exit $rc: $(tail -3 "$T/verify.out")"
grep -q "^28 days read from the cluster" "$T/verify.out" || fail "verify --store days: $(cat "$T/verify.out")"
grep -q "slices: 3, 84 slice-days checked, 0 mismatched, 0 days where" "$T/verify.out" \
  || fail "verify --store slices: $(tail -2 "$T/verify.out")"
rc=0; "$C" verify --store "$U" --model grader --deep > /dev/null 2>&1 || rc=$?
[ $rc = 2 ] || fail "verify --store --deep: exit $rc, expected 2"
rc=0; "$C" verify --store "$U" --model nosuch > /dev/null 2>&1 || rc=$?
[ $rc = 4 ] || fail "verify --store unknown model: exit $rc, expected 4"

# ---- check on the cluster's figures, states in a local file: the same
# outcomes as the check of the file itself (a fresh copy of its states)
"$C" backup --db "$T/h.db" "$T/h-check.db" 2> /dev/null
"$C" check --db "$T/h-check.db" --rules "$T/d/rules.jsonc" --from 2026-10-05 --to 2026-11-01 \
  --no-deliver --format json > "$T/check-sq.json" 2> /dev/null || true
rc=0; "$C" check --store "$U" --db "$T/state.db" --rules "$T/d/rules.jsonc" --from 2026-10-05 \
  --to 2026-11-01 --no-deliver --format json > "$T/check-ch.json" 2> "$T/check-ch.err" || rc=$?
[ $rc = 10 ] || fail "check --store: exit $rc (expected 10, raised): $(cat "$T/check-ch.err")"
same "$T/check-sq.json" "$T/check-ch.json" "check --store --db STATE equals check --db"
"$C" alerts --db "$T/state.db" --format json > "$T/alerts-state.json" \
  || fail "alerts on the check's state file"
grep -q '"raised"' "$T/alerts-state.json" || fail "no raised state kept in the local state file"
# a second run: every day already checked, as with a file
"$C" check --store "$U" --db "$T/state.db" --rules "$T/d/rules.jsonc" --from 2026-10-05 \
  --to 2026-11-01 --no-deliver --format json > "$T/check-ch2.json" 2> /dev/null || true
/usr/bin/python3 -c 'import json,sys; c=json.load(open(sys.argv[1]))["counts"]; sys.exit(0 if c["already_checked"] > 0 and c["raised"] == 0 else 1)' "$T/check-ch2.json" \
  || fail "check --store again: states not carried: $(head -c 600 "$T/check-ch2.json")"
rc=0; "$C" check --store "$U" --rules "$T/d/rules.jsonc" > /dev/null 2> "$T/nodb.err" || rc=$?
[ $rc = 2 ] && grep -q "give --db FILE beside it" "$T/nodb.err" \
  || fail "check --store without --db: exit $rc: $(cat "$T/nodb.err")"
"$C" rules validate "$T/d/rules.jsonc" --db "$T/h.db" > "$T/val-sq.txt" 2>&1 || true
"$C" rules validate "$T/d/rules.jsonc" --store "$U" > "$T/val-ch.txt" 2>&1 || true
[ -s "$T/val-sq.txt" ] && cmp -s "$T/val-sq.txt" "$T/val-ch.txt" \
  || fail "rules validate --store differs: $(diff "$T/val-sq.txt" "$T/val-ch.txt" | head -5)"

# ---- writing commands refuse the cluster, naming publish
for cmd in "ingest --model x $T/d/events.jsonl" "label $T/d/labels.jsonl" \
           "baseline --model grader --from 2026-10-05 --to 2026-10-11" \
           "prune --model grader --before 2026-10-06" "deliver" "follow $T/d/events.jsonl" \
           "serve --listen 127.0.0.1:0"; do
  rc=0; "$C" $cmd --store "$U" > /dev/null 2> "$T/w.err" || rc=$?
  [ $rc = 2 ] && grep -q "publish" "$T/w.err" || fail "${cmd%% *} --store clickhouse: exit $rc: $(cat "$T/w.err")"
done
for cmd in "alerts" "backup $T/never.db"; do
  rc=0; "$C" $cmd --store "$U" > /dev/null 2> "$T/w.err" || rc=$?
  [ $rc = 2 ] && grep -q "local SQLite store" "$T/w.err" || fail "${cmd%% *} --store clickhouse: exit $rc: $(cat "$T/w.err")"
done

# ---- follow --publish
head -n 1200 "$T/d/events.jsonl" > "$T/f1.jsonl"
sed -n 1201,2400p "$T/d/events.jsonl" > "$T/f2.jsonl"
sed -n '2401,$p' "$T/d/events.jsonl" > "$T/f3.jsonl"
# the models get the demo's class names from a first event ingested before
# (posted or followed again later: a duplicate)
head -n 1 "$T/d/events.jsonl" | "$C" ingest --db "$T/f.db" --model fgrader --classes $CL --quiet - 2> /dev/null
head -n 1 "$T/d/events.jsonl" | "$C" ingest --db "$T/s.db" --model sgrader --classes $CL --quiet - 2> /dev/null
: > "$T/follow.jsonl"
"$C" follow --db "$T/f.db" --model fgrader --interval 100 --publish "$U" --source follower \
  "$T/follow.jsonl" > "$T/follow.out" 2> "$T/follow.err" &
FPID=$!
local_events() { "$C" models --db "$T/f.db" --format json | /usr/bin/python3 -c 'import json,sys; print(sum(m["events"] for m in json.load(sys.stdin)["models"] if m["name"] == "fgrader"))'; }
cluster_has() { [ "$(count events fgrader)" = "$1" ]; }
local_has() { [ "$(local_events)" = "$1" ]; }
cat "$T/f1.jsonl" >> "$T/follow.jsonl"
wait_for "follow's first 1200 events in the cluster" cluster_has 1200 || fail "follow --publish: $(cat "$T/follow.err")"
"$C" report --db "$T/f.db" --model fgrader --by all --format json > "$T/f-sq1.json"
wait_for "the cluster's summaries of follow's events" \
  bash -c "\"$C\" report --store \"$U\" --model fgrader --by all --format json > \"$T/f-ch1.json\" && /usr/bin/python3 \"$HERE/json_same.py\" \"$T/f-sq1.json\" \"$T/f-ch1.json\" x"
same "$T/f-sq1.json" "$T/f-ch1.json" "follow --publish: the cluster's report equals the local one"
# the server goes away: follow keeps ingesting and says the publish failed
ch_stop 1
cat "$T/f2.jsonl" >> "$T/follow.jsonl"
wait_for "follow ingesting with the cluster down" local_has 2400 || fail "follow stopped ingesting"
wait_for "follow telling the publish failed" grep -q "publish failed" "$T/follow.err" \
  || fail "no publish failure said: $(cat "$T/follow.err")"
kill -0 "$FPID" || fail "follow exited while the cluster was down"
cat "$T/f3.jsonl" >> "$T/follow.jsonl"
wait_for "follow ingesting everything" local_has 3360
ch_start 1
wait_for "the publish catching up after the restart" cluster_has 3360 \
  || fail "not caught up: $(count events fgrader) events in the cluster"
# (the rows are in before the run ends and says so)
wait_for "follow saying it caught up" grep -q "caught up after" "$T/follow.err" \
  || fail "no catch-up said: $(cat "$T/follow.err")"
kill -TERM "$FPID"
rc=0; wait "$FPID" || rc=$?
FPID=
[ $rc = 0 ] || fail "follow exit $rc: $(cat "$T/follow.err")"
grep -q "everything committed is published" "$T/follow.err" || fail "follow's last words: $(tail -2 "$T/follow.err")"
dups=$(ch_query 1 "SELECT count() FROM (SELECT id FROM concord.events FINAL WHERE model = 'fgrader' GROUP BY id HAVING count() > 1)")
[ "$dups" = 0 ] || fail "$dups event ids twice in the cluster"
"$C" report --db "$T/f.db" --model fgrader --by day --format json > "$T/f-sq2.json"
"$C" report --store "$U" --model fgrader --by day --format json > "$T/f-ch2.json" || fail "report --store fgrader"
same "$T/f-sq2.json" "$T/f-ch2.json" "follow --publish after the restart: the cluster's report equals the local one"
"$C" report --db "$T/f.db" --model fgrader --by all --segment line-2 --format json > "$T/f-sq3.json"
"$C" report --store "$U" --model fgrader --by all --segment line-2 --format json > "$T/f-ch3.json"
same "$T/f-sq3.json" "$T/f-ch3.json" "follow --publish: one slice's report"

# ---- serve --publish
"$C" serve --db "$T/s.db" --listen 127.0.0.1:0 --publish "$U" --source server-1 2> "$T/serve.err" &
SPID=$!
wait_for "serve listening" grep -q "listening on" "$T/serve.err" || fail "serve: $(cat "$T/serve.err")"
SPORT=$(sed -n 's/.*listening on http:\/\/[^ ]*:\([0-9][0-9]*\) .*/\1/p' "$T/serve.err" | head -1)
for part in f1 f2 f3; do
  code=$(curl -s -m 120 -o "$T/post.out" -w '%{http_code}' -X POST \
    -H 'Content-Type: application/x-ndjson' --data-binary @"$T/$part.jsonl" \
    "http://127.0.0.1:$SPORT/v1/models/sgrader/events")
  [ "$code" = 200 ] || fail "POST $part: $code $(cat "$T/post.out")"
done
code=$(curl -s -m 120 -o "$T/post.out" -w '%{http_code}' -X POST \
  -H 'Content-Type: application/x-ndjson' --data-binary @"$T/d/labels.jsonl" \
  "http://127.0.0.1:$SPORT/v1/models/sgrader/labels")
[ "$code" = 200 ] || fail "POST labels: $code $(cat "$T/post.out")"
cluster_has_s() { [ "$(count events sgrader)" = "$1" ]; }
published() {
  curl -s -m 60 "http://127.0.0.1:$SPORT/v1/readyz" > "$T/ready.json" &&
    /usr/bin/python3 -c 'import json,sys; p=json.load(open(sys.argv[1]))["publish"]; sys.exit(0 if p["pending_commits"] == 0 and p["runs"] > 0 and p["last_ok"] else 1)' "$T/ready.json"
}
wait_for "serve's events in the cluster" cluster_has_s 3360 \
  || fail "serve --publish: $(count events sgrader) events in the cluster: $(cat "$T/serve.err")"
wait_for "readyz telling serve's commits published" published || fail "readyz: $(cat "$T/ready.json")"
kill -TERM "$SPID"
rc=0; wait "$SPID" || rc=$?
SPID=
[ $rc = 0 ] || fail "serve exit $rc: $(tail -3 "$T/serve.err")"
"$C" report --db "$T/s.db" --model sgrader --by week --format json > "$T/s-sq.json"
"$C" report --store "$U" --model sgrader --by week --format json > "$T/s-ch.json" || fail "report --store sgrader"
same "$T/s-sq.json" "$T/s-ch.json" "serve --publish: the cluster's report equals the local one"

# ---- verify finds a slice vector counted twice in the cluster (a row of
# another source with line-1's vector of one day)
ch_query 1 "INSERT INTO concord.summaries_local SELECT model, day, layout_version, slice, 'rogue', seq, events, counters FROM concord.summaries_local FINAL WHERE model = 'grader' AND slice = '=line-1' AND day = 20740" > /dev/null
rc=0; "$C" verify --store "$U" --model grader > "$T/verify2.out" 2>&1 || rc=$?
[ $rc = 1 ] && grep -q "2026-10-14 slices: MISMATCH" "$T/verify2.out" \
  || fail "verify --store with a doubled slice vector: exit $rc: $(grep -i mismatch "$T/verify2.out" | head -3)"

if [ "$fails" -gt 0 ]; then echo "$fails check(s) failed" >&2; exit 1; fi
echo "store_publish: all checks passed"
