#!/usr/bin/env bash
# serve_metrics.sh — GET /v1/metrics: the OpenMetrics content type, an
# exposition that passes a strict checker written from the specification
# (openmetrics_check.py, which must first refuse its own bad samples), the
# alert rules' states as a stateset, label values escaped (a model named
# with a quote and a backslash), and gauge values equal to the figures of
# `concord report` for the model's latest day (absolute tolerance 1e-9:
# the report's JSON rounds, the exposition does not).
# Usage: serve_metrics.sh CONCORD
set -euo pipefail
CONCORD=$1
T=$(mktemp -d)
SPID=
trap '[ -n "$SPID" ] && kill -9 $SPID 2> /dev/null; rm -rf "$T"' EXIT
HANG_GUARD=300
HERE=$(dirname "$0")
. "$HERE/lib.sh"

/usr/bin/python3 "$HERE/openmetrics_check.py" --self-test || fail "the checker's self-test"
# the demo's database has a model with alert rules checked day by day
"$CONCORD" demo --dir "$T/d" --per-day 100 > /dev/null
DB=$T/d/demo.db
echo '{"id":"q1","ts":"2026-11-02T10:00:00Z","probs":[[0.5,0.5],[0.5,0.5]]}' > "$T/q.jsonl"
"$CONCORD" ingest --db "$DB" --model 'odd "name" \ here' "$T/q.jsonl" 2> /dev/null
start_server "$T/s.log" --db "$DB" --listen 127.0.0.1:0
curl -s -m $HANG_GUARD -D "$T/headers" -o "$T/metrics" "http://127.0.0.1:$SPORT/v1/metrics"
stop_server || fail "serve did not exit 0 on SIGTERM"
grep -qi '^content-type: application/openmetrics-text; version=1.0.0; charset=utf-8' "$T/headers" ||
  fail "content type: $(grep -i '^content-type' "$T/headers")"
/usr/bin/python3 "$HERE/openmetrics_check.py" "$T/metrics" || fail "the exposition does not conform"
grep -q '^concord_disagreement_ratio{model="odd \\"name\\" \\\\ here"} ' "$T/metrics" ||
  fail "the odd model name is not escaped as the specification says"
grep -q '^concord_alert_state{model="apple-grader",rule="class-mix-drift",concord_alert_state="raised"} 1$' "$T/metrics" ||
  fail "the demo's raised class-mix rule is not in the stateset"

"$CONCORD" report --db "$DB" --model apple-grader --format json -o "$T/report.json"
/usr/bin/python3 - "$T/metrics" "$T/report.json" <<'PY' || fail "gauges differ from the report"
import json, math, re, sys
samples = {}
for line in open(sys.argv[1]):
    m = re.match(r'^(concord_[a-z_]+)\{model="apple-grader"\} (\S+)$', line)
    if m:
        samples[m.group(1)] = float(m.group(2))
w = json.load(open(sys.argv[2]))["windows"][-1]
want = {
    "concord_disagreement_ratio": w["diversity"]["disagreement"]["mean"],
    "concord_mutual_information_nats": w["uncertainty"]["mutual_information"],
    "concord_class_mix_p_value": w["drift"]["class_mix"]["p_value"],
    "concord_ensemble_accuracy_ratio": w["accuracy"]["ensemble"],
    "concord_day_events": w["events"],
    "concord_day_labeled_events": w["labeled"],
}
bad = 0
for name, v in want.items():
    got = samples.get(name)
    v = float("nan") if v is None else float(v)
    same = got is not None and ((math.isnan(v) and math.isnan(got)) or abs(got - v) <= 1e-9)
    if not same:
        print("%s: exposition %s, report %s" % (name, got, v))
        bad += 1
sys.exit(1 if bad else 0)
PY

finish serve_metrics
