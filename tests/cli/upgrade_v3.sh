#!/usr/bin/env bash
# upgrade_v3.sh — the committed database of the release before slices
# (tests/fixtures/v3.db, schema 3, made by tests/fixtures/make_v3_db.sh with
# that release's binary) is read as it is by the reading commands, and
# upgraded in place by the first writing command: afterwards it is schema 5
# (every summary vector in layout 2; ids found through events_by_hash,
# tests/cli/upgrade_v4.sh checks the ids),
# the report equals the one the old release wrote (v3_report.json) and the
# one read before the upgrade, the slices of every day add up to the model's
# summary (verify, and the events and labelled columns through sqlite3), the
# pruned days' part sits in the "(pruned, unsliced)" slice, a label waiting
# in the old file still meets its event, and a newer schema is refused.
# Usage: upgrade_v3.sh CONCORD
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
DB=$T/v3.db
cp "$FIX/v3.db" "$DB"
chmod 600 "$DB"
[ "$(q "$DB" "SELECT value FROM meta WHERE key = 'schema_version'")" = 3 ] || fail "the fixture is not schema 3"
[ "$(q "$DB" "SELECT count(*) FROM summaries WHERE version = 1")" -gt 0 ] || fail "the fixture has no layout 1 summaries"
[ "$(q "$DB" "SELECT count(*) FROM pruned_days WHERE version = 1")" -gt 0 ] || fail "the fixture has no layout 1 pruned days"

# the JSON reports compared without the keys this release adds at the top
# ("segment", "slices"), which the old release did not write; numbers within
# cJSON's relative DBL_EPSILON (old_report_same.py says why)
same_report() {
  /usr/bin/python3 "$HERE/old_report_same.py" "$1" "$2" --drop segment --drop slices
}

# readers: as before, without slices; nothing written
sum_before=$(sha256sum < "$DB")
"$C" report --db "$DB" --model g --format json -o "$T/before.json" || fail "report of the schema 3 file"
same_report "$FIX/v3_report.json" "$T/before.json" || fail "the new reader's report differs from the old release's"
"$C" models --db "$DB" > "$T/models" || fail "models on the schema 3 file"
grep -q "slices   not kept yet" "$T/models" || fail "models does not say slices are not kept: $(cat "$T/models")"
rc=0; "$C" report --db "$DB" --model g --segment line-1 2> "$T/err" > /dev/null || rc=$?
[ $rc = 3 ] || fail "report --segment on schema 3: exit $rc, expected 3"
grep -q "upgrades it in place" "$T/err" || fail "report --segment on schema 3 does not say how to upgrade: $(cat "$T/err")"
"$C" verify --db "$DB" --model g > "$T/v" || fail "verify of the schema 3 file: $(tail -n 3 "$T/v")"
[ "$(sha256sum < "$DB")" = "$sum_before" ] || fail "a reading command changed the schema 3 file"

# the first writer upgrades: the late event arrives, its waiting label meets it
"$C" ingest --db "$DB" --model g "$FIX/v3_late_event.jsonl" 2> "$T/err" || fail "ingest into schema 3: $(cat "$T/err")"
grep -q "1 events stored" "$T/err" || fail "the late event was not stored: $(cat "$T/err")"
grep -q "1 waiting labels applied" "$T/err" || fail "the waiting label was not applied: $(cat "$T/err")"
[ "$(q "$DB" "SELECT value FROM meta WHERE key = 'schema_version'")" = 5 ] || fail "schema version not 5 after the upgrade"
# every stored vector in summary layout 2 (fixed-point sums in two words)
for t in summaries pruned_days slice_summaries slice_pruned; do
  [ "$(q "$DB" "SELECT count(*) FROM $t WHERE version != 2")" = 0 ] || fail "$t rows left in an older layout"
done
[ "$(q "$DB" "SELECT count(*) FROM sqlite_master WHERE name = 'events_by_id'")$(q "$DB" "SELECT count(*) FROM events WHERE id_hash = 0")" = 00 ] ||
  fail "the ids are not indexed by hash after the upgrade"
