#!/usr/bin/env bash
# run_all.sh — builds every libFuzzer target with clang (ASan + UBSan) and
# runs each for a bounded time from a copy of its seed corpus. A finding is
# copied into tests/fuzz/corpus/<target>/ (commit it: the ordinary test
# suite replays every corpus file, tests/fuzz/CMakeLists.txt) and the script
# exits 1. Needs clang and libclang-rt-14-dev (Debian).
# Usage: tests/fuzz/run_all.sh [SECONDS_PER_TARGET (default 20)] [BUILD_DIR]
set -euo pipefail
SECONDS_EACH=${1:-20}
HERE=$(cd "$(dirname "$0")" && pwd)
ROOT=$(cd "$HERE/../.." && pwd)
BUILD=${2:-$ROOT/build-fuzz}
TARGETS="event label ts rules codec"

command -v clang > /dev/null || { echo "run_all: clang is not installed" >&2; exit 2; }
mkdir -p "$BUILD"
CC=clang cmake -S "$ROOT" -B "$BUILD" -DCMAKE_BUILD_TYPE=RelWithDebInfo -DCONCORD_FUZZ=ON \
  -DCONCORD_SANITIZE=ON > "$BUILD/run_all.cmake.log" 2>&1 || { cat "$BUILD/run_all.cmake.log" >&2; exit 2; }
# shellcheck disable=SC2046
cmake --build "$BUILD" -j2 --target $(for t in $TARGETS; do printf 'fuzz_%s ' "$t"; done) > "$BUILD/run_all.build.log" 2>&1 ||
  { tail -30 "$BUILD/run_all.build.log" >&2; exit 2; }

WORK=$(mktemp -d)
trap 'rm -rf "$WORK"' EXIT
found=0
for t in $TARGETS; do
  mkdir -p "$WORK/$t/corpus" "$WORK/$t/artifacts"
  cp "$HERE/corpus/$t"/* "$WORK/$t/corpus/"
  set +e
  (cd "$WORK/$t" && "$BUILD/tests/fuzz/fuzz_$t" -max_total_time="$SECONDS_EACH" -max_len=4096 \
     -timeout=30 -rss_limit_mb=2048 -print_final_stats=1 -artifact_prefix="$WORK/$t/artifacts/" \
     "$WORK/$t/corpus" > "$WORK/$t/log" 2>&1)
  rc=$?
  set -e
  runs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$WORK/$t/log" | tail -1)
  cov=$(grep -o 'cov: [0-9]*' "$WORK/$t/log" | tail -1 | cut -d' ' -f2)
  if [ $rc -ne 0 ] || ls "$WORK/$t/artifacts"/* > /dev/null 2>&1; then
    found=1
    for a in "$WORK/$t/artifacts"/*; do
      [ -e "$a" ] || continue
      cp "$a" "$HERE/corpus/$t/$(basename "$a")"
      echo "fuzz_$t: FINDING saved as tests/fuzz/corpus/$t/$(basename "$a")"
    done
    grep -m1 -A15 'ERROR\|==ERROR\|deadly signal' "$WORK/$t/log" >&2 || tail -20 "$WORK/$t/log" >&2
  fi
  echo "fuzz_$t: ${SECONDS_EACH} s, ${runs:-?} inputs, ${cov:-?} coverage points, $([ $rc -eq 0 ] && echo 'no finding' || echo "exit $rc")"
done
exit $found
