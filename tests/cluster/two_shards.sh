#!/usr/bin/env bash
# two_shards.sh — two ClickHouse servers as the two shards of cluster
# "concord" (Distributed tables over both), two collector "hosts" (two SQLite
# files) each holding half of a log, delayed labels and their corrections
# arriving at either host (a correction always at the other host than the
# label before it, so labels often reach a host that never saw the event).
# After publishing, the merged report (by day, week, all and hour; by
# segment with the slices in the store's order and its limit), review (every
# list, segment, time cut, limit and format), show and the model's totals
# equal those of one SQLite store that read the whole log (counts exactly,
# reals within 1e-9 relative; text and CSV byte for byte). Labels are read
# incrementally: a run with nothing new reads no label rows, and a label read
# before its event reached the host is applied when the event arrives. Then
# a shard is stopped during a publish: the publisher retries with backoff
# and says so, a report meanwhile fails with the server's error
# instead of answering with half the data, and once the shard is back the
# merged report again equals the single store's: nothing lost or doubled.
# Usage: two_shards.sh CONCORD SOURCE_DIR [CH_STORE_PROBE]
set -euo pipefail
C=$1
SRC=$2
PROBE=${3:-}
HERE=$SRC/tests/cluster
T=$(mktemp -d "${TMPDIR:-/tmp}/concord-ch2.XXXXXX")
. "$HERE/ch_fixture.sh"
ch_setup "$T/ch" 2
ch_start 1
ch_start 2
PUB=()
cleanup() {
  for p in "${PUB[@]}"; do kill "$p" 2> /dev/null || true; done
  ch_stop_all
  rm -rf "$T"
}
trap cleanup EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
same() { /usr/bin/python3 "$HERE/json_same.py" "$1" "$2" "$3" || fail "$3"; }
for i in 1 2; do "$C" publish --init --store "$(eval echo \$CH_URL_$i)" > /dev/null; done

REF=$SRC/tests/reference
classes=$(/usr/bin/python3 "$SRC/tests/e2e/e2e_compare.py" classes "$REF/e2e_expected.json")
awk 'NR % 2 == 1' "$REF/e2e_events.jsonl" > "$T/ev-a.jsonl"
awk 'NR % 2 == 0' "$REF/e2e_events.jsonl" > "$T/ev-b.jsonl"
mkdir "$T/lab"
rounds=$(/usr/bin/python3 "$HERE/split_labels.py" "$REF/e2e_labels.jsonl" "$T/ev-a.jsonl" "$T/lab")
[ "$rounds" -ge 2 ] || fail "the label log has no corrections to test ($rounds rounds)"

# one store reading everything; label round k arrives at time 1790000000 + k hours
export CONCORD_NOW=1790000000
"$C" ingest --db "$T/one.db" --model ref --classes "$classes" --quiet "$REF/e2e_events.jsonl"
for host in a b; do
  "$C" ingest --db "$T/$host.db" --model ref --classes "$classes" --quiet "$T/ev-$host.jsonl"
done
for k in $(seq 1 "$rounds"); do
  export CONCORD_NOW=$((1790000000 + 3600 * k))
  "$C" label --db "$T/one.db" --model ref "$T/lab/$k.jsonl" > /dev/null
  for host in a b; do
    [ -s "$T/lab/$k-$host.jsonl" ] && "$C" label --db "$T/$host.db" --model ref "$T/lab/$k-$host.jsonl" > /dev/null
  done
done
echo "labels waiting for an event at a: $(sqlite3 "$T/a.db" 'SELECT count(*) FROM pending_labels'), at b: $(sqlite3 "$T/b.db" 'SELECT count(*) FROM pending_labels')"
[ "$(sqlite3 "$T/a.db" 'SELECT count(*) FROM pending_labels')" -gt 0 ] || fail "no label reached a host without its event"

# each host publishes through "its" server; twice round, so labels sent by one
# host are applied by the other
for r in 1 2; do
  "$C" publish --db "$T/a.db" --store "$CH_URL_1" --source host-a > "$T/pa$r.out"
  "$C" publish --db "$T/b.db" --store "$CH_URL_2" --source host-b > "$T/pb$r.out"