"$C" verify --db "$DB" --model g --deep > "$T/v" || fail "verify after the upgrade: $(grep -v ' ok' "$T/v")"
grep -q "^slices: 5, .* 0 mismatched, 0 days where the slices do not add up to the model, 0 stray" "$T/v" ||
  fail "verify's slice line: $(grep '^slices' "$T/v")"
# the same sums through SQL: per day, slices' events and labelled = the model's
bad=$(q "$DB" "SELECT count(*) FROM summaries s WHERE s.events != (SELECT total(events) FROM slice_summaries u WHERE u.model_id = s.model_id AND u.day = s.day) OR s.labeled != (SELECT total(labeled) FROM slice_summaries u WHERE u.model_id = s.model_id AND u.day = s.day)")
[ "$bad" = 0 ] || fail "$bad days where the slices' events or labels do not add up"
# the pruned days' part: the "(pruned, unsliced)" slice holds exactly pruned_days
[ "$(q "$DB" "SELECT total(u.events) FROM slice_summaries u JOIN slices s USING (slice_id) WHERE s.kind = 3")" = \
  "$(q "$DB" "SELECT total(events) FROM pruned_days")" ] || fail "the pruned, unsliced slice does not hold the pruned days"
[ "$(q "$DB" "SELECT count(*) FROM slices WHERE kind = 1")" = 1 ] || fail "no slice for the events without a segment"

# the report: as before the upgrade, but for the late event's day (d08,
# 2026-10-12), which has that one event more
"$C" report --db "$DB" --model g --format json -o "$T/after.json"
/usr/bin/python3 - "$T/before.json" "$T/after.json" <<'PY' || fail "the report changed in the upgrade beyond the late event"
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:3])
late = "2026-10-12"
wa = [w for w in a["windows"] if w["from"] != late]
wb = [w for w in b["windows"] if w["from"] != late]
assert len(wa) == 7 and wa == wb, "windows before the late day differ"
assert a["baseline"] == b["baseline"], "baseline differs"
ea = [w["events"] for w in a["windows"] if w["from"] == late]
eb = [w["events"] for w in b["windows"] if w["from"] == late]
assert ea == [11] and eb == [12], (ea, eb)
PY
"$C" report --db "$DB" --model g --by-segment --by all --format json -o "$T/seg.json" || fail "report --by-segment after the upgrade"
/usr/bin/python3 - "$T/seg.json" <<'PY' || fail "the segment rows do not add up to the window"
import json, sys
w = json.load(open(sys.argv[1]))["windows"][0]
segs = w["segments"]
assert sum(s["events"] for s in segs) == w["events"], (sum(s["events"] for s in segs), w["events"])
assert sum(s["labeled"] for s in segs) == w["labeled"]
counts = [sum(s["class_counts"][c] for s in segs) for c in range(len(w["class_counts"]))]
assert counts == w["class_counts"], (counts, w["class_counts"])
assert {s["segment"] for s in segs} == {"line-1", "line-2", "line-3", "(none)", "(pruned, unsliced)"}, [s["segment"] for s in segs]
PY

# a newer schema is still refused, its tables left as they were
cp "$FIX/v3.db" "$T/new.db"
chmod 600 "$T/new.db"
q "$T/new.db" "UPDATE meta SET value = '6' WHERE key = 'schema_version'"
rc=0; "$C" ingest --db "$T/new.db" /dev/null 2> "$T/err" || rc=$?
[ $rc = 3 ] || fail "ingest into schema 6: exit $rc, expected 3"
grep -q "newer than this concord" "$T/err" || fail "schema 6: $(cat "$T/err")"
[ "$(q "$T/new.db" "SELECT value FROM meta WHERE key = 'schema_version'")" = 6 ] || fail "the newer file's version was changed"
[ "$(q "$T/new.db" "SELECT count(*) FROM sqlite_master WHERE name LIKE 'slice%'")" = 0 ] || fail "slice tables were added to the newer file"

[ $fails = 0 ] && echo "upgrade_v3: ok" || { echo "upgrade_v3: $fails failures"; exit 1; }
