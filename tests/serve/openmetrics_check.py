#!/usr/bin/env python3
"""openmetrics_check.py -- a strict checker of the OpenMetrics 1.0 text
exposition format, written from the specification (OpenMetrics 1.0, "Text
Format"; the section names below are the specification's, quoted from
memory of it). It knows only what a concord exposition uses: counter,
gauge, stateset (and unknown/info for completeness); histograms and
summaries are refused as unexpected here.

  openmetrics_check.py FILE        exit 0 when FILE conforms, else every
                                   problem is printed with its line number
  openmetrics_check.py --self-test the checker refuses known-bad samples
"""
import re
import sys

METRIC_NAME = re.compile(r"^[a-zA-Z_:][a-zA-Z0-9_:]*$")    # "ABNF": metricname
LABEL_NAME = re.compile(r"^[a-zA-Z_][a-zA-Z0-9_]*$")       # "ABNF": label-name
# "ABNF": number = realnumber / ("+" / "-") ("Inf" / "inf" ...) / "NaN"
NUMBER = re.compile(r"^(?:[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?"
                    r"|[+-]?(?:[iI]nf|[iI]nfinity)|NaN)$")
TYPES = {"counter", "gauge", "stateset", "info", "unknown", "histogram",
         "gaugehistogram", "summary"}
# "Suffixes": the sample names each type may use
SUFFIXES = {"counter": ["_total", "_created"], "gauge": [""], "stateset": [""],
            "info": ["_info"], "unknown": [""]}


def parse_labels(text, err):
    """'{a="x",b="y"}' -> dict; "Escaping": only \\\\, \\" and \\n in values."""
    labels = {}
    i = 1
    if text == "{}":
        return labels
    while i < len(text):
        m = re.match(r"([^=]*)=\"", text[i:])
        if not m:
            err("label set is not name=\"value\" pairs: %s" % text)
            return labels
        name = m.group(1)
        if not LABEL_NAME.match(name):
            err("\"ABNF\": label name %r is not [a-zA-Z_][a-zA-Z0-9_]*" % name)
        if name.startswith("__"):
            err("\"Label\": names beginning with __ are reserved: %r" % name)
        if name in labels:
            err("\"Label\": label name %r repeated in one label set" % name)
        i += m.end()
        value = []
        while True:
            if i >= len(text):
                err("label value not closed")
                return labels
            ch = text[i]
            if ch == "\\":
                nxt = text[i + 1:i + 2]
                if nxt not in ("\\", "\"", "n"):
                    err("\"Escaping\": \\%s is not an escape (only \\\\, \\\" and \\n)" % nxt)
                value.append({"n": "\n"}.get(nxt, nxt))
                i += 2
                continue
            if ch == "\n":
                err("\"Escaping\": raw line feed in a label value")
            if ch == "\"":
                i += 1
                break
            value.append(ch)
            i += 1
        labels[name] = "".join(value)
        if i < len(text) and text[i] == ",":
            i += 1
            continue
        if i < len(text) and text[i] == "}" and i == len(text) - 1:
            break
        err("label set does not end in '}' after a value: %s" % text)
        break
    return labels


