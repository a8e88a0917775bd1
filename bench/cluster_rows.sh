#!/usr/bin/env bash
# bench/cluster_rows.sh OLD_BUILD NEW_BUILD [N]: review and show through
# --store clickhouse:// with two builds side by side, in one run on one
# clickhouse-server (the fixture of tests/cluster): OLD copies the model's
# rows into a temporary SQLite store first (the release before the cluster
# read rows through the store's ops), NEW reads the range or the one event
# from the cluster. One host of N events (default 100,000) over 28 days,
# 5 members x 10 classes (concord-gen), published once. Each figure is the
# best of 3: wall seconds and the concord process's CPU seconds (user+sys,
# /usr/bin/time; the server's CPU is not in it). Figures, not assertions.
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
OLD=$1/cli/concord
NEW=$2/cli/concord
G=$2/bench/concord-gen
N=${3:-100000}
T=$(mktemp -d "${TMPDIR:-/tmp}/concord-chrows.XXXXXX")
. "$root/tests/cluster/ch_fixture.sh"
ch_setup "$T/ch" 1
ch_start 1
trap 'ch_stop_all; rm -rf "$T"' EXIT
U=$CH_URL_1
echo "date:    $(date -u '+%Y-%m-%d %H:%M UTC'), commit $(git -C "$root" rev-parse --short HEAD)"
echo "server:  clickhouse-server $(ch_query 1 'SELECT version()'), one shard on loopback"
echo "load:    $(cut -d' ' -f1-3 /proc/loadavg) before"
"$G" --n "$N" --seed 1 -o "$T/a.jsonl"
export CONCORD_NOW=1790000000
"$NEW" ingest --db "$T/a.db" --model bench --quiet "$T/a.jsonl" 2> /dev/null
"$NEW" publish --db "$T/a.db" --store "$U" --source host-a > /dev/null
day=$(sqlite3 "$T/a.db" "SELECT date(min(day) * 86400 + 10 * 86400, 'unixepoch') FROM events")
id=$(sqlite3 "$T/a.db" "SELECT id FROM events WHERE rowid = $((N / 2))")
best() { # LABEL CMD...: best of 3, "wall cpu"
  local label=$1 b_wall=999999 b_cpu=999999 w c
  shift
  for _ in 1 2 3; do
    /usr/bin/time -f "%e %U %S" -o "$T/time" "$@" > "$T/out" 2> /dev/null
    read -r w u s < "$T/time"
    c=$(echo "$u + $s" | bc -l)
    b_wall=$(echo "if ($w < $b_wall) $w else $b_wall" | bc -l)
    b_cpu=$(echo "if ($c < $b_cpu) $c else $b_cpu" | bc -l)
  done
  printf '%-44s wall %7.3f s  cpu %7.3f s\n' "$label" "$b_wall" "$b_cpu"
  echo "$b_wall $b_cpu" > "$T/last"
}
ratio() { echo "if ($2 > 0) { scale=1; $1 / $2 }" | bc -l; }
for what in review show; do
  if [ $what = review ]; then
    args=(review --store "$U" --model bench --from "$day" --to "$day" --where all --format json)
  else
    args=(show --store "$U" --model bench --format json "$id")
  fi
  best "$what, old (temporary copy)" "$OLD" "${args[@]}"; read -r ow oc < "$T/last"
  best "$what, new (store ops)" "$NEW" "${args[@]}"; read -r nw nc < "$T/last"
  echo "  $what: old/new wall $(ratio "$ow" "$nw") x, cpu $(ratio "$oc" "$nc") x"
done
echo "load:    $(cut -d' ' -f1-3 /proc/loadavg) after"
