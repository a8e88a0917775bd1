#!/usr/bin/env bash
# demo.sh — quick start, first command: install what is missing, build, run
# the demo (invented packhouse data) into ./concord-demo.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/deps.sh
cmake -S . -B build -DCMAKE_BUILD_TYPE=RelWithDebInfo > /dev/null
cmake --build build -j"$(nproc)" > /dev/null
build/cli/concord demo --dir concord-demo
