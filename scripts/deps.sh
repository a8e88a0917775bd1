#!/usr/bin/env bash
# deps.sh — installs the Debian packages concord needs, only those missing
# (apt-get update runs only when something is missing).
#
#   scripts/deps.sh          build and run-time packages (the demo needs no more)
#   scripts/deps.sh --test   also the packages only the test suite uses
#
# A fresh machine often runs an automatic update first, which holds the
# package manager's lock: we wait for it (up to CONCORD_APT_WAIT seconds,
# default 900) and say so, instead of failing at once.
set -euo pipefail

build=(build-essential cmake pkg-config libsqlite3-dev libcjson-dev libgsl-dev
       libcurl4-openssl-dev libssl-dev ca-certificates libmicrohttpd-dev zlib1g-dev)
# the test suite: reference libraries (numpy, scipy, scikit-learn, statsmodels),
# the sqlite3 shell, openssl (signatures, a self-signed certificate), headless
# Chromium for the page, GNU time for memory bounds, clang and its runtime for
# the fuzz targets, ClickHouse (18.16 in Debian 12) and curl for the cluster
# tests and the HTTP server's tests; pandas, venv, pip, setuptools and wheel
# for the Python client's tests (its DataFrames, and `pip install
# clients/python` offline)
test=(sqlite3 openssl python3 python3-numpy python3-scipy python3-sklearn python3-statsmodels
      chromium fonts-dejavu-core time clang libclang-rt-14-dev
      clickhouse-server clickhouse-client curl
      python3-pandas python3-venv python3-pip python3-setuptools python3-wheel)

pkgs=("${build[@]}")
case "${1:-}" in
  --test) pkgs+=("${test[@]}") ;;
  "") ;;
  *) echo "usage: scripts/deps.sh [--test]" >&2; exit 2 ;;
esac

missing=()
for p in "${pkgs[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2> /dev/null | grep -q 'install ok installed' || missing+=("$p")
done
[ ${#missing[@]} -eq 0 ] && exit 0

if [ "$(id -u)" -ne 0 ]; then
  echo "deps.sh: missing Debian packages: ${missing[*]}" >&2
  echo "deps.sh: run as root (or: sudo apt-get install ${missing[*]})" >&2
  exit 1
fi

wait_s=${CONCORD_APT_WAIT:-900}
deadline=$(( $(date +%s) + wait_s ))
told=0
# apt_do ARGS...: runs apt-get, retrying while another process holds a lock
apt_do() {
  local err
  err=$(mktemp)
  while true; do
    if apt-get -o DPkg::Lock::Timeout=30 "$@" 2> "$err"; then
      rm -f "$err"; return 0
    fi
    if grep -qiE 'could not get lock|unable to acquire|is another process using it' "$err" &&
       [ "$(date +%s)" -lt "$deadline" ]; then
      if [ $told -eq 0 ]; then
        echo "deps.sh: another process (often an automatic update) holds the package manager's lock; waiting up to ${wait_s} s" >&2
        told=1
      fi
      sleep 5
      continue
    fi
    cat "$err" >&2; rm -f "$err"; return 1
  done
}

echo "installing: ${missing[*]}"
export DEBIAN_FRONTEND=noninteractive
apt_do update -qq
apt_do install -y -qq --no-install-recommends "${missing[@]}" > /dev/null
