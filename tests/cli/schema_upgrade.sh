#!/usr/bin/env bash
# schema_upgrade.sh — a database of schema version 2 (events WITHOUT ROWID,
# keyed by (model_id, id)) is read as it is by the reading commands and
# converted by the first writing command: afterwards it has the events table
# of version 3 (a rowid table) with version 5's id index (events_by_hash on
# (model_id, id_hash), each row's id_hash the SipHash of its id, no
# events_by_id; the file is then at the current version, 5), verify --deep
# passes, the report
# equals the one read before the conversion, duplicates are still skipped,
# labels waiting for events are applied, and the result equals the same work
# done on a database that was version 3 from the start.
# Usage: schema_upgrade.sh CONCORD
set -euo pipefail
C=$1
export CONCORD_NOW=1790000000
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
q() { sqlite3 "$1" "$2"; }

"$C" demo --dir "$T/d" --per-day 60 > /dev/null
CL=premium,extra,class-1,class-2,juice,cull
# the last 25 events arrive after the conversion; their labels wait until then
head -n -25 "$T/d/events.jsonl" > "$T/first.jsonl"
tail -n 25 "$T/d/events.jsonl" > "$T/late.jsonl"

setup() { # DB: the work done before the conversion
  "$C" ingest --db "$1" --model g --classes "$CL" "$T/first.jsonl" 2> /dev/null
  "$C" label --db "$1" --model g "$T/d/labels.jsonl" 2> /dev/null
  "$C" baseline --db "$1" --model g --from 2026-10-05 --to 2026-10-11 2> /dev/null
}
OLD=$T/old.db REF=$T/ref.db
setup "$OLD"
setup "$REF"
[ "$(q "$OLD" "SELECT count(*) FROM pending_labels")" -gt 0 ] || fail "setup: no label waits for a late event"

# turn OLD into a version 2 database: the events table exactly as version 2
# created it (collector/store.c before version 3), same rows
sqlite3 "$OLD" <<'EOF'
BEGIN;
CREATE TABLE events_v2(
  model_id INTEGER NOT NULL, id TEXT NOT NULL, ts INTEGER NOT NULL, day INTEGER NOT NULL,
  segment TEXT, pred INTEGER NOT NULL, label INTEGER, label_at INTEGER,
  probs BLOB NOT NULL,
  PRIMARY KEY(model_id, id)) WITHOUT ROWID;
INSERT INTO events_v2 SELECT model_id, id, ts, day, segment, pred, label, label_at, probs FROM events;
DROP TABLE events;
ALTER TABLE events_v2 RENAME TO events;
CREATE INDEX events_by_time ON events(model_id, day, ts);
UPDATE meta SET value = '2' WHERE key = 'schema_version';
COMMIT;
EOF
layout() { q "$1" "SELECT sql FROM sqlite_master WHERE name = 'events'"; }
layout "$OLD" | grep -q 'WITHOUT ROWID' || fail "the version 2 table was not made"
rows=$(q "$OLD" "SELECT count(*) FROM events")

# reading commands read version 2 as it is and change nothing
id=$(q "$OLD" "SELECT id FROM events WHERE label IS NOT NULL ORDER BY id LIMIT 1")
sum_before=$(sha256sum < "$OLD")
"$C" report --db "$OLD" --model g --format json -o "$T/before.json"
"$C" show --db "$OLD" --model g --format json "$id" > "$T/show-before.json"
"$C" verify --db "$OLD" --model g --deep > /dev/null || fail "verify of the version 2 database"
[ "$(sha256sum < "$OLD")" = "$sum_before" ] || fail "a reading command changed the version 2 file"
[ "$(q "$OLD" "SELECT value FROM meta WHERE key = 'schema_version'")" = 2 ] || fail "a reader upgraded the schema"

# the first writer converts: the same file again, every line a duplicate
"$C" ingest --db "$OLD" --model g "$T/first.jsonl" 2> "$T/err" || fail "ingest into version 2: $(cat "$T/err")"
grep -q " 0 events stored, $rows duplicates skipped" "$T/err" || fail "duplicates after the conversion: $(cat "$T/err")"
[ "$(q "$OLD" "SELECT value FROM meta WHERE key = 'schema_version'")" = 5 ] || fail "schema version not 5 (the current one)"
layout "$OLD" | grep -q 'WITHOUT ROWID' && fail "events is still WITHOUT ROWID"
[ "$(q "$OLD" "SELECT group_concat(name) FROM (SELECT name FROM sqlite_master WHERE type = 'index' AND name LIKE 'events_%' ORDER BY name)")" = "events_by_hash,events_by_time" ] ||
  fail "indexes after the conversion: $(q "$OLD" "SELECT group_concat(name) FROM sqlite_master WHERE type = 'index'")"
[ "$(q "$OLD" "SELECT count(*) FROM events WHERE id_hash = 0")" = 0 ] || fail "rows without their id hash after the conversion"
[ "$(q "$OLD" "SELECT count(DISTINCT id_hash) FROM events")" = "$rows" ] || fail "id hashes not distinct after the conversion"
[ "$(q "$OLD" "SELECT name FROM sqlite_master WHERE name LIKE 'events_v%'")" = "" ] || fail "a temporary table was left"
[ "$(q "$OLD" "SELECT count(*) FROM events")" = "$rows" ] || fail "row count changed in the conversion"
"$C" verify --db "$OLD" --model g --deep > /dev/null || fail "verify --deep after the conversion"
"$C" report --db "$OLD" --model g --format json -o "$T/after.json"
cmp -s "$T/before.json" "$T/after.json" || fail "the report changed in the conversion"
"$C" show --db "$OLD" --model g --format json "$id" > "$T/show-after.json"
cmp -s "$T/show-before.json" "$T/show-after.json" || fail "show $id changed in the conversion"

# after it: waiting labels find their events, duplicates are still skipped
for db in "$OLD" "$REF"; do
  "$C" ingest --db "$db" --model g "$T/first.jsonl" 2> /dev/null   # REF gets the same no-op
  "$C" ingest --db "$db" --model g "$T/late.jsonl" 2> /dev/null
done
[ "$(q "$OLD" "SELECT count(*) FROM pending_labels")" = 0 ] || fail "waiting labels not applied after the conversion"
"$C" ingest --db "$OLD" --model g "$T/late.jsonl" 2> "$T/err"
grep -q " 0 events stored, 25 duplicates skipped" "$T/err" || fail "late duplicates: $(cat "$T/err")"
"$C" label --db "$OLD" --model g "$T/d/labels.jsonl" 2> /dev/null   # by id, through events_by_hash
"$C" label --db "$REF" --model g "$T/d/labels.jsonl" 2> /dev/null
"$C" verify --db "$OLD" --model g --deep > /dev/null || fail "verify --deep at the end"
"$C" report --db "$OLD" --model g --format json -o "$T/old-end.json"
"$C" report --db "$REF" --model g --format json -o "$T/ref-end.json"
cmp -s "$T/old-end.json" "$T/ref-end.json" || fail "the converted database's report differs from the reference's"
[ "$(q "$OLD" "SELECT count(*), count(label) FROM events")" = "$(q "$REF" "SELECT count(*), count(label) FROM events")" ] ||
  fail "rows or labels differ from the reference"

[ "$fails" = 0 ] && echo "schema_upgrade: ok" || { echo "schema_upgrade: $fails failures" >&2; exit 1; }
