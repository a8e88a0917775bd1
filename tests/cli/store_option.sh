#!/usr/bin/env bash
# store_option.sh — --store on every command that takes a store, without a
# cluster: each command's --help shows it; --store sqlite:PATH gives the
# same output and exit status as --db PATH, reading or writing; --db with
# --store, an unknown scheme and a missing store are usage errors (exit 2);
# a clickhouse:// store given to a command that writes (or reads what only
# a host's SQLite file keeps) is refused with exit 2 and a sentence naming
# publish, before anything is contacted (the URL's port is closed); follow's
# and serve's --publish and --source are checked the same way. The cluster
# side is tests/cluster/store_publish.sh.
# Usage: store_option.sh CONCORD
set -euo pipefail
C=$1
export CONCORD_NOW=1790000000
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
run() { # OUT_PREFIX COMMAND...: stdout, stderr and the exit status to files
  local p=$1 rc=0; shift
  "$@" > "$p.out" 2> "$p.err" || rc=$?
  echo "$rc" > "$p.rc"
}
NOWHERE=clickhouse://127.0.0.1:1/concord   # port 1: nothing listens; never reached

"$C" demo --dir "$T/d" --per-day 60 > /dev/null
cp "$T/d/demo.db" "$T/a.db"
cp "$T/d/demo.db" "$T/b.db"
M=apple-grader

# every command with a store shows --store in its --help
for cmd in ingest label baseline report verify review show prune backup check alerts deliver \
           rules follow models serve publish; do
  "$C" $cmd --help | grep -q -- "--store" || fail "$cmd --help does not show --store"
done

# --store sqlite:PATH is --db PATH: the same output, exit status and effect
same_run() { # NAME ARGS... (the store option is appended)
  local name=$1; shift
  run "$T/db-$name" "$C" "$@" --db "$T/a.db"
  run "$T/url-$name" "$C" "$@" --store "sqlite:$T/b.db"
  cmp -s "$T/db-$name.rc" "$T/url-$name.rc" || fail "$name: exit $(cat "$T/db-$name.rc") with --db, $(cat "$T/url-$name.rc") with --store sqlite:"
  sed "s|$T/a.db|DB|g" "$T/db-$name.out" > "$T/db-$name.cmp"
  sed "s|$T/b.db|DB|g" "$T/url-$name.out" > "$T/url-$name.cmp"
  cmp -s "$T/db-$name.cmp" "$T/url-$name.cmp" || fail "$name: output differs: $(diff "$T/db-$name.cmp" "$T/url-$name.cmp" | head -4)"
}
printf '{"id":"x1","ts":"2026-11-01T10:00:00Z","segment":"line-1","probs":[[0.5,0.1,0.1,0.1,0.1,0.1],[0.5,0.1,0.1,0.1,0.1,0.1],[0.5,0.1,0.1,0.1,0.1,0.1],[0.5,0.1,0.1,0.1,0.1,0.1],[0.5,0.1,0.1,0.1,0.1,0.1]]}\n' > "$T/one.jsonl"
printf '{"id":"x1","label":0}\n' > "$T/one-label.jsonl"
same_run models models --format json
same_run verify verify --model $M
same_run alerts alerts --model $M
same_run report report --model $M --by week --format json
same_run ingest ingest --model $M "$T/one.jsonl"
same_run label label --model $M "$T/one-label.jsonl"
same_run baseline baseline --model $M --from 2026-10-12 --to 2026-10-18
same_run prune-dry prune --model $M --before 2026-10-08 --dry-run
same_run check check --rules "$T/d/rules.jsonc" --day 2026-11-01 --no-deliver --format json
same_run deliver deliver --format json
same_run validate rules validate "$T/d/rules.jsonc"
same_run prune prune --model $M --before 2026-10-07
same_run verify2 verify --model $M
same_run review review --model $M --from 2026-10-20 --to 2026-10-21 --format json
run "$T/bk" "$C" backup --store "sqlite:$T/b.db" "$T/b-copy.db"
[ "$(cat "$T/bk.rc")" = 0 ] && [ -s "$T/b-copy.db" ] || fail "backup --store sqlite:: $(cat "$T/bk.err")"
# the two files went through the same writes: the same reports after all that
"$C" report --db "$T/a.db" --model $M --by all --format json > "$T/a.json"
"$C" report --db "$T/b.db" --model $M --by all --format json > "$T/b.json"
cmp -s "$T/a.json" "$T/b.json" || fail "--db and --store sqlite: wrote different stores"

# usage errors: both, an unknown scheme, none, sqlite: without a path
expect2() { # WHAT GREP COMMAND...
  local what=$1 pat=$2; shift 2
  run "$T/e" "$@"
  [ "$(cat "$T/e.rc")" = 2 ] && grep -q -- "$pat" "$T/e.err" \
    || fail "$what: exit $(cat "$T/e.rc"): $(cat "$T/e.err")"
}
expect2 "models with --db and --store" "not both" "$C" models --db "$T/a.db" --store "sqlite:$T/b.db"
expect2 "baseline --store mysql:" "sqlite:PATH or clickhouse://HOST:PORT/DATABASE" \
  "$C" baseline --store mysql://x/y --model $M --from 2026-10-05 --to 2026-10-06
expect2 "verify without a store" "--db FILE (or --store URL) is required" "$C" verify --model $M
expect2 "alerts --store sqlite:" "needs a path" "$C" alerts --store sqlite:

# a cluster given to a command that writes: exit 2 naming publish, nothing contacted
for cmd in "ingest --model $M $T/one.jsonl" "label $T/one-label.jsonl" \
           "baseline --model $M --from 2026-10-05 --to 2026-10-06" \
           "prune --model $M --before 2026-10-06" "deliver" "follow $T/one.jsonl" \
           "serve --listen 127.0.0.1:0"; do
  expect2 "${cmd%% *} --store clickhouse://" "concord publish" "$C" $cmd --store "$NOWHERE"
  grep -q "A host writes to its local SQLite store" "$T/e.err" || fail "${cmd%% *}: $(cat "$T/e.err")"
done
for cmd in "alerts" "backup $T/never.db"; do
  expect2 "${cmd%% *} --store clickhouse://" "local SQLite store" "$C" $cmd --store "$NOWHERE"
done
expect2 "check --store clickhouse:// without --db" "give --db FILE beside it" \
  "$C" check --store "$NOWHERE" --rules "$T/d/rules.jsonc"
expect2 "check --store sqlite: with --db" "not both" \
  "$C" check --store "sqlite:$T/b.db" --db "$T/a.db" --rules "$T/d/rules.jsonc"
# --publish and --source of follow and serve
expect2 "follow --publish http://" "clickhouse://HOST:PORT/DATABASE" \
  "$C" follow --db "$T/f.db" --publish http://x "$T/one.jsonl"
expect2 "serve --publish http://" "clickhouse://HOST:PORT/DATABASE" \
  "$C" serve --db "$T/f.db" --publish http://x
expect2 "follow --source without --publish" "--source needs --publish" \
  "$C" follow --db "$T/f.db" --source h1 "$T/one.jsonl"
expect2 "serve --source with a bad name" "--source 'a b'" \
  "$C" serve --db "$T/f.db" --publish "$NOWHERE" --source "a b"
[ ! -e "$T/f.db" ] || fail "a refused follow or serve created its store"

if [ "$fails" -gt 0 ]; then echo "$fails check(s) failed" >&2; exit 1; fi
echo "store_option: all checks passed"
