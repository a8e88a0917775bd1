#!/usr/bin/env bash
# member_class.sh — member- and class-scoped figures and rules on invented
# data (gen_members.py: 3 members, 4 classes, 400 events a day):
# - every figure of the registry ('concord rules paths') is in the JSON
#   window, member figures as arrays of 3 and class figures of 4; per-class
#   precision, recall and the confusion matrix equal a plain-Python count
#   and scikit-learn's confusion_matrix, precision_score and recall_score
#   over the events by their textbook definitions;
# - the default rules are quiet on every baseline day ('rules validate') and
#   on the clean days, raise member-departs naming the broken member on its
#   first day and never on the other days, and with 400 events a day every
#   rule is evaluated (the traffic-scaled minimum is 100), while a day of 50
#   events is not evaluated, with its reason;
# - a recorded replay (--from/--to with a file receiver) sends one
#   member-departs notification naming the member, and a day it covered is
#   not checked again;
# - rules on one member by name and on each class name the member or class;
# - a model whose best member beats the average on every baseline day: the
#   report states it once as a finding, the old fixed bound on the gain is
#   flagged by 'rules validate' (exit 10), the default rules stay quiet;
# - report --rules puts the same timeline into the JSON report; the HTML
#   status line comes from the default rules, bands stay within each
#   figure's range (PSI >= 0), and a two-day baseline has no band.
# Usage: member_class.sh CONCORD TESTDIR
set -euo pipefail
C=$1
SRC=$2
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fails=0
fail() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }
run() { set +e; "$@" > "$T/out" 2> "$T/err"; RC=$?; set -e; }

# days 1-8 baseline, 9 clean, 10-11 member 1 (south) broken, 12-13 clean,
# 14-15 class 2 (c) missed, 16 clean, 17 a small day
python3 "$SRC/gen_members.py" "$T/ev.jsonl" --start 2026-05-01 \
  --pattern clean,clean,clean,clean,clean,clean,clean,clean,clean,broken:1,broken:1,clean,clean,miss:2,miss:2,clean,small
"$C" ingest --db "$T/m.db" --model m --members north,south,east --classes a,b,c,d "$T/ev.jsonl" 2> /dev/null
"$C" baseline --db "$T/m.db" --model m --from 2026-05-01 --to 2026-05-08 > /dev/null

# --- the registry in the JSON window; per-class figures against a count ---
"$C" rules paths > "$T/paths.txt"
"$C" report --db "$T/m.db" --model m --from 2026-05-14 --to 2026-05-14 --format json > "$T/r.json"
python3 - "$T/paths.txt" "$T/r.json" "$T/ev.jsonl" <<'PY' || fail "registry paths or per-class figures"
import json, sys
paths = [l.split()[:2] for l in open(sys.argv[1])]
w = json.load(open(sys.argv[2]))["windows"][0]
for path, scope in paths:
    if path == "labels.age_days":       # derived by alerts from the store, not a window figure
        continue
    node = w
    for key in path.split("."):
        assert isinstance(node, dict) and key in node, f"{path}: '{key}' missing"
        node = node[key]
    want = {"window": None, "member": 3, "class": 4}[scope]
    if want is None:
        assert node is None or isinstance(node, (int, float)), (path, node)
    else:
        assert isinstance(node, list) and len(node) == want, (path, node)
# precision, recall and confusion of the averaged output on 2026-05-14, by
# their definitions (precision = right / predicted as c, recall = right / of
# class c; rows of the matrix: true class)
K = 4
conf = [[0] * K for _ in range(K)]
for line in open(sys.argv[3]):
    e = json.loads(line)
    if not e["ts"].startswith("2026-05-14"):
        continue
    avg = [sum(p[c] for p in e["probs"]) / len(e["probs"]) for c in range(K)]
    pred = max(range(K), key=lambda c: (avg[c], -c))
    conf[e["label"]][pred] += 1
assert w["accuracy"]["confusion"] == conf, (w["accuracy"]["confusion"], conf)
for c in range(K):
    col = sum(conf[t][c] for t in range(K))
    row = sum(conf[c])
    assert abs(w["by_class"]["precision"][c] - conf[c][c] / col) < 1e-12
    assert abs(w["by_class"]["recall"][c] - conf[c][c] / row) < 1e-12
assert w["by_class"]["recall"][2] < 0.6, w["by_class"]["recall"]   # class c missed that day
PY
# the same figures against scikit-learn's metrics (Debian's python3-sklearn,
# test-only): confusion_matrix, precision_score and recall_score, average=None
if /usr/bin/python3 -c 'import sklearn' 2> /dev/null; then
  /usr/bin/python3 - "$T/r.json" "$T/ev.jsonl" <<'PY' || fail "per-class figures against scikit-learn"
import json, sys
from sklearn.metrics import confusion_matrix, precision_score, recall_score
w = json.load(open(sys.argv[1]))["windows"][0]
K, truth, pred = 4, [], []
for line in open(sys.argv[2]):
    e = json.loads(line)
    if e["ts"].startswith("2026-05-14"):
        avg = [sum(p[c] for p in e["probs"]) / len(e["probs"]) for c in range(K)]
        truth.append(e["label"]); pred.append(max(range(K), key=lambda c: (avg[c], -c)))
