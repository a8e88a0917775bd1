#!/usr/bin/python3
"""Synthetic fixtures for concord's end-to-end test (tests/e2e/).

Everything here is invented: an imaginary ensemble of four bark-photo
classifiers (members m0..m3) sorting five tree species. No real system,
product or data set stands behind the numbers. JSON files cannot carry
comments, so this note is the statement that e2e_events.jsonl,
e2e_labels.jsonl and e2e_expected.json are synthetic test data.

    /usr/bin/python3 tests/reference/e2e_gen.py [--out-dir DIR]

writes into DIR (default: this file's directory)

  e2e_events.jsonl   ~900 prediction events over three UTC days
                     (2026-03-09..11), 4 members x 5 classes; RFC 3339
                     strings with offsets that move the local date across
                     the UTC day boundary, and numeric Unix seconds; about a
                     quarter of the events give 'logits' instead of 'probs';
                     a few exact argmax ties; class 4 ('spruce') is never
                     anyone's top class on 2026-03-10; ~20 % carry an
                     inline 'label' (index or class name).
  e2e_labels.jsonl   delayed labels for ~30 % of the events, by index or by
                     class name, some of them changing an inline label and a
                     few ids labelled twice (the last line wins).
  e2e_expected.json  every figure of `concord report --format json`, per UTC
                     day, for the whole range, and per UTC hour over a range
                     across the midnight of 2026-03-09/10 (`report --by hour
                     --from HOURS_FROM --to HOURS_TO`), computed independently
                     with numpy, scipy, scikit-learn and statsmodels; the
                     "sources" object names the function behind each figure.

The expected values are computed from the files as written (re-read and
parsed), with each probability rounded to float32 as concord stores it
(after a softmax for 'logits'), means and sums in float64, and labels after
applying the delayed ones in file order.

Random draws use numpy's legacy RandomState, whose stream numpy keeps stable
across versions, so the fixtures regenerate byte for byte
(tests/e2e/e2e_regenerate.sh checks that). Run with Debian's python
(python3-numpy, -scipy, -sklearn, -statsmodels).
"""
import argparse
import datetime as dt
import json
import math
import os
import sys
import warnings
from collections import Counter

import numpy as np
import scipy.stats
import sklearn.metrics
import statsmodels.stats.contingency_tables
import statsmodels.stats.inter_rater

SEED = 20260309
MODEL = "ref"
CLASSES = ["alder", "birch", "cedar", "larch", "spruce"]
MEMBERS = ["m0", "m1", "m2", "m3"]   # concord's default names (no --members)
M, K = len(MEMBERS), len(CLASSES)
FIRST_DAY = dt.date(2026, 3, 9)
EVENTS_PER_DAY = [296, 311, 302]
NEVER_DAY, NEVER_CLASS = 1, 4        # on 2026-03-10 nobody's top class is 'spruce'

# the synthetic members: how strongly each sees the true class, its own noise,
# a temperature, and a lean toward one class (member 3 likes 'cedar')
STRENGTH = np.array([2.5, 2.1, 1.8, 1.4])
NOISE = np.array([0.9, 1.0, 1.15, 1.3])
TEMPERATURE = np.array([1.0, 1.25, 0.85, 1.0])
LEAN = np.zeros((M, K))
LEAN[3, 2] = 0.45
SHARED = 0.85                        # weight of the noise all members share
PRIORS = [
    [0.30, 0.25, 0.20, 0.15, 0.10],
    [0.35, 0.30, 0.20, 0.15, 0.00],
    [0.15, 0.20, 0.20, 0.20, 0.25],
]
OFFSETS_ANY = [0, 0, 120, -300, 330, -480, 540]   # minutes east of UTC; 0 twice: 'Z' and '+00:00'
OFFSETS_EAST = [120, 330, 540]                    # late-evening UTC -> next local day
OFFSETS_WEST = [-300, -480]                       # early-morning UTC -> previous local day

