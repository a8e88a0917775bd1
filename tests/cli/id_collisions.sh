#!/usr/bin/env bash
# id_collisions.sh — ids whose hashes collide stay apart. The store finds ids
# through a 64-bit hash (schema 5, events_by_hash) and compares the id in the
# row; a database made with CONCORD_TEST_ID_HASH_BITS=2 keeps only 2 bits of
# the hash, so its 60 events share 4 hash values. The same work (ingest,
# duplicates within a file and across files, an id repeated across models,
# delayed labels and a correction by id, a label waiting for its event) done
# on it and on an ordinary database must give the same counts, reports,
# show output and rows. verify --deep finds a row whose key was changed.
# Also the writers' page cache setting (CONCORD_WRITER_CACHE_MIB).
# Usage: id_collisions.sh CONCORD
set -euo pipefail
C=$1
export CONCORD_NOW=1790000000
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
q() { sqlite3 "$1" "$2"; }
CLASSES=premium,extra,class-1,class-2,juice,cull
"$C" demo --dir "$T/d" --per-day 12 > /dev/null
grep -E '"id":"d0[1-5]-' "$T/d/events.jsonl" > "$T/events.jsonl"       # 60 events
grep -E '"id":"d0[1-5]-' "$T/d/labels.jsonl" > "$T/labels.jsonl" || true
head -n 40 "$T/events.jsonl" > "$T/a.jsonl"
# the second file repeats 10 events of the first, and one within itself
{ sed -n '31,40p' "$T/events.jsonl"; sed -n '41,60p' "$T/events.jsonl"; sed -n '45p' "$T/events.jsonl"; } > "$T/b.jsonl"
head -n 12 "$T/events.jsonl" > "$T/h.jsonl"                            # the same ids for model h
last=$(sed -n '60p' "$T/events.jsonl" | sed 's/.*"id":"\([^"]*\)".*/\1/')
first=$(head -n 1 "$T/labels.jsonl" | sed 's/.*"id":"\([^"]*\)".*/\1/')

work() { # DB: the same commands on each database; their messages into DB.log
  local db=$1
  "$C" ingest --db "$db" --model g --classes $CLASSES "$T/a.jsonl" 2>> "$db.log"
  echo "{\"id\":\"$last\",\"label\":\"juice\"}" > "$T/wait.jsonl"
  "$C" label --db "$db" --model g "$T/wait.jsonl" 2>> "$db.log"   # waits: d05's last event is in b
  "$C" ingest --db "$db" --model g "$T/b.jsonl" 2>> "$db.log"
  "$C" ingest --db "$db" --model h --classes $CLASSES "$T/h.jsonl" 2>> "$db.log"
  "$C" label --db "$db" --model g "$T/labels.jsonl" 2>> "$db.log"
  echo "{\"id\":\"$first\",\"label\":\"cull\"}" > "$T/fix.jsonl"
  "$C" label --db "$db" --model g "$T/fix.jsonl" 2>> "$db.log"
  sed 's/.*"id":"\([^"]*\)".*/{"id":"\1","label":"class-2"}/' "$T/h.jsonl" > "$T/h_labels.jsonl"
  "$C" label --db "$db" --model h "$T/h_labels.jsonl" 2>> "$db.log"
  "$C" ingest --db "$db" --model g "$T/events.jsonl" 2>> "$db.log"  # all 60 again
}
CONCORD_TEST_ID_HASH_BITS=2 work "$T/narrow.db" || fail "the work on the 2-bit database"
work "$T/wide.db" || fail "the work on the ordinary database"

[ "$(q "$T/narrow.db" "SELECT value FROM meta WHERE key = 'id_hash_bits'")" = 2 ] || fail "the narrow database does not keep its width"
[ "$(q "$T/wide.db" "SELECT count(*) FROM meta WHERE key = 'id_hash_bits'")" = 0 ] || fail "the ordinary database records a width"
[ "$(q "$T/narrow.db" "SELECT count(DISTINCT id_hash) <= 4 AND count(*) = 72 FROM events")" = 1 ] ||
  fail "the narrow database's hashes: $(q "$T/narrow.db" "SELECT count(DISTINCT id_hash), count(*) FROM events")"