assert w["accuracy"]["confusion"] == confusion_matrix(truth, pred, labels=range(K)).tolist()
for name, fn in (("precision", precision_score), ("recall", recall_score)):
    ref = fn(truth, pred, labels=range(K), average=None, zero_division=0)
    assert all(abs(a - b) < 1e-12 for a, b in zip(w["by_class"][name], ref)), (name, ref)
print("member_class: confusion, precision and recall equal scikit-learn's")
PY
else
  echo "member_class: scikit-learn comparison skipped (/usr/bin/python3 has no sklearn)"
fi
"$C" report --db "$T/m.db" --model m --from 2026-05-14 --to 2026-05-14 > "$T/r.txt"
grep -q '^confusion matrix (rows: true class, columns: predicted)' "$T/r.txt" &&
  grep -qE '^  c +[0-9.]+ +0\.[0-5]' "$T/r.txt" || fail "text report: per-class table or confusion matrix"

# --- default rules: quiet on the baseline and clean days; member-departs ----
run "$C" rules validate --db "$T/m.db" --model m
[ $RC -eq 0 ] && grep -q '14 rule(s) quiet on every baseline day' "$T/out" ||
  fail "validate of the default rules: exit $RC: $(cat "$T/out" "$T/err")"
"$C" rules init > "$T/default.jsonc"
run "$C" check --db "$T/m.db" --rules "$T/default.jsonc" --from 2026-05-09 --to 2026-05-17 --dry-run --format json
cp "$T/out" "$T/default.json"
python3 - "$T/default.json" <<'PY' || fail "default rules on the member and class incidents"
import json, sys
o = json.load(open(sys.argv[1]))
by = {}
for r in o["results"]:
    by.setdefault(r["day"], {})[r["rule"]] = r
bad = []
for day in ("2026-05-09", "2026-05-12", "2026-05-13", "2026-05-16"):
    for rule, r in by[day].items():
        if r["outcome"] in ("raised", "reminder"):
            bad.append(f"clean {day}: {rule} raised")
md = by["2026-05-10"]["member-departs"]
if md["outcome"] != "raised" or md.get("subject") != "south" or "member south" not in md.get("sentence", ""):
    bad.append(f"member-departs on the first broken day: {md}")
for day, rules in by.items():
    if day >= "2026-05-14" and rules["member-departs"]["outcome"] in ("raised", "building"):
        bad.append(f"{day}: member-departs breached on a class incident")
# 400 events a day: every rule that needs no labels yet is evaluated
for day in ("2026-05-09", "2026-05-12"):
    for rule, r in by[day].items():
        if r["outcome"] == "not_evaluated":
            bad.append(f"{day}: {rule} not evaluated: {r.get('reason')}")
small = by["2026-05-17"]["class-mix-drift"]
if small["outcome"] != "not_evaluated" or small["reason"] != "too few events (50 < 100)" \
        or small["min_events"] != 100:
    bad.append(f"small day: {small}")
if o["counts"]["not_evaluated"] < 1:
    bad.append("not_evaluated not counted")
for b in bad: print("FAIL:", b)
assert not bad
PY

# --- a recorded replay: notifications name the member; states are kept -----
cp "$T/m.db" "$T/rec.db"
run "$C" check --db "$T/rec.db" --rules "$T/default.jsonc" --from 2026-05-09 --to 2026-05-16 \
  --webhook "file:$T/sink.jsonl"
[ $RC -eq 10 ] || fail "recorded replay: exit $RC, expected 10: $(cat "$T/err")"
python3 - "$T/sink.jsonl" <<'PY' || fail "member-departs notification"
import json, sys
notes = [json.loads(l) for l in open(sys.argv[1])]
md = [n for n in notes if n["rule"] == "member-departs" and n["kind"] == "raised"]
assert len(md) == 1 and md[0]["member"] == "south" and md[0]["checked_day"] == "2026-05-10", md
assert "member south" in md[0]["sentence"]
assert any(e["kind"] == "member_moved" and e["member"] == "south" for e in md[0]["evidence"]), md[0]["evidence"]
assert len({n["notice_id"] for n in notes}) == len(notes)
PY
run "$C" check --db "$T/rec.db" --rules "$T/default.jsonc" --day 2026-05-16 --format json
python3 - "$T/out" <<'PY' || fail "a day already replayed is not checked again"
import json, sys
o = json.load(open(sys.argv[1]))
assert all(r["outcome"] == "already_checked" for r in o["results"]), o["results"][0]
PY

