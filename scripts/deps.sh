#!/usr/bin/env bash
# deps.sh — installs the Debian packages concord needs to build and test,
# only those missing (apt-get update runs only when something is missing).
set -euo pipefail
pkgs=(build-essential cmake pkg-config libsqlite3-dev libcjson-dev libgsl-dev sqlite3
      libcurl4-openssl-dev libssl-dev openssl ca-certificates
      python3 python3-numpy python3-scipy python3-sklearn python3-statsmodels
      chromium fonts-dejavu-core)
missing=()
for p in "${pkgs[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2> /dev/null | grep -q 'install ok installed' || missing+=("$p")
done
if [ ${#missing[@]} -gt 0 ]; then
  echo "installing: ${missing[*]}"
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq --no-install-recommends "${missing[@]}" > /dev/null
fi
