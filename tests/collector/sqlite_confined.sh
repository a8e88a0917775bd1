#!/usr/bin/env bash
# sqlite_confined.sh — the store is the only code that talks to a database:
# outside collector/store*.c (and their private header store_sqlite.h) no
# source file includes sqlite3.h or the private header, calls sqlite3_* or
# reaches for the connection (cc_store_db); metrics/ does not know the store
# at all. Every top-level source folder is checked (serve/ and cluster/
# included, and required to be there). tests/ and bench/ are not checked: they inspect or measure the
# SQLite file directly (tests/alerts/test_deliver.c, tests/collector/
# test_store_access.c, test_pending_drain.c, test_store_backend.c,
# tests/review/test_review.c, bench/bench_ingest.c, bench/bench_slices.c).
# Usage: sqlite_confined.sh SOURCE_DIR
set -euo pipefail
S=$1
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }

dirs=()
for d in "$S"/*/; do
  d=${d%/}
  case $(basename "$d") in tests | bench | docs | examples | scripts) continue ;; esac
  [ -e "$d/CMakeCache.txt" ] && continue   # a build folder
  dirs+=("$d")
done
[ ${#dirs[@]} -gt 0 ] || { echo "FAIL: no source folders under $S" >&2; exit 1; }
# the folders that run a store for a long time or talk to another database
# must be among those checked
for need in serve cluster alerts report cli; do
  [ -d "$S/$need" ] || fail "$need/ is missing: it should be checked"
done
checked=0
while IFS= read -r f; do
  checked=$((checked + 1))
  rel=${f#"$S"/}
  case $rel in collector/store*.c | collector/store_sqlite.h) continue ;; esac
  if grep -nE '#[[:space:]]*include[[:space:]]*[<"](sqlite3\.h|store_sqlite\.h)[>"]' "$f"; then
    fail "$rel includes SQLite or the store's private header"
  fi
  if grep -nE '\bsqlite3_[a-z_]+|\bcc_store_db\b' "$f"; then
    fail "$rel uses SQLite directly"
  fi
  case $rel in
    metrics/*)
      grep -nE '#[[:space:]]*include[[:space:]]*"store' "$f" && fail "$rel (metrics/) includes the store"
      ;;
  esac
done < <(find "${dirs[@]}" -type f \( -name '*.c' -o -name '*.h' \) | sort)
[ $checked -gt 20 ] || fail "only $checked source files found under $S"
[ $fails -eq 0 ] || { echo "sqlite_confined: $fails failure(s)" >&2; exit 1; }
echo "sqlite_confined: ok ($checked source files; SQLite only in collector/store*.c)"
