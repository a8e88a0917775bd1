#!/usr/bin/env bash
# serve_metrics.sh — GET /v1/metrics: the OpenMetrics content type, an
# exposition that passes a strict checker written from the specification
# (openmetrics_check.py, which must first refuse its own bad samples), the
# alert rules' states as a stateset, label values escaped (a model named
# with a quote and a backslash), and gauge values equal to the figures of
# `concord report` for the model's latest day (absolute tolerance 1e-9:
# the report's JSON rounds, the exposition does not). Per slice: on the
# demo's packing lines and on a model with three segments (two of them
# named with a quote, a backslash and a line feed) and events without one,
# each slice's gauges equal `concord report --segment S` for that day
# (relative tolerance 1e-9: cJSON writes 15 significant digits), the slice
# label is escaped, and each-slice alert states carry rule and slice labels.
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
# a model with four segments over five days (invented numbers, fixed seed),
# baseline the first three days; its each-slice default rules checked on
# the last day (too few events there: not_evaluated, a state all the same)
/usr/bin/python3 - "$T/s.jsonl" <<'PY'
import json, random, sys
rng = random.Random(12)
segs = ["plain", 'q"uo\\te', "new\nline", "a/b%2Fc", None]
with open(sys.argv[1], "w") as f:
    for d in range(1, 6):
        for i in range(120):
            seg = segs[i % 5]
            shift = 0.25 * (d >= 4 and seg == "plain")
            probs = []
            for m in range(3):
                a = [rng.random() + (shift if c == 2 else 0) for c in range(3)]
                probs.append([x / sum(a) for x in a])
            ev = {"id": "s%d-%d" % (d, i), "ts": "2026-11-%02dT%02d:%02d:00Z" % (d, i // 6, i % 60),
                  "probs": probs}
            if seg is not None:
                ev["segment"] = seg
            if i % 3:
                ev["label"] = rng.randrange(3)
            f.write(json.dumps(ev) + "\n")
PY
"$CONCORD" ingest --db "$DB" --model sliced "$T/s.jsonl" 2> /dev/null || fail "ingest of the sliced model"
"$CONCORD" baseline --db "$DB" --model sliced --from 2026-11-01 --to 2026-11-03 > /dev/null ||
  fail "baseline of the sliced model"
"$CONCORD" rules init -o "$T/rules.json" > /dev/null 2>&1
"$CONCORD" check --db "$DB" --rules "$T/rules.json" --model sliced --day 2026-11-05 --no-deliver \
  > /dev/null || fail "check of the sliced model"
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

# per slice: each slice sample equals the slice's own report for the day
/usr/bin/python3 - "$T/metrics" "$CONCORD" "$DB" <<'PY' || fail "slice gauges differ from report --segment"
import json, math, re, subprocess, sys
metrics, concord, db = sys.argv[1:4]
text = open(metrics, encoding="utf-8").read()

def labels_of(t):
    """'a="x",b="y"' -> dict, OpenMetrics escapes undone."""
    out, i = {}, 0
    while i < len(t):
        m = re.match(r'([a-z_]+)="', t[i:])
        i += m.end()
        v = []
        while t[i] != '"':
            if t[i] == "\\":
                v.append({"n": "\n"}.get(t[i + 1], t[i + 1]))
                i += 2
            else:
                v.append(t[i])
                i += 1
        out[m.group(1)] = "".join(v)
        i += 2 if t[i + 1:i + 2] == "," else 1
    return out

samples = []
for line in text.splitlines():
    m = re.match(r"^(concord_[a-z_]+)\{(.*)\} (\S+)$", line)
    if m:
        samples.append((m.group(1), labels_of(m.group(2)), float(m.group(3))))
latest = {l["model"]: int(v) // 86400 for n, l, v in samples if n == "concord_latest_day_seconds"}
paths = {
    "concord_disagreement_ratio": lambda w: w["diversity"]["disagreement"]["mean"],
    "concord_mutual_information_nats": lambda w: w["uncertainty"]["mutual_information"],
    "concord_class_mix_p_value": lambda w: w["drift"]["class_mix"]["p_value"],
    "concord_ensemble_accuracy_ratio": lambda w: w["accuracy"]["ensemble"],
    "concord_day_events": lambda w: w["events"],
    "concord_day_labeled_events": lambda w: w["labeled"],
}
bad = 0
def check(cond, msg):
    global bad
    if not cond:
        print(msg)
        bad += 1

import datetime
def date(day):
    return (datetime.date(1970, 1, 1) + datetime.timedelta(days=day)).isoformat()

want_slices = {"sliced": {"plain", 'q"uo\\te', "new\nline", "a/b%2Fc", "(none)"},
               "apple-grader": None}
for model, want in want_slices.items():
    day = date(latest[model])
    listed = json.loads(subprocess.run([concord, "models", "--db", db, "--format", "json"],
                                       check=True, capture_output=True).stdout)
    slices = [s["segment"] for m in listed["models"] if m["name"] == model for s in m["slices"]]
    seen = set()
    for s in slices:
        r = subprocess.run([concord, "report", "--db", db, "--model", model, "--segment", s,
                            "--from", day, "--to", day, "--format", "json"],
                           check=True, capture_output=True)
        wins = json.loads(r.stdout)["windows"]
        got = {n: v for n, l, v in samples if l.get("model") == model and l.get("slice") == s}
        if not wins or wins[0]["events"] == 0:
            check(not got, "%s/%r: no events on %s, yet samples %s" % (model, s, day, got))
            continue
        seen.add(s)
        w = wins[0]
        for name, path in paths.items():
            v = path(w)
            v = float("nan") if v is None else float(v)
            g = got.get(name)
            same = g is not None and ((math.isnan(v) and math.isnan(g)) or
                                      abs(g - v) <= 1e-9 * max(abs(v), 1e-300))
            check(same, "%s/%r %s: exposition %s, report --segment %s" % (model, s, name, g, v))
    if want is not None:
        check(seen == want, "%s: slices with samples %s, want %s" % (model, seen, want))
    else:
        check(len(seen) >= 2, "%s: only %s slices with samples" % (model, seen))
    # the model's own sample has no slice label
    check(any(n == "concord_day_events" and l == {"model": model} for n, l, v in samples),
          "%s: no model-level sample without a slice label" % model)
sys.exit(1 if bad else 0)
PY
grep -q '^concord_day_events{model="sliced",slice="q\\"uo\\\\te"} 24$' "$T/metrics" ||
  fail "the slice with a quote and a backslash is not escaped: $(grep 'model="sliced",slice' "$T/metrics" | head -3)"
grep -q '^concord_day_events{model="sliced",slice="new\\nline"} 24$' "$T/metrics" ||
  fail "the slice with a line feed is not escaped"
# the demo checks its each-slice rules per packing line: the state key
# <rule>@line-2 is split into rule and slice labels
grep -Eq '^concord_alert_state\{model="apple-grader",rule="[a-z0-9_.-]+",slice="line-2",concord_alert_state="[a-z_]+"\} 1$' "$T/metrics" ||
  fail "no each-slice alert state with a slice label for line-2"
grep -q '^concord_alert_state{model="[^"]*",rule="[^"]*@' "$T/metrics" &&
  fail "a rule label still holds the state key's @slice"
# hostile slice names in state keys: escaped, and '/' and '%' (kept in the
# key as %2F and %25) given back as they are
for s in 'q\\"uo\\\\te' 'new\\nline' 'a/b%2Fc'; do
  grep -q "^concord_alert_state{model=\"sliced\",rule=\"slice-class-mix-drift\",slice=\"$s\",concord_alert_state=\"not_evaluated\"} 1\$" "$T/metrics" ||
    fail "no alert state of slice $s: $(grep 'model="sliced",rule="slice-class-mix-drift"' "$T/metrics" | grep ' 1$')"
done

finish serve_metrics
