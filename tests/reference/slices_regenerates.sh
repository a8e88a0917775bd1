#!/bin/sh
# Reruns gen_slices_reference.py with Debian's python into a temporary file
# and compares it numerically (relative 1e-12, e2e_compare.py expected) with
# the committed slices_expected.json. Exit 77 = skipped.
here=$(dirname "$0")
if ! /usr/bin/python3 -c 'import numpy, scipy, sklearn, statsmodels' >/dev/null 2>&1; then
    echo "slices_reference_regenerates: skipped (/usr/bin/python3 cannot import numpy, scipy, sklearn and statsmodels)"
    exit 77
fi
tmp=$(mktemp "${TMPDIR:-/tmp}/concord-slices-ref.XXXXXX")
trap 'rm -f "$tmp"' EXIT
/usr/bin/python3 "$here/gen_slices_reference.py" --out "$tmp" || exit 1
/usr/bin/python3 "$here/../e2e/e2e_compare.py" expected "$here/slices_expected.json" "$tmp"
