#!/usr/bin/python3
"""Reference values for concord's label-shift estimators (metrics/label_shift.c),
computed with numpy on synthetic data of known class priors.

All data here is synthetic: each case draws a labelled source sample and a
target sample from Gaussian class-conditional models, x | y=j ~ N(sep*e_j, I)
in R^K, with source priors p and target priors q chosen by the script. Under
such a model the source posterior p_s(j | x) is known in closed form, so it is
calibrated on the source by construction; the classifier is its argmax. Only
the priors change between source and target (label shift).

For each case the file holds the inputs, the true q, and what numpy computes:
  bbse: source joint confusion counts + target predicted-class counts; the
        estimate by numpy.linalg.lstsq (rcond = 1/CC_BBSE_MAX_COND) on the
        joint confusion fractions, clipped at 0 and renormalised;
  em:   target posterior rows (in units of 1e-4) + source label fractions;
        the Saerens-Latinne-Decaestecker EM in plain numpy, on the raw rows,
        and on the (predicted class, confidence bin) cells concord's
        summaries keep, weighted by the window's cell counts, with as cell
        posterior either the window's cell mean or the source's cell mean.
Hand-built degenerate confusion tables (classes never told apart, a class
never predicted, a class absent from the source labels, near-collinear
columns) are in "bbse_degenerate".

    /usr/bin/python3 tests/reference/gen_label_shift_reference.py [OUT.json]
    /usr/bin/python3 tests/reference/gen_label_shift_reference.py --check COMMITTED.json

    /usr/bin/python3 tests/reference/gen_label_shift_reference.py --measure [DRAWS]

--check regenerates into a temporary file and compares it numerically with
COMMITTED.json; it exits 77 (skipped) when numpy cannot be imported.
--measure repeats the synthetic draws (DRAWS rounds, default 40, of 12
random-shift settings, and 5*DRAWS draws of the large shift) and prints the
spread of the errors the C test bounds; nothing is written.
Run with Debian's python (python3-numpy).
"""
import json
import math
import re
import sys

import refcheck

SEED = 20240617
MEASURE_SEED = 7
REL_TOL = 1e-9
ABS_TOL = 1e-12

MAX_COND = 1e6          # CC_BBSE_MAX_COND in metrics/label_shift.h
EM_BINS = 10            # CC_EM_BINS in metrics/summary.h
EM_TOL = 1e-12
EM_MAX_ITER = 10000
N_PER_SIDE = 5000
POST_SCALE = 10000      # posteriors stored as integers in units of 1/POST_SCALE


def import_libraries():
    global np
    import numpy as np


def num(x):
    """JSON number, or null for an undefined or infinite value."""
    x = float(x)
    return None if not math.isfinite(x) else x


# ---------------------------------------------------------------- estimators

def bbse(confusion, target_pred):
    """Lipton, Wang & Smola (2018): solve C w = mu on the classes seen as
    labels, least squares with singular values <= s_max / MAX_COND dropped
    (numpy.linalg.lstsq), q_j = w_j p_j, clip at 0, renormalise."""
    conf = np.asarray(confusion, dtype=float)
    tgt = np.asarray(target_pred, dtype=float)
    k = conf.shape[0]
    c = conf / conf.sum()
    mu = tgt / tgt.sum()
    p = c.sum(axis=0)
    cols = np.flatnonzero(conf.sum(axis=0) > 0)
    a = c[:, cols]
    w, _, rank, s = np.linalg.lstsq(a, mu, rcond=1.0 / MAX_COND)
    cond = s.max() / s.min() if s.min() > 0 else math.inf
    raw = w * p[cols]
    clipped = bool((raw < 0).any())
    kept = np.clip(raw, 0.0, None)
    q = np.zeros(k)
    q[cols] = kept / kept.sum()
    return {
        "priors": q.tolist(),
        "raw_priors": [num(x) for x in raw] if len(cols) == k else None,
        "condition_number": num(cond),
        "regularized": int(rank < len(cols)),
        "clipped": int(clipped),
    }


def em(posteriors, weights, source_priors, tol=EM_TOL, max_iter=EM_MAX_ITER):
    """Saerens, Latinne & Decaestecker (2002), with row weights u:
    a_rj = (q_j/p_j) s_rj / sum_l (q_l/p_l) s_rl;  q_j <- sum_r u_r a_rj / sum_r u_r,
    from q = p until max_j |dq_j| < tol."""
    s = np.asarray(posteriors, dtype=float)
    u = np.ones(len(s)) if weights is None else np.asarray(weights, dtype=float)
    p = np.asarray(source_priors, dtype=float)
    active = p > 0
    p = np.where(active, p / p[active].sum(), 0.0)
    q = p.copy()
    iterations, converged = 0, False
    while iterations < max_iter:
        ratio = np.where(active, q / np.where(active, p, 1.0), 0.0)
        num_ = s * ratio
        den = num_.sum(axis=1)
        use = (den > 0) & (u > 0)
        nxt = (u[use, None] * (num_[use] / den[use, None])).sum(axis=0) / u[use].sum()
        delta = np.abs(nxt - q).max()
        q = nxt
        iterations += 1
        if delta < tol:
            converged = True
            break
    return q, iterations, converged


