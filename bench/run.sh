#!/bin/sh
# run.sh — builds concord in Release mode and runs concord-bench at
# N = 100,000 and N = 1,000,000, printing both tables (compare the peak RSS
# columns to see how memory scales with N).
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

for n in 100000 1000000; do
    echo
    "$build/bench/concord-bench" --n "$n" "$@"
done
