#!/usr/bin/env bash
# single_server.sh — one ClickHouse server (a one-shard cluster): the
# end-to-end suite's log (tests/reference/e2e_*) and the demo's 28 days are
# ingested and labelled into SQLite, published, and every report read back
# through --store equals the one read with --db (counts exactly, real values
# within 1e-9 relative, json_same.py), --by hour too; review and show too;
# days a host pruned before publishing are refused by --by hour on both. Then
# publishing again, twice, changes nothing in the cluster, a vector past the
# per-row bound is refused by the publisher and a sum that cannot be proven
# free of overflow by the readers, and --store sqlite:PATH is --db PATH.
# The store backend's row reads are also compared one by one with the SQLite
# file's rows through ch_store_probe.
# Usage: single_server.sh CONCORD SOURCE_DIR [CH_STORE_PROBE]
set -euo pipefail
C=$1
SRC=$2
PROBE=${3:-}
HERE=$SRC/tests/cluster
export CONCORD_NOW=1790000000
T=$(mktemp -d "${TMPDIR:-/tmp}/concord-ch1.XXXXXX")
. "$HERE/ch_fixture.sh"
ch_setup "$T/ch" 1
ch_start 1
trap 'ch_stop_all; rm -rf "$T"' EXIT
U=$CH_URL_1
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
same() { /usr/bin/python3 "$HERE/json_same.py" "$1" "$2" "$3" || fail "$3"; }

# the e2e log: model ref, with relabels among the delayed labels
REF=$SRC/tests/reference
classes=$(/usr/bin/python3 "$SRC/tests/e2e/e2e_compare.py" classes "$REF/e2e_expected.json")
"$C" ingest --db "$T/h.db" --model ref --classes "$classes" --quiet "$REF/e2e_events.jsonl"
"$C" label --db "$T/h.db" --model ref "$REF/e2e_labels.jsonl" > /dev/null
# the demo: model packhouse, a baseline, 28 days
"$C" demo --dir "$T/d" --per-day 120 > /dev/null
"$C" ingest --db "$T/h.db" --model packhouse --classes premium,extra,class-1,class-2,juice,cull \
  --quiet "$T/d/events.jsonl"
"$C" label --db "$T/h.db" --model packhouse "$T/d/labels.jsonl" > /dev/null
"$C" baseline --db "$T/h.db" --model packhouse --from 2026-10-05 --to 2026-10-11 > /dev/null
# the demo's events again with a limit of 2 slices: line-3 (the last to appear) overflows
"$C" ingest --db "$T/h.db" --model pk2s --classes premium,extra,class-1,class-2,juice,cull \
  --max-slices 2 --quiet "$T/d/events.jsonl" 2> /dev/null

"$C" publish --db "$T/h.db" --store "$U" --source host-1 > "$T/pub1.out" \
  || fail "publish: $(cat "$T/pub1.out")"
grep -q "summary vector" "$T/pub1.out" || fail "publish said: $(cat "$T/pub1.out")"

compare_all() { # TAG
  for model in ref packhouse; do
    for by in day week all; do
      "$C" report --db "$T/h.db" --model $model --by $by --format json > "$T/$1-sq-$model-$by.json"
      "$C" report --store "$U" --model $model --by $by --format json > "$T/$1-ch-$model-$by.json" \
        || fail "$1: report --store $model --by $by"
      same "$T/$1-sq-$model-$by.json" "$T/$1-ch-$model-$by.json" "$1: report $model --by $by"
    done
  done
  "$C" review --db "$T/h.db" --model ref --from 2026-03-01 --to 2026-03-31 --where all \
    --format json > "$T/$1-sq-review.json"
  "$C" review --store "$U" --model ref --from 2026-03-01 --to 2026-03-31 --where all \
    --format json > "$T/$1-ch-review.json" || fail "$1: review --store"
  same "$T/$1-sq-review.json" "$T/$1-ch-review.json" "$1: review ref --where all"
  for id in d1-000 d2-076 d3-056; do
    "$C" show --db "$T/h.db" --model ref --format json "$id" > "$T/$1-sq-show.json"
    "$C" show --store "$U" --model ref --format json "$id" > "$T/$1-ch-show.json" \
      || fail "$1: show --store $id"
    same "$T/$1-sq-show.json" "$T/$1-ch-show.json" "$1: show $id"
  done
}
compare_all first
# the HTML page reads its review lists from the cluster's rows: the same page
"$C" report --db "$T/h.db" --model packhouse --format html -o "$T/sq.html"
"$C" report --store "$U" --model packhouse --format html -o "$T/ch.html" || fail "report --store --format html"
grep -q "review" "$T/ch.html" || fail "the cluster's HTML page has no review lists"
cmp -s "$T/sq.html" "$T/ch.html" || fail "report --format html differs: $(diff "$T/sq.html" "$T/ch.html" | head -c 600)"
[ "$(grep -c . "$T/first-ch-ref-day.json")" -gt 0 ] || fail "empty report from the cluster"

