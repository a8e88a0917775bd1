#!/usr/bin/python3
"""Reference values for concord's drift, calibration and KS-from-histogram
code (metrics/drift.c, metrics/calibration.c), from general-purpose
libraries (numpy, scipy, scikit-learn).

Draws cases with a fixed numpy seed and writes, for each case, the inputs,
the expected values and the name of the function that produced each value.
tests/metrics/test_drift.c and test_calibration.c read the output.

    /usr/bin/python3 tests/reference/gen_drift_reference.py [OUT.json]
    /usr/bin/python3 tests/reference/gen_drift_reference.py --check COMMITTED.json

--check regenerates into a temporary file and compares it numerically with
COMMITTED.json; it exits 77 (skipped) when a library cannot be imported.
Run with Debian's python (python3-numpy, -scipy, -sklearn).

Sections
  chi2        2 x k homogeneity: scipy.stats.chi2_contingency(correction=False)
              for X^2, df, p; lambda_="log-likelihood" for G^2 and its p.
              All-zero columns are removed before calling scipy (as the C
              code does; scipy refuses a zero expected count).
  psi         numpy, fractions smoothed as (f + eps) / (1 + k eps).
  js          scipy.spatial.distance.jensenshannon(p, q, base=2) ** 2 (bits).
  ks_pvalue   scipy.stats.kstwobign.sf(sqrt(n m / (n + m)) d): Kolmogorov's
              limiting distribution (not ks_2samp's method='asymp').
  calibration probability rows (M members x K classes, exact in float32) and
              labels: ECE / MCE with 15 bins (b/15, (b+1)/15] from numpy,
              multi-class Brier as the sum over classes of sklearn's binary
              brier_score_loss(y == k, p_k), NLL from sklearn.metrics.log_loss
              (and numpy with the 1e-15 floor when some p_y = 0).
  ks_hist     raw float32 samples of the score shapes a summary histograms,
              with scipy.stats.ks_2samp(...).statistic (exact D on raw values).
"""
import json
import math
import sys

import refcheck

SEED = 20240613
REL_TOL = 1e-9
ABS_TOL = 1e-13
CALIB_BINS = 15
NLL_EPS = 1e-15


def import_libraries():
    global np, scipy_stats, jensenshannon, brier_score_loss, log_loss
    import numpy as np
    import scipy.stats as scipy_stats
    from scipy.spatial.distance import jensenshannon
    from sklearn.metrics import brier_score_loss, log_loss


def num(x):
    """JSON number, or null for an undefined (NaN) value."""
    x = float(x)
    return None if math.isnan(x) else x


# ---------------------------------------------------------------- class counts

def random_counts(rng, k, scale):
    counts = rng.multinomial(scale, rng.dirichlet(np.full(k, 0.8)))
    counts *= rng.random(k) < 0.85  # some empty classes
    return counts


def count_pairs(rng):
    """(a, b) count vectors: small and large totals, shifted and not, with
    columns empty on one side or on both."""
    pairs = []
    while len(pairs) < 16:
        k = int(rng.integers(2, 13))
        scale = int(rng.choice([40, 300, 5000, 200000]))
        a = random_counts(rng, k, scale)
        if len(pairs) % 3 == 0:
            b = random_counts(rng, k, int(scale * rng.uniform(0.3, 3)))
        else:  # same mix, sampling noise only
            p = (a + 0.5) / (a + 0.5).sum()
            b = rng.multinomial(int(scale * rng.uniform(0.3, 3)), p)
        if len(pairs) % 4 == 1:
            j = int(rng.integers(0, k))
            a[j] = 0
            b[j] = 0  # a column empty on both sides
        if a.sum() == 0 or b.sum() == 0 or np.count_nonzero(a + b) < 2:
            continue
        pairs.append((a, b))
    return pairs


def chi2_cases(rng):
    cases = []
    for a, b in count_pairs(rng):
        keep = (a + b) > 0
        table = np.vstack([a[keep], b[keep]])
        x2, p, dof, _ = scipy_stats.chi2_contingency(table, correction=False)
        g2, gp, gdof, _ = scipy_stats.chi2_contingency(table, correction=False,
                                                       lambda_="log-likelihood")
        assert dof == gdof
        cases.append({
            "inputs": {"a": a.tolist(), "b": b.tolist()},
            "expected": {"stat": num(x2), "dof": int(dof), "p_value": num(p),
                         "g_stat": num(g2), "g_p_value": num(gp)},
            "function": {
                "stat": "scipy.stats.chi2_contingency(correction=False), all-zero columns removed",
                "g_stat": "scipy.stats.chi2_contingency(correction=False, "
                          "lambda_='log-likelihood')",
            },
        })
    # undefined: one side empty; a single non-empty column
    for a, b in (([0, 0, 0], [3, 4, 5]), ([7, 0, 0], [9, 0, 0])):
        cases.append({
            "inputs": {"a": a, "b": b},
            "expected": {"stat": None, "dof": 0, "p_value": None, "g_stat": None,
                         "g_p_value": None},
            "function": {"stat": "definition: empty row or fewer than two non-empty "
                                 "columns, no test (METHODS 4.2)"},
        })
    return cases


