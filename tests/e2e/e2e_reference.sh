#!/usr/bin/env bash
# End-to-end test of concord's main job through the real binary:
# ingest -> delayed labels -> verify -> JSON report, compared figure by figure
# with tests/reference/e2e_expected.json (synthetic data; the values come from
# numpy, scipy, scikit-learn and statsmodels, see tests/reference/e2e_gen.py).
# Then: the same database built in other ways must give the identical report.
#
#   e2e_reference.sh CONCORD_BINARY SOURCE_DIR
set -euo pipefail
# a fixed arrival time for delayed labels, so reports of separate runs can be compared
export CONCORD_NOW=1790000000

if [ $# -ne 2 ]; then
    echo "usage: $0 CONCORD_BINARY SOURCE_DIR" >&2
    exit 2
fi
concord=$1
src=$2
ref=$src/tests/reference
events=$ref/e2e_events.jsonl
labels=$ref/e2e_labels.jsonl
expected=$ref/e2e_expected.json
py=$(command -v python3 || echo /usr/bin/python3)
helper=$src/tests/e2e/e2e_compare.py

tmp=$(mktemp -d "${TMPDIR:-/tmp}/concord-e2e.XXXXXX")
trap 'rm -rf "$tmp"' EXIT

passed=0
failed=0
pass() { passed=$((passed + 1)); echo "ok   $*"; }
fail() { failed=$((failed + 1)); echo "FAIL $*"; }

# run WANT_STATUS NAME CMD...: runs CMD with stdout/stderr in $tmp/NAME.{out,err}
run() {
    local want=$1 name=$2 rc=0
    shift 2
    "$@" >"$tmp/$name.out" 2>"$tmp/$name.err" || rc=$?
    if [ "$rc" -eq "$want" ]; then
        pass "$name (exit $rc)"
    else
        fail "$name: exit $rc, expected $want: $*"
        sed 's/^/    | /' "$tmp/$name.err" | head -20
    fi
}

# helper CHECK_NAME ARGS...: e2e_compare.py, its output indented
helper() {
    local name=$1
    shift
    if "$py" "$helper" "$@" >"$tmp/helper.out" 2>&1; then
        pass "$name"
        sed 's/^/    /' "$tmp/helper.out"
    else
        fail "$name"
        sed 's/^/    /' "$tmp/helper.out"
    fi
}

# reports DB PREFIX: JSON report by day and for the whole range
reports() {
    run 0 "$2-report-day" "$concord" report --db "$1" --model ref --format json \
        -o "$tmp/$2.day.json"
    run 0 "$2-report-all" "$concord" report --db "$1" --model ref --by all --format json \
        -o "$tmp/$2.all.json"
}

# same_reports A B WHAT [label-age]: byte-identical JSON reports of two databases /
# moments; with "label-age", the fields that say when delayed labels arrived
# (windows[].labels.delayed, .mean_delay_hours) are left out of the comparison,
# since labels given inline have no arrival delay.
same_reports() {
    local by
    for by in day all; do
        if [ "${4:-}" = label-age ]; then
            for side in "$1" "$2"; do
                "$py" -c 'import json,sys
r = json.load(open(sys.argv[1]))
for w in r["windows"]:
    w["labels"].pop("delayed", None); w["labels"].pop("mean_delay_hours", None)
json.dump(r, open(sys.argv[2], "w"), indent=1, sort_keys=True)' "$tmp/$side.$by.json" "$tmp/$side.$by.cmp.json"
            done
        else
            cp "$tmp/$1.$by.json" "$tmp/$1.$by.cmp.json"
            cp "$tmp/$2.$by.json" "$tmp/$2.$by.cmp.json"
        fi
        if cmp -s "$tmp/$1.$by.cmp.json" "$tmp/$2.$by.cmp.json"; then
            pass "$3 (--by $by report identical)"
        else
            fail "$3 (--by $by report differs)"
            diff "$tmp/$1.$by.json" "$tmp/$2.$by.json" | head -40 | sed 's/^/    | /' || true
        fi
    done
}

classes=$("$py" "$helper" classes "$expected")
n_events=$(grep -c . "$events")

echo "== A: ingest, then the delayed labels"
a=$tmp/a.db
run 0 a-ingest "$concord" ingest --db "$a" --model ref --classes "$classes" "$events"
helper "a-ingest tally" tally "$expected" events "$tmp/a-ingest.err"
run 0 a-label "$concord" label --db "$a" --model ref "$labels"
helper "a-label tally (relabels replace, repeats unchanged)" tally "$expected" labels \
    "$tmp/a-label.err"
run 0 a-verify "$concord" verify --db "$a" --model ref
reports "$a" a
helper "a --by day vs reference" report "$expected" report_by_day "$tmp/a.day.json"
helper "a --by all vs reference" report "$expected" report_all "$tmp/a.all.json"
run 0 a-report-text "$concord" report --db "$a" --model ref --by day
if [ -s "$tmp/a-report-text.out" ]; then pass "a text report is not empty"; else
    fail "a text report is empty"; fi

echo "== B: a fresh database, the final labels inline"
"$py" "$helper" final-labels "$events" "$labels" "$tmp/final.jsonl"
b=$tmp/b.db
run 0 b-ingest "$concord" ingest --db "$b" --model ref --classes "$classes" "$tmp/final.jsonl"
run 0 b-verify "$concord" verify --db "$b" --model ref
reports "$b" b
same_reports a b "ingest + labels == fresh ingest with final labels inline" label-age

echo "== A again: re-ingesting the same file and re-applying the labels change nothing"
run 0 a-reingest "$concord" ingest --db "$a" --model ref --classes "$classes" "$events"
helper "a-reingest tally (all duplicates)" tally "$expected" events "$tmp/a-reingest.err" \
    stored=0 duplicates="$n_events"
reports "$a" a2
same_reports a a2 "re-ingest"
run 0 a-relabel "$concord" label --db "$a" --model ref "$labels"
reports "$a" a3
same_reports a a3 "labels applied a second time"
run 0 a-verify-again "$concord" verify --db "$a" --model ref

echo "== C: labels arriving before part of their events (they wait, then apply)"
c=$tmp/c.db
half=$((n_events / 2))
head -n "$half" "$events" >"$tmp/first.jsonl"
tail -n +"$((half + 1))" "$events" >"$tmp/second.jsonl"
run 0 c-ingest-first "$concord" ingest --db "$c" --model ref --classes "$classes" \
    "$tmp/first.jsonl"
run 0 c-label "$concord" label --db "$c" --model ref "$labels"
if grep -Eq ', [1-9][0-9]* waiting for their event' "$tmp/c-label.err"; then
    pass "c-label left labels waiting"
else
    fail "c-label: expected labels waiting for their event"
    sed 's/^/    | /' "$tmp/c-label.err"
fi
run 0 c-ingest-second "$concord" ingest --db "$c" --model ref "$tmp/second.jsonl"
run 0 c-verify "$concord" verify --db "$c" --model ref
reports "$c" c
same_reports a c "labels before their events"

echo "== report --by hour: hours across a UTC midnight, and hours summed = their day"
hours_from=$("$py" -c 'import json,sys; print(json.load(open(sys.argv[1]))["hours_range"]["from"])' "$expected")
hours_to=$("$py" -c 'import json,sys; print(json.load(open(sys.argv[1]))["hours_range"]["to"])' "$expected")
run 0 a-report-hours "$concord" report --db "$a" --model ref --by hour --from "$hours_from" \
    --to "$hours_to" --format json -o "$tmp/a.hours.json"
helper "a --by hour ($hours_from to $hours_to) vs reference" report "$expected" \
    report_by_hour "$tmp/a.hours.json"
run 0 a-report-hours-all "$concord" report --db "$a" --model ref --by hour --from 2026-03-09 \
    --to 2026-03-11 --format json -o "$tmp/a.allhours.json"
helper "a: every day's hours sum to the day, counter by counter" hour-sums \
    "$tmp/a.allhours.json" "$tmp/a.day.json"
run 0 a-report-hours-text "$concord" report --db "$a" --model ref --by hour \
    --from "$hours_from" --to "$hours_to"
if grep -q '^2026-03-09 23:00-24:00 ' "$tmp/a-report-hours-text.out" &&
    grep -q '^2026-03-10 00:00-01:00 ' "$tmp/a-report-hours-text.out"; then
    pass "text report names the hours on both sides of midnight"
else
    fail "text report: hour rows 2026-03-09 23:00-24:00 and 2026-03-10 00:00-01:00 missing"
    head -12 "$tmp/a-report-hours-text.out" | sed 's/^/    | /'
fi
run 0 a-report-hours-html "$concord" report --db "$a" --model ref --by hour \
    --from "$hours_from" --to "$hours_to" --format html -o "$tmp/a.hours.html"
if grep -q 'UTC hour' "$tmp/a.hours.html"; then pass "HTML report by hour"; else
    fail "HTML report by hour has no 'UTC hour' axis"; fi
run 2 hours-not-whole "$concord" report --db "$a" --model ref --by hour \
    --from 2026-03-09T20:30:00Z --to "$hours_to"
run 2 hours-no-to "$concord" report --db "$a" --model ref --by hour --from "$hours_from"
# a pruned day cannot be split into hours: refused, naming the day
cp "$a" "$tmp/p.db"
run 0 p-prune "$concord" prune --db "$tmp/p.db" --model ref --before 2026-03-10
run 4 p-report-hours "$concord" report --db "$tmp/p.db" --model ref --by hour \
    --from "$hours_from" --to "$hours_to"
if grep -q '2026-03-09 was pruned' "$tmp/p-report-hours.err"; then
    pass "the refusal names the pruned day"
else
    fail "the refusal does not name the pruned day 2026-03-09"
    sed 's/^/    | /' "$tmp/p-report-hours.err"
fi
run 0 p-report-hours-kept "$concord" report --db "$tmp/p.db" --model ref --by hour \
    --from 2026-03-10 --to 2026-03-10 --format json -o "$tmp/p.hours.json"

echo "e2e_reference: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
