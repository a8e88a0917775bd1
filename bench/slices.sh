#!/usr/bin/env bash
# slices.sh — what slices cost: the same N synthetic events (concord-gen,
# 5 x 10, 28 days) ingested with one segment and with 16 (segment = line
# number mod 16), in one run; a 28-day whole-model report (--by all) and a
# --by-segment report; then concord-bench-slices on the 16-slice database
# (model rows vs summing slices on read, bytes per slice-day). Quote ratios
# from one run. Usage: bench/slices.sh [BUILD_DIR] [N]
set -euo pipefail
B=${1:-build}
N=${2:-200000}
T=$(mktemp -d "${TMPDIR:-/tmp}/concord-slices-bench.XXXXXX")
trap 'rm -rf "$T"' EXIT
C=$B/cli/concord
t() { local s e; s=$(date +%s.%N); "$@" > /dev/null 2>&1; e=$(date +%s.%N); awk -v a="$s" -v b="$e" 'BEGIN { printf "%.3f", b - a }'; }
"$B/bench/concord-gen" --n "$N" --seed 1 -o "$T/raw.jsonl"
awk '{ sub(/^\{/, "{\"segment\":\"line-0\","); print }' "$T/raw.jsonl" > "$T/one.jsonl"
awk '{ sub(/^\{/, "{\"segment\":\"line-" (NR % 16) "\","); print }' "$T/raw.jsonl" > "$T/sixteen.jsonl"
rm "$T/raw.jsonl"
i1=$(t "$C" ingest --db "$T/one.db" "$T/one.jsonl")
i16=$(t "$C" ingest --db "$T/sixteen.db" "$T/sixteen.jsonl")
echo "ingest of $N events: 1 slice ${i1} s, 16 slices ${i16} s (ratio $(awk -v a="$i1" -v b="$i16" 'BEGIN { printf "%.3f", b / a }'))"
r1=$(t "$C" report --db "$T/sixteen.db" --model default --by all --format json)
r16=$(t "$C" report --db "$T/sixteen.db" --model default --by all --by-segment --format json)
echo "28-day report (whole process): whole model ${r1} s, --by-segment ${r16} s"
"$B/bench/concord-bench-slices" "$T/sixteen.db" default 5
