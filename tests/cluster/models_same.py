#!/usr/bin/python3
"""models_same.py MODELS_JSON MODEL TOTALS SLICES: exit 0 when what the
cluster's store backend answered for MODEL (ch_store_probe's "totals" and
"slices" output) equals the entry of `concord models --format json` read from
one SQLite store: days, first and last day, events, labelled events, labels
waiting for their event, the slice limit and every slice with its events and
labelled events, in the same order. All integers: compared exactly."""
import datetime
import json
import sys


def day_text(day):
    return (datetime.date(1970, 1, 1) + datetime.timedelta(days=int(day))).isoformat()


def main():
    doc = json.load(open(sys.argv[1], encoding="utf-8"))
    want = next(m for m in doc["models"] if m["name"] == sys.argv[2])
    days, first, last, events, labeled, pending = open(sys.argv[3]).read().split()
    lines = open(sys.argv[4], encoding="utf-8").read().splitlines()
    got = {"days": int(days), "events": int(events), "labeled": int(labeled),
           "pending_labels": int(pending), "slice_limit": int(lines[0]),
           "first_day": day_text(first) if int(days) else None,
           "last_day": day_text(last) if int(days) else None,
           "slices": [line.rsplit(" ", 2) for line in lines[1:]]}
    exp = {k: want[k] for k in ("days", "events", "labeled", "pending_labels", "slice_limit",
                                "first_day", "last_day")}
    exp["slices"] = [[s["segment"], str(s["events"]), str(s["labeled"])] for s in want["slices"]]
    bad = [k for k in exp if exp[k] != got[k]]
    for k in bad:
        print("%s: model %s: %s: sqlite %r, cluster %r" % (sys.argv[1], sys.argv[2], k, exp[k],
                                                           got[k]))
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
