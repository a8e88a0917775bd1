#!/bin/bash
# html_memory.sh — peak RSS of `concord report --by day --format html` at 28
# and 365 days, for one or more concord binaries in the same run (e.g. the
# one before a change and the one after), at 64 members x 256 classes
# (concord-gen --n 2000 --days 365) and at 5 x 10 (concord-gen --n 182500
# --days 365, 500 events a day). Baseline: the first 7 days. The 28-day page
# is --to the 28th day of the same database, so both pages have the same
# events per day. FORMATS="html json" adds the streamed JSON report at the
# same ranges for comparison (default: html only).
# usage: bench/html_memory.sh GEN WORKDIR CONCORD...
set -eu
gen=$1 work=$2
shift 2
mkdir -p "$work"
make_db() { # name members classes n
    [ -f "$work/$1.db" ] && return 0
    "$gen" --n "$4" --members "$2" --classes "$3" --days 365 --seed 1 -o "$work/$1.jsonl"
    "$first" ingest --db "$work/$1.db" --quiet "$work/$1.jsonl"
    "$first" baseline --db "$work/$1.db" --model default --from 2026-11-02 --to 2026-11-08
    rm -f "$work/$1.jsonl"
}
first=$1
make_db big 64 256 2000
make_db small 5 10 182500
rss() { # prints "peak_MiB cpu_s" of a command
    /usr/bin/time -f '%M %U %S' "$@" 2>&1 >/dev/null | tail -1 |
        awk '{printf "%.0f MiB %.1f s", $1 / 1024, $2 + $3}'
}
echo "load: $(cut -d' ' -f1-3 /proc/loadavg), $(nproc) cores"
for db in big small; do
    for bin in "$@"; do
        for fmt in ${FORMATS:-html}; do
            a=$(rss "$bin" report --db "$work/$db.db" --model default --by day --format $fmt \
                --to 2026-11-29 -o "$work/$db-28.$fmt")
            b=$(rss "$bin" report --db "$work/$db.db" --model default --by day --format $fmt \
                -o "$work/$db-365.$fmt")
            echo "$db $fmt $bin: 28 days $a; 365 days $b"
        done
    done
done