# slices through the cluster: the demo's packing lines, one slice's report
# and every slice's rows, in the host's order of slices and with its slice
# limit (published in slice_lists), also for a model whose limit is not the
# default and whose further segments went to the overflow slice
for seg in line-1 line-2 line-3; do
  for by in day all; do
    "$C" report --db "$T/h.db" --model packhouse --segment $seg --by $by --format json > "$T/seg-sq.json"
    "$C" report --store "$U" --model packhouse --segment $seg --by $by --format json > "$T/seg-ch.json" \
      || fail "report --store --segment $seg --by $by"
    same "$T/seg-sq.json" "$T/seg-ch.json" "report packhouse --segment $seg --by $by"
  done
done
for model in ref packhouse pk2s; do
  for by in week all; do
    "$C" report --db "$T/h.db" --model $model --by-segment --by $by --format json > "$T/bys-sq.json"
    "$C" report --store "$U" --model $model --by-segment --by $by --format json > "$T/bys-ch.json" \
      || fail "report --store --by-segment $model"
    grep -q '"segments"' "$T/bys-ch.json" || fail "no per-slice rows from the cluster ($model)"
    same "$T/bys-sq.json" "$T/bys-ch.json" "report $model --by-segment --by $by (slice order and limit)"
  done
  "$C" report --db "$T/h.db" --model $model --by-segment --by all > "$T/bys-sq.txt"
  "$C" report --store "$U" --model $model --by-segment --by all > "$T/bys-ch.txt"
  cmp -s "$T/bys-sq.txt" "$T/bys-ch.txt" \
    || fail "report $model --by-segment (text) differs: $(diff "$T/bys-sq.txt" "$T/bys-ch.txt" | head -n 6)"
done
/usr/bin/python3 -c 'import json, sys; sys.exit(json.load(open(sys.argv[1]))["slices"]["limit"] != 2)' \
  "$T/bys-ch.json" || fail "pk2s: the cluster does not report the slice limit 2"
rc=0; "$C" report --store "$U" --model packhouse --segment nosuch > /dev/null 2> "$T/noseg.err" || rc=$?
[ $rc = 4 ] && grep -q "line-2" "$T/noseg.err" || fail "unknown segment through the cluster: exit $rc, $(cat "$T/noseg.err")"
# report --by hour reads the cluster's event rows by time: the same hours
for model in ref packhouse; do
  case $model in ref) f=2026-03-09; t=2026-03-11 ;; *) f=2026-10-20T00:00:00Z; t=2026-10-22T06:00:00Z ;; esac
  "$C" report --db "$T/h.db" --model $model --by hour --from $f --to $t --format json > "$T/hour-sq.json"
  "$C" report --store "$U" --model $model --by hour --from $f --to $t --format json > "$T/hour-ch.json" \
    || fail "report --store --by hour $model"
  same "$T/hour-sq.json" "$T/hour-ch.json" "report $model --by hour $f $t"
  [ "$(grep -o '"start"' "$T/hour-ch.json" | wc -l)" -gt 20 ] || fail "few hour windows ($model)"
done