def em_cell_ids(posteriors):
    """Cell of each row as concord's summaries assign it (cc_em_cell):
    predicted class (argmax, ties to the lowest index) * 10 + confidence bin
    ceil(10 max) - 1, clamped to 0..9."""
    s = np.asarray(posteriors, dtype=float)
    top = s.argmax(axis=1)
    b = np.clip(np.ceil(s.max(axis=1) * EM_BINS).astype(int) - 1, 0, EM_BINS - 1)
    return top * EM_BINS + b


def em_cells(target_rows, source_rows):
    """Target rows grouped by cell: the occupied cells in order, their counts,
    the target's mean row per cell, and the source's mean row per cell (the
    target's where the source has no row in that cell)."""
    ct, cs = em_cell_ids(target_rows), em_cell_ids(source_rows)
    ids, counts, t_means, s_means = [], [], [], []
    for g in np.unique(ct):
        t = target_rows[ct == g]
        s = source_rows[cs == g]
        ids.append(int(g))
        counts.append(int(len(t)))
        t_means.append(t.mean(axis=0).tolist())
        s_means.append((s if len(s) else t).mean(axis=0).tolist())
    return ids, counts, t_means, s_means


# ------------------------------------------------------------ synthetic data

def gaussian_posteriors(x, sep, priors):
    """p(j | x) for x | y=j ~ N(sep e_j, I) and class priors `priors`."""
    k = x.shape[1]
    means = sep * np.eye(k)
    d2 = ((x[:, None, :] - means[None, :, :]) ** 2).sum(axis=2)
    with np.errstate(divide="ignore"):
        logits = np.log(priors)[None, :] - 0.5 * d2
    logits -= logits.max(axis=1, keepdims=True)
    e = np.exp(logits)
    return e / e.sum(axis=1, keepdims=True)


def draw(rng, sep, priors, n):
    k = len(priors)
    y = rng.choice(k, size=n, p=priors)
    x = sep * np.eye(k)[y] + rng.standard_normal((n, k))
    return x, y


def synthetic_case(rng, k, sep, n_source, n_target, p=None, q=None):
    if p is None:
        p = rng.dirichlet(np.full(k, 6.0))
    if q is None:
        q = 0.85 * rng.dirichlet(np.full(k, 1.0)) + 0.15 / k
    p, q = np.asarray(p, dtype=float), np.asarray(q, dtype=float)
    xs, ys = draw(rng, sep, p, n_source)
    xt, yt = draw(rng, sep, q, n_target)
    post_s = gaussian_posteriors(xs, sep, p)
    pred_s = post_s.argmax(axis=1)
    post_t = gaussian_posteriors(xt, sep, p)
    pred_t = post_t.argmax(axis=1)
    confusion = np.zeros((k, k), dtype=int)
    np.add.at(confusion, (pred_s, ys), 1)
    return {
        "p": p, "q": q, "confusion": confusion,
        "target_pred": np.bincount(pred_t, minlength=k),
        "target_labels": np.bincount(yt, minlength=k),
        "source_labels": np.bincount(ys, minlength=k),
        "post_s": post_s, "post_t": post_t,
        "accuracy_source": float((pred_s == ys).mean()),
    }


def l1(a, b):
    return float(np.abs(np.asarray(a) - np.asarray(b)).sum())


def bbse_cases(rng):
    cases = []
    for k in (3, 4, 5, 6):
        for sep in (2.0, 3.0):
            d = synthetic_case(rng, k, sep, N_PER_SIDE, N_PER_SIDE)
            est = bbse(d["confusion"], d["target_pred"])
            cases.append({
                "name": f"synthetic Gaussian classes, K={k}, sep={sep}",
                "inputs": {"k": k, "confusion": d["confusion"].tolist(),
                           "target_pred": d["target_pred"].tolist()},
                "true_q": d["q"].tolist(),
                "source_p": d["p"].tolist(),
                "target_label_fractions": (d["target_labels"] / N_PER_SIDE).tolist(),
                "source_accuracy": d["accuracy_source"],
                "expected": est,
                "l1_to_true_q": l1(est["priors"], d["q"]),
                "function": {"priors": "numpy.linalg.lstsq(rcond=1e-6) on the joint confusion, "
                                       "q = w p clipped at 0 and renormalised",
                             "condition_number": "numpy.linalg.lstsq singular values, max/min"},
            })
    return cases


