#!/usr/bin/env bash
# install.sh — `pip install clients/python` works with Debian's python3, pip
# and setuptools, offline: into a venv made with --system-site-packages (so
# Debian's setuptools builds it, --no-build-isolation, and numpy/pandas stay
# visible), then imported from the venv (not from the sources) and checked
# with the offline unit tests; uninstall leaves no module behind.
# Usage: install.sh PYTHON CLIENT_DIR
set -euo pipefail
PY=$1
SRC=$2
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fail() { echo "FAIL: $*" >&2; exit 1; }

# setuptools builds in the source folder (build/, *.egg-info): work on a copy
cp -r "$SRC" "$T/src"
rm -rf "$T/src/build" "$T"/src/*.egg-info
"$PY" -m venv --system-site-packages "$T/venv" || fail "python3 -m venv (Debian: python3-venv)"
V=$T/venv/bin/python
"$V" -m pip install --no-build-isolation --no-index --no-deps --quiet "$T/src" > "$T/pip.log" 2>&1 ||
  { cat "$T/pip.log" >&2; fail "pip install --no-build-isolation clients/python"; }
"$V" -m pip show concord-ensemble-client > "$T/show" || fail "pip show concord-ensemble-client"
grep -q '^Name: concord-ensemble-client$' "$T/show" || fail "distribution name: $(cat "$T/show")"
grep -q '^Version: 0.1.0$' "$T/show" || fail "version: $(cat "$T/show")"

# imported from the venv's site-packages, from a folder without the sources
cd "$T"
where=$("$V" -c 'import concord_client; print(concord_client.__file__)')
case "$where" in
  "$T/venv/"*) ;;
  *) fail "concord_client imported from $where, not from the venv" ;;
esac
"$V" -c 'import concord_client as c; assert c.__version__ == "0.1.0"; c.Logger; c.load_report; c.windows_frame'

# the offline unit tests against the installed package (tests/ holds no package)
(cd "$T/src/tests" && PYTHONDONTWRITEBYTECODE=1 "$V" -m unittest test_events test_backoff > "$T/ut.log" 2>&1) ||
  { cat "$T/ut.log" >&2; fail "unit tests against the installed package"; }

"$V" -m pip uninstall --yes --quiet concord-ensemble-client > /dev/null 2>&1 || fail "pip uninstall"
if "$V" -c 'import concord_client' 2> /dev/null; then fail "concord_client still importable after uninstall"; fi
echo "install.sh: installed, imported, tested and uninstalled concord-ensemble-client"