# the backend's row reads (ch_store_probe) against the SQLite rows
if [ -n "$PROBE" ]; then
  from=$(date -u -d 2026-03-01 +%s); to=$(date -u -d 2026-03-31T23:59:59 +%s)
  "$PROBE" "$U" ref scan "$from" "$to" | sort > "$T/scan-ch.txt" || fail "probe scan"
  sqlite3 -separator ' ' "$T/h.db" "SELECT e.id, e.ts, coalesce(e.label, -1) FROM events e JOIN models m ON m.model_id = e.model_id WHERE m.name = 'ref' AND e.ts BETWEEN $from AND $to" | sort > "$T/scan-sq.txt"
  [ -s "$T/scan-sq.txt" ] && cmp -s "$T/scan-ch.txt" "$T/scan-sq.txt" || fail "events_scan differs from the SQLite rows"
  for id in d1-000 d2-076 d3-208 nosuch; do
    got=$("$PROBE" "$U" ref read "$id")
    want=$(sqlite3 -separator ' ' "$T/h.db" "SELECT e.ts, coalesce(e.label, -1), coalesce(e.label_at, -1), coalesce(e.segment, '-') FROM events e JOIN models m ON m.model_id = e.model_id WHERE m.name = 'ref' AND e.id = '$id'")
    [ "$got" = "${want:-absent}" ] || fail "event_read $id: '$got', expected '${want:-absent}'"
  done
  # what `concord models` reads: totals, waiting labels, slice limit and slices
  "$C" models --db "$T/h.db" --format json > "$T/models.json"
  for model in ref packhouse pk2s; do
    "$PROBE" "$U" $model totals > "$T/totals.txt" || fail "probe totals $model"
    "$PROBE" "$U" $model slices > "$T/slices.txt" || fail "probe slices $model"
    /usr/bin/python3 "$HERE/models_same.py" "$T/models.json" $model "$T/totals.txt" "$T/slices.txt" \
      || fail "model totals and slices of $model differ"
  done
  for d in 20500 20521 20523 20530 20600; do
    got=$("$PROBE" "$U" ref lastlabeled "$d")
    want=$(sqlite3 "$T/h.db" "SELECT coalesce(max(e.day), 'none') FROM events e JOIN models m ON m.model_id = e.model_id WHERE m.name = 'ref' AND e.label IS NOT NULL AND e.day <= $d")
    [ "$got" = "$want" ] || fail "labeled_day_last $d: $got, expected $want"
  done
fi

# republishing: nothing new is sent; a forced resend of everything (the
# marks of a fresh copy of the store) leaves the cluster's answers the same
count() { ch_query 1 "SELECT count() FROM concord.$1 FINAL"; }
before="$(count summaries) $(count events)"
"$C" publish --db "$T/h.db" --store "$U" --source host-1 > "$T/pub2.out"
grep -q " 0 summary vectors (and 0 of slices), 0 event rows" "$T/pub2.out" || fail "second publish sent: $(cat "$T/pub2.out")"
sqlite3 "$T/h.db" "DELETE FROM publish_state; INSERT OR IGNORE INTO publish_days(model_id, day) SELECT model_id, day FROM summaries;"
"$C" publish --db "$T/h.db" --store "$U" --source host-1 > /dev/null
"$C" publish --db "$T/h.db" --store "$U" --source host-1 > /dev/null
after="$(count summaries) $(count events)"
[ "$before" = "$after" ] || fail "republishing changed the row counts: $before -> $after"
compare_all again

# ingest --publish and label --publish: committed, then published
head -n 300 "$T/d/events.jsonl" > "$T/part.jsonl"
"$C" ingest --db "$T/h2.db" --model pk2 --classes premium,extra,class-1,class-2,juice,cull \
  --quiet --publish "$U" --source host-2 "$T/part.jsonl" > "$T/ip.out" 2> /dev/null \
  || fail "ingest --publish: $(cat "$T/ip.out")"
"$C" label --db "$T/h2.db" --model pk2 --publish "$U" --source host-2 "$T/d/labels.jsonl" \
  > "$T/lp.out" 2> /dev/null || fail "label --publish: $(cat "$T/lp.out")"