def psi_numpy(a, b, eps):
    k = len(a)
    r = (a / a.sum() + eps) / (1 + k * eps)
    c = (b / b.sum() + eps) / (1 + k * eps)
    with np.errstate(divide="ignore", invalid="ignore"):
        terms = np.where(r == c, 0.0, (c - r) * np.log(c / r))
    return float(np.sum(terms))


def psi_cases(rng):
    cases = []
    pairs = count_pairs(rng)
    pairs.append((np.array([500, 300, 200]), np.array([400, 350, 250])))
    pairs.append((np.array([5000, 5000, 0]), np.array([4000, 4000, 2000])))
    for i, (a, b) in enumerate(pairs):
        for eps in ((1e-4, 1e-6) if i < len(pairs) - 2 else (1e-4, 1e-6, 1e-9)):
            cases.append({
                "inputs": {"baseline": a.tolist(), "current": b.tolist(), "eps": eps},
                "expected": {"psi": num(psi_numpy(a, b, eps))},
                "function": {"psi": "numpy: sum (c - r) ln(c / r), fractions "
                                    "(f + eps) / (1 + k eps)"},
            })
    return cases


def js_cases(rng):
    cases = []
    pairs = count_pairs(rng)
    pairs.append((np.array([500, 300, 200]), np.array([400, 350, 250])))
    pairs.append((np.array([9, 1]), np.array([1, 9])))
    pairs.append((np.array([10, 0, 0]), np.array([0, 0, 7])))  # disjoint: 1 bit
    for a, b in pairs:
        js = jensenshannon(a / a.sum(), b / b.sum(), base=2) ** 2
        cases.append({
            "inputs": {"a": a.tolist(), "b": b.tolist()},
            "expected": {"js_bits": num(js)},
            "function": {"js_bits": "scipy.spatial.distance.jensenshannon(p, q, base=2) ** 2"},
        })
    return cases


def ks_pvalue_cases(rng):
    cases = []
    specs = [(0.11, 100, 100), (0.0, 50, 80), (0.02, 40, 31), (0.5, 30, 30),
             (0.3, 1000, 200), (0.013, 20000, 15000), (1.0, 100000, 90000)]
    for _ in range(10):
        n, m = (int(x) for x in rng.integers(30, 50000, size=2))
        lam = float(rng.uniform(0.05, 3.0))
        d = lam / math.sqrt(n * m / (n + m))
        specs.append((min(d, 1.0), n, m))
    for d, n, m in specs:
        en = n * m / (n + m)
        cases.append({
            "inputs": {"d": d, "n": n, "m": m},
            "expected": {"p_value": num(scipy_stats.kstwobign.sf(math.sqrt(en) * d))},
            "function": {"p_value": "scipy.stats.kstwobign.sf(sqrt(n m / (n + m)) d)"},
        })
    for d, n, m in ((0.2, 29, 500), (0.2, 500, 10)):
        cases.append({
            "inputs": {"d": d, "n": n, "m": m},
            "expected": {"p_value": None},
            "function": {"p_value": "definition: fewer than CC_DRIFT_MIN_EVENTS = 30 events"},
        })
    return cases


# ---------------------------------------------------------------- calibration

def dyadic_simplex(rng, k, alpha, zero):
    """Probability vector of multiples of 2^-20: exact in float32, sums to 1."""
    scale = 1 << 20
    p = rng.dirichlet(np.full(k, alpha))
    if zero is not None:
        p[zero] = 0.0
        if p.sum() == 0.0:
            p[(zero + 1) % k] = 1.0
        p /= p.sum()
    counts = np.floor(p * scale).astype(np.int64)
    rest = scale - int(counts.sum())
    order = np.argsort(-(p * scale - counts), kind="stable")
    counts[order[:rest]] += 1
    return counts / scale