def em_cases(rng):
    cases = []
    settings = [(3, 2.5, None, None, "random"), (4, 2.5, None, None, "random"),
                (5, 3.0, None, None, "random"), (6, 3.0, None, None, "random"),
                (4, 2.0, [0.55, 0.25, 0.15, 0.05], [0.10, 0.15, 0.25, 0.50], "large")]
    for k, sep, p, q, shift in settings:
        d = synthetic_case(rng, k, sep, N_PER_SIDE, N_PER_SIDE, p, q)
        stored = np.rint(d["post_t"] * POST_SCALE).astype(int)
        rows = stored / float(POST_SCALE)
        source_rows = np.rint(d["post_s"] * POST_SCALE) / float(POST_SCALE)
        source_priors = d["source_labels"] / N_PER_SIDE
        q_raw, it_raw, conv_raw = em(rows, None, source_priors)
        ids, counts, t_means, s_means = em_cells(rows, source_rows)
        q_t, it_t, conv_t = em(t_means, counts, source_priors)
        q_s, it_s, conv_s = em(s_means, counts, source_priors)
        cases.append({
            "name": f"synthetic Gaussian classes, K={k}, sep={sep}, {shift} shift",
            "shift": shift,
            "inputs": {"k": k, "n": N_PER_SIDE, "source_priors": source_priors.tolist(),
                       "posterior_scale": POST_SCALE, "posteriors": stored.tolist(),
                       "cell_ids": ids, "cell_counts": counts,
                       "cell_means": t_means, "baseline_cell_means": s_means,
                       "tol": EM_TOL, "max_iter": EM_MAX_ITER},
            "true_q": d["q"].tolist(),
            "source_p": d["p"].tolist(),
            "target_label_fractions": (d["target_labels"] / N_PER_SIDE).tolist(),
            "expected": {"priors": q_raw.tolist(), "iterations": it_raw,
                         "converged": int(conv_raw),
                         "cell_priors": q_t.tolist(), "cell_iterations": it_t,
                         "cell_converged": int(conv_t),
                         "baseline_cell_priors": q_s.tolist(),
                         "baseline_cell_iterations": it_s,
                         "baseline_cell_converged": int(conv_s)},
            "l1_to_true_q": l1(q_raw, d["q"]),
            "cell_l1_to_true_q": l1(q_t, d["q"]),
            "cell_vs_raw_l1": l1(q_t, q_raw),
            "baseline_cell_l1_to_true_q": l1(q_s, d["q"]),
            "baseline_cell_vs_raw_l1": l1(q_s, q_raw),
            "function": {"priors": "numpy EM (Saerens et al. 2002) on the rows / 1e4",
                         "cell_priors": "same EM on the window's cell means, weighted by "
                                        "the window's cell counts",
                         "baseline_cell_priors": "same EM on the source's cell means, "
                                                 "weighted by the window's cell counts"},
        })
    return cases


def degenerate_cases():
    tables = [
        ("classes 0 and 1 never told apart (both always predicted 0)",
         [[300, 200, 10], [0, 0, 0], [20, 30, 400]], [500, 0, 500]),
        ("class 2 never predicted, in source or target",
         [[400, 50, 30], [60, 300, 40], [0, 0, 0]], [450, 550, 0]),
        ("class 2 never predicted in source, predicted in target",
         [[400, 50, 30], [60, 300, 40], [0, 0, 0]], [450, 450, 100]),
        ("class 1 absent from the source labels",
         [[400, 0, 30], [60, 0, 40], [20, 0, 300]], [300, 200, 500]),
        ("two proportional columns (identical confusion profiles)",
         [[300, 150, 10], [100, 50, 20], [20, 10, 400]], [400, 200, 400]),
        ("near-collinear columns, condition number above 1e6",
         [[3000000, 3000001, 100], [1000000, 1000000, 200], [200, 200, 4000000]],
         [4000000, 1000000, 3000000]),
        ("near-collinear columns, condition number below 1e6",
         [[3000, 3100, 100], [1000, 900, 200], [200, 200, 4000]], [4000, 1000, 3000]),
        ("one class only", [[50]], [70]),
        ("every event predicted class 0", [[100, 200, 300], [0, 0, 0], [0, 0, 0]], [1000, 0, 0]),
    ]
    cases = []
    for name, conf, tgt in tables:
        cases.append({
            "name": name,
            "inputs": {"k": len(conf), "confusion": conf, "target_pred": tgt},
            "expected": bbse(conf, tgt),
            "function": {"priors": "numpy.linalg.lstsq(rcond=1e-6), clip, renormalise"},
        })
    return cases


# ---------------------------------------------------------------- file I/O

