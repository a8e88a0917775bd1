#!/usr/bin/env bash
# test.sh — quick start, second command: install what is missing, build with
# warnings as errors, run the whole suite; then the unit and command-line
# tests again under AddressSanitizer and UBSan.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/deps.sh
cmake -S . -B build-test -DCMAKE_BUILD_TYPE=RelWithDebInfo -DCONCORD_WERROR=ON > /dev/null
cmake --build build-test -j"$(nproc)" > /dev/null
(cd build-test && ctest --output-on-failure -j2)
cmake -S . -B build-asan -DCMAKE_BUILD_TYPE=Debug -DCONCORD_WERROR=ON -DCONCORD_SANITIZE=ON > /dev/null
cmake --build build-asan -j"$(nproc)" > /dev/null
(cd build-asan && ASAN_OPTIONS=detect_leaks=1 UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1 \
  ctest --output-on-failure -j2 -E 'regenerates')
