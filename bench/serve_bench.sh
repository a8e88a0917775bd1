#!/bin/sh
# serve_bench.sh — `concord serve` against file ingest of the same events,
# side by side in one run: 4 concurrent clients post 1,000-event gzip
# batches over loopback (tests/serve/post_batches.py; bodies made before
# the clock starts), and `concord ingest` reads the same lines from a file.
# Prints events/s of each and the server's as a share of file ingest, the
# p50/p99 latency of one batch (request sent to answer received, i.e.
# committed), and the peak RSS of the server and of the file ingest (GNU
# time). The clients run on the same machine and take CPU from the server:
# on 2 cores the share is a lower bound.
# Usage: bench/serve_bench.sh [BUILD_DIR] [EVENTS]   (default build/, 1000000)
set -eu

root=$(cd "$(dirname "$0")/.." && pwd)
build=${1:-$root/build}
n=${2:-1000000}
post=$root/tests/serve/post_batches.py
cmake -S "$root" -B "$build" -DCMAKE_BUILD_TYPE=Release > /dev/null
cmake --build "$build" --target concord -j "$(nproc 2> /dev/null || echo 2)" > /dev/null
c=$build/cli/concord
t=$(mktemp -d)
trap 'rm -rf "$t"' EXIT

echo "date:    $(date -u '+%Y-%m-%d %H:%M UTC')"
echo "commit:  $(git -C "$root" rev-parse --short HEAD 2> /dev/null || echo '?')"
echo "cpu:     $(nproc) x $(sed -n 's/^model name[[:space:]]*: //p' /proc/cpuinfo 2> /dev/null | head -n 1)"
echo "load:    $(cut -d' ' -f1-3 /proc/loadavg) (1, 5, 15 min) before"
echo "events:  $n (3 members x 3 classes), 1,000 per batch, 4 clients, gzip level 6"

/usr/bin/python3 "$post" --dump "$t/events.jsonl" --events "$n"
# file ingest of the same lines
s0=$(date +%s.%N)
/usr/bin/time -f '%M' -o "$t/ingest.rss" "$c" ingest --db "$t/f.db" --model d "$t/events.jsonl" 2> /dev/null
s1=$(date +%s.%N)
file_s=$(echo "$s1 - $s0" | bc -l)

# the server, under GNU time for its peak RSS
/usr/bin/time -f '%M' -o "$t/serve.rss" "$c" serve --db "$t/s.db" --listen 127.0.0.1:0 2> "$t/serve.err" &
spid=$!
i=0
while ! grep -q 'listening on' "$t/serve.err"; do
    i=$((i + 1))
    [ $i -lt 3000 ] || { echo "the server did not start: $(cat "$t/serve.err")"; exit 1; }
    sleep 0.1
done
sed -n 's/.*listening on http:\/\/[^ ]*:\([0-9][0-9]*\) .*/\1/p' "$t/serve.err" > "$t/port"
/usr/bin/python3 "$post" "$t/port" "$t/acks" --events "$n" > "$t/clients.out"
# the server process is time's child: stop the server itself
kill -TERM "$(pgrep -P $spid)" 2> /dev/null || true
wait $spid || true
serve_s=$(sed -n 's/^seconds //p' "$t/clients.out")
lat=$(sed -n 's/^latency_ms //p' "$t/clients.out")
rows=$(sqlite3 "$t/s.db" 'SELECT count(*) FROM events' 2> /dev/null || echo '?')
# file ingest once more, after the server: the load of a shared machine moves
rm -f "$t"/f.db*
s0=$(date +%s.%N)
"$c" ingest --db "$t/f.db" --model d "$t/events.jsonl" 2> /dev/null
s1=$(date +%s.%N)
file2_s=$(echo "$s1 - $s0" | bc -l)

echo
printf 'file ingest:  %8.0f events/s  (%.1f s)  peak RSS %d MiB\n' \
    "$(echo "$n / $file_s" | bc -l)" "$file_s" $(($(cat "$t/ingest.rss") / 1024))
printf 'serve:        %8.0f events/s  (%.1f s)  peak RSS %d MiB  (%s rows stored)\n' \
    "$(echo "$n / $serve_s" | bc -l)" "$serve_s" $(($(cat "$t/serve.rss") / 1024)) "$rows"
printf 'file ingest again: %8.0f events/s  (%.1f s)\n' "$(echo "$n / $file2_s" | bc -l)" "$file2_s"
printf 'serve / file: %.2f (against the first file run), %.2f (against the second)\n' \
    "$(echo "$file_s / $serve_s" | bc -l)" "$(echo "$file2_s / $serve_s" | bc -l)"
echo "batch latency: p50 ${lat% *} ms, p99 ${lat#* } ms"
echo "load:    $(cut -d' ' -f1-3 /proc/loadavg) (1, 5, 15 min) after"
