"""Shared by the reference generators: regenerate a fixture into a temporary
file and compare it, number by number, with the committed one.

Used as `check(name, committed, generate, import_libraries, needs, rel_tol, abs_tol)`;
returns the exit status (0 equal, 1 mismatch, 77 libraries missing = skipped)."""
import json
import math
import os
import tempfile

SKIP = 77


def compare(a, b, where, errors, rel_tol, abs_tol):
    """Appends to errors every place where a (regenerated) and b (committed)
    differ; numbers within the tolerances count as equal; the top-level
    "versions" entry (library versions) is not compared."""
    if isinstance(a, dict) and isinstance(b, dict):
        if set(a) != set(b):
            errors.append(f"{where}: keys differ: {sorted(set(a) ^ set(b))}")
            return
        for key in a:
            if where == "" and key == "versions":
                continue
            compare(a[key], b[key], f"{where}/{key}", errors, rel_tol, abs_tol)
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            errors.append(f"{where}: length {len(a)} != {len(b)}")
            return
        for i, (x, y) in enumerate(zip(a, b)):
            compare(x, y, f"{where}[{i}]", errors, rel_tol, abs_tol)
    elif isinstance(a, (int, float)) and isinstance(b, (int, float)) \
            and not isinstance(a, bool) and not isinstance(b, bool):
        if not math.isclose(a, b, rel_tol=rel_tol, abs_tol=abs_tol):
            errors.append(f"{where}: regenerated {a!r} != committed {b!r}")
    elif a != b:
        errors.append(f"{where}: regenerated {a!r} != committed {b!r}")


def check(name, committed, generate, import_libraries, needs, rel_tol, abs_tol):
    try:
        import_libraries()
    except ImportError as e:
        print(f"{name}: skipped ({e}; needs {needs} for /usr/bin/python3)")
        return SKIP
    fd, tmp = tempfile.mkstemp(suffix=".json")
    os.close(fd)
    try:
        generate(tmp)
        with open(tmp) as f:
            fresh = json.load(f)
    finally:
        os.unlink(tmp)
    with open(committed) as f:
        old = json.load(f)
    errors = []
    compare(fresh, old, "", errors, rel_tol, abs_tol)
    for e in errors[:40]:
        print("MISMATCH", e)
    if errors:
        print(f"{name}: {len(errors)} mismatches against {committed}")
        return 1
    print(f"{name}: {committed} matches a fresh run")
    return 0


def main(argv, doc, default_name, generate, check_fn, extra=None):
    """The generators' command line: `--check FILE` compares, `[FILE]` writes
    (default: default_name beside the script); extra(argv) may handle more
    options and return an exit status, or None to go on."""
    if len(argv) == 3 and argv[1] == "--check":
        return check_fn(argv[2])
    if extra:
        status = extra(argv)
        if status is not None:
            return status
    if len(argv) > 2:
        print(doc)
        return 2
    here = os.path.dirname(os.path.abspath(__file__))
    path = argv[1] if len(argv) == 2 else os.path.join(here, default_name)
    generate(path)
    print(f"wrote {path}")
    return 0