def calibration_expected(avg, labels):
    n, k = avg.shape
    conf = avg.max(axis=1)
    pred = avg.argmax(axis=1)  # ties to the lowest index, as in C
    bins = np.clip(np.ceil(conf * CALIB_BINS).astype(int) - 1, 0, CALIB_BINS - 1)
    ece, mce, occupied = 0.0, 0.0, []
    for b in range(CALIB_BINS):
        sel = bins == b
        if not sel.any():
            continue
        gap = abs(np.mean(pred[sel] == labels[sel]) - np.mean(conf[sel]))
        ece += sel.sum() / n * gap
        mce = max(mce, gap)
        occupied.append(b)
    brier = sum(brier_score_loss((labels == c).astype(int), avg[:, c]) for c in range(k))
    py = avg[np.arange(n), labels]
    nll_numpy = float(-np.mean(np.log(np.clip(py, NLL_EPS, 1 - NLL_EPS))))
    out = {"ece": num(ece), "mce": num(mce), "brier": num(brier), "nll": nll_numpy,
           "occupied_bins": occupied}
    fn = {"ece": "numpy: sum_b |B_b|/n |acc - conf|, bins (b/15, (b+1)/15] (Guo et al. 2017)",
          "brier": "sum over classes of sklearn.metrics.brier_score_loss(y == k, p_k)",
          "nll": "numpy: -mean ln clip(p_y, 1e-15, 1 - 1e-15)"}
    if (py > 0).all():
        out["nll_sklearn"] = num(log_loss(labels, avg, labels=list(range(k))))
        fn["nll_sklearn"] = "sklearn.metrics.log_loss(labels=range(K))"
    return out, fn


def calibration_cases(rng):
    cases = []
    for idx in range(10):
        m = int(rng.choice([1, 1, 3, 5]))
        k = int(rng.integers(2, 9))
        n = int(rng.integers(5, 120))
        alpha = float(rng.choice([0.2, 0.5, 2.0]))
        labels = rng.integers(0, k, size=n)
        probs = np.empty((n, m, k))
        for i in range(n):
            for j in range(m):
                # members that lean towards the label, some with a zero entry
                zero = int(rng.integers(0, k)) if idx % 4 == 3 else None
                probs[i, j] = dyadic_simplex(rng, k, alpha, zero)
                if rng.random() < 0.6:
                    probs[i, j] = 0.5 * probs[i, j] + 0.5 * np.eye(k)[labels[i]]
        if idx == 7:
            probs[0, :, :] = 0.0  # p_y = 0 on every member: NLL hits the floor
            probs[0, :, (labels[0] + 1) % k] = 1.0
        assert np.all(probs.astype(np.float32) == probs)
        avg = np.zeros((n, k))
        for j in range(m):  # the order in which C adds the members
            avg += probs[:, j, :]
        avg /= m
        expected, fn = calibration_expected(avg, labels)
        cases.append({
            "inputs": {"m": m, "k": k, "probs": probs.reshape(n, m * k).tolist(),
                       "labels": labels.tolist()},
            "expected": expected,
            "function": fn,
        })
    return cases


# ---------------------------------------------------------------- KS from histograms

def f32(x):
    return np.asarray(x, dtype=np.float32)


def ensemble_outputs(rng, n, scale, k=10, m=5):
    """Averaged output of a simulated ensemble: member logits = scale x
    (shared item logits with the label boosted + member noise), softmax,
    stored as float32 and averaged in double, as the summary does. Returns
    the four scores a summary histograms (maximum probability, entropy and
    mutual information in nats, probability of class 0)."""
    y = rng.integers(0, k, n)
    base = rng.normal(0.0, 1.0, (n, 1, k))
    base[np.arange(n), 0, y] += 3.0
    z = scale * (base + 0.5 * rng.normal(0.0, 1.0, (n, m, k)))
    z -= z.max(axis=2, keepdims=True)
    p = np.exp(z)
    p /= p.sum(axis=2, keepdims=True)
    p = f32(p).astype(np.float64)
    avg = p.mean(axis=1)

    def entropy(q):
        with np.errstate(divide="ignore", invalid="ignore"):
            return -np.sum(np.where(q > 0, q * np.log(q), 0.0), axis=-1)

    tu = entropy(avg)
    au = entropy(p).mean(axis=1)
    return {"maxprob": avg.max(axis=1), "entropy": tu, "mi": np.maximum(tu - au, 0.0),
            "classp": avg[:, 0]}


