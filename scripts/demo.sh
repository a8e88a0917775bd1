#!/usr/bin/env bash
# demo.sh — quick start, first command: install the missing build and
# run-time packages, build, run the demo (invented packhouse data) into
# ./concord-demo. The binary is build/cli/concord; `cmake --install build`
# puts it on the PATH (/usr/local/bin by default).
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/deps.sh
cmake -S . -B build -DCMAKE_BUILD_TYPE=RelWithDebInfo > /dev/null
cmake --build build -j"$(nproc)" > /dev/null
build/cli/concord demo --dir concord-demo
echo
echo "the binary is $(pwd)/build/cli/concord; to put concord on the PATH: cmake --install build"