def check(text):
    problems = []
    fams = {}       # name -> {"type", "unit", "help", "closed"}
    order = []
    current = None
    seen_samples = set()
    if not text.endswith("# EOF\n") and not text.endswith("# EOF"):
        problems.append((0, "\"Overall Structure\": the exposition MUST end with '# EOF'"))
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    for n, line in enumerate(lines, 1):
        def err(msg, n=n):
            problems.append((n, msg))
        if line == "# EOF":
            if n != len(lines):
                err("\"Overall Structure\": '# EOF' MUST be the last line")
            continue
        if line == "":
            err("\"Overall Structure\": empty lines are not allowed")
            continue
        if line != line.rstrip(" ") or "\r" in line:
            err("\"ABNF\": trailing space or carriage return")
        if line.startswith("#"):
            m = re.match(r"^# (TYPE|HELP|UNIT) ([^ ]+)(?: (.*))?$", line)
            if not m:
                err("\"ABNF\": a line starting with # must be '# TYPE|HELP|UNIT name ...' "
                    "(comments are not part of OpenMetrics)")
                continue
            kind, name, rest = m.group(1), m.group(2), m.group(3)
            if not METRIC_NAME.match(name):
                err("\"ABNF\": metric family name %r" % name)
            if name not in fams:
                if name in order:
                    err("\"MetricFamily\": family %r appears twice (families MUST NOT "
                        "interleave)" % name)
                fams[name] = {"type": None, "unit": None, "help": None, "samples": 0}
                order.append(name)
                if current and current != name:
                    fams[current]["closed"] = True
                current = name
            elif current != name or fams[name].get("closed"):
                err("\"MetricFamily\": metadata of %r after another family began" % name)
            f = fams[name]
            if f["samples"]:
                err("\"MetricFamily\": %s of %r after its samples" % (kind, name))
            key = kind.lower()
            if f[key] is not None:
                err("\"Metadata\": more than one %s line for %r" % (kind, name))
            f[key] = rest if rest is not None else ""
            if kind == "TYPE" and rest not in TYPES:
                err("\"Metric types\": unknown type %r" % rest)
            if kind == "TYPE" and rest in ("histogram", "gaugehistogram", "summary"):
                err("type %r is not expected in this exposition" % rest)
            if kind == "UNIT" and rest and not name.endswith("_" + rest):
                err("\"Unit\": family %r has unit %r but does not end in _%s" % (name, rest, rest))
            if kind == "HELP" and rest:
                for esc in re.findall(r"\\(.)", rest):
                    if esc not in ("\\", "\"", "n"):
                        err("\"Escaping\": \\%s in HELP" % esc)
            continue
        # a sample: name[{labels}] value [timestamp]
        m = re.match(r"^([^{ ]+)(\{.*\})? ([^ ]+)(?: ([^ ]+))?$", line)
        if not m:
            err("\"ABNF\": not a sample line: %r" % line)
            continue
        sname, ltext, value, ts = m.groups()
        if not METRIC_NAME.match(sname):
            err("\"ABNF\": sample name %r" % sname)
        labels = parse_labels(ltext, err) if ltext else {}
        if not NUMBER.match(value):
            err("\"Numbers\": value %r is not a number" % value)
        if ts is not None and not NUMBER.match(ts):
            err("\"Numbers\": timestamp %r" % ts)
        if current is None:
            err("\"MetricFamily\": sample %r outside any family (TYPE first)" % sname)
            continue
        f = fams[current]
        f["samples"] += 1
        ftype = f["type"] or "unknown"
        if f["type"] is None:
            err("\"Metadata\": family %r has samples but no TYPE" % current)
        allowed = [current + s for s in SUFFIXES.get(ftype, [""])]
        if sname not in allowed:
            err("\"%s\": sample %r does not belong to family %r (allowed: %s)"
                % (ftype.capitalize(), sname, current, ", ".join(allowed)))
        if ftype == "counter" and sname.endswith("_total"):
            try:
                v = float(value)
                if v < 0 or v != v:
                    err("\"Counter\": a _total MUST be a non-negative number, not NaN: %s" % value)
            except ValueError:
                pass
        if ftype == "stateset":
            if current not in labels:
                err("\"StateSet\": each sample MUST carry a label named after the family")
            if value not in ("0", "1"):
                err("\"StateSet\": a state's value MUST be 0 or 1, not %s" % value)
        key = (sname, tuple(sorted(labels.items())))
        if key in seen_samples:
            err("\"MetricPoint\": sample %s with the same labels twice" % sname)
        seen_samples.add(key)
    return problems


BAD = {
    "no EOF": "# TYPE a gauge\na 1\n",
    "blank line": "# TYPE a gauge\n\na 1\n# EOF\n",
    "bad escape": "# TYPE a gauge\na{m=\"x\\y\"} 1\n# EOF\n",
    "unit suffix": "# TYPE a gauge\n# UNIT a seconds\na 1\n# EOF\n",
    "counter sample": "# TYPE c counter\nc 1\n# EOF\n",
    "interleaved": "# TYPE a gauge\na 1\n# TYPE b gauge\nb 1\n# TYPE a gauge\n# EOF\n",
    "stateset value": "# TYPE s stateset\ns{s=\"x\"} 2\n# EOF\n",
    "stateset label": "# TYPE s stateset\ns{t=\"x\"} 1\n# EOF\n",
    "number": "# TYPE a gauge\na nan\n# EOF\n",
    "metadata after samples": "# TYPE a gauge\na 1\n# HELP a x\n# EOF\n",
    "comment": "# TYPE a gauge\n# just a comment\na 1\n# EOF\n",
    "label name": "# TYPE a gauge\na{1x=\"v\"} 1\n# EOF\n",
    "duplicate sample": "# TYPE a gauge\na{m=\"v\"} 1\na{m=\"v\"} 2\n# EOF\n",
    "no TYPE": "a 1\n# EOF\n",
}
GOOD = ("# TYPE a_seconds gauge\n# UNIT a_seconds seconds\n# HELP a_seconds x \\\\ y\n"
        "a_seconds{m=\"q\\\"\\\\\\n\"} NaN\n# TYPE c counter\nc_total 3\n"
        "# TYPE s stateset\ns{r=\"1\",s=\"on\"} 1\ns{r=\"1\",s=\"off\"} 0\n# EOF\n")


def main():
    if sys.argv[1:] == ["--self-test"]:
        bad = [name for name, text in BAD.items() if not check(text)]
        good = check(GOOD)
        for name in bad:
            print("self-test: the checker accepted the bad sample %r" % name)
        for n, msg in good:
            print("self-test: the checker refused the good sample: line %d: %s" % (n, msg))
        sys.exit(1 if bad or good else 0)
    text = open(sys.argv[1], encoding="utf-8").read()
    problems = check(text)
    for n, msg in problems:
        print("line %d: %s" % (n, msg))
    sys.exit(1 if problems else 0)


if __name__ == "__main__":
    main()
