#!/usr/bin/env bash
# upgrade_v4.sh — the committed database of the release before the id hash
# index (tests/fixtures/v4.db, schema 4, ids in the unique text index
# events_by_id; made by tests/fixtures/make_v4_db.sh with that release's
# binary) is read as it is by the reading commands (show by id through
# events_by_id) and upgraded in place by the first writing command
# (upgrade_id_hashes): afterwards it is schema 5, events_by_id is gone,
# events_by_hash is there and every row has its id hash, the report equals
# the old release's (v4_report.json), show prints every event as before,
# duplicates are still skipped, an id stored under two models stays two
# events (labels by id reach only their model's), a waiting label meets its
# late event, and verify --deep passes. The upgrade says what it does on
# standard error.
# Usage: upgrade_v4.sh CONCORD
set -euo pipefail
C=$1
HERE=$(cd "$(dirname "$0")" && pwd)
FIX=$HERE/../fixtures
export CONCORD_NOW=1790000000
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
q() { sqlite3 "$1" "$2"; }
DB=$T/v4.db
cp "$FIX/v4.db" "$DB"
chmod 600 "$DB"
[ "$(q "$DB" "SELECT value FROM meta WHERE key = 'schema_version'")" = 4 ] || fail "the fixture is not schema 4"
ids_g=$(q "$DB" "SELECT id FROM events WHERE model_id = (SELECT model_id FROM models WHERE name = 'g') ORDER BY id")
ids_h=$(q "$DB" "SELECT id FROM events WHERE model_id = (SELECT model_id FROM models WHERE name = 'h') ORDER BY id")
[ "$(echo "$ids_h" | wc -l)" = 10 ] || fail "the fixture's model h does not have 10 events"

# numbers within cJSON's relative DBL_EPSILON of the old release's
# (old_report_same.py says why); every key compared
same_json() {
  /usr/bin/python3 "$HERE/old_report_same.py" "$1" "$2"
}

# readers: as before (show by id through events_by_id); nothing written
sum_before=$(sha256sum < "$DB")
"$C" report --db "$DB" --model g --format json -o "$T/before.json" || fail "report of the schema 4 file"
same_json "$FIX/v4_report.json" "$T/before.json" || fail "the new reader's report differs from the old release's"
mkdir "$T/show-before" "$T/show-after"
for id in $ids_g; do "$C" show --db "$DB" --model g --format json "$id" > "$T/show-before/g-$id" || fail "show g $id on schema 4"; done
for id in $ids_h; do "$C" show --db "$DB" --model h --format json "$id" > "$T/show-before/h-$id" || fail "show h $id on schema 4"; done
[ "$(sha256sum < "$DB")" = "$sum_before" ] || fail "a reading command changed the schema 4 file"

# the first writer upgrades (an empty label file: nothing else changes)
: > "$T/empty.jsonl"
"$C" label --db "$DB" --model g "$T/empty.jsonl" 2> "$T/err" || fail "label into schema 4: $(cat "$T/err")"
grep -q "upgrading .*v4.db to find ids by hash: row 0 of 69" "$T/err" || fail "no progress line of the upgrade: $(cat "$T/err")"
[ "$(q "$DB" "SELECT value FROM meta WHERE key = 'schema_version'")" = 5 ] || fail "schema version not 5 after the upgrade"
[ "$(q "$DB" "SELECT group_concat(name) FROM (SELECT name FROM sqlite_master WHERE type = 'index' AND name LIKE 'events_%' ORDER BY name)")" = "events_by_hash,events_by_time" ] ||
  fail "indexes after the upgrade: $(q "$DB" "SELECT group_concat(name) FROM sqlite_master WHERE type = 'index'")"
[ "$(q "$DB" "SELECT count(*) FROM events WHERE id_hash = 0")" = 0 ] || fail "rows without their id hash"
# an id under two models has one hash (the hash is of the id alone)
[ "$(q "$DB" "SELECT count(*) FROM events g JOIN events h ON g.id = h.id AND g.model_id <> h.model_id WHERE g.id_hash = h.id_hash")" = 20 ] ||
  fail "the 10 shared ids do not hash alike under both models"
