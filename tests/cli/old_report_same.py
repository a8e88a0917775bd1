#!/usr/bin/python3
"""old_report_same.py — is a JSON report of this release the same as one an
earlier release wrote (tests/fixtures/v*_report.json)?

Usage: old_report_same.py OLD.json NEW.json [--drop KEY]...

Exit 0 when equal: same keys in the same order, same values, except that a
real number may differ by a relative DBL_EPSILON. The earlier release's
numbers were cJSON's: a 15-digit text was accepted when it read back within
a relative DBL_EPSILON (cJSON 1.7.15, compare_double); numbers now read back
exactly, so a fixture's number may be that far from ours. --drop KEY leaves
out a top-level key this release adds (one the earlier release did not write).
Standard library only."""
import json
import sys

EPS = sys.float_info.epsilon


def same(x, y):
    if isinstance(x, dict):
        return isinstance(y, dict) and list(x) == list(y) and all(same(x[k], y[k]) for k in x)
    if isinstance(x, list):
        return isinstance(y, list) and len(x) == len(y) and all(map(same, x, y))
    if isinstance(x, float) or isinstance(y, float):
        num = (int, float)
        return (isinstance(x, num) and isinstance(y, num) and not isinstance(x, bool)
                and not isinstance(y, bool) and abs(x - y) <= max(abs(x), abs(y)) * EPS)
    return x == y


def main(argv):
    paths, drop = [], []
    it = iter(argv)
    for arg in it:
        if arg == "--drop":
            drop.append(next(it))
        else:
            paths.append(arg)
    if len(paths) != 2:
        print(__doc__, file=sys.stderr)
        return 2
    a, b = (json.load(open(p)) for p in paths)
    for d in (a, b):
        for key in drop:
            d.pop(key, None)
    return 0 if same(a, b) else 1


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