def compact_number_arrays(text):
    """Put each innermost array of numbers on one line."""
    return re.sub(r"\[[^\[\]{}\"]*\]",
                  lambda m: "[" + ",".join(x.strip() for x in m.group(0)[1:-1].split(",")
                                            if x.strip()) + "]",
                  text)


def generate(path):
    import_libraries()
    rng = np.random.default_rng(SEED)
    bb = bbse_cases(rng)
    ee = em_cases(rng)
    out = {
        "about": "Synthetic label-shift reference cases for metrics/label_shift.c "
                 "(tests/reference/gen_label_shift_reference.py). null = infinite or undefined.",
        "seed": SEED,
        "versions": {"numpy": np.__version__},
        "summary": {
            "bbse_max_l1_to_true_q": max(c["l1_to_true_q"] for c in bb),
            "em_max_l1_to_true_q": max(c["l1_to_true_q"] for c in ee),
            "em_cell_max_l1_to_true_q": max(c["cell_l1_to_true_q"] for c in ee),
            "em_cell_vs_raw_max_l1_random_shift": max(c["cell_vs_raw_l1"] for c in ee
                                                      if c["shift"] == "random"),
            "em_cell_vs_raw_l1_large_shift": max(c["cell_vs_raw_l1"] for c in ee
                                                 if c["shift"] == "large"),
            "em_baseline_cell_max_l1_to_true_q": max(c["baseline_cell_l1_to_true_q"] for c in ee),
            "em_baseline_cell_vs_raw_max_l1": max(c["baseline_cell_vs_raw_l1"] for c in ee),
        },
        "bbse": bb,
        "bbse_degenerate": degenerate_cases(),
        "em": ee,
    }
    text = compact_number_arrays(json.dumps(out, indent=1, allow_nan=False))
    with open(path, "w") as f:
        f.write(text)
        f.write("\n")


def check(committed):
    return refcheck.check("label_shift_reference_regenerates", committed, generate, import_libraries,
                          "numpy", REL_TOL, ABS_TOL)


def measure(rounds):
    """Spread of estimation errors over many synthetic draws (seed MEASURE_SEED)."""
    import_libraries()
    rng = np.random.default_rng(MEASURE_SEED)

    def run(label, settings, reps):
        keys = ("bbse_vs_true", "em_raw_vs_true", "window_cells_vs_raw", "baseline_cells_vs_raw",
                "window_cells_vs_true", "baseline_cells_vs_true")
        res = {key: [] for key in keys}
        for _ in range(reps):
            for k, sep, p, q in settings:
                d = synthetic_case(rng, k, sep, N_PER_SIDE, N_PER_SIDE, p, q)
                b = bbse(d["confusion"], d["target_pred"])
                rows = np.rint(d["post_t"] * POST_SCALE) / POST_SCALE
                srows = np.rint(d["post_s"] * POST_SCALE) / POST_SCALE
                sp = d["source_labels"] / N_PER_SIDE
                q_raw, _, _ = em(rows, None, sp, tol=1e-10)
                _, counts, t_means, s_means = em_cells(rows, srows)
                q_w, _, _ = em(t_means, counts, sp, tol=1e-10)
                q_b, _, _ = em(s_means, counts, sp, tol=1e-10)
                for key, val in zip(keys, (l1(b["priors"], d["q"]), l1(q_raw, d["q"]),
                                           l1(q_w, q_raw), l1(q_b, q_raw),
                                           l1(q_w, d["q"]), l1(q_b, d["q"]))):
                    res[key].append(val)
        print(f"{label}: {len(res[keys[0]])} draws, n = {N_PER_SIDE} per side, L1")
        for key in keys:
            v = np.array(res[key])
            p50, p95, p99 = np.percentile(v, [50, 95, 99])
            print(f"  {key:24s} mean {v.mean():.4f}  p50 {p50:.4f}  p95 {p95:.4f}  "
                  f"p99 {p99:.4f}  max {v.max():.4f}")

    run("random shifts, K 3..6, sep 2 / 2.5 / 3",
        [(k, sep, None, None) for k in (3, 4, 5, 6) for sep in (2.0, 2.5, 3.0)], rounds)
    run("large shift, K 4, sep 2, p [.55,.25,.15,.05] -> q [.10,.15,.25,.50]",
        [(4, 2.0, [0.55, 0.25, 0.15, 0.05], [0.10, 0.15, 0.25, 0.50])], 5 * rounds)
    return 0


def measure_option(argv):
    if len(argv) in (2, 3) and argv[1] == "--measure":
        return measure(int(argv[2]) if len(argv) == 3 else 40)
    return None


def main(argv):
    return refcheck.main(argv, __doc__, "label_shift_reference.json", generate, check, measure_option)


if __name__ == "__main__":
    sys.exit(main(sys.argv))
