#!/usr/bin/env bash
# demo_incidents.sh — `concord demo` writes its files and its report shows the
# injected incidents on their days and nowhere else: the fogged camera
# (days 9-11), member 'size' running an old model alone (days 14-15), the
# late-season grade mix (from day 16), the retrain into near copies (from
# day 23), and one packing line's fogged camera (line-2, days 19-20), which
# shows on that line and barely in the whole house. The bounds are the generator's (examples/packhouse.c) effects with
# wide margins: common practice, not a published reference.
# Usage: demo_incidents.sh CONCORD
set -euo pipefail
CONCORD=$1
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
"$CONCORD" demo --dir "$T" > "$T/out.txt"
grep -q 'INVENTED' "$T/out.txt"
grep -q 'fogged camera' "$T/out.txt"
grep -q "old model file   2026-10-18..2026-10-19  member 'size' alone" "$T/out.txt"
[ -s "$T/report.json" ] && [ -s "$T/report.txt" ]
python3 - "$T/report.json" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
w = r["windows"]
assert len(w) == 28, len(w)
assert r["baseline"]["from"] == w[0]["from"] and r["baseline"]["to"] == w[6]["to"], r["baseline"]
base = w[:7]
def mean(xs): return sum(xs) / len(xs)
# the generator's grade mixes (examples/packhouse.c)
BASE = [0.10, 0.25, 0.30, 0.20, 0.10, 0.05]
LATE = [0.03, 0.10, 0.20, 0.30, 0.22, 0.15]
mi0 = mean([x["uncertainty"]["mutual_information"] for x in base])
dis0 = mean([x["diversity"]["disagreement"]["mean"] for x in base])
def low_share(x):  # share of the three lowest grades among predictions
    c = x["class_counts"]; return sum(c[3:]) / sum(c)
low0 = mean([low_share(x) for x in base])
SIZE = r["members"].index("size")
def member_dis(x, m):  # a member's mean disagreement with each of the others
    p = x["diversity"]["disagreement"]["pairs"]; return mean([p[m][j] for j in range(len(p)) if j != m])
acc_size0 = mean([x["accuracy"]["members"][SIZE] for x in base])
dis_size0 = mean([member_dis(x, SIZE) for x in base])
acc0 = mean([x["accuracy"]["ensemble"] for x in base])
bad = []
for day, x in enumerate(w, 1):
    mi = x["uncertainty"]["mutual_information"]; dis = x["diversity"]["disagreement"]["mean"]
    fog, late, copies, broken = 9 <= day <= 11, day >= 16, day >= 23, 14 <= day <= 15
    line_fog = 19 <= day <= 20
    # the old model file: 'size' alone loses accuracy (about 0.83 -> 0.67) and disagrees
    # with the others more (about 0.26 -> 0.37); fog and retrain move every member
    if not (fog or copies):
        a = x["accuracy"]["members"][SIZE]; md = member_dis(x, SIZE)
        if broken != (a < acc_size0 - 0.08): bad.append(f"day {day}: size's accuracy {a:.3f} vs baseline {acc_size0:.3f}")
        if broken != (md > dis_size0 + 0.04): bad.append(f"day {day}: size's disagreement {md:.3f} vs baseline {dis_size0:.3f}")
        others = [m for m in range(len(r["members"])) if m != SIZE]
        if broken and max(x["accuracy"]["members"][m] for m in others) < a + 0.08:
            bad.append(f"day {day}: size is not the member that broke")
    if broken:
        # the ensemble moves little: its accuracy within 0.05 of the baseline's, mutual
        # information below 1.2 times the baseline's, its class mix unmoved (PSI < 0.05)
        if x["accuracy"]["ensemble"] < acc0 - 0.05: bad.append(f"day {day}: ensemble accuracy {x['accuracy']['ensemble']:.3f} vs {acc0:.3f}")
        if mi > 1.2 * mi0: bad.append(f"day {day}: mutual information {mi:.3f} vs baseline {mi0:.3f}")
        if x["drift"]["class_mix"]["psi"] > 0.05: bad.append(f"day {day}: class-mix PSI {x['drift']['class_mix']['psi']:.3f}")
        # the old model's mistakes go to either neighbouring grade, so its own class
        # mix hardly moves (PSI < 0.02): only its disagreement with the others shows it
        if x["drift"]["members_psi"][SIZE] > 0.02: bad.append(f"day {day}: size's PSI {x['drift']['members_psi'][SIZE]:.3f}")
    if fog != (mi > 2 * mi0): bad.append(f"day {day}: mutual information {mi:.3f} vs baseline {mi0:.3f}")
    if copies != (dis < 0.3 * dis0): bad.append(f"day {day}: disagreement {dis:.3f} vs baseline {dis0:.3f}")
    if late != (low_share(x) > low0 + 0.15): bad.append(f"day {day}: low-grade share {low_share(x):.3f} vs {low0:.3f}")
    assert x["labeled"] > 0 and x["accuracy"] is not None
    # after the retrain the ensemble no longer beats its best member
    acc = x["accuracy"]; gain = acc["ensemble"] - acc["members"][acc["best_member"]]
    if copies == (gain > 0.03): bad.append(f"day {day}: ensemble gain over best member {gain:.3f}")
    # class-mix drift (chi-square homogeneity against the baseline) on exactly the mix days
    p = x["drift"]["class_mix"]["p_value"]
    if late != (p < 0.001): bad.append(f"day {day}: class-mix chi-square p {p:.3g}")
    psi = x["drift"]["class_mix"]["psi"]  # 0.25: the "major shift" band of common practice
    if late != (psi > 0.25): bad.append(f"day {day}: class-mix PSI {psi:.3f}")
    # label-shift estimates track the true grade mix of the generator (per day: sampling
    # noise of 1,500 events plus estimation error; bound 0.15, the whole period below 0.1)
    truth = LATE if late else BASE
    for est in ("bbse", "em"):
        v = x["label_shift"][est]
        l1 = sum(abs(a - b) for a, b in zip(v, truth))
        if l1 > 0.15: bad.append(f"day {day}: {est} L1 {l1:.3f} from the true mix")
    # a change of the members' spread is also a score drift: KS on MI flags the fog,
    # the broken member and the retrain days (1,500 events make small moves significant)
    # (line-2's fog may or may not reach p < 0.001 in the whole house: not checked)
    ks_p = x["drift"]["mutual_information"]["p_value"]
    if not line_fog and (fog or copies or broken) != (ks_p < 0.001):
        bad.append(f"day {day}: KS on mutual information p {ks_p:.3g}")
    if line_fog:
        # the whole house barely moves: mutual information below 1.2 times the baseline's
        # (the default rule's bound is 1.25 times), ensemble accuracy within 0.03
        if mi > 1.2 * mi0: bad.append(f"day {day}: whole-house MI {mi:.3f} vs baseline {mi0:.3f}")
        if x["accuracy"]["ensemble"] < acc0 - 0.03: bad.append(f"day {day}: ensemble accuracy {x['accuracy']['ensemble']:.3f}")
