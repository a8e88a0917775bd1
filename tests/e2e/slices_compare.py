#!/usr/bin/env python3
"""Compares concord's slice reports with tests/reference/slices_expected.json
(synthetic data; values from numpy, scipy, scikit-learn and statsmodels, see
tests/reference/gen_slices_reference.py). Python standard library only; the
comparison itself (tolerances, null handling) is e2e_compare.Walk's.

  slices_compare.py by-day EXPECTED.json SEGMENT ACTUAL.json
      `concord report --segment SEGMENT --format json` (no baseline) against
      by_day[SEGMENT].
  slices_compare.py by-segment EXPECTED.json ACTUAL.json
      `concord report --by-segment --by all --format json` (baseline set):
      each entry of windows[0].segments against by_segment[its segment],
      its drift.class_mix against class_mix_drift and its
      against_model.class_mix against class_mix_against_model.
"""
import json
import os
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from e2e_compare import Walk, tolerance  # noqa: E402


def report(w, name):
    for path in w.unchecked:
        pass  # the report has more figures than the reference; not checked here
    for m in w.mismatches:
        print("MISMATCH %s" % m)
    if w.mismatches:
        print("FAIL %s: %d of %d figures differ from the reference" % (
            name, len(w.mismatches), w.checked))
        return 1
    worst = ", ".join("%.3g (tolerance %g)" % (d, t) for t, d in sorted(w.worst.items()))
    print("ok %s: %d figures match the reference; largest differences %s" % (
        name, w.checked, worst or "none"))
    return 0


def class_mix(drift):
    """The class-mix part of a drift object, in the reference's shape."""
    if drift is None:
        return None
    out = {"too_few_events": drift["too_few_events"]}
    out.update({k: drift["class_mix"][k] for k in ("chi2", "dof", "p_value", "psi")})
    return out


def main(argv):
    if len(argv) == 5 and argv[1] == "by-day":
        exp = json.load(open(argv[2]))["by_day"][argv[3]]
        act = json.load(open(argv[4]))
        w = Walk(tolerance)
        w.run(exp, act, "by_day[%s]" % argv[3])
        return report(w, "--segment %s by day" % argv[3])
    if len(argv) == 4 and argv[1] == "by-segment":
        exp = json.load(open(argv[2]))["by_segment"]
        act = json.load(open(argv[3]))
        segs = act["windows"][0]["segments"]
        names = sorted(s["segment"] for s in segs)
        if names != sorted(exp):
            print("FAIL segments %s, expected %s" % (names, sorted(exp)))
            return 1
        w = Walk(tolerance)
        for s in segs:
            s = dict(s)
            s["class_mix_drift"] = class_mix(s.get("drift"))
            s["class_mix_against_model"] = class_mix(s.get("against_model"))
            w.run(exp[s["segment"]], s, "by_segment[%s]" % s["segment"])
        return report(w, "--by-segment")
    print(__doc__, file=sys.stderr)
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv))
