#!/bin/bash
# json_roundtrip.sh CONCORD TEST_JSON_PRINT — the demo's by-day report read
# back with Python's json gives every double the report held, bit for bit
# (json_roundtrip.py), and `concord report --format json` streams the same
# windows.
set -euo pipefail
concord=$1 helper=$2
here=$(cd "$(dirname "$0")" && pwd)
t=$(mktemp -d)
trap 'rm -rf "$t"' EXIT
export CONCORD_NOW=1793836800
"$concord" demo --dir "$t/demo" --per-day 200 --seed 7 >/dev/null
db=$t/demo/demo.db
"$concord" report --db "$db" --model apple-grader --by day --format json -o "$t/report.json"
"$helper" "$db" apple-grader "$t/windows.json" "$t/bits.txt"
/usr/bin/python3 "$here/json_roundtrip.py" "$t/windows.json" "$t/bits.txt" "$t/report.json"
