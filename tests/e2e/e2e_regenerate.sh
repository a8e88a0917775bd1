#!/usr/bin/env bash
# Regenerates the synthetic end-to-end fixtures with tests/reference/e2e_gen.py
# into a temporary directory and compares them with the committed ones,
# numerically (e2e_compare.py: integers and strings exact, floats within
# 1e-12): numpy's float64 results differ in their last bits between CPUs and
# library builds, so a byte-for-byte comparison fails on other machines.
# Needs Debian's /usr/bin/python3 with numpy, scipy, sklearn and statsmodels;
# without them it says so and exits 77 (skipped).
#
#   e2e_regenerate.sh SOURCE_DIR
set -euo pipefail

if [ $# -ne 1 ]; then
    echo "usage: $0 SOURCE_DIR" >&2
    exit 2
fi
src=$1
ref=$src/tests/reference
if ! /usr/bin/python3 -c 'import numpy, scipy, sklearn, statsmodels' >/dev/null 2>&1; then
    echo "e2e_regenerate: skipped (/usr/bin/python3 cannot import numpy, scipy, sklearn and statsmodels)"
    exit 77
fi

tmp=$(mktemp -d "${TMPDIR:-/tmp}/concord-e2e-gen.XXXXXX")
trap 'rm -rf "$tmp"' EXIT

/usr/bin/python3 "$ref/e2e_gen.py" --out-dir "$tmp"
status=0
for f in e2e_events.jsonl e2e_labels.jsonl; do
    if /usr/bin/python3 "$src/tests/e2e/e2e_compare.py" jsonl "$ref/$f" "$tmp/$f"; then
        echo "ok   $f regenerates"
    else
        echo "FAIL $f differs from the regenerated file"
        status=1
    fi
done
if /usr/bin/python3 "$src/tests/e2e/e2e_compare.py" expected "$ref/e2e_expected.json" \
    "$tmp/e2e_expected.json"; then
    echo "ok   e2e_expected.json regenerates"
else
    echo "FAIL e2e_expected.json differs from the regenerated values"
    status=1
fi
exit $status
