#!/usr/bin/python3
"""peer_compare.py — checks that bench/peer_daily.py computes the same daily
figures as concord, so that timing one against the other is fair. Reads
concord's by-day JSON report and the peer's JSON of the same events file and,
for every day both have, compares the figures below; prints one line per
figure (the largest difference over the days, the tolerance and why) and
exits 1 when a figure is outside its tolerance.

Why the tolerances are not zero:
- concord computes every per-event figure from the float32 value it stores
  and keeps sums as fixed-point integers (DEVELOPERS.md, "Changing the
  summary"); the peer uses float64 of the file's five decimals. Means of
  entropies and mutual information agree to about 1e-7; 1e-6 is allowed.
- argmax on float32 against float64 can split a near tie differently, so a
  day's predicted-class counts may differ by an event or two (checked on
  2026-11-08 of the 200,000-event file: numpy's argmax of the float32 values
  gives concord's counts exactly, of the float64 values one event moves);
  disagreement, accuracies, PSI and the chi-square statistic follow from those
  counts. Allowed: 0.1 % of the day's events for shares, 1e-4 for PSI (its
  values here are about 1e-3), 0.2 for the chi-square statistic (one event
  moved between classes of the 50,000-event baseline changes it by a few
  hundredths; values here 3-15). Meant for 200,000 events of 5 x 10.
- KS: concord takes D from 2048-bin score histograms (README, "Two-sample
  Kolmogorov-Smirnov on score histograms": within 0.01 of the exact D), the
  peer the exact D of the raw samples; allowed 0.01 plus one event's share
  of the day (1/n: a histogram bin can put one of the day's events on the
  other side of a baseline value; 0.00014 at 200,000 events). Their p-values use
  different formulas (concord: Kolmogorov's limit of sqrt(nm/(n+m)) D; scipy
  ks_2samp: kstwo at round(nm/(n+m))) and a small change of D moves p a lot,
  so p-values are printed for the record and not judged.
- BBSE: the same estimator from the same counts; 1e-3 in each prior.

Usage: peer_compare.py CONCORD_REPORT.json PEER.json
"""
import json
import sys


def main():
    with open(sys.argv[1], encoding="utf-8") as f:
        rep = json.load(f)
    with open(sys.argv[2], encoding="utf-8") as f:
        peer = json.load(f)
    days = {d["day"]: d for d in peer["days"]}
    # name -> [max abs difference, tolerance as printed, judged, all within]
    figs = {}

    def cmp(name, a, b, tol, judged=True, shown=None):
        if a is None or b is None:
            return
        e = figs.setdefault(name, [0.0, shown if shown else f"{tol:.3g}", judged, True])
        diff = abs(float(a) - float(b))
        e[0] = max(e[0], diff)
        e[3] = e[3] and diff <= tol

    matched = 0
    for w in rep["windows"]:
        if w["from"] != w["to"] or w["from"] not in days:
            continue
        p = days[w["from"]]
        matched += 1
        n = max(w["events"], 1)
        share = 1e-3
        cmp("events", w["events"], p["events"], 0)
        cmp("labelled", w["labeled"], p["labelled"], 0)
        u = w["uncertainty"]
        cmp("entropy of the averaged output", u["entropy"], p["entropy"], 1e-6)
        cmp("expected (member) entropy", u["expected_entropy"], p["expected_entropy"], 1e-6)
        cmp("mutual information", u["mutual_information"], p["mutual_information"], 1e-6)
        cmp("disagreement (mean over pairs)", w["diversity"]["disagreement"]["mean"],
            p["disagreement"], share)
        diff = sum(abs(a - b) for a, b in zip(w["class_counts"], p["class_counts"]))
        cmp("predicted-class counts, L1 / events", diff / n, 0.0, share)
        acc = w.get("accuracy") or {}
        if "ensemble_accuracy" in p:
            cmp("ensemble accuracy", acc.get("ensemble"), p["ensemble_accuracy"], share)
            for a, b in zip(acc.get("members") or [], p["member_accuracy"]):
                cmp("member accuracy", a, b, share)
        d = w.get("drift") or {}
        cm = d.get("class_mix") or {}
        cmp("class-mix PSI", cm.get("psi"), p["class_mix_psi"], 1e-4)
        if "class_mix_chi2" in p and cm.get("chi2") is not None:
            c = p["class_mix_chi2"]
            cmp("class-mix chi-square statistic", cm["chi2"], c["statistic"], 0.2)
            cmp("class-mix chi-square degrees of freedom", cm.get("dof"), c["df"], 0)
            cmp("class-mix chi-square p", cm.get("p_value"), c["p"], 0.0, judged=False)
        for key, peer_key in (("max_prob", "ks_max_prob"),
                              ("mutual_information", "ks_mutual_information")):
            k = d.get(key) or {}
            cmp("KS D, " + key, k.get("ks"), p[peer_key]["statistic"], 0.01 + 1.0 / n,
                shown="0.01+1/n")
            cmp("KS p, " + key, k.get("p_value"), p[peer_key]["p"], 0.0, judged=False)
        ls = w.get("label_shift") or {}
        if ls.get("bbse") and p.get("bbse"):
            for a, b in zip(ls["bbse"], p["bbse"]):
                cmp("BBSE prior (each class)", a, b, 1e-3)

    bad = 0
    print(f"peer check: {matched} days compared (concord report vs peer_daily.py)")
    print(f"  {'figure':44} {'max |diff|':>11} {'tolerance':>10}  verdict")
    for name, (worst, tol, judged, ok) in figs.items():
        if judged:
            bad += not ok
            verdict = "same" if ok else "DIFFERENT"
            print(f"  {name:44} {worst:11.3g} {tol:>10}  {verdict}")
        else:
            print(f"  {name:44} {worst:11.3g} {'-':>10}  not judged (formulas differ)")
    if matched == 0:
        print("  no day in common")
        return 1
    print("peer check: " + ("the peer computes the same figures" if not bad
                            else f"{bad} figure(s) outside tolerance"))
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