done
cat "$T"/pa1.out "$T"/pb1.out "$T"/pa2.out "$T"/pb2.out
# labels are read incrementally: a third run of a reads b's second run (b
# sends its waiting labels with every run), a fourth reads nothing; the same
# for b
rows_read() { sed -n 's/.*applied (\([0-9]*\) label rows\{0,1\} read).*/\1/p' "$1"; }
for host in a b; do
  url=$CH_URL_1; [ $host = b ] && url=$CH_URL_2
  for r in 3 4; do
    "$C" publish --db "$T/$host.db" --store "$url" --source host-$host > "$T/p$host$r.out"
  done
  cat "$T/p${host}3.out" "$T/p${host}4.out"
  [ "$(rows_read "$T/p${host}4.out")" = 0 ] \
    || fail "a publish of $host with nothing new read label rows: $(cat "$T/p${host}4.out")"
done
[ "$(rows_read "$T/pa3.out")" -gt 0 ] || fail "host a did not read b's second run: $(cat "$T/pa3.out")"
# both shards hold part of the summaries and of the events
for t in summaries events; do
  for i in 1 2; do
    n=$(ch_query $i "SELECT count() FROM concord.${t}_local")
    [ "$n" -gt 0 ] || fail "shard $i holds no $t"
  done
done

compare_all() { # TAG URL
  for by in day week all; do
    "$C" report --db "$T/one.db" --model ref --by $by --format json > "$T/sq-$by.json"
    "$C" report --store "$2" --model ref --by $by --format json > "$T/ch-$by.json" \
      || fail "$1: report --store --by $by"
    same "$T/sq-$by.json" "$T/ch-$by.json" "$1: merged report --by $by"
  done
  # slices in the order one store made them, with its limit (slice_lists)
  "$C" report --db "$T/one.db" --model ref --by-segment --by all --format json > "$T/sq-bys.json"
  "$C" report --store "$2" --model ref --by-segment --by all --format json > "$T/ch-bys.json" \
    || fail "$1: report --store --by-segment"
  same "$T/sq-bys.json" "$T/ch-bys.json" "$1: merged report --by-segment (slice order and limit)"
  # report --by hour: hours summed from the event rows of either store
  # (ranges that end where an event is: d1-250 at 23:00, d2-000 at midnight)
  for range in "2026-03-08 2026-03-12" "2026-03-08 2026-03-09" "2026-03-09T05:00:00Z 2026-03-09T23:00:00Z"; do
    set -- "$1" "$2" $range
    "$C" report --db "$T/one.db" --model ref --by hour --from "$3" --to "$4" --format json \
      > "$T/sq-hour.json"
    "$C" report --store "$2" --model ref --by hour --from "$3" --to "$4" --format json \
      > "$T/ch-hour.json" || fail "$1: report --store --by hour $3 $4"
    same "$T/sq-hour.json" "$T/ch-hour.json" "$1: merged report --by hour $3 $4"
    [ "$(grep -o '"start"' "$T/ch-hour.json" | wc -l)" -gt 10 ] \
      || fail "$1: report --by hour $3 $4 has few hour windows"
  done
  "$C" report --db "$T/one.db" --model ref --by hour --from 2026-03-10 --to 2026-03-10 \
    > "$T/sq-hour.txt"
  "$C" report --store "$2" --model ref --by hour --from 2026-03-10 --to 2026-03-10 \
    > "$T/ch-hour.txt" || fail "$1: report --store --by hour (text)"
  cmp -s "$T/sq-hour.txt" "$T/ch-hour.txt" \
    || fail "$1: report --by hour (text) differs: $(diff "$T/sq-hour.txt" "$T/ch-hour.txt" | head -n 5)"
  # review: every list, the segment filter, a range cut inside days, the
  # limit, and the three formats; text and CSV byte for byte
  c1=${classes%%,*}; rest=${classes#*,}; c2=${rest%%,*}
  n=0
  while IFS= read -r args; do
    n=$((n + 1))
    # shellcheck disable=SC2086
    "$C" review --db "$T/one.db" --model ref $args > "$T/sq-review-$n.out"
    # shellcheck disable=SC2086
    "$C" review --store "$2" --model ref $args > "$T/ch-review-$n.out" \
      || fail "$1: review --store $args"
    case "$args" in
      *json*) same "$T/sq-review-$n.out" "$T/ch-review-$n.out" "$1: review $args" ;;
      *) cmp -s "$T/sq-review-$n.out" "$T/ch-review-$n.out" \
           || fail "$1: review $args differs: $(diff "$T/sq-review-$n.out" "$T/ch-review-$n.out" | head -n 5)" ;;
    esac
  done << ARGS