# --- rules on one member and on each class -----------------------------
cat > "$T/scoped.jsonc" <<'JSON'
// rules on one member by name and on every class (a comment: *.jsonc)
{"rules": [
  {"name": "south-accuracy", "metric": "accuracy.members", "member": "south",
   "sigmas_below": 4, "min_shift": 0.05},
  {"name": "class-recall-drop", "metric": "by_class.recall", "class": "each",
   "sigmas_below": 4, "min_shift": 0.1},
  {"name": "gone", "metric": "accuracy.members", "member": "west", "below": 0.5}
]}
JSON
run "$C" check --db "$T/m.db" --rules "$T/scoped.jsonc" --from 2026-05-09 --to 2026-05-16 --dry-run --format json
python3 - "$T/out" <<'PY' || fail "member and class rules"
import json, sys
o = json.load(open(sys.argv[1]))
raised = [(r["day"], r["rule"], r.get("subject")) for r in o["results"] if r["outcome"] == "raised"]
assert ("2026-05-10", "south-accuracy", "south") in raised, raised
assert ("2026-05-14", "class-recall-drop", "c") in raised, raised
assert not [x for x in raised if x[0] in ("2026-05-09", "2026-05-12", "2026-05-13", "2026-05-16")], raised
gone = [r for r in o["results"] if r["rule"] == "gone"]
assert all(r["outcome"] == "not_evaluated" and "no member 'west'" in r["reason"] for r in gone), gone[0]
PY

# --- report --rules: the same timeline in the JSON report -------------------
run "$C" report --db "$T/m.db" --model m --from 2026-05-09 --to 2026-05-17 --rules "$T/default.jsonc" --format json
python3 - "$T/out" "$T/default.json" <<'PY' || fail "report --rules timeline"
import json, sys
rep = json.load(open(sys.argv[1]))["alerts"]
chk = json.load(open(sys.argv[2]))
want = [(r["day"], r["rule"], r["outcome"]) for r in chk["results"]
        if r["outcome"] in ("raised", "cleared", "reminder")]
got = [(a["day"], a["rule"], a["kind"]) for a in rep["transitions"]]
assert got == want, (got, want)
assert rep["rules"].endswith("default.jsonc")
PY

# --- the page's status line comes from the rules; bands stay in range ------
"$C" report --db "$T/m.db" --model m --format html --no-review -o "$T/m.html"
python3 - "$T/m.html" <<'PY' || fail "HTML status line or bands"
import re, sys
page = open(sys.argv[1]).read()
status = page[page.index('<section id="status"'):]
status = status[:status.index("</section>")]
assert "Alerts raised after the last day:" in status and "default rules" in status, status
assert "member-departs" in status, status     # raised on the broken days, a transition
for lo, hi in re.findall(r"band (-?[0-9.]+) to (-?[0-9.]+)</figcaption>", page):
    assert float(lo) <= float(hi), (lo, hi)
psi = re.search(r"\(PSI\)</b> &middot; baseline [0-9.]+, band (-?[0-9.]+) to", page)
assert psi and float(psi.group(1)) >= 0, psi and psi.group(0)   # PSI >= 0
PY
cp "$T/m.db" "$T/short.db"
"$C" baseline --db "$T/short.db" --model m --from 2026-05-01 --to 2026-05-02 > /dev/null
"$C" report --db "$T/short.db" --model m --format html --no-review -o "$T/short.html"
grep -q 'The baseline has 2 day(s) with events; a band needs at least 3, so there is no band' "$T/short.html" ||
  fail "a two-day baseline: the page must say there is no band"

# --- the best member beats the average on every baseline day ----------------
python3 "$SRC/gen_members.py" "$T/w.jsonl" --start 2026-05-01 --pattern weak,weak,weak,weak,weak,weak,weak,weak
"$C" ingest --db "$T/w.db" --model w "$T/w.jsonl" 2> /dev/null
"$C" baseline --db "$T/w.db" --model w --from 2026-05-01 --to 2026-05-06 > /dev/null
"$C" report --db "$T/w.db" --model w --format json > "$T/w.json"
python3 - "$T/w.json" <<'PY' || fail "finding about the gain"
import json, sys
b = json.load(open(sys.argv[1]))["baseline"]
assert len(b["findings"]) == 1 and "does not beat its best member" in b["findings"][0], b["findings"]
assert b["daily"]["accuracy.ensemble_gain"]["mean"] < 0
PY
[ "$("$C" report --db "$T/w.db" --model w | grep -c '^finding: .*does not beat its best member')" = 1 ] ||
  fail "text report: the gain finding once"
echo '{"rules": [{"name": "old-gain", "metric": "accuracy.ensemble_gain", "below": 0.01, "days": 2}]}' > "$T/old.jsonc"
run "$C" rules validate "$T/old.jsonc" --db "$T/w.db"
[ $RC -eq 10 ] && grep -q 'warning: old-gain breaches on 6 of 6 baseline day(s) and would be raised' "$T/out" ||
  fail "validate did not flag the fixed gain bound: exit $RC: $(cat "$T/out")"
run "$C" rules validate --db "$T/w.db"
[ $RC -eq 0 ] || fail "default rules on the weak model's baseline: exit $RC: $(cat "$T/out")"
run "$C" check --db "$T/w.db" --rules "$T/default.jsonc" --from 2026-05-07 --to 2026-05-08 --dry-run
[ $RC -eq 0 ] || fail "default rules after the weak baseline: exit $RC: $(cat "$T/out")"

[ $fails -eq 0 ] || { echo "member_class: $fails failure(s)" >&2; exit 1; }
echo "member_class: ok"
