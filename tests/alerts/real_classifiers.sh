#!/usr/bin/env bash
# real_classifiers.sh — alert quality on the logs of five really trained,
# differently built classifiers (gen_real_classifiers.py: scikit-learn's
# bundled digits, Debian's python3-sklearn, written against 1.2.1): clean days,
# a covariate shift, a label shift, a diversity collapse and one broken member.
# Ingests the logs, sets days 1-7 as the baseline, runs `concord check --day D`
# for the 30 days in order with the default rules (`concord rules init`), prints
# which rules fire, stay firing and resolve on each day, and compares that with
# real_classifiers_expect.txt (which says whether unmet expectations fail).
# The assertions are about which rules fire, never about the last digits of a
# figure. Exit 77 (skipped) without python3-sklearn.
# Usage: real_classifiers.sh CONCORD TESTDIR
set -euo pipefail
C=$1
HERE=$2
PY=
for p in python3 /usr/bin/python3; do
  if command -v "$p" > /dev/null && "$p" -c 'import sklearn, numpy' 2> /dev/null; then PY=$p; break; fi
done
if [ -z "$PY" ]; then
  echo "real_classifiers: python3-sklearn is not installed; skipped"
  exit 77
fi
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

"$PY" "$HERE/gen_real_classifiers.py" "$T/logs"
"$C" ingest --db "$T/r.db" --model digits --members logreg,forest,knn,bayes,mlp \
  --classes 0,1,2,3,4,5,6,7,8,9 "$T/logs/events.jsonl" > /dev/null
"$C" label --db "$T/r.db" --model digits "$T/logs/labels.jsonl" > /dev/null
"$C" baseline --db "$T/r.db" --model digits --from 2026-03-02 --to 2026-03-08 > /dev/null
"$C" rules init -o "$T/rules.jsonc"
for d in $(seq 1 30); do
  day=$(date -u -d "2026-03-02 + $((d - 1)) days" +%F)
  set +e
  "$C" check --db "$T/r.db" --rules "$T/rules.jsonc" --model digits --day "$day" --format json \
    > "$T/day$d.json" 2> "$T/err$d"
  rc=$?
  set -e
  case $rc in
    0|10|11) ;;
    *) echo "FAIL: check --day $day: exit $rc: $(cat "$T/err$d")" >&2; exit 1 ;;
  esac
done
"$C" report --db "$T/r.db" --model digits --format json -o "$T/report.json"

python3 - "$T" "$HERE/real_classifiers_expect.txt" <<'PY'
import json, os, re, sys
T, expect_path = sys.argv[1], sys.argv[2]
plan = json.load(open(os.path.join(T, "logs", "plan.json")))
print(f"real_classifiers: {plan['dataset']}; scikit-learn {plan['sklearn']}, numpy {plan['numpy']}")
report = {i + 1: w for i, w in enumerate(json.load(open(os.path.join(T, "report.json")))["windows"])}

def line_of(r):
    s = f"rule={r.get('rule')} metric={r.get('metric')}"
    for k in ("subject", "scope"):
        if r.get(k) is not None: s += f" {k}={r[k]}"
    return s

days = {}
for d in range(1, 31):
    o = json.load(open(os.path.join(T, f"day{d}.json")))
    res = o.get("results", [])
    days[d] = {"fired": [r for r in res if r.get("outcome") in ("raised", "reminder")],
               "firing": [r for r in res if r.get("state") == "raised" and r.get("outcome") not in ("raised", "reminder")],
               "resolved": [r for r in res if r.get("outcome") == "cleared"]}

names = plan["members"]
print("day date       phase               gain    MI     dis   worst member  raised (value vs bound) | still raised | cleared")
for d in range(1, 31):
    w = report.get(d, {})
    acc = w.get("accuracy") or {}
    gain = acc.get("ensemble_gain")
    mi = (w.get("uncertainty") or {}).get("mutual_information")
    dis = ((w.get("diversity") or {}).get("disagreement") or {}).get("mean")
    fmt = lambda v, n=3: "  -  " if v is None else f"{v:+.{n}f}" if n == 4 else f"{v:.{n}f}"
    fired = ", ".join(f"{r['rule']} ({r.get('value'):.4g} vs {r.get('bound'):.4g})"
                      if isinstance(r.get("value"), (int, float)) and isinstance(r.get("bound"), (int, float))
                      else r["rule"] for r in days[d]["fired"]) or "-"
    accs = acc.get("members") or []
    worst = min(range(len(accs)), key=lambda m: accs[m]) if accs else None
    worst = f"{names[worst]:6} {accs[worst]:.3f}" if worst is not None else "  -  "
    firing = ", ".join(r["rule"] for r in days[d]["firing"]) or "-"
    resolved = ", ".join(r["rule"] for r in days[d]["resolved"]) or "-"
    print(f"{d:<3} {w.get('from', '?'):10} {plan['days'][str(d)]['phase']:18} {fmt(gain, 4)} {fmt(mi)} {fmt(dis)}  "
          f"{worst:12}  {fired} | {firing} | {resolved}")

strict, unmet, met = False, [], []
for raw in open(expect_path):
    raw = raw.strip()
    if not raw or raw.startswith("#"): continue
    if raw.startswith("strict:"):
        strict = raw.split(":", 1)[1].strip() == "yes"; continue
    head, pattern = raw.split(" : ", 1)
    phase, spans = head.split()
    ds = []
    for span in spans.split(","):
        a, _, b = span.partition("-"); ds += range(int(a), int(b or a) + 1)
    if pattern.strip() == "silent":
        noisy = [f"day {d}: {line_of(r)} {r['outcome']}" for d in ds for r in days[d]["fired"]]
        (unmet if noisy else met).append(f"{phase} (days {spans}) silent" + (": " + "; ".join(noisy) if noisy else ""))
    else:
        first = sorted(ds)[:2]
        hits = [f"day {d}: {line_of(r)}" for d in first for r in days[d]["fired"]
                if r["outcome"] == "raised" and re.search(pattern.strip(), line_of(r))]
        (met if hits else unmet).append(f"{phase} (days {spans}) raises /{pattern.strip()}/ within two days"
                                        + (": " + hits[0] if hits else ""))
for m in met: print("MET:", m)
for u in unmet: print("UNMET:" if strict else "UNMET (not strict yet):", u)
print(f"real_classifiers: {len(met)} of {len(met) + len(unmet)} expectations met"
      + ("" if strict or not unmet else "; the expectation file is not strict yet, so the test passes"))
sys.exit(1 if strict and unmet else 0)
PY
