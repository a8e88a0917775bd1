#!/usr/bin/env python3
"""Helpers of concord's end-to-end test; Python standard library only, so any
python3 runs it. The fixtures it reads are synthetic (tests/reference/e2e_gen.py).

  e2e_compare.py report EXPECTED.json KEY ACTUAL.json
      Compares every figure of a `concord report --format json` output with
      EXPECTED[KEY] (KEY = report_by_day or report_all). Counts must match
      exactly; other numbers within ABS_TOL, uncertainty means (fixed-point
      sums of 1e-9 nats per event) within ENTROPY_TOL; null must stay null.
      Prints each mismatch with its path; exit 1 if there is any.
  e2e_compare.py hour-sums HOURS.json DAYS.json
      `report --by hour` against `report --by day` of the same days: per UTC
      day, the hour windows' counters summed must equal the day window's
      exactly (events, labelled, class counts, confusion matrix, label mix
      counts, vote ties, contested pair counts, calibration bin counts,
      delayed labels), and the per-event means (entropy, expected entropy,
      mutual information, disagreement per member) weighted by events must
      give the day's mean within ENTROPY_TOL / ABS_TOL. The day is the sum of
      its events (summaries are sums of integer contributions), so this holds
      exactly, whatever the events.
  e2e_compare.py classes EXPECTED.json
      Prints the class names joined by commas (for --classes).
  e2e_compare.py tally EXPECTED.json events|labels STDERR_FILE
      Checks the counts of concord's closing tally line against the fixture.
  e2e_compare.py final-labels EVENTS.jsonl LABELS.jsonl OUT.jsonl
      Writes the events with each delayed label (the last one per id) put
      inline in place of the original label.
  e2e_compare.py expected A.json B.json
      Numerical comparison of two generated expected files (relative 1e-12).
  e2e_compare.py jsonl COMMITTED.jsonl REGENERATED.jsonl
      Line-by-line comparison of two generated JSON Lines fixtures: the same
      lines in the same order, integers and strings exact, other numbers
      within 1e-12 relative to max(1, |value|) (float64 results of numpy differ in their last
      bits between CPUs and library builds, so never byte for byte).
"""
import json
import math
import re
import sys

ABS_TOL = 1e-6
ENTROPY_TOL = 1e-8


def tolerance(path):
    return ENTROPY_TOL if ".uncertainty." in path else ABS_TOL


class Walk:
    def __init__(self, tol, rel=False):
        self.tol = tol            # path -> tolerance
        self.rel = rel
        self.mismatches = []
        self.unchecked = []
        self.checked = 0
        self.worst = {}           # tolerance class -> largest difference seen

    def bad(self, path, why):
        self.mismatches.append("%s: %s" % (path, why))

    def run(self, exp, act, path):
        if isinstance(exp, dict):
            if not isinstance(act, dict):
                return self.bad(path, "expected an object, got %r" % (act,))
            for key, value in exp.items():
                if key not in act:
                    self.bad("%s.%s" % (path, key), "missing from the output")
                else:
                    self.run(value, act[key], "%s.%s" % (path, key))
            self.unchecked += ["%s.%s" % (path, k) for k in act if k not in exp]
        elif isinstance(exp, list):
            if not isinstance(act, list) or len(act) != len(exp):
                return self.bad(path, "expected a list of %d, got %s" % (
                    len(exp), "%d items" % len(act) if isinstance(act, list) else repr(act)))
            for i, (e, a) in enumerate(zip(exp, act)):
                self.run(e, a, "%s[%d]" % (path, i))
        elif exp is None:
            self.checked += 1
            if act is not None:
                self.bad(path, "expected null (undefined), got %r" % (act,))
        elif isinstance(exp, bool) or isinstance(exp, str):
            self.checked += 1
            if act != exp:
                self.bad(path, "expected %r, got %r" % (exp, act))
        elif isinstance(exp, int):
            self.checked += 1
            if isinstance(act, bool) or not isinstance(act, (int, float)) or act != exp:
                self.bad(path, "expected the count %d, got %r" % (exp, act))
        elif isinstance(exp, float):
            self.checked += 1
            if isinstance(act, bool) or not isinstance(act, (int, float)) or \
                    not math.isfinite(act):
                return self.bad(path, "expected %.17g, got %r" % (exp, act))
            tol = self.tol(path)
            diff = abs(act - exp)
            if self.rel:
                diff /= max(1.0, abs(exp))
            self.worst[tol] = max(self.worst.get(tol, 0.0), diff)
            if diff > tol:
                self.bad(path, "expected %.17g, got %.17g (difference %.3g > %g)" % (
                    exp, act, diff, tol))
        else:
            self.bad(path, "unexpected value in the expected file: %r" % (exp,))


