#!/usr/bin/python3
"""Expected per-slice figures for concord's slice test (tests/e2e/e2e_slices.sh).

The input is the synthetic end-to-end fixture (e2e_events.jsonl and
e2e_labels.jsonl, made by e2e_gen.py: invented data, no real system behind
it), where about 30 % of the events carry a segment site-a, site-b or site-c
and the others none. This script splits the events by segment (the slice
"(none)" holding those without one) and computes, on each subset alone, with
e2e_gen's functions (numpy, scipy, scikit-learn, statsmodels):

  by_day      per slice, `concord report --segment S --format json` by day
              (no baseline): every figure e2e_gen.window gives
  by_segment  `concord report --by-segment --by all --format json` with the
              baseline 2026-03-09..2026-03-10: for each slice its window
              figures, its class-mix drift against its own baseline days
              (class_mix_drift) and against the whole model's window
              (class_mix_against_model)

    /usr/bin/python3 tests/reference/gen_slices_reference.py [--out FILE]

writes FILE (default: slices_expected.json beside this file). Run with
Debian's python (python3-numpy, -scipy, -sklearn, -statsmodels).
"""
import argparse
import datetime as dt
import json
import os
import sys
import warnings

import numpy as np
import scipy.stats

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
import e2e_gen  # noqa: E402  (the fixture's reader and window figures)

BASELINE = ("2026-03-09", "2026-03-10")
PSI_EPSILON = 1e-4          # metrics/drift.h CC_PSI_EPSILON
MIN_EVENTS = 30             # metrics/drift.h CC_DRIFT_MIN_EVENTS
NONE = "(none)"

SOURCES = {
    "window figures": "e2e_gen.window on the slice's events alone (see e2e_expected.json's "
                      "sources)",
    "class_mix chi2, dof, p_value":
        "scipy.stats.chi2_contingency(correction=False) on the 2 x K table of ensemble "
        "class counts, all-zero columns removed",
    "class_mix psi": "numpy: sum (c - r) ln(c / r), fractions smoothed as (f + eps) / (1 + K eps), "
                     "eps = 1e-4",
    "too_few_events": "either side under 30 events: no test (metrics/drift.h, common practice)",
}


def class_counts(evs):
    """Ensemble class counts (argmax of the member mean, ties to the lowest class)."""
    return np.bincount(np.array([e["ens"] for e in evs], dtype=int), minlength=e2e_gen.K)


def chi2_homogeneity(a, b):
    """Chi-square test of the two class mixes; None where undefined."""
    keep = (a + b) > 0
    if a.sum() == 0 or b.sum() == 0 or keep.sum() < 2:
        return {"chi2": None, "dof": None, "p_value": None}
    x2, p, dof, _ = scipy.stats.chi2_contingency(np.vstack([a[keep], b[keep]]),
                                                  correction=False)
    return {"chi2": float(x2), "dof": int(dof), "p_value": float(p)}


def psi_smoothed(a, b, eps=PSI_EPSILON):
    """Population stability index of two class mixes, smoothed fractions."""
    k = len(a)
    r = (a / a.sum() + eps) / (1 + k * eps)
    c = (b / b.sum() + eps) / (1 + k * eps)
    with np.errstate(divide="ignore", invalid="ignore"):
        return float(np.sum(np.where(r == c, 0.0, (c - r) * np.log(c / r))))


def class_mix_drift(window_evs, reference_evs):
    """The class_mix object of a window against reference events."""
    a, b = class_counts(window_evs), class_counts(reference_evs)
    enough = len(window_evs) >= MIN_EVENTS and len(reference_evs) >= MIN_EVENTS
    out = {"too_few_events": not enough}
    if enough:
        out.update(chi2_homogeneity(a, b))
        out["psi"] = psi_smoothed(b, a)
    return out


def slice_of(segments, ev_id):
    return segments.get(ev_id) or NONE


def expected():
    paths = {name: os.path.join(HERE, "e2e_%s" % name) for name in ("events.jsonl",
                                                                    "labels.jsonl")}
    rows, _ = e2e_gen.read_back(paths)
    segments = {}
    with open(paths["events.jsonl"]) as f:
        for line in f:
            rec = json.loads(line)
            segments[rec["id"]] = rec.get("segment")
    evs = []
    for r in rows:
        e = e2e_gen.per_event(r)
        e["slice"] = slice_of(segments, r["id"])
        evs.append(e)
    as_date = lambda n: dt.date(1970, 1, 1) + dt.timedelta(days=n)
    days = sorted(set(e["day"] for e in evs))
    names = sorted(set(e["slice"] for e in evs))
    head = {"model": e2e_gen.MODEL, "members": e2e_gen.MEMBERS, "classes": e2e_gen.CLASSES,
            "baseline": None}
    base_days = [n for n in days if BASELINE[0] <= str(as_date(n)) <= BASELINE[1]]

    by_day, by_segment = {}, {}
    for name in names:
        mine = [e for e in evs if e["slice"] == name]
        by_day[name] = dict(head, segment=name,
                            windows=[e2e_gen.window([e for e in mine if e["day"] == n],
                                                    as_date(n), as_date(n))
                                     for n in days if any(e["day"] == n for e in mine)])
        w = e2e_gen.window(mine, as_date(days[0]), as_date(days[-1]))
        w["segment"] = name
        w["class_mix_drift"] = class_mix_drift(mine, [e for e in mine if e["day"] in base_days])
        w["class_mix_against_model"] = class_mix_drift(mine, evs)
        by_segment[name] = w
    assert len(names) == 4 and all(len(by_day[n]["windows"]) == 3 for n in names)
    assert all(not by_segment[n]["class_mix_drift"]["too_few_events"] for n in names)
    return {
        "note": "synthetic test data, see tests/reference/e2e_gen.py and this script",
        "baseline": {"from": BASELINE[0], "to": BASELINE[1]},
        "by_day": by_day,
        "by_segment": by_segment,
        "sources": SOURCES,
    }


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--out", default=os.path.join(HERE, "slices_expected.json"))
    args = ap.parse_args()
    warnings.simplefilter("ignore", RuntimeWarning)   # undefined values become null
    exp = expected()
    with open(args.out, "w") as f:
        json.dump(exp, f, indent=1, allow_nan=False)
        f.write("\n")
    print("wrote %s (%s)" % (args.out, ", ".join(
        "%s %d events" % (n, w["events"]) for n, w in exp["by_segment"].items())),
        file=sys.stderr)


if __name__ == "__main__":
    main()