"$C" report --db "$T/h2.db" --model pk2 --by all --format json > "$T/pk2-sq.json"
"$C" report --store "$U" --model pk2 --by all --format json > "$T/pk2-ch.json" || fail "report pk2"
same "$T/pk2-sq.json" "$T/pk2-ch.json" "ingest --publish, label --publish: report pk2"
rc=0; "$C" ingest --db "$T/h3.db" --publish "http://x" "$T/part.jsonl" 2> /dev/null || rc=$?
[ $rc = 2 ] || fail "ingest --publish http://x: exit $rc, expected 2"

# overflow (cluster/ch_vector.h): sumForEach wraps silently, so a published
# vector must stay within +-2^47 per counter and a reader proves the sum.
# A publisher refuses a vector past the bound (its store edited here: the
# day's event count set to 2^48), and sends nothing of it.
cp "$T/h2.db" "$T/big.db"
/usr/bin/python3 - "$T/big.db" <<'PY'
import sqlite3, sys
# summary_codec.c: (varint zero run, zigzag varint value) pairs
def uvar(b, i):
    x = s = 0
    while True:
        c = b[i]; i += 1; x |= (c & 0x7f) << s; s += 7
        if c < 0x80: return x, i
def put(x):
    out = bytearray()
    while x >= 0x80: out.append((x & 0x7f) | 0x80); x >>= 7
    out.append(x); return bytes(out)
db = sqlite3.connect(sys.argv[1])
day, blob = db.execute("SELECT day, counters FROM summaries ORDER BY day LIMIT 1").fetchone()
run, i = uvar(blob, 0)
assert run == 0, "counter 0 (events) is not stored first"
z, i = uvar(blob, i)
big = 1 << 48
db.execute("UPDATE summaries SET counters = ?, events = ? WHERE day = ?",
           (put(0) + put(big << 1) + blob[i:], big, day))
db.execute("DELETE FROM publish_state")
db.execute("INSERT OR IGNORE INTO publish_days(model_id, day) SELECT model_id, day FROM summaries")
db.commit()
PY
rows_before=$(ch_query 1 "SELECT count() FROM concord.summaries WHERE source = 'host-big'")
rc=0; "$C" publish --db "$T/big.db" --store "$U" --source host-big > "$T/big.out" 2>&1 || rc=$?
[ $rc != 0 ] && grep -q "summary counter overflow at model 'pk2'.*per-row bound of 2^47" "$T/big.out" \
  || fail "a vector past the bound was published: exit $rc, $(cat "$T/big.out")"
[ "$(ch_query 1 "SELECT count() FROM concord.summaries WHERE source = 'host-big'")" = "$rows_before" ] \
  || fail "rows of the refused publish reached the cluster"
# a reader refuses a sum it cannot prove: a row past the bound written by
# another client (one counter of a copy of a real row raised by 2^50)
ch_query 1 "INSERT INTO concord.summaries SELECT model, day, layout_version, slice, 'rogue', seq, events, arrayMap((x, i) -> if(i = 1, x + toInt64(1125899906842624), x), counters, arrayEnumerate(counters)) FROM concord.summaries FINAL WHERE model = 'pk2' AND slice = '' AND source = 'host-2' ORDER BY day LIMIT 1" > /dev/null
rc=0; "$C" report --store "$U" --model pk2 --by all --format json > /dev/null 2> "$T/rogue.err" || rc=$?
[ $rc = 3 ] && grep -q "cannot be proven free of overflow" "$T/rogue.err" \
  || fail "a sum past the bound was read: exit $rc, $(cat "$T/rogue.err")"
# (the HTML report with its review sample too)
rc=0; "$C" report --store "$U" --model pk2 --format html -o "$T/rogue.html" 2> "$T/rogue2.err" || rc=$?
[ $rc = 3 ] && grep -q "cannot be proven free of overflow" "$T/rogue2.err" \
  || fail "a sum past the bound was fetched: exit $rc, $(cat "$T/rogue2.err")"
