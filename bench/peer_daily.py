#!/usr/bin/python3
"""peer_daily.py — the daily job written the way a practitioner would without
concord, in numpy and scipy (Debian's python3-numpy, python3-scipy), as the
peer bench/run compares concord with. Not a test and not a reference for
concord's numbers: it computes the same kinds of daily figures from the same
JSON Lines file, so that its time and memory are a fair yardstick.

The job: read every event (id, ts, probs, optional integer label), drop
repeated ids (first one kept), take days 1-7 (UTC, from the first event's day)
as the baseline, and for every day write
  events, labelled; ensemble (mean of members) accuracy and each member's;
  mean entropy of the averaged output, mean member entropy, mutual information
  (nats); mean share of member pairs whose argmax differs;
  predicted-class mix, its PSI against the baseline's (epsilon 1e-4, then
  renormalised) and a chi-square test of the day's against the baseline's
  counts (scipy.stats.chi2_contingency, empty classes dropped);
  two-sample KS tests (scipy.stats.ks_2samp: statistic and p) of the
  ensemble's max probability and of mutual information against the baseline
  events;
  BBSE label-shift estimate (Lipton et al. 2018) from the baseline's labelled
  confusion, by numpy.linalg.lstsq, clipped at 0 and renormalised.
Output: one JSON document (days in order) to the file given, or stdout.

Usage: peer_daily.py EVENTS.jsonl [OUT.json]
"""
import json
import sys

import numpy as np
from scipy import stats

EPS = 1e-4


def load(path):
    seen, ids_ts, probs, labels = set(), [], [], []
    with open(path, encoding="utf-8") as f:
        for line in f:
            e = json.loads(line)
            if e["id"] in seen:
                continue
            seen.add(e["id"])
            ids_ts.append(e["ts"])
            probs.append(e["probs"])
            lab = e.get("label")
            labels.append(lab if isinstance(lab, int) else -1)
    # UTC timestamps ending in Z (as concord-gen writes them): the date is the
    # first ten characters; numpy parses them all at once
    day = np.array([t[:10] for t in ids_ts], dtype="datetime64[D]").astype(np.int64)
    return day, np.asarray(probs, dtype=np.float64), np.asarray(labels)


def entropy(p):
    with np.errstate(divide="ignore", invalid="ignore"):
        return -np.sum(np.where(p > 0, p * np.log(p), 0.0), axis=-1)


def psi(base, cur):
    b = base / base.sum() + EPS
    c = cur / cur.sum() + EPS
    b, c = b / b.sum(), c / c.sum()
    return float(np.sum((c - b) * np.log(c / b)))


def main():
    day, probs, labels = load(sys.argv[1])
    n, m, k = probs.shape
    avg = probs.mean(axis=1)
    pred = avg.argmax(axis=1)
    member_pred = probs.argmax(axis=2)
    tu = entropy(avg)
    au = entropy(probs).mean(axis=1)
    mi = tu - au
    iu, ju = np.triu_indices(m, 1)
    dis = (member_pred[:, iu] != member_pred[:, ju]).mean(axis=1) if m > 1 else np.zeros(n)
    maxp = avg.max(axis=1)

    first = day.min()
    base = (day >= first) & (day <= first + 6)
    base_mix = np.bincount(pred[base], minlength=k).astype(float)
    bl = base & (labels >= 0)
    conf = np.zeros((k, k))
    np.add.at(conf, (pred[bl], labels[bl]), 1.0)
    conf /= max(conf.sum(), 1.0)
    p_src = conf.sum(axis=0)

    out = []
    for d in np.unique(day):
        s = day == d
        lab = s & (labels >= 0)
        mix = np.bincount(pred[s], minlength=k).astype(float)
        row = {"day": str(np.datetime64(int(d), "D")), "events": int(s.sum()),
               "labelled": int(lab.sum()),
               "entropy": float(tu[s].mean()), "expected_entropy": float(au[s].mean()),
               "mutual_information": float(mi[s].mean()), "disagreement": float(dis[s].mean()),
               "class_counts": mix.astype(int).tolist(), "class_mix": (mix / mix.sum()).tolist(),
               "class_mix_psi": psi(base_mix, mix)}
        if lab.any():
            row["ensemble_accuracy"] = float((pred[lab] == labels[lab]).mean())
            row["member_accuracy"] = (member_pred[lab] == labels[lab, None]).mean(axis=0).tolist()
        table = np.vstack([base_mix, mix])
        table = table[:, table.sum(axis=0) > 0]
        if table.shape[1] > 1:
            chi2, p, dof, _ = stats.chi2_contingency(table, correction=False)
            row["class_mix_chi2"] = {"statistic": float(chi2), "p": float(p), "df": int(dof)}
        ks = stats.ks_2samp(maxp[base], maxp[s])
        row["ks_max_prob"] = {"statistic": float(ks.statistic), "p": float(ks.pvalue)}
        ks = stats.ks_2samp(mi[base], mi[s])
        row["ks_mutual_information"] = {"statistic": float(ks.statistic), "p": float(ks.pvalue)}
        if conf.sum() > 0:
            cols = p_src > 0
            w = np.linalg.lstsq(conf[:, cols], mix / mix.sum(), rcond=1e-6)[0]
            q = np.zeros(k)
            q[cols] = np.clip(w * p_src[cols], 0.0, None)
            if q.sum() > 0:
                row["bbse"] = (q / q.sum()).tolist()
        out.append(row)
    text = json.dumps({"events": int(n), "members": m, "classes": k, "days": out})
    if len(sys.argv) > 2:
        with open(sys.argv[2], "w", encoding="utf-8") as f:
            f.write(text + "\n")
    else:
        print(text)


if __name__ == "__main__":
    main()