[ "$(q "$T/wide.db" "SELECT count(DISTINCT id_hash) FROM events WHERE model_id = 1")" = 60 ] || fail "the ordinary database's hashes are not distinct"
grep -q " 20 events stored, 11 duplicates skipped" "$T/narrow.db.log" || fail "duplicates of the second file: $(cat "$T/narrow.db.log")"
grep -q " 0 events stored, 60 duplicates skipped" "$T/narrow.db.log" || fail "the third file is not all duplicates: $(cat "$T/narrow.db.log")"
grep -q "1 waiting labels applied" "$T/narrow.db.log" || fail "the waiting label: $(cat "$T/narrow.db.log")"
# the messages name the databases; otherwise the same
sed "s#$T/narrow.db#DB#g" "$T/narrow.db.log" > "$T/n.log"
sed "s#$T/wide.db#DB#g" "$T/wide.db.log" > "$T/w.log"
cmp -s "$T/n.log" "$T/w.log" || fail "the commands said different things: $(diff "$T/n.log" "$T/w.log" | head -n 5)"
rows="SELECT m.name, e.id, e.ts, e.pred, e.label, e.label_at, hex(e.probs) FROM events e JOIN models m USING (model_id) ORDER BY 1, 2"
[ "$(q "$T/narrow.db" "$rows")" = "$(q "$T/wide.db" "$rows")" ] || fail "the rows differ"
[ "$(q "$T/narrow.db" "SELECT count(*) FROM events WHERE model_id = 2 AND label = 3")" = 12 ] || fail "h's labels"
for model in g h; do
  "$C" report --db "$T/narrow.db" --model $model --format json -o "$T/n.json"
  "$C" report --db "$T/wide.db" --model $model --format json -o "$T/w.json"
  cmp -s "$T/n.json" "$T/w.json" || fail "the reports of $model differ"
  "$C" verify --db "$T/narrow.db" --model $model --deep > "$T/v" || fail "verify --deep of $model: $(grep -v ' ok' "$T/v")"
done
for id in $(sed 's/.*"id":"\([^"]*\)".*/\1/' "$T/events.jsonl"); do
  "$C" show --db "$T/narrow.db" --model g --format json "$id" > "$T/n.show" || fail "show $id"
  "$C" show --db "$T/wide.db" --model g --format json "$id" > "$T/w.show"
  cmp -s "$T/n.show" "$T/w.show" || fail "show $id differs"
done
rc=0; "$C" show --db "$T/narrow.db" --model g no-such-id > /dev/null 2>&1 || rc=$?
[ $rc = 4 ] || fail "show of an unknown id whose hash is taken: exit $rc, expected 4"

# verify --deep finds a row whose key is not its id's
cp "$T/wide.db" "$T/bad.db"
"$C" verify --db "$T/bad.db" --model g --deep > "$T/v" || fail "verify --deep before the damage: $(grep -v ' ok' "$T/v")"
q "$T/bad.db" "UPDATE events SET id_hash = id_hash + 1 WHERE rowid = 7"
rc=0; "$C" verify --db "$T/bad.db" --model g --deep > "$T/v" 2>&1 || rc=$?
[ $rc = 1 ] || fail "verify --deep of a damaged key: exit $rc, expected 1"
grep -q "events: 1 rows whose id_hash is not their id's key" "$T/v" || fail "verify does not name the damaged key: $(cat "$T/v")"

# the writers' page cache (CONCORD_WRITER_CACHE_MIB, in MiB): a bad value is
# a usage error that names the variable; a small one still stores the same
for v in 0 4097 12x; do
  rc=0; CONCORD_WRITER_CACHE_MIB=$v "$C" ingest --db "$T/cache.db" "$T/a.jsonl" 2> "$T/err" || rc=$?
  [ $rc = 2 ] || fail "CONCORD_WRITER_CACHE_MIB=$v: exit $rc, expected 2"
  grep -q "CONCORD_WRITER_CACHE_MIB: '$v' is not a number of MiB from 1 to 4096" "$T/err" || fail "CONCORD_WRITER_CACHE_MIB=$v: $(cat "$T/err")"
done
CONCORD_WRITER_CACHE_MIB=1 "$C" ingest --db "$T/cache.db" --model g --classes $CLASSES "$T/events.jsonl" 2> /dev/null ||
  fail "ingest with a 1 MiB cache"
[ "$(q "$T/cache.db" "SELECT count(*), count(DISTINCT id) FROM events")" = "60|60" ] || fail "the 1 MiB cache ingest's rows"

[ $fails = 0 ] && echo "id_collisions: ok" || { echo "id_collisions: $fails failures"; exit 1; }
