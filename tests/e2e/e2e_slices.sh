#!/usr/bin/env bash
# Per-slice figures through the real binary against numpy/scipy/sklearn/
# statsmodels computed on each subset of events (tests/reference/
# slices_expected.json, from gen_slices_reference.py over the synthetic
# e2e fixture): report --segment S by day for every slice, then, with a
# baseline, report --by-segment with each slice's drift against its own
# baseline days and against the whole model's window. verify proves the
# slices add up to the model.
#
#   e2e_slices.sh CONCORD_BINARY SOURCE_DIR
set -euo pipefail
export CONCORD_NOW=1790000000
concord=$1
src=$2
ref=$src/tests/reference
py=/usr/bin/python3
cmp_py=$src/tests/e2e/slices_compare.py
tmp=$(mktemp -d "${TMPDIR:-/tmp}/concord-slices.XXXXXX")
trap 'rm -rf "$tmp"' EXIT
failed=0
check() { # NAME CMD...: runs a comparison, prints its lines
  if "$@" > "$tmp/out" 2>&1; then sed 's/^/    /' "$tmp/out"; else
    failed=$((failed + 1)); sed 's/^/    /' "$tmp/out"; fi
}
classes=$("$py" "$src/tests/e2e/e2e_compare.py" classes "$ref/e2e_expected.json")
db=$tmp/s.db
"$concord" ingest --db "$db" --model ref --classes "$classes" "$ref/e2e_events.jsonl" 2> /dev/null
"$concord" label --db "$db" --model ref "$ref/e2e_labels.jsonl" 2> /dev/null
"$concord" verify --db "$db" --model ref > "$tmp/v" || { echo "FAIL verify: $(grep -v ' ok$' "$tmp/v")"; failed=$((failed + 1)); }
grep -q "^slices: 4, .* 0 mismatched, 0 days where the slices do not add up" "$tmp/v" ||
  { echo "FAIL verify's slice line: $(grep '^slices' "$tmp/v")"; failed=$((failed + 1)); }
for s in site-a site-b site-c '(none)'; do
  "$concord" report --db "$db" --model ref --segment "$s" --format json -o "$tmp/seg.json"
  check "$py" "$cmp_py" by-day "$ref/slices_expected.json" "$s" "$tmp/seg.json"
done
"$concord" baseline --db "$db" --model ref --from 2026-03-09 --to 2026-03-10 2> /dev/null
"$concord" report --db "$db" --model ref --by-segment --by all --format json -o "$tmp/by.json"
check "$py" "$cmp_py" by-segment "$ref/slices_expected.json" "$tmp/by.json"
# the text table has one row per slice
"$concord" report --db "$db" --model ref --by-segment --by all > "$tmp/by.txt"
rows=$(sed -n '/^by segment/,$p' "$tmp/by.txt" | grep -c '^2026-03-09\.\.03-11 ')
[ "$rows" = 4 ] || { echo "FAIL text by-segment rows: $rows"; failed=$((failed + 1)); }
echo "e2e_slices: $failed failed"
[ "$failed" = 0 ]