--from 2026-03-01 --to 2026-03-31 --where all --format json
--from 2026-03-01 --to 2026-03-31 --where wrong --format json
--from 2026-03-01 --to 2026-03-31 --where helped --limit 7 --format json
--from 2026-03-01 --to 2026-03-31 --where hurt --format json
--from 2026-03-01 --to 2026-03-31 --where top-mi --limit 3 --format json
--from 2026-03-01 --to 2026-03-31 --where top-disagreement --format json
--from 2026-03-01 --to 2026-03-31 --where low-margin --limit 50 --format json
--from 2026-03-01 --to 2026-03-31 --where pair:$c1,$c2 --format json
--from 2026-03-01 --to 2026-03-31 --where pair:1,3 --limit 100 --format json
--from 2026-03-09T06:30:00Z --to 2026-03-10T17:15:59Z --where all --format json
--from 2026-03-10 --to 2026-03-10 --where all --limit 0 --format json
--from 2026-03-01 --to 2026-03-31 --segment site-b --where all --format json
--from 2026-03-09T12:00:00Z --to 2026-03-11T12:00:00Z --segment site-a --where pair:0,4 --format json
--from 2026-03-01 --to 2026-03-31 --segment nosuch --where all --format json
--from 2026-04-01 --to 2026-04-30 --where all --format json
--from 2026-03-01 --to 2026-03-31 --where all --format csv
--from 2026-03-01 --to 2026-03-31 --where all --limit 5
--from 2026-03-09 --to 2026-03-11 --segment site-c --where wrong --format csv
ARGS
  grep -q '"id"' "$T/ch-review-1.out" || fail "$1: the cluster's review lists no event"
  rc=0; "$C" show --store "$2" --model ref nosuch > /dev/null 2> "$T/show-none.err" || rc=$?
  [ $rc = 4 ] && grep -q "no event with id 'nosuch'" "$T/show-none.err" \
    || fail "$1: show --store of an unknown id: exit $rc, $(cat "$T/show-none.err")"
  # show: every id that got more than one label, and a few others
  for id in $(cut -d'"' -f4 "$T/lab/2.jsonl" | head -n 20) d1-000 d3-002; do
    "$C" show --db "$T/one.db" --model ref --format json "$id" > "$T/sq-show.json"
    "$C" show --store "$2" --model ref --format json "$id" > "$T/ch-show.json" \
      || fail "$1: show --store $id"
    same "$T/sq-show.json" "$T/ch-show.json" "$1: show $id"
  done
}
compare_all "two hosts" "$CH_URL_1"
# the model's totals, the labels still waiting for their event anywhere
# (here those of d3-* ids), its slices and limit (ch_store_probe)
if [ -n "$PROBE" ]; then
  "$C" models --db "$T/one.db" --format json > "$T/models.json"
  "$PROBE" "$CH_URL_1" ref totals > "$T/totals.txt" || fail "probe totals"
  "$PROBE" "$CH_URL_1" ref slices > "$T/slices.txt" || fail "probe slices"
  cat "$T/totals.txt"
  /usr/bin/python3 "$HERE/models_same.py" "$T/models.json" ref "$T/totals.txt" "$T/slices.txt" \
    || fail "model totals and slices of ref differ between one store and the cluster"
fi

# a label read before its event reached the host: b holds labels for three
# events of a model a does not have yet; a publishes (nothing to apply), then
# ingests the events and publishes again while b stays silent: the labels
# come from the rows for a's new events, not from b's runs (already read)
export CONCORD_NOW=1790050000
for i in 1 2 3 4; do
  sed -n "${i}p" "$REF/e2e_events.jsonl" | sed "s/\"id\":\"[^\"]*\"/\"id\":\"late-$i\"/"
