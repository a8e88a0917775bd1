#!/usr/bin/env bash
# bench/cluster.sh [BUILD_DIR] [N]: publishing to a two-shard ClickHouse
# cluster (two clickhouse-server processes on loopback, the fixture of
# tests/cluster) side by side with SQLite, in one run:
#   - publish rate: events/s and summary rows/s of a first publish of two
#     hosts' stores (N events each, 28 days, 5 members x 10 classes), and the
#     time of a publish after one more day;
#   - merged 28-day report (--by day, JSON) through --store vs one SQLite
#     store holding both hosts' events (--db), best of 3;
#   - bytes that travel per day per source (RowBinary request bodies).
# Ratios from one run on a shared machine; figures, not assertions.
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
build=${1:-$root/build}
N=${2:-200000}
C=$build/cli/concord
G=$build/bench/concord-gen
T=$(mktemp -d "${TMPDIR:-/tmp}/concord-chbench.XXXXXX")
. "$root/tests/cluster/ch_fixture.sh"
ch_setup "$T/ch" 2
ch_start 1
ch_start 2
trap 'ch_stop_all; rm -rf "$T"' EXIT
now() { date +%s.%N; }
secs() { echo "$2 - $1" | bc -l; }

echo "date:    $(date -u '+%Y-%m-%d %H:%M UTC'), commit $(git -C "$root" rev-parse --short HEAD)"
echo "server:  clickhouse-server $(ch_query 1 'SELECT version()'), 2 shards on loopback"
echo "cpu:     $(nproc) x $(sed -n 's/^model name[[:space:]]*: //p' /proc/cpuinfo | head -n 1)"
echo "load:    $(cut -d' ' -f1-3 /proc/loadavg) before"
for i in 1 2; do "$C" publish --init --store "$(eval echo \$CH_URL_$i)" > /dev/null; done
"$G" --n "$N" --seed 1 -o "$T/a.jsonl"
"$G" --n "$N" --seed 2 --random-ids -o "$T/b.jsonl"
export CONCORD_NOW=1790000000
for h in a b; do "$C" ingest --db "$T/$h.db" --model bench --quiet "$T/$h.jsonl" 2> /dev/null; done
"$C" ingest --db "$T/one.db" --model bench --quiet "$T/a.jsonl" "$T/b.jsonl" 2> /dev/null
total_ev=0; total_rows=0; t=0
for h in a b; do
  t0=$(now)
  out=$("$C" publish --db "$T/$h.db" --store "$CH_URL_1" --source "host-$h")
  t1=$(now)
  dt=$(secs "$t0" "$t1")
  rows=$(echo "$out" | sed -n 's/.*: \([0-9]*\) summary vector.*/\1/p')
  ev=$(echo "$out" | sed -n 's/.* \([0-9]*\) event row.*/\1/p')
  bytes=$(echo "$out" | sed -n 's/.*; \([0-9]*\) bytes/\1/p')
  printf "publish host-%s: %d events, %d summary rows, %.2f s, %.0f events/s, %.1f summary rows/s, %.1f MB\n" \
    "$h" "$ev" "$rows" "$dt" "$(echo "$ev / $dt" | bc -l)" "$(echo "$rows / $dt" | bc -l)" \
    "$(echo "$bytes / 1000000" | bc -l)"
  echo "  bytes per day per source: $(echo "$bytes / 28" | bc) (event rows and summary vectors)"
done
# one summary vector's bytes: a day republished alone
sqlite3 "$T/a.db" "INSERT OR IGNORE INTO publish_days(model_id, day) SELECT model_id, day FROM summaries LIMIT 1"
out=$("$C" publish --db "$T/a.db" --store "$CH_URL_1" --source host-a)
echo "one day's summary vector alone (with the models row): $(echo "$out" | sed -n 's/.*; \([0-9]*\) bytes/\1/p') bytes"
# a day more on host a
"$G" --n $((N / 28)) --seed 3 --days 1 --start 2026-11-30 -o "$T/day.jsonl"
sed -i 's/"id":"e/"id":"n/' "$T/day.jsonl"
"$C" ingest --db "$T/a.db" --model bench --quiet "$T/day.jsonl" 2> /dev/null
"$C" ingest --db "$T/one.db" --model bench --quiet "$T/day.jsonl" 2> /dev/null
t0=$(now); out=$("$C" publish --db "$T/a.db" --store "$CH_URL_1" --source host-a); t1=$(now)
printf "publish of one more day: %.2f s (%s)\n" "$(secs "$t0" "$t1")" "$(echo "$out" | sed 's/.*(seq [0-9]*): //')"

best() { # COMMAND...: best of 3 wall times
  local b=999999 i t0 t1 d
  for i in 1 2 3; do
    t0=$(now); "$@" > /dev/null; t1=$(now); d=$(secs "$t0" "$t1")
    b=$(echo "if ($d < $b) $d else $b" | bc -l)
  done
  printf "%.3f" "$b"
}
ts=$(best "$C" report --db "$T/one.db" --model bench --by day --format json)
tc=$(best "$C" report --store "$CH_URL_1" --model bench --by day --format json)
echo "merged 29-day report --by day (JSON): SQLite ${ts} s, cluster ${tc} s (ratio $(printf "%.2f" "$(echo "$tc / $ts" | bc -l)"))"
"$C" report --db "$T/one.db" --model bench --by all --format json > "$T/sq.json"
"$C" report --store "$CH_URL_1" --model bench --by all --format json > "$T/ch.json"
/usr/bin/python3 "$root/tests/cluster/json_same.py" "$T/sq.json" "$T/ch.json" "bench report" \
  && echo "the merged report equals the single store's"
echo "load:    $(cut -d' ' -f1-3 /proc/loadavg) after"
