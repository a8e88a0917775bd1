#!/usr/bin/env bash
# old_alert_tables.sh — a database whose alert tables were written before the
# vocabulary change (states ok/pending/firing/resolved, "severity" with
# critical/warning/info, "dedupe_key", kinds fired/resolved) is upgraded in
# place by the first writer (the store's upgrade of a version 3 file to
# the current version, 5): a rule that was firing stays raised (no second notification
# for the same episode), no row is lost, and the history reads in the new
# words.
# Usage: old_alert_tables.sh CONCORD TESTDIR
set -euo pipefail
C=$1
SRC=$2
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }

python3 "$SRC/gen_days.py" "$T/e.jsonl" --start 2026-03-01 --pattern split,split --prefix s
"$C" ingest --db "$T/a.db" --model m "$T/e.jsonl" 2> /dev/null
# the tables and rows as the earlier release wrote them: a version 3 file
# (before the alert tables joined the versioned schema), alert tables made
# outside the schema in the old vocabulary
sqlite3 "$T/a.db" <<'SQL'
DROP TABLE outbox;
DROP TABLE notifications;
DROP TABLE rule_state;
DROP TABLE follow_offsets;
UPDATE meta SET value = '3' WHERE key = 'schema_version';
CREATE TABLE rule_state(
  model TEXT NOT NULL, rule TEXT NOT NULL, state TEXT NOT NULL,
  breach_run INTEGER NOT NULL, clear_run INTEGER NOT NULL,
  last_day INTEGER NOT NULL, since_day INTEGER NOT NULL,
  fired_day INTEGER, last_notified_day INTEGER,
  metric TEXT NOT NULL, severity TEXT NOT NULL, last_value REAL, last_bound REAL,
  updated_at INTEGER NOT NULL,
  PRIMARY KEY(model, rule)) WITHOUT ROWID;
CREATE TABLE notifications(
  notification_id INTEGER PRIMARY KEY, dedupe_key TEXT NOT NULL UNIQUE,
  model TEXT NOT NULL, rule TEXT NOT NULL, kind TEXT NOT NULL, severity TEXT NOT NULL,
  day INTEGER NOT NULL, window_day INTEGER NOT NULL, value REAL, bound REAL,
  body TEXT NOT NULL, created_at INTEGER NOT NULL);
CREATE TABLE outbox(
  outbox_id INTEGER PRIMARY KEY,
  notification_id INTEGER NOT NULL REFERENCES notifications(notification_id),
  receiver TEXT NOT NULL, secret_env TEXT,
  connect_timeout_ms INTEGER NOT NULL, timeout_ms INTEGER NOT NULL,
  max_attempts INTEGER NOT NULL, backoff_s INTEGER NOT NULL, max_backoff_s INTEGER NOT NULL,
  status TEXT NOT NULL CHECK (status IN ('pending', 'sent', 'dead')),
  attempts INTEGER NOT NULL DEFAULT 0, next_at INTEGER NOT NULL,
  last_status INTEGER, last_error TEXT, sent_at INTEGER,
  UNIQUE(notification_id, receiver));
-- day 20513 = 2026-03-01: the rule fired that day
INSERT INTO rule_state VALUES('m', 'split', 'firing', 1, 0, 20513, 20513, 20513, 20513,
  'diversity.disagreement.mean', 'critical', 0.9, 0.5, 1772323200);
INSERT INTO notifications VALUES(1, 'm/split/fired/2026-03-01', 'm', 'split', 'fired',
  'critical', 20513, 20513, 0.9, 0.5, '{}', 1772323200);
SQL
cat > "$T/rules.jsonc" <<'JSON'
{"rules": [{"name": "split", "metric": "diversity.disagreement.mean", "above": 0.5,
            "min_events": 10, "urgency": "high"}]}
JSON
set +e
"$C" check --db "$T/a.db" --rules "$T/rules.jsonc" --day 2026-03-02 --format json > "$T/check.json" 2> "$T/err"
rc=$?
set -e
[ $rc -eq 11 ] || fail "check on the upgraded tables: expected exit 11 (still raised, none newly), got $rc: $(cat "$T/err")"
python3 - "$T/check.json" <<'PY' || fail "check result"
import json, sys
r = [x for x in json.load(open(sys.argv[1]))["results"] if x["rule"] == "split"][0]
assert r["state"] == "raised" and r["outcome"] != "raised", r
PY
[ "$(sqlite3 "$T/a.db" "SELECT state || ' ' || urgency FROM rule_state")" = "raised high" ] ||
  fail "rule_state after the upgrade: expected 'raised high', saw '$(sqlite3 "$T/a.db" "SELECT state, urgency FROM rule_state")'"
[ "$(sqlite3 "$T/a.db" "SELECT notice_id || ' ' || kind || ' ' || urgency FROM notifications WHERE notification_id = 1")" = "m/split/fired/2026-03-01 raised high" ] ||
  fail "notifications after the upgrade: $(sqlite3 "$T/a.db" "SELECT * FROM notifications")"
[ "$(sqlite3 "$T/a.db" "SELECT count(*) FROM notifications")" = 1 ] || fail "a second notification was queued for the same episode"
[ "$(sqlite3 "$T/a.db" "SELECT value FROM meta WHERE key = 'schema_version'")" = 5 ] ||
  fail "schema version after the upgrade: $(sqlite3 "$T/a.db" "SELECT value FROM meta WHERE key = 'schema_version'")"
[ "$(sqlite3 "$T/a.db" "SELECT count(*) FROM sqlite_master WHERE name IN ('follow_offsets', 'outbox_due')")" = 2 ] ||
  fail "the upgrade did not create follow_offsets and the outbox index"
"$C" alerts --db "$T/a.db" --format json > "$T/alerts.json" || fail "alerts after the upgrade"
grep -q '"raised"' "$T/alerts.json" || fail "alerts does not show the rule raised: $(cat "$T/alerts.json")"
[ $fails -eq 0 ] || { echo "old_alert_tables: $fails failure(s)" >&2; exit 1; }
echo "old_alert_tables: ok (tables of the earlier vocabulary upgraded in place, the raised rule kept)"