def load(path):
    with open(path) as f:
        return json.load(f)


def cmd_report(expected_path, key, actual_path):
    expected = load(expected_path)[key]
    try:
        actual = load(actual_path)
    except ValueError as e:
        print("FAIL %s: not valid JSON: %s" % (actual_path, e))
        return 1
    w = Walk(tolerance)
    w.run(expected, actual, key)
    for path in w.unchecked:
        print("note: %s is in the report but not in the reference (not checked)" % path)
    for m in w.mismatches:
        print("MISMATCH %s" % m)
    worst = ", ".join("%.3g (tolerance %g)" % (d, t) for t, d in sorted(w.worst.items()))
    if w.mismatches:
        print("FAIL %s: %d of %d figures differ from the reference" % (
            key, len(w.mismatches), w.checked))
        return 1
    print("ok %s: %d figures match the reference; largest differences %s" % (
        key, w.checked, worst or "none"))
    return 0


def hour_counters(w):
    """The additive counters of one report window, by name."""
    c = {"events": w["events"], "labeled": w["labeled"],
         "vote_ties_all": w["vote_ties_all"], "labels.delayed": w["labels"]["delayed"],
         "accuracy.vote_ties": w["accuracy"]["vote_ties"]}
    for i, n in enumerate(w["class_counts"]):
        c["class_counts[%d]" % i] = n
    for i, row in enumerate(w["accuracy"]["confusion"] or []):
        for j, n in enumerate(row):
            c["accuracy.confusion[%d][%d]" % (i, j)] = n
    for i, b in enumerate(w["calibration"]["bins"]):
        c["calibration.bins[%d].count" % i] = b["count"]
    for p in w["contested_pairs"]:
        c["contested %d/%d" % (p["a"], p["b"])] = p["count"]
    return c


def hour_means(w):
    """Per-event means of a window (value, weight): they add up as sums."""
    n = w["events"]
    out = {"uncertainty.%s" % k: (w["uncertainty"][k], n)
           for k in ("entropy", "expected_entropy", "mutual_information")}
    for i, v in enumerate(w["by_member"]["disagreement"]):
        out["by_member.disagreement[%d]" % i] = (v, n)
    return out


def cmd_hour_sums(hours_path, days_path):
    hours, days = load(hours_path)["windows"], load(days_path)["windows"]
    bad, checked = [], 0
    hour_days = sorted(set(w["from"] for w in hours))
    day_dates = [w["from"] for w in days]
    if hour_days != day_dates:
        print("FAIL the hour windows cover the days %s, the day report %s" % (
            hour_days, day_dates))
        return 1
    for d in days:
        hs = [w for w in hours if w["from"] == d["from"]]
        want = hour_counters(d)
        got = {}
        for w in hs:
            for k, v in hour_counters(w).items():
                got[k] = got.get(k, 0) + v
        for k in sorted(set(want) | set(got)):
            checked += 1
            if want.get(k, 0) != got.get(k, 0):
                bad.append("%s %s: the day has %s, its %d hours sum to %s" % (
                    d["from"], k, want.get(k, 0), len(hs), got.get(k, 0)))
        for k, (v, n) in hour_means(d).items():
            total = sum(hour_means(w)[k][0] * hour_means(w)[k][1] for w in hs)
            tol = ENTROPY_TOL if k.startswith("uncertainty") else ABS_TOL
            checked += 1
            if abs(total / n - v) > tol:
                bad.append("%s %s: the day's mean %.12g, the hours' weighted mean %.12g" % (
                    d["from"], k, v, total / n))
    for b in bad:
        print("MISMATCH %s" % b)
    if bad:
        print("FAIL hour sums: %d of %d checks differ" % (len(bad), checked))
        return 1
    print("ok hour sums: %d checks over %d days and %d hours" % (checked, len(days), len(hours)))
    return 0


def cmd_classes(expected_path):
    print(",".join(load(expected_path)["report_all"]["classes"]))
    return 0


