#!/usr/bin/python3
"""json_same.py A B [WHAT]: exit 0 when two JSON documents (or JSON Lines
files) hold the same values: integers, strings, booleans and nulls exactly,
real numbers within 1e-9 relative (1e-12 absolute near zero; the tolerance
the cluster tests state, common practice for "the same arithmetic in another
order"). Differences are listed by path."""
import json
import sys

REL, ABS = 1e-9, 1e-12


def load(path):
    text = open(path, encoding="utf-8").read()
    try:
        return json.loads(text)
    except ValueError:
        return [json.loads(line) for line in text.splitlines() if line.strip()]


def walk(a, b, path, out):
    if len(out) > 20:
        return
    if isinstance(a, bool) or isinstance(b, bool) or a is None or b is None \
            or isinstance(a, str) or isinstance(b, str):
        if a != b:
            out.append("%s: %r != %r" % (path, a, b))
    elif isinstance(a, int) and isinstance(b, int):
        if a != b:
            out.append("%s: %d != %d (counts must be equal)" % (path, a, b))
    elif isinstance(a, (int, float)) and isinstance(b, (int, float)):
        if abs(a - b) > max(ABS, REL * max(abs(a), abs(b))):
            out.append("%s: %r != %r (beyond 1e-9 relative)" % (path, a, b))
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            out.append("%s: %d items != %d items" % (path, len(a), len(b)))
        for i, (x, y) in enumerate(zip(a, b)):
            walk(x, y, "%s[%d]" % (path, i), out)
    elif isinstance(a, dict) and isinstance(b, dict):
        if set(a) != set(b):
            out.append("%s: keys differ: %s" % (path, sorted(set(a) ^ set(b))))
        for k in a:
            if k in b:
                walk(a[k], b[k], "%s.%s" % (path, k), out)
    else:
        out.append("%s: %s != %s" % (path, type(a).__name__, type(b).__name__))


def main():
    a, b = load(sys.argv[1]), load(sys.argv[2])
    out = []
    walk(a, b, "$", out)
    if out:
        print("differ (%s):" % (sys.argv[3] if len(sys.argv) > 3 else sys.argv[2]))
        for line in out:
            print("  " + line)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
