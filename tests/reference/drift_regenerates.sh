#!/bin/sh
# Reruns gen_drift_reference.py with Debian's python and compares its output
# numerically with the committed file ($1). Exit 77 = skipped.
here=$(dirname "$0")
if ! /usr/bin/python3 -c 'import numpy, scipy, sklearn' >/dev/null 2>&1; then
    echo "drift_reference_regenerates: skipped (/usr/bin/python3 cannot import numpy, scipy and sklearn)"
    exit 77
fi
exec /usr/bin/python3 "$here/gen_drift_reference.py" --check "$1"