# the rogue source replaced by an empty vector (a newer seq): readable again
ch_query 1 "INSERT INTO concord.summaries SELECT model, day, layout_version, slice, source, seq + 1, 0, arrayMap(x -> toInt64(0), counters) FROM concord.summaries FINAL WHERE source = 'rogue'" > /dev/null
"$C" report --store "$U" --model pk2 --by all --format json > "$T/pk2-ch2.json" || fail "report pk2 after the rogue row was emptied"
same "$T/pk2-sq.json" "$T/pk2-ch2.json" "report pk2 after the rogue row was emptied"

# a host that pruned days before publishing them: the cluster has their
# summaries but not all their rows, so --by hour refuses those days (exit 4,
# named) as it does on the host; review and show say the rows are gone
"$C" ingest --db "$T/h4.db" --model pk4 --classes premium,extra,class-1,class-2,juice,cull \
  --quiet "$T/d/events.jsonl"
"$C" prune --db "$T/h4.db" --model pk4 --before 2026-10-10 > /dev/null
"$C" publish --db "$T/h4.db" --store "$U" --source host-4 > /dev/null
for s in "--db $T/h4.db" "--store $U"; do
  rc=0
  # shellcheck disable=SC2086
  "$C" report $s --model pk4 --by hour --from 2026-10-08 --to 2026-10-12 > /dev/null \
    2> "$T/pruned.err" || rc=$?
  [ $rc = 4 ] && grep -q "2026-10-08 to 2026-10-09 were pruned" "$T/pruned.err" \
    || fail "report $s --by hour over pruned days: exit $rc, $(cat "$T/pruned.err")"
  # shellcheck disable=SC2086
  "$C" review $s --model pk4 --from 2026-10-01 --to 2026-10-31 > /dev/null 2> "$T/pruned.err" \
    || fail "review $s over pruned days"
  grep -q "note: .* pruned" "$T/pruned.err" || fail "review $s did not note the pruned days: $(cat "$T/pruned.err")"
done
"$C" report --db "$T/h4.db" --model pk4 --by hour --from 2026-10-10 --to 2026-10-12 --format json > "$T/p4-sq.json"
"$C" report --store "$U" --model pk4 --by hour --from 2026-10-10 --to 2026-10-12 --format json > "$T/p4-ch.json" \
  || fail "report --store --by hour after the pruned days"
same "$T/p4-sq.json" "$T/p4-ch.json" "report pk4 --by hour after the pruned days"

# sqlite:PATH is --db PATH; --db with --store is refused; a bad URL names the forms
"$C" report --store "sqlite:$T/h.db" --model ref --format json > "$T/sqlite-url.json"
cmp -s "$T/sqlite-url.json" "$T/first-sq-ref-day.json" || fail "--store sqlite:PATH differs from --db"
rc=0; "$C" report --db "$T/h.db" --store "$U" --model ref 2> "$T/both.err" > /dev/null || rc=$?
[ $rc = 2 ] || fail "--db with --store: exit $rc, expected 2"
rc=0; "$C" report --store "mysql://x/y" --model ref 2> "$T/bad.err" > /dev/null || rc=$?
[ $rc = 2 ] && grep -q "sqlite:PATH or clickhouse://HOST:PORT/DATABASE" "$T/bad.err" \
  || fail "bad --store URL: exit $rc, $(cat "$T/bad.err")"
# an unknown model on the cluster is exit 4, as with --db
rc=0; "$C" report --store "$U" --model nosuch > /dev/null 2>&1 || rc=$?
[ $rc = 4 ] || fail "unknown model on the cluster: exit $rc, expected 4"
# a server error comes back as "HTTP status: Code N: message" (exit 3)
rc=0; "$C" report --store "${U%/concord}/nosuchdb" --model ref > /dev/null 2> "$T/nodb.err" || rc=$?
[ $rc = 3 ] && grep -Eq "HTTP 404: Code 81: Database nosuchdb doesn't exist" "$T/nodb.err" \
  || fail "missing database: exit $rc, $(cat "$T/nodb.err")"

if [ "$fails" -gt 0 ]; then echo "$fails check(s) failed" >&2; exit 1; fi
echo "single_server: all checks passed"