TALLY = {
    "events": (r"(\d+) lines, (\d+) events stored, (\d+) duplicates skipped, (\d+) rejected",
               ("lines", "stored", "duplicates", "rejected")),
    "labels": (r"(\d+) lines, (\d+) labels applied \((\d+) replaced an earlier label\), "
               r"(\d+) unchanged, (\d+) waiting for their event, (\d+) rejected",
               ("lines", "applied", "replaced", "unchanged", "pending", "rejected")),
}


def cmd_tally(expected_path, kind, stderr_path, *overrides):
    """overrides: name=value pairs replacing the fixture's counts (re-runs)."""
    exp = load(expected_path)
    want = dict(exp["ingest"] if kind == "events" else exp["label_run"])
    want.setdefault("duplicates", 0)
    want.setdefault("rejected", 0)
    for o in overrides:
        name, value = o.split("=")
        want[name] = int(value)
    with open(stderr_path) as f:
        text = f.read()
    pattern, names = TALLY[kind]
    m = re.search(pattern, text)
    if not m:
        print("FAIL tally (%s): no tally line found in:\n%s" % (kind, text))
        return 1
    got = dict(zip(names, (int(g) for g in m.groups())))
    bad = ["%s: expected %d, got %d" % (n, want[n], got[n]) for n in names if got[n] != want[n]]
    for b in bad:
        print("MISMATCH tally (%s) %s" % (kind, b))
    if bad:
        return 1
    print("ok tally (%s): %s" % (kind, ", ".join("%s %d" % (n, got[n]) for n in names)))
    return 0


def cmd_final_labels(events_path, labels_path, out_path):
    final = {}
    with open(labels_path) as f:
        for line in f:
            if line.strip():
                rec = json.loads(line)
                final[rec["id"]] = rec["label"]          # the last line wins
    with open(events_path) as f, open(out_path, "w") as out:
        for line in f:
            if not line.strip():
                continue
            rec = json.loads(line)
            if rec["id"] in final:
                rec["label"] = final[rec["id"]]
            out.write(json.dumps(rec, separators=(",", ":")) + "\n")
    return 0


def cmd_expected(a_path, b_path):
    w = Walk(lambda path: 1e-12, rel=True)
    w.run(load(a_path), load(b_path), "expected")
    for m in w.mismatches:
        print("MISMATCH %s" % m)
    for path in w.unchecked:
        print("MISMATCH %s: only in the regenerated file" % path)
    if w.mismatches or w.unchecked:
        print("FAIL: regenerated expected values differ from the committed ones")
        return 1
    print("ok: %d expected values regenerate" % w.checked)
    return 0


JSONL_REL_TOL = 1e-12   # float64: ~4500 ulp; CPUs differ in the last few bits


def cmd_jsonl(committed_path, fresh_path):
    with open(committed_path) as f:
        old = [line for line in f if line.strip()]
    with open(fresh_path) as f:
        new = [line for line in f if line.strip()]
    if len(old) != len(new):
        print("FAIL %s: %d lines committed, %d regenerated" % (
            committed_path, len(old), len(new)))
        return 1
    w = Walk(lambda path: JSONL_REL_TOL, rel=True)
    for i, (a, b) in enumerate(zip(old, new)):
        w.run(json.loads(a), json.loads(b), "line %d" % (i + 1))
    for path in w.unchecked:
        w.bad(path, "only in the regenerated file")
    for m in w.mismatches[:40]:
        print("MISMATCH %s" % m)
    if w.mismatches:
        print("FAIL %s: %d values differ beyond %g (relative to max(1, |value|))" % (
            committed_path, len(w.mismatches), JSONL_REL_TOL))
        return 1
    worst = max(w.worst.values(), default=0.0)
    print("ok: %d lines, %d values regenerate (largest relative difference %.3g, tolerance %g)" % (
        len(old), w.checked, worst, JSONL_REL_TOL))
    return 0


def main(argv):
    commands = {"report": (cmd_report, 3), "classes": (cmd_classes, 1),
                "hour-sums": (cmd_hour_sums, 2),
                "tally": (cmd_tally, None), "final-labels": (cmd_final_labels, 3),
                "expected": (cmd_expected, 2), "jsonl": (cmd_jsonl, 2)}
    if len(argv) < 2 or argv[1] not in commands:
        print(__doc__, file=sys.stderr)
        return 2
    fn, nargs = commands[argv[1]]
    if nargs is not None and len(argv) - 2 != nargs:
        print(__doc__, file=sys.stderr)
        return 2
    return fn(*argv[2:])


if __name__ == "__main__":
    sys.exit(main(sys.argv))