UTC = dt.timezone.utc
DAY0_UNIX = int(dt.datetime(FIRST_DAY.year, FIRST_DAY.month, FIRST_DAY.day,
                            tzinfo=UTC).timestamp())


# ---------------------------------------------------------------- generation

def softmax_concord_order(x):
    """Softmax in the order of concord's cc_softmax (collector/event_parse.c):
    subtract the first maximum, exp with the C library (math.exp), sum left
    to right, divide. Used to read 'logits' lines back."""
    mx = x[0]
    for v in x[1:]:
        if v > mx:
            mx = v
    e = [math.exp(v - mx) for v in x]
    s = 0.0
    for v in e:
        s += v
    return [v / s for v in e]


def float32_is_robust(values):
    """True when each double is at least 3 ulps away from a float32 rounding
    boundary, so a 1-ulp difference in exp() cannot change what is stored."""
    for v in values:
        lo, hi = v, v
        for _ in range(3):
            lo = np.nextafter(lo, -np.inf)
            hi = np.nextafter(hi, np.inf)
        if not (np.float32(lo) == np.float32(v) == np.float32(hi)):
            return False
    return True


def draw_logits(rng, y, day):
    shared = rng.normal(0.0, 1.0, K) * SHARED
    z = np.empty((M, K))
    for i in range(M):
        z[i] = STRENGTH[i] * (np.arange(K) == y) + shared + rng.normal(0.0, NOISE[i], K) + LEAN[i]
        z[i] /= TEMPERATURE[i]
    if day == NEVER_DAY:
        z[:, NEVER_CLASS] = z[:, :NEVER_CLASS].min(axis=1) - 0.5 - rng.rand(M)
    return z


def np_softmax(z):
    e = np.exp(z - z.max(axis=1, keepdims=True))
    return e / e.sum(axis=1, keepdims=True)


def crafted_rows(rng, kind, day):
    """Hand-shaped events with exact ties; class 4 stays out of the top on NEVER_DAY."""
    pool = list(range(NEVER_CLASS)) if day == NEVER_DAY else list(range(K))
    a, b, c = (int(v) for v in rng.choice(pool, 3, replace=False))
    d4 = [x for x in pool if x not in (a, b, c)][0]

    def row(spec, fill):
        r = [fill] * K
        for cls, p in spec.items():
            r[cls] = p
        return r

    if kind == "member_tie":            # one member's top two are equal
        return "probs", [row({a: 0.35, b: 0.35, c: 0.1}, 0.1),
                         row({b: 0.5, a: 0.2, c: 0.1}, 0.1),
                         row({b: 0.4, c: 0.3, a: 0.1}, 0.1),
                         row({a: 0.45, b: 0.25, c: 0.1}, 0.1)]
    if kind == "mean_tie":              # the mean's top two are equal, vote splits 2-2
        first = row({a: 0.55, b: 0.25, c: 0.1}, 0.05)
        second = row({b: 0.55, a: 0.25, c: 0.1}, 0.05)
        return "probs", [first, second, first, second]
    if kind == "four_way":              # every member a different top class
        return "probs", [row({t: 0.6}, 0.1) for t in (a, b, c, d4)]
    if kind == "second_tie":            # the mean's runner-up is a tie
        return "probs", [row({a: 0.6, b: 0.2, c: 0.1}, 0.05),
                         row({a: 0.6, c: 0.2, b: 0.1}, 0.05),
                         row({b: 0.5, a: 0.3, c: 0.1}, 0.05),
                         row({c: 0.5, a: 0.3, b: 0.1}, 0.05)]
    if kind == "logit_tie":             # equal logits -> equal softmax values
        z = [[0.0] * K for _ in range(M)]
        for i in range(M):
            z[i][a] = 2.0
            z[i][b] = 2.0 if i % 2 == 0 else 1.0
            z[i][c] = 0.5
            if day == NEVER_DAY:
                z[i][NEVER_CLASS] = -1.0
        return "logits", z
    if kind == "extreme":               # certainty, zeros, float32 underflow
        z = [[-100.0] * K for _ in range(M)]
        for i in range(M):
            z[i][a] = 0.0
            z[i][b] = -20.0 - 10 * i
        z[3][a], z[3][c] = -120.0, 0.0
        return "logits", z
    raise ValueError(kind)


