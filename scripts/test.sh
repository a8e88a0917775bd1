#!/usr/bin/env bash
# test.sh — quick start, second command: installs what is missing (build and
# test-only packages), builds with warnings as errors and runs the whole
# suite; then the C code again under AddressSanitizer and UBSan; then each
# fuzz target for a bounded time. Every stage always runs; the exit status is
# non-zero when any had a failure.
#
# CONCORD_TEST_JOBS sets ctest's parallelism (default: the number of cores);
# the tests are written to pass at any level (ctest -j16 included) and on a
# loaded machine: they assert behaviour, never speed.
set -uo pipefail
cd "$(dirname "$0")/.."
scripts/deps.sh --test || exit 1
jobs=${CONCORD_TEST_JOBS:-$(nproc)}
status=0

echo "== stage 1: RelWithDebInfo, -Werror, every test (ctest -j$jobs)"
cmake -S . -B build-test -DCMAKE_BUILD_TYPE=RelWithDebInfo -DCONCORD_WERROR=ON > /dev/null &&
  cmake --build build-test -j"$(nproc)" > /dev/null || { echo "test.sh: stage 1 build failed" >&2; exit 1; }
(cd build-test && ctest --output-on-failure -j"$jobs") || status=1

# Tests that run no C code of ours gain nothing from the sanitizers: the
# reference regenerations (Python with numpy/scipy/sklearn/statsmodels only).
asan_skip='_regenerates?$'
echo "== stage 2: Debug with AddressSanitizer and UBSan (ctest -j$jobs)"
echo "   not repeated here (they run only Python, no concord code): $(cd build-test && ctest -N -R "$asan_skip" | sed -n 's/^ *Test *#[0-9]*: //p' | tr '\n' ' ')"
cmake -S . -B build-asan -DCMAKE_BUILD_TYPE=Debug -DCONCORD_WERROR=ON -DCONCORD_SANITIZE=ON > /dev/null &&
  cmake --build build-asan -j"$(nproc)" > /dev/null || { echo "test.sh: stage 2 build failed" >&2; exit 1; }
(cd build-asan && ASAN_OPTIONS=detect_leaks=1 UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1 \
  ctest --output-on-failure -j"$jobs" -E "$asan_skip") || status=1

# Fuzzing: every libFuzzer target (event and label lines, timestamps, rules
# files, the summary decoder) for a bounded time from its seed corpus; a
# finding is saved into tests/fuzz/corpus/ and fails the run (the ordinary
# suite then replays it everywhere). CONCORD_FUZZ_SECONDS per target (15).
echo "== stage 3: libFuzzer targets, ${CONCORD_FUZZ_SECONDS:-15} s each (clang, ASan, UBSan)"
tests/fuzz/run_all.sh "${CONCORD_FUZZ_SECONDS:-15}" "$(pwd)/build-fuzz" || status=1

if [ $status -ne 0 ]; then
  echo "test.sh: FAILED (see the failures above)" >&2
else
  echo "test.sh: all three stages passed"
fi
exit $status