"$C" report --db "$DB" --model g --format json -o "$T/after.json" || fail "report after the upgrade"
same_json "$FIX/v4_report.json" "$T/after.json" || fail "the report changed in the upgrade"
for id in $ids_g; do "$C" show --db "$DB" --model g --format json "$id" > "$T/show-after/g-$id" || fail "show g $id after the upgrade"; done
for id in $ids_h; do "$C" show --db "$DB" --model h --format json "$id" > "$T/show-after/h-$id" || fail "show h $id after the upgrade"; done
diff -r "$T/show-before" "$T/show-after" > /dev/null || fail "show prints other events after the upgrade"
"$C" verify --db "$DB" --model g --deep > "$T/v" || fail "verify --deep after the upgrade: $(grep -v ' ok' "$T/v")"
"$C" verify --db "$DB" --model h --deep > "$T/v" || fail "verify --deep of h after the upgrade"

# the late event arrives: its waiting label meets it; the rest are duplicates
"$C" ingest --db "$DB" --model g "$FIX/v4_late_event.jsonl" 2> "$T/err" || fail "ingest after the upgrade: $(cat "$T/err")"
grep -q "1 events stored" "$T/err" || fail "the late event was not stored: $(cat "$T/err")"
grep -q "1 waiting labels applied" "$T/err" || fail "the waiting label was not applied: $(cat "$T/err")"
late=$(sed 's/.*"id":"\([^"]*\)".*/\1/' "$FIX/v4_late_event.jsonl")
"$C" show --db "$DB" --model g --format json "$late" > "$T/late.json" || fail "show of the late event"
/usr/bin/python3 -c 'import json, sys; sys.exit(json.load(open(sys.argv[1]))["label"] != "juice")' "$T/late.json" ||
  fail "the late event's label is not juice"
"$C" demo --dir "$T/d" --per-day 12 > /dev/null
grep -E '"id":"d0[2-6]-' "$T/d/events.jsonl" > "$T/again.jsonl"
n=$(wc -l < "$T/again.jsonl")
"$C" ingest --db "$DB" --model g "$T/again.jsonl" 2> "$T/err" || fail "ingest of the same events again"
grep -q " 0 events stored, $n duplicates skipped" "$T/err" || fail "duplicates after the upgrade: $(cat "$T/err")"
# labels by id reach only their model's event: h's are all cull, g's differ
"$C" label --db "$DB" --model h <(echo "$ids_h" | sed 's/.*/{"id":"&","label":"premium"}/') 2> "$T/err" ||
  fail "labels for h: $(cat "$T/err")"
[ "$(q "$DB" "SELECT count(*) FROM events e JOIN models m USING (model_id) WHERE m.name = 'h' AND label = 0")" = 10 ] ||
  fail "h's labels were not all changed to premium"
[ "$(q "$DB" "SELECT count(*) FROM events e JOIN models m USING (model_id) WHERE m.name = 'g' AND label = 0 AND id IN (SELECT id FROM events WHERE model_id = (SELECT model_id FROM models WHERE name = 'h'))")" = \
  "$(sqlite3 "$FIX/v4.db" "SELECT count(*) FROM events e JOIN models m USING (model_id) WHERE m.name = 'g' AND label = 0 AND id IN (SELECT id FROM events WHERE model_id = (SELECT model_id FROM models WHERE name = 'h'))")" ] ||
  fail "labels for h changed g's events of the same ids"
"$C" verify --db "$DB" --model g --deep > "$T/v" || fail "verify --deep of g at the end"
"$C" verify --db "$DB" --model h --deep > "$T/v" || fail "verify --deep of h at the end"

[ $fails = 0 ] && echo "upgrade_v4: ok" || { echo "upgrade_v4: $fails failures"; exit 1; }
