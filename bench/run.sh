#!/bin/sh
# run.sh — builds concord in Release mode and runs concord-bench on the
# shapes the README quotes: N = 100,000 and 1,000,000 events of 5 x 10 with
# ascending ids, the same 1,000,000 with random (UUID-like) ids, and 5,000
# events of the largest shape, 64 x 256. Prints the machine and its load
# first, since rates on a shared machine move from run to run: compare the
# ratios printed within one run.
# Usage: bench/run.sh [BUILD_DIR] [extra concord-bench options...]
set -eu

root=$(cd "$(dirname "$0")/.." && pwd)
build="$root/build"
case "${1:-}" in
    "" | -*) ;;
    *) build=$1; shift ;;
esac

cmake -S "$root" -B "$build" -DCMAKE_BUILD_TYPE=Release >/dev/null
cmake --build "$build" --target concord-bench concord-gen -j "$(nproc 2>/dev/null || echo 2)" >/dev/null

echo "date:    $(date -u '+%Y-%m-%d %H:%M UTC')"
echo "commit:  $(git -C "$root" rev-parse --short HEAD 2>/dev/null || echo '?')"
echo "cpu:     $(nproc) x $(sed -n 's/^model name[[:space:]]*: //p' /proc/cpuinfo 2>/dev/null | head -n 1)"
echo "memory:  $(awk '/MemTotal/ {printf "%.1f GiB", $2 / 1048576}' /proc/meminfo 2>/dev/null)"
echo "load:    $(cut -d' ' -f1-3 /proc/loadavg 2>/dev/null) (1, 5, 15 min) before the first run"

for n in 100000 1000000; do
    echo
    "$build/bench/concord-bench" --n "$n" "$@"
done
echo
"$build/bench/concord-bench" --n 1000000 --random-ids "$@"
echo
"$build/bench/concord-bench" --n 5000 --members 64 --classes 256 --reps 3 "$@"
echo
echo "load:    $(cut -d' ' -f1-3 /proc/loadavg 2>/dev/null) (1, 5, 15 min) after the last run"