for b in bad: print("FAIL:", b)
assert not bad
print(f"demo_incidents: per-day checks ok (baseline MI {mi0:.3f}, disagreement {dis0:.3f}; "
      f"size's accuracy {acc_size0:.3f}, its disagreement {dis_size0:.3f})")
PY
# line-2's fog, per line from the events file (stdlib only): mutual information of
# the members' probabilities (entropy of their mean minus their mean entropy, nats)
# rises on line-2 on days 19-20 above 1.3 times that line's baseline mean, and stays
# within 1.1 times on the other lines and on line-2's other days after the baseline
python3 - "$T/events.jsonl" <<'PY'
import json, math, sys
from collections import defaultdict
H = lambda q: -sum(x * math.log(x) for x in q if x > 0)
tot = defaultdict(float); cnt = defaultdict(int)
for line in open(sys.argv[1]):
    e = json.loads(line)
    p = e["probs"]; m = len(p); k = len(p[0])
    mean = [sum(r[c] for r in p) / m for c in range(k)]
    key = (e["segment"], int(e["id"][1:3]))
    tot[key] += H(mean) - sum(H(r) for r in p) / m; cnt[key] += 1
mi = {key: tot[key] / cnt[key] for key in tot}
bad = []
for seg in ("line-1", "line-2", "line-3"):
    base = sum(mi[(seg, d)] for d in range(1, 8)) / 7
    for d in range(12, 23):
        if d in (14, 15):   # the old model file moves MI a little on every line
            continue
        fogged = seg == "line-2" and d in (19, 20)
        if fogged != (mi[(seg, d)] > (1.3 if fogged else 1.1) * base):
            bad.append(f"{seg} day {d}: MI {mi[(seg, d)]:.3f}, baseline {base:.3f}")
    if seg == "line-2":
        print(f"demo_incidents: line-2 MI on days 19-20: {mi[(seg, 19)]:.3f}, {mi[(seg, 20)]:.3f} "
              f"(its baseline {base:.3f})")
for b in bad: print("FAIL:", b)
assert not bad
PY

# over the whole late-season period the label-shift estimates recover the generator's mix
"$CONCORD" report --db "$T/demo.db" --model apple-grader --from 2026-10-20 --to 2026-11-01 --by all \
  --format json -o "$T/late.json"
python3 - "$T/late.json" <<'PY'
import json, sys
w = json.load(open(sys.argv[1]))["windows"][0]
LATE = [0.03, 0.10, 0.20, 0.30, 0.22, 0.15]  # examples/packhouse.c
for est in ("bbse", "em"):
    l1 = sum(abs(a - b) for a, b in zip(w["label_shift"][est], LATE))
    assert l1 <= 0.1, f"{est} over the late-season period: L1 {l1:.3f} from the true mix"
    print(f"demo_incidents: {est} recovers the late-season grade mix, L1 {l1:.3f}")
PY

# the commands the demo suggests work exactly as printed (issue: hints that
# said `concord` failed with "command not found" after the quick start)
grep -E '^(try|review the fog days): ' "$T/out.txt" | sed 's/^[^:]*: //' > "$T/hints"
[ "$(wc -l < "$T/hints")" = 2 ] || { echo "FAIL: expected 2 suggested commands, saw: $(cat "$T/hints")" >&2; exit 1; }
while IFS= read -r hint; do
  case $hint in "$CONCORD "*) ;; *) echo "FAIL: hint does not start with the binary as invoked ($CONCORD): $hint" >&2; exit 1 ;; esac
  if ! bash -c "$hint" > "$T/hint.out" 2> "$T/hint.err" || [ ! -s "$T/hint.out" ]; then
    echo "FAIL: the suggested command failed or printed nothing: $hint: $(cat "$T/hint.err")" >&2; exit 1
  fi
done < "$T/hints"
echo "demo_incidents: the 2 suggested commands run as printed"