CRAFTED = ["member_tie", "mean_tie", "four_way", "second_tie", "logit_tie", "extreme",
           "member_tie", "mean_tie"]


def format_ts(rng, unix, near):
    """A timestamp for the UTC instant 'unix' (may have a fraction)."""
    if rng.rand() < 0.35:
        return unix if unix == int(unix) else float(unix)
    whole = int(math.floor(unix))
    frac = unix - whole
    if near == "late":
        off = int(rng.choice(OFFSETS_EAST))
    elif near == "early":
        off = int(rng.choice(OFFSETS_WEST))
    else:
        off = int(rng.choice(OFFSETS_ANY))
    local = dt.datetime.fromtimestamp(whole, dt.timezone(dt.timedelta(minutes=off)))
    text = local.strftime("%Y-%m-%dT%H:%M:%S")
    if frac:
        text += ("%.3f" % frac)[1:]
    elif rng.rand() < 0.15:
        text += "." + "%06d" % rng.randint(0, 1000000)
    if off == 0 and rng.rand() < 0.6:
        return text + "Z"
    sign = "+" if off >= 0 else "-"
    return text + "%s%02d:%02d" % (sign, abs(off) // 60, abs(off) % 60)


def generate(rng):
    events = []
    for day, n in enumerate(EVENTS_PER_DAY):
        day_start = DAY0_UNIX + day * 86400
        crafted_at = set(int(v) for v in rng.choice(n, len(CRAFTED), replace=False))
        crafted = iter(CRAFTED)
        for j in range(n):
            near = None
            if j == 0:
                sec = 0                                     # exactly midnight UTC
            elif j == 1:
                sec = 86399.875                             # last fraction of the day
            else:
                r = rng.rand()
                if r < 0.08:
                    sec, near = int(rng.randint(0, 3 * 3600)), "early"
                elif r < 0.16:
                    sec, near = 86399 - int(rng.randint(0, 3 * 3600)), "late"
                else:
                    sec = int(rng.randint(0, 86400))
                if rng.rand() < 0.05:
                    sec += float(rng.choice([0.25, 0.5, 0.999]))
            y = int(rng.choice(K, p=PRIORS[day]))
            ev = {"id": "d%d-%03d" % (day + 1, j), "utc": day_start + sec, "day": day, "y": y,
                  "near": near}
            if j in crafted_at:
                kind, rows = crafted_rows(rng, next(crafted), day)
                ev["crafted"] = True
                if kind == "logits":
                    ev["logits"] = rows
                else:
                    ev["probs"] = rows
            else:
                z = draw_logits(rng, y, day)
                if rng.rand() < 0.25:
                    lz = [[round(float(v), 4) for v in r] for r in z]
                    if all(float32_is_robust(softmax_concord_order(r)) for r in lz):
                        ev["logits"] = lz
                if "logits" not in ev:
                    p = np_softmax(z)
                    if rng.rand() < 0.5:
                        ev["probs"] = [[round(float(v), 4) for v in r] for r in p]
                    else:
                        ev["probs"] = [[float(v) for v in r] for r in p]
            events.append(ev)
    # crafted logits rows must also be safe against exp() differences
    for ev in events:
        if "logits" in ev:
            assert all(float32_is_robust(softmax_concord_order(r)) for r in ev["logits"]), ev["id"]
    return events


def assign_labels(rng, events):
    """Inline labels (~20 %), delayed labels (~30 %), relabels and repeats.
    Returns the delayed label lines, in file order."""
    def encode(cls, p_name):
        return CLASSES[cls] if rng.rand() < p_name else cls

    def wrong(cls):
        return int((cls + 1 + rng.randint(0, K - 1)) % K)

    delayed = {}        # id -> list of label values in order
    inline_ids, delayed_ids = [], []
    for ev in events:
        r = rng.rand()
        if r < 0.20:
            inline_ids.append(ev)
        elif r < 0.50:
            delayed_ids.append(ev)
    picks = rng.permutation(len(inline_ids))
    relabel = set(int(i) for i in picks[:9])              # wrong inline, corrected later
    confirm = set(int(i) for i in picks[9:13])            # delayed label repeats the inline one
    for n, ev in enumerate(inline_ids):
        true = ev["y"]
        ev["label"] = encode(wrong(true) if n in relabel else true, 0.3)
        if n in relabel:
            delayed[ev["id"]] = [encode(true, 0.5)]
        elif n in confirm:
            delayed[ev["id"]] = [ev["label"] if rng.rand() < 0.5 else encode(true, 0.5)]
    picks = rng.permutation(len(delayed_ids))
    twice_wrong_first = set(int(i) for i in picks[:6])
    twice_same = set(int(i) for i in picks[6:9])
    for n, ev in enumerate(delayed_ids):
        true = ev["y"]
        if n in twice_wrong_first:
            delayed[ev["id"]] = [encode(wrong(true), 0.5), encode(true, 0.5)]
        elif n in twice_same:
            delayed[ev["id"]] = [encode(true, 0.5), encode(true, 0.5)]
        else:
            delayed[ev["id"]] = [encode(true, 0.5)]

    # file order: first lines of every id shuffled, then the second lines
    ids = sorted(delayed)
    first = [ids[int(i)] for i in rng.permutation(len(ids))]
    seconds = [i for i in ids if len(delayed[i]) > 1]
    second = [seconds[int(i)] for i in rng.permutation(len(seconds))]
    lines = [(i, delayed[i][0]) for i in first] + [(i, delayed[i][1]) for i in second]
    with_model = set(int(i) for i in rng.choice(len(lines), 5, replace=False))
    out = []
    for n, (i, v) in enumerate(lines):
        rec = {"id": i, "label": v}
        if n in with_model:
            rec["model"] = MODEL
        out.append(rec)
    return out


def event_line(rng, ev):
    rec = {"id": ev["id"], "ts": ev["ts"]}
    if "logits" in ev:
        rec["logits"] = ev["logits"]
    else:
        rec["probs"] = ev["probs"]
    if "label" in ev:
        rec["label"] = ev["label"]
    if rng.rand() < 0.3:
        rec["segment"] = "site-%s" % "abc"[rng.randint(0, 3)]
    if rng.rand() < 0.03:
        rec["model"] = MODEL
    return json.dumps(rec, separators=(",", ":"))


def write_fixtures(out_dir):
    rng = np.random.RandomState(SEED)
    events = generate(rng)
    for ev in events:
        ev["ts"] = format_ts(rng, ev["utc"], ev["near"])
    label_lines = assign_labels(rng, events)
    # file order: by UTC time, then about 10 % of the lines moved elsewhere
    events.sort(key=lambda e: (e["utc"], e["id"]))
    for _ in range(len(events) // 10):
        i, j = int(rng.randint(0, len(events))), int(rng.randint(0, len(events)))
        events[i], events[j] = events[j], events[i]
    paths = {name: os.path.join(out_dir, "e2e_%s" % name)
             for name in ("events.jsonl", "labels.jsonl", "expected.json")}
    with open(paths["events.jsonl"], "w") as f:
        for ev in events:
            f.write(event_line(rng, ev) + "\n")
    with open(paths["labels.jsonl"], "w") as f:
        for rec in label_lines:
            f.write(json.dumps(rec, separators=(",", ":")) + "\n")
    return paths


# ---------------------------------------------------------------- reference

def unix_seconds(ts):
    """Unix seconds of a 'ts' value (fraction dropped toward minus infinity)."""
    if isinstance(ts, str):
        t = dt.datetime.fromisoformat(ts)
        return (t - dt.datetime(1970, 1, 1, tzinfo=UTC)) // dt.timedelta(seconds=1)
    return math.floor(ts)


def utc_day(ts):
    """UTC day number of a 'ts' value, with the standard library's parser."""
    if isinstance(ts, str):
        t = dt.datetime.fromisoformat(ts)       # Python 3.11 reads 'Z' and fractions
        return (t - dt.datetime(1970, 1, 1, tzinfo=UTC)) // dt.timedelta(days=1)
    return math.floor(ts) // 86400


def label_index(v):
    return CLASSES.index(v) if isinstance(v, str) else int(v)


def read_back(paths):
    """Parses the written files the way concord will see them."""
    rows = []
    with open(paths["events.jsonl"]) as f:
        for line in f:
            rec = json.loads(line)
            if "logits" in rec:
                p = [softmax_concord_order(r) for r in rec["logits"]]
            else:
                p = rec["probs"]
            rows.append({"id": rec["id"], "day": utc_day(rec["ts"]),
                         "p32": np.array(p, dtype=np.float64).astype(np.float32),
                         "label": label_index(rec["label"]) if "label" in rec else -1,
                         "ts": rec["ts"], "from_logits": "logits" in rec})
    by_id = {r["id"]: r for r in rows}
    tally = {"lines": 0, "applied": 0, "replaced": 0, "unchanged": 0, "pending": 0}
    with open(paths["labels.jsonl"]) as f:
        for line in f:
            rec = json.loads(line)
            tally["lines"] += 1
            ev = by_id.get(rec["id"])
            new = label_index(rec["label"])
            if ev is None:
                tally["pending"] += 1
            elif ev["label"] == new:
                tally["unchanged"] += 1
            else:
                tally["replaced"] += ev["label"] >= 0
                tally["applied"] += 1
                ev["label"] = new                  # the last label wins
    return rows, tally


def raw_entropy(p):
    """-sum p ln p of the vector as stored (concord does not renormalize).
    scipy.stats.entropy divides by s = sum(p) first; since
    H(p/s) = -(1/s) sum p ln p + ln s, the stored-vector value is
    s (H(p/s) - ln s)."""
    s = float(np.sum(p))
    return s * (float(scipy.stats.entropy(p)) - math.log(s))


def per_event(r):
    p32 = r["p32"]
    p64 = p32.astype(np.float64)
    total = p64[0].copy()
    for i in range(1, M):                      # left to right, as concord sums
        total = total + p64[i]
    mean = total / M
    tops = np.argmax(p32, axis=1)              # first maximum = lowest index
    votes = np.bincount(tops, minlength=K)
    ens = int(np.argmax(mean))
    e = {"tops": tops, "votes": votes, "ens": ens, "vote": int(np.argmax(votes)),
         "vote_tie": int(np.sum(votes == votes.max()) > 1),
         "h_total": raw_entropy(mean),
         "h_expected": float(np.mean([raw_entropy(p64[i]) for i in range(M)])),
         "label": r["label"], "day": r["day"], "contested": None}
    if len(set(tops.tolist())) > 1:
        masked = mean.copy()
        masked[ens] = -np.inf
        second = int(np.argmax(masked))
        e["contested"] = (min(ens, second), max(ens, second))
    return e


def num(x):
    x = float(x)
    return None if math.isnan(x) else x


def pair_matrix(fn):
    pairs = [[None] * M for _ in range(M)]
    defined = []
    for i in range(M):
        for j in range(i + 1, M):
            v = num(fn(i, j))
            pairs[i][j] = pairs[j][i] = v
            if v is not None:
                defined.append(v)
    return {"mean": float(np.mean(defined)) if defined else None, "pairs": pairs}


def window(evs, first_day, last_day):
    n = len(evs)
    tops = np.array([e["tops"] for e in evs])
    votes = np.array([e["votes"] for e in evs])
    ens = np.array([e["ens"] for e in evs])
    w = {"from": str(first_day), "to": str(last_day), "events": n,
         "labeled": int(sum(e["label"] >= 0 for e in evs)),
         "class_counts": [int(c) for c in np.bincount(ens, minlength=K)]}

    d = {"disagreement": pair_matrix(lambda i, j: np.mean(tops[:, i] != tops[:, j])),
         "kappa": pair_matrix(lambda i, j: sklearn.metrics.cohen_kappa_score(tops[:, i],
                                                                              tops[:, j])),
         "fleiss_kappa": num(statsmodels.stats.inter_rater.fleiss_kappa(votes,
                                                                       method="fleiss"))}
    lab = [e for e in evs if e["label"] >= 0]
    acc = None
    if lab:
        y = np.array([e["label"] for e in lab])
        lt = np.array([e["tops"] for e in lab])
        right = lt == y[:, None]                           # N x M oracle outputs
        ens_right = np.array([e["ens"] for e in lab]) == y

        def counts(i, j):
            a, b = right[:, i], right[:, j]
            return (np.sum(a & b), np.sum(a & ~b), np.sum(~a & b), np.sum(~a & ~b))

        def yule_q(i, j):
            n11, n10, n01, n00 = (float(v) for v in counts(i, j))
            den = n11 * n00 + n01 * n10
            return (n11 * n00 - n01 * n10) / den if den else float("nan")

        d["q"] = pair_matrix(yule_q)
        d["rho"] = pair_matrix(lambda i, j: np.corrcoef(right[:, i].astype(float),
                                                        right[:, j].astype(float))[0, 1])
        d["double_fault"] = pair_matrix(lambda i, j: np.mean(~right[:, i] & ~right[:, j]))
        d["oracle_disagreement"] = pair_matrix(lambda i, j: np.mean(right[:, i] != right[:, j]))
        L = M
        l = right.sum(axis=1).astype(float)                # members right per event
        N = len(lab)
        d["kw_variance"] = float(np.sum(l * (L - l)) / (N * L * L))
        d["entropy_e"] = float(np.mean(np.minimum(l, L - l)) / (L - math.ceil(L / 2)))
        d["interrater_kappa"] = num(statsmodels.stats.inter_rater.fleiss_kappa(
            np.column_stack([l, L - l]), method="fleiss"))
        d["difficulty"] = float(np.var(l / L))
        fails = L - l
        p1 = float(np.mean(fails / L))
        p2 = float(np.mean(fails * (fails - 1) / (L * (L - 1))))
        d["generalized_diversity"] = 1.0 - p2 / p1 if p1 > 0 else None
        p0 = float(np.mean(fails == 0))
        if p0 == 1.0:
            d["coincident_failure_diversity"] = 0.0
        else:
            share = [float(np.mean(fails == i)) for i in range(L + 1)]
            d["coincident_failure_diversity"] = sum(
                (L - i) / (L - 1) * share[i] for i in range(1, L + 1)) / (1.0 - p0)

        member_acc = [float(sklearn.metrics.accuracy_score(y, lt[:, i])) for i in range(M)]
        best = int(np.argmax(right.sum(axis=0)))           # ties to the lowest index
        b = int(np.sum(ens_right & ~right[:, best]))
        c = int(np.sum(~ens_right & right[:, best]))
        table = [[int(np.sum(ens_right & right[:, best])), b],
                 [c, int(np.sum(~ens_right & ~right[:, best]))]]
        p = statsmodels.stats.contingency_tables.mcnemar(table, exact=True).pvalue
        acc = {"members": member_acc,
               "ensemble": float(sklearn.metrics.accuracy_score(y, [e["ens"] for e in lab])),
               "vote": float(sklearn.metrics.accuracy_score(y, [e["vote"] for e in lab])),
               "vote_ties": int(sum(e["vote_tie"] for e in lab)),
               "oracle": float(np.mean(right.any(axis=1))),
               "best_member": best,
               "mcnemar": {"ensemble_only": b, "best_only": c, "p_value": num(p)}}
    else:
        for key in ("q", "rho", "double_fault", "oracle_disagreement", "kw_variance",
                    "entropy_e", "interrater_kappa", "difficulty", "generalized_diversity",
                    "coincident_failure_diversity"):
            d[key] = None
    w["diversity"] = d

    h_total = np.array([e["h_total"] for e in evs])
    h_exp = np.array([e["h_expected"] for e in evs])
    w["uncertainty"] = {"entropy": float(np.mean(h_total)),
                        "expected_entropy": float(np.mean(h_exp)),
                        "mutual_information": max(0.0, float(np.mean(h_total - h_exp)))}
    w["accuracy"] = acc
    pairs = Counter(e["contested"] for e in evs if e["contested"] is not None)
    w["contested_pairs"] = [{"a": a, "b": b, "count": cnt} for (a, b), cnt in
                            sorted(pairs.items(), key=lambda kv: (-kv[1], kv[0]))]
    w["vote_ties_all"] = int(sum(e["vote_tie"] for e in evs))
    return w


SOURCES = {
    "events, labeled": "len() of the window's events / of those with a final label",
    "class_counts": "numpy.bincount(numpy.argmax(member mean)) per class",
    "diversity.disagreement": "numpy.mean(top_i != top_j) per member pair",
    "diversity.kappa": "sklearn.metrics.cohen_kappa_score(top_i, top_j)",
    "diversity.fleiss_kappa":
        "statsmodels.stats.inter_rater.fleiss_kappa(method='fleiss') on the event x class "
        "table of member-vote counts",
    "diversity.q": "numpy: Yule's Q from the 2x2 oracle counts (Kuncheva & Whitaker 2003)",
    "diversity.rho": "numpy.corrcoef of the two members' 0/1 oracle vectors "
                     "(the phi coefficient, rho of Kuncheva & Whitaker 2003)",
    "diversity.double_fault": "numpy.mean(both members wrong)",
    "diversity.oracle_disagreement": "numpy.mean(right_i != right_j)",
    "diversity.kw_variance": "numpy: sum l(L-l) / (N L^2), Kuncheva & Whitaker 2003",
    "diversity.entropy_e": "numpy: mean min(l, L-l) / (L - ceil(L/2)), Kuncheva & Whitaker 2003",
    "diversity.interrater_kappa":
        "statsmodels.stats.inter_rater.fleiss_kappa(method='fleiss') on [right, wrong] counts",
    "diversity.difficulty": "numpy.var(l / L) (ddof 0)",
    "diversity.generalized_diversity": "numpy: 1 - p(2)/p(1), Partridge & Krzanowski 1997",
    "diversity.coincident_failure_diversity": "numpy: Partridge & Krzanowski 1997",
    "uncertainty.entropy":
        "scipy.stats.entropy of the member mean, undoing its renormalization: "
        "s (entropy(p) - ln s), s = sum p; mean over events",
    "uncertainty.expected_entropy":
        "scipy.stats.entropy of each member row (same correction), mean over members, "
        "then over events",
    "uncertainty.mutual_information": "mean over events of entropy - expected_entropy",
    "accuracy.members": "sklearn.metrics.accuracy_score(label, member argmax)",
    "accuracy.ensemble": "sklearn.metrics.accuracy_score(label, argmax of the member mean)",
    "accuracy.vote": "sklearn.metrics.accuracy_score(label, numpy.argmax(numpy.bincount(member "
                     "argmaxes)))",
    "accuracy.vote_ties": "count of labelled events whose top vote count is shared",
    "accuracy.oracle": "numpy.mean(any member right)",
    "accuracy.best_member": "numpy.argmax of the members' correct counts",
    "accuracy.mcnemar.ensemble_only, best_only": "numpy.sum of the discordant cells",
    "accuracy.mcnemar.p_value":
        "statsmodels.stats.contingency_tables.mcnemar(table, exact=True).pvalue",
    "contested_pairs": "collections.Counter of sorted (argmax, runner-up) of the member mean on "
                       "events whose member argmaxes differ",
    "vote_ties_all": "count of events whose top vote count is shared",
    "label_run": "the labels file replayed in order against the inline labels",
    "report_by_hour": "the same functions as a day's window, on the events whose Unix time "
                      "(datetime.fromisoformat) falls in the UTC hour",
    "all": "probabilities as float32 (numpy.float32; logits through a softmax first), "
           "sums and means in float64; UTC days by datetime.fromisoformat",
}


# report --by hour: eight UTC hours across the midnight between 2026-03-09 and -10
HOURS_FROM = "2026-03-09T20:00:00Z"
HOURS_TO = "2026-03-10T04:00:00Z"


def hour_windows(rows, evs):
    """The windows of `report --by hour --from HOURS_FROM --to HOURS_TO`: one
    per UTC hour that holds events, each computed by window() on that hour's
    subset of events only (the hour of an event: floor(unix / 3600))."""
    t0, t1 = unix_seconds(HOURS_FROM), unix_seconds(HOURS_TO)
    out = []
    for start in range(t0, t1, 3600):
        sub = [e for r, e in zip(rows, evs) if start <= unix_seconds(r["ts"]) < start + 3600]
        if not sub:
            continue
        day = dt.date(1970, 1, 1) + dt.timedelta(days=start // 86400)
        w = window(sub, day, day)
        fmt = lambda t: dt.datetime.fromtimestamp(t, UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
        w["start"], w["end"] = fmt(start), fmt(start + 3600)
        out.append(w)
    return out


def expected(paths):
    rows, tally = read_back(paths)
    evs = [per_event(r) for r in rows]
    days = sorted(set(e["day"] for e in evs))
    as_date = lambda n: dt.date(1970, 1, 1) + dt.timedelta(days=n)
    by_day = [window([e for e in evs if e["day"] == n], as_date(n), as_date(n)) for n in days]
    head = {"model": MODEL, "members": MEMBERS, "classes": CLASSES, "baseline": None}

    # properties the fixtures promise (see the module docstring)
    never = [e for e in evs if e["day"] == days[NEVER_DAY]]
    assert all(NEVER_CLASS not in e["tops"] and e["ens"] != NEVER_CLASS for e in never)
    assert sum(e["vote_tie"] for e in evs) >= 6
    assert tally["replaced"] >= 9 and tally["unchanged"] >= 3
    crossing = sum(1 for r in rows if isinstance(r["ts"], str) and
                   dt.date.fromisoformat(r["ts"][:10]) != as_date(r["day"]))
    assert crossing >= 30, crossing

    return {
        "note": "synthetic test data, see tests/reference/e2e_gen.py",
        "report_by_day": dict(head, windows=by_day),
        "report_all": dict(head, windows=[window(evs, as_date(days[0]), as_date(days[-1]))]),
        "report_by_hour": dict(head, windows=hour_windows(rows, evs)),
        "hours_range": {"from": HOURS_FROM, "to": HOURS_TO},
        "ingest": {"lines": len(rows), "stored": len(rows)},
        "label_run": tally,
        "sources": SOURCES,
        "fixture_facts": {
            "logits_events": sum(1 for r in rows if r["from_logits"]),
            "local_date_differs_from_utc_date": crossing,
        },
    }


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--out-dir", default=os.path.dirname(os.path.abspath(__file__)))
    args = ap.parse_args()
    warnings.simplefilter("ignore", RuntimeWarning)   # undefined values become null
    paths = write_fixtures(args.out_dir)
    exp = expected(paths)
    with open(paths["expected.json"], "w") as f:
        json.dump(exp, f, indent=1, allow_nan=False)
        f.write("\n")
    print("wrote %s (%d events, %d labelled)" % (
        ", ".join(sorted(paths.values())), exp["report_all"]["windows"][0]["events"],
        exp["report_all"]["windows"][0]["labeled"]), file=sys.stderr)


if __name__ == "__main__":
    main()