done > "$T/late.jsonl"
head -n 1 "$T/late.jsonl" > "$T/late-b.jsonl"
tail -n 3 "$T/late.jsonl" > "$T/late-a.jsonl"
printf '{"id":"late-2","label":1}\n{"id":"late-3","label":2}\n{"id":"late-4","label":0}\n' > "$T/late-labels.jsonl"
"$C" ingest --db "$T/one.db" --model late --classes "$classes" --quiet "$T/late.jsonl"
"$C" ingest --db "$T/b.db" --model late --classes "$classes" --quiet "$T/late-b.jsonl"
export CONCORD_NOW=1790053600
"$C" label --db "$T/one.db" --model late "$T/late-labels.jsonl" > /dev/null
"$C" label --db "$T/b.db" --model late "$T/late-labels.jsonl" > /dev/null
"$C" publish --db "$T/b.db" --store "$CH_URL_2" --source host-b > "$T/late1.out"
"$C" publish --db "$T/a.db" --store "$CH_URL_1" --source host-a > "$T/late2.out"
export CONCORD_NOW=1790057200
"$C" ingest --db "$T/a.db" --model late --classes "$classes" --quiet "$T/late-a.jsonl"
"$C" publish --db "$T/a.db" --store "$CH_URL_1" --source host-a > "$T/late3.out"
cat "$T/late1.out" "$T/late2.out" "$T/late3.out"
grep -q " 3 labels from other hosts applied (3 label rows read)" "$T/late3.out" \
  || fail "labels that were read before their events arrived: $(cat "$T/late3.out")"
"$C" report --db "$T/one.db" --model late --by all --format json > "$T/late-sq.json"
"$C" report --store "$CH_URL_1" --model late --by all --format json > "$T/late-ch.json" \
  || fail "report late"
same "$T/late-sq.json" "$T/late-ch.json" "labels read before their events arrived: report late"
"$C" report --store "$CH_URL_2" --model ref --by all --format json > "$T/via2.json"
same "$T/sq-all.json" "$T/via2.json" "the same merged report through the other server"

# --- a shard stopped during publishing -------------------------------------
export CONCORD_NOW=1790100000
"$C" demo --dir "$T/d" --per-day 100 > /dev/null
awk 'NR % 2 == 1' "$T/d/events.jsonl" > "$T/dev-a.jsonl"
awk 'NR % 2 == 0' "$T/d/events.jsonl" > "$T/dev-b.jsonl"
DC=premium,extra,class-1,class-2,juice,cull
"$C" ingest --db "$T/one.db" --model packhouse --classes $DC --quiet "$T/d/events.jsonl"
"$C" ingest --db "$T/a.db" --model packhouse --classes $DC --quiet "$T/dev-a.jsonl"
"$C" ingest --db "$T/b.db" --model packhouse --classes $DC --quiet "$T/dev-b.jsonl"
"$C" publish --db "$T/a.db" --store "$CH_URL_1" --source host-a > /dev/null
ch_stop 2
rc=0
"$C" report --store "$CH_URL_1" --model packhouse --by all --format json > "$T/down.json" \
  2> "$T/down.err" || rc=$?
[ $rc = 3 ] || fail "report with a shard down: exit $rc, expected 3"
grep -Eq "ClickHouse 127.0.0.1:[0-9]+: HTTP [0-9]+: Code [0-9]+: " "$T/down.err" \
  || fail "report with a shard down said: $(cat "$T/down.err")"
[ ! -s "$T/down.json" ] || fail "report with a shard down printed a report"
echo "report with shard 2 down: $(head -c 300 "$T/down.err")"
"$C" publish --db "$T/b.db" --store "$CH_URL_1" --source host-b --retry-for 900 \
  > "$T/retry.out" 2> "$T/retry.err" &
PUB+=($!)
until=$(( $(date +%s) + 300 ))
until grep -q "retrying in" "$T/retry.err"; do
  [ "$(date +%s)" -lt "$until" ] || { fail "HANG: publish never said it was retrying"; break; }
  kill -0 "${PUB[0]}" 2> /dev/null || { fail "publish ended while a shard was down: $(cat "$T/retry.err")"; break; }
  sleep 0.2
done
echo "publish while shard 2 is down said: $(head -n 1 "$T/retry.err")"
ch_start 2
wait "${PUB[0]}" || fail "publish after the shard came back: exit $?, $(cat "$T/retry.err")"
PUB=()
cat "$T/retry.out"
"$C" report --db "$T/one.db" --model packhouse --by day --format json > "$T/sq-pk.json"
"$C" report --store "$CH_URL_1" --model packhouse --by day --format json > "$T/ch-pk.json" \
  || fail "report after the shard came back"
same "$T/sq-pk.json" "$T/ch-pk.json" "after a shard outage during publish: packhouse report"
# and the first model is unchanged by all this
compare_all "after the outage" "$CH_URL_2"

if [ "$fails" -gt 0 ]; then echo "$fails check(s) failed" >&2; exit 1; fi
echo "two_shards: all checks passed"