# Parametric shapes: (scale of the histogram, recipe without shift, with shift).
SHAPES = {
    "maxprob": ("prob", "1 - Beta(0.5, 20)", "1 - Beta(0.5, 12)",
                lambda r, n, s: 1.0 - r.beta(0.5, 12.0 if s else 20.0, n)),
    "entropy": ("nats", "0.01 + (ln 10 - 0.01) Beta(0.7, 2.5)",
                "0.01 + (ln 10 - 0.01) Beta(0.8, 2.5)",
                lambda r, n, s: 0.01 + (math.log(10) - 0.01) * r.beta(0.8 if s else 0.7, 2.5, n)),
    "mi": ("nats", "LogNormal(ln 0.005, 1.5)", "LogNormal(ln 0.005 + 0.3, 1.5)",
           lambda r, n, s: r.lognormal(math.log(0.005) + (0.3 if s else 0.0), 1.5, n)),
    "classp": ("prob", "mixture 0.30 (1 - Beta(0.4, 15)) + 0.70 Beta(0.3, 30)",
               "mixture 0.35 (1 - Beta(0.4, 15)) + 0.65 Beta(0.3, 30)",
               lambda r, n, s: np.where(r.random(n) < (0.35 if s else 0.30),
                                        1.0 - r.beta(0.4, 15.0, n), r.beta(0.3, 30.0, n))),
}
SHAPE_SIZES = [(50, 50, False), (1000, 3000, False), (50, 400, True), (300, 300, True),
               (2000, 20000, True)]
# Simulated ensembles: (name prefix, n, m, logit scale of a, logit scale of b).
# Scale 6 is a confident ensemble, scale 10 a very confident one (many class
# probabilities far below 1e-7, many maximum probabilities within 1e-7 of 1).
ENSEMBLE_CASES = [("ensemble", 1000, 1000, 6.0, 6.0), ("ensemble", 2000, 2000, 6.0, 8.0),
                  ("ensemble10", 1000, 1000, 10.0, 14.0)]
SCALE_OF = {"maxprob": "prob", "entropy": "nats", "mi": "nats", "classp": "prob"}


def f32_text(values):
    """Shortest decimal strings that read back (as float32) to each value."""
    return [float(np.format_float_scientific(v, unique=True, trim="-")) for v in f32(values)]


def ks_case(name, scale, recipe, x, y, shifted):
    x, y = f32(x), f32(y)
    xs, ys = f32_text(x), f32_text(y)
    assert np.array_equal(f32(xs), x) and np.array_equal(f32(ys), y)
    d = scipy_stats.ks_2samp(x.astype(np.float64), y.astype(np.float64)).statistic
    return {
        "name": name, "scale": scale, "recipe": recipe, "shifted": shifted,
        "inputs": {"a": xs, "b": ys},
        "expected": {"d": num(d)},
        "function": {"d": "scipy.stats.ks_2samp(a, b).statistic on the raw float32 values"},
    }


def ks_hist_cases(rng):
    cases = []
    for shape, (scale, base, shifted_recipe, draw) in SHAPES.items():
        for n, m, shifted in SHAPE_SIZES:
            recipe = f"a: {n} x {base}; b: {m} x {shifted_recipe if shifted else base}"
            cases.append(ks_case(shape, scale, recipe, draw(rng, n, False),
                                 draw(rng, m, shifted), shifted))
    for prefix, n, m, sa, sb in ENSEMBLE_CASES:
        a = ensemble_outputs(rng, n, sa)
        b = ensemble_outputs(rng, m, sb)
        for score in ("maxprob", "entropy", "mi", "classp"):
            recipe = (f"simulated ensemble (5 members, 10 classes, logits scale x (N(0,1) "
                      f"+ 3 on the label + 0.5 N(0,1) per member)), {score}; "
                      f"a: {n} at scale {sa}; b: {m} at scale {sb}")
            cases.append(ks_case(prefix + "_" + score, SCALE_OF[score], recipe, a[score],
                                 b[score], sa != sb))
    return cases


def generate(path):
    import_libraries()
    rng = np.random.default_rng(SEED)
    import scipy
    import sklearn
    out = {
        "about": "Reference values for metrics/drift.c and metrics/calibration.c "
                 "(tests/reference/gen_drift_reference.py). null = undefined (NaN).",
        "seed": SEED,
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__,
                     "sklearn": sklearn.__version__},
        "chi2": chi2_cases(rng),
        "psi": psi_cases(rng),
        "js": js_cases(rng),
        "ks_pvalue": ks_pvalue_cases(rng),
        "calibration": calibration_cases(rng),
        "ks_hist": ks_hist_cases(rng),
    }
    with open(path, "w") as f:
        json.dump(out, f, indent=None, separators=(",", ":"), allow_nan=False)
        f.write("\n")


def check(committed):
    return refcheck.check("drift_reference_regenerates", committed, generate, import_libraries,
                          "numpy, scipy, sklearn", REL_TOL, ABS_TOL)


def main(argv):
    return refcheck.main(argv, __doc__, "drift_reference.json", generate, check)


if __name__ == "__main__":
    sys.exit(main(sys.argv))
