#!/usr/bin/python3
"""Reference values for concord's metrics/ library, from general-purpose
libraries (numpy, scipy, scikit-learn, statsmodels).

Draws random cases with a fixed numpy seed and writes, for each case, the
inputs, the expected values and the name of the function that produced each
value. The C tests in tests/metrics/ read the output.

    /usr/bin/python3 tests/reference/gen_metrics_reference.py [OUT.json]
    /usr/bin/python3 tests/reference/gen_metrics_reference.py --check COMMITTED.json

--check regenerates into a temporary file and compares it numerically with
COMMITTED.json; it exits 77 (skipped) when a library cannot be imported.
Run with Debian's python (python3-numpy, -scipy, -sklearn, -statsmodels).
"""
import json
import math
import sys

import refcheck

SEED = 20240611
REL_TOL = 1e-9
ABS_TOL = 1e-13


def import_libraries():
    global np, scipy_stats, cohen_kappa_score, sm_cohens_kappa, sm_fleiss_kappa, sm_mcnemar
    import numpy as np
    import scipy.stats as scipy_stats
    from sklearn.metrics import cohen_kappa_score
    from statsmodels.stats.inter_rater import cohens_kappa as sm_cohens_kappa
    from statsmodels.stats.inter_rater import fleiss_kappa as sm_fleiss_kappa
    from statsmodels.stats.contingency_tables import mcnemar as sm_mcnemar


def num(x):
    """JSON number, or null for an undefined (NaN) value."""
    x = float(x)
    return None if math.isnan(x) else x


# Fleiss (1971), Psych. Bull. 76:378-382: 30 patients x 6 psychiatrists x
# 5 diagnoses, as counts per patient. Transcribed from the rater-level table
# `diagnoses` in statsmodels' own tests (test_inter_rater.py), which checks it
# against kappa 0.4302445; cross-checked below when that module is present.
FLEISS_1971 = [
    [0, 0, 0, 6, 0], [0, 3, 0, 0, 3], [0, 1, 4, 0, 1], [0, 0, 0, 0, 6], [0, 3, 0, 3, 0],
    [2, 0, 4, 0, 0], [0, 0, 4, 0, 2], [2, 0, 3, 1, 0], [2, 0, 0, 4, 0], [0, 0, 0, 0, 6],
    [1, 0, 0, 5, 0], [1, 1, 0, 4, 0], [0, 3, 3, 0, 0], [1, 0, 0, 5, 0], [0, 2, 0, 3, 1],
    [0, 0, 5, 0, 1], [3, 0, 0, 1, 2], [5, 1, 0, 0, 0], [0, 2, 0, 4, 0], [1, 0, 2, 0, 3],
    [0, 0, 0, 0, 6], [0, 1, 0, 5, 0], [0, 2, 0, 1, 3], [2, 0, 0, 4, 0], [1, 0, 0, 4, 1],
    [0, 5, 0, 1, 0], [4, 0, 0, 0, 2], [0, 2, 0, 4, 0], [1, 0, 5, 0, 0], [0, 0, 0, 0, 6],
]

# Wikipedia "Fleiss' kappa" worked example: 10 items x 14 raters x 5 classes.
FLEISS_WIKIPEDIA = [
    [0, 0, 0, 0, 14], [0, 2, 6, 4, 2], [0, 0, 3, 5, 6], [0, 3, 9, 2, 0], [2, 2, 8, 1, 1],
    [7, 7, 0, 0, 0], [3, 2, 6, 3, 0], [2, 5, 3, 2, 2], [6, 5, 2, 1, 0], [0, 2, 2, 3, 7],
]


def cross_check_fleiss_1971():
    try:
        from statsmodels.stats.tests.test_inter_rater import diagnoses
        from statsmodels.stats.inter_rater import aggregate_raters
    except Exception:  # test data not installed: nothing to compare with
        return
    counts, cats = aggregate_raters(diagnoses)
    assert list(cats) == [1, 2, 3, 4, 5]
    assert counts.tolist() == FLEISS_1971, "Fleiss 1971 table differs from statsmodels' copy"


def cohen_cases(rng):
    cases = []
    while len(cases) < 12:
        k = int(rng.integers(2, 6))
        table = rng.integers(0, 40, size=(k, k))
        table *= rng.random((k, k)) < 0.8  # some empty cells, rows or columns
        if len(cases) % 2 == 0:  # raters that mostly agree
            table[np.diag_indices(k)] += rng.integers(0, 80, size=k)
        n = int(table.sum())
        rows, cols = table.sum(axis=1), table.sum(axis=0)
        if n == 0 or any(r == n and c == n for r, c in zip(rows, cols)):
            continue
        a, b = [], []
        for i in range(k):
            for j in range(k):
                a += [i] * int(table[i, j])
                b += [j] * int(table[i, j])
        a, b = np.array(a), np.array(b)
        cases.append({
            "inputs": {"k": k, "table": table.tolist()},
            "expected": {
                "kappa": num(cohen_kappa_score(a, b)),
                "kappa_statsmodels": num(sm_cohens_kappa(table.astype(float)).kappa),
                "disagreement": num(np.mean(a != b)),
            },
            "function": {
                "kappa": "sklearn.metrics.cohen_kappa_score (expanded label vectors)",
                "kappa_statsmodels": "statsmodels.stats.inter_rater.cohens_kappa",
                "disagreement": "numpy.mean(a != b) (definition)",
            },
        })
    return cases


def fleiss_cases(rng):
    cases = []
    for name, table in (("Fleiss 1971 table (statsmodels test data)", FLEISS_1971),
                        ("Wikipedia Fleiss' kappa example", FLEISS_WIKIPEDIA)):
        t = np.array(table)
        cases.append({
            "name": name,
            "inputs": {"m": int(t[0].sum()), "table": t.tolist()},
            "expected": {"kappa": num(sm_fleiss_kappa(t, method="fleiss"))},
            "function": {"kappa": "statsmodels.stats.inter_rater.fleiss_kappa"},
        })
    while len(cases) < 12:
        n = int(rng.integers(3, 40))
        m = int(rng.integers(2, 11))
        k = int(rng.integers(2, 7))
        rows = [rng.multinomial(m, rng.dirichlet(np.full(k, 0.7))) for _ in range(n)]
        t = np.array(rows)
        if (t.sum(axis=0) == n * m).any():
            continue
        cases.append({
            "inputs": {"m": m, "table": t.tolist()},
            "expected": {"kappa": num(sm_fleiss_kappa(t, method="fleiss"))},
            "function": {"kappa": "statsmodels.stats.inter_rater.fleiss_kappa"},
        })
    return cases


def dyadic_simplex(rng, k, zeros):
    """A probability vector whose entries are multiples of 2^-20, so it is
    exact in float32 and sums to exactly 1 (scipy.stats.entropy renormalises
    its input, the C code does not)."""
    scale = 1 << 20
    p = rng.dirichlet(np.full(k, float(rng.choice([0.3, 1.0, 5.0]))))
    if zeros:
        p[rng.integers(0, k)] = 0.0
        if p.sum() == 0.0:
            p[0] = 1.0
        p /= p.sum()
    counts = np.floor(p * scale).astype(np.int64)
    rest = scale - int(counts.sum())
    order = np.argsort(-(p * scale - counts), kind="stable")
    counts[order[:rest]] += 1
    return counts / scale


def uncertainty_cases(rng):
    cases = []
    for idx in range(12):
        m = int(rng.integers(1, 7))
        k = int(rng.integers(2, 9))
        probs = np.array([dyadic_simplex(rng, k, zeros=(idx % 3 == 0)) for _ in range(m)])
        if idx == 4:  # identical members: no mutual information
            probs[:] = probs[0]
        mean = probs.mean(axis=0)
        total = scipy_stats.entropy(mean)
        expected = np.mean([scipy_stats.entropy(p) for p in probs])
        mutual_kl = np.mean([scipy_stats.entropy(p, mean) for p in probs])
        cases.append({
            "inputs": {"m": m, "k": k, "probs": probs.tolist()},
            "expected": {
                "total": num(total),
                "expected": num(expected),
                "mutual": num(max(0.0, total - expected)),
                "mutual_kl": num(mutual_kl),
            },
            "function": {
                "total": "scipy.stats.entropy(mean of members)",
                "expected": "mean of scipy.stats.entropy(member)",
                "mutual": "max(0, total - expected)",
                "mutual_kl": "mean of scipy.stats.entropy(member, mean) (KL form)",
            },
        })
    return cases


def mcnemar_cases(rng):
    pairs = [(int(rng.integers(0, 40)), int(rng.integers(0, 40))) for _ in range(8)]
    pairs += [(int(rng.integers(100, 2000)), int(rng.integers(100, 2000))) for _ in range(3)]
    pairs += [(0, 9), (13, 13), (1, 2)]
    pairs += [(2_500_000_000, 2_500_150_000)]  # b + c beyond 32-bit counts
    cases = []
    for b, c in pairs:
        if b + c == 0:
            continue
        table = np.array([[5, b], [c, 7]])
        exact = sm_mcnemar(table, exact=True)
        asym = sm_mcnemar(table, exact=False, correction=False)
        k, n = min(b, c), b + c
        point = scipy_stats.binom.pmf(k, n, 0.5)
        if b == c:
            mid = 1.0 - 0.5 * point
        else:
            mid = 2.0 * scipy_stats.binom.cdf(k, n, 0.5) - point
        case = {
            "inputs": {"b": b, "c": c},
            "expected": {
                "exact_p": num(exact.pvalue),
                "chi2": num(asym.statistic),
                "chi2_p": num(asym.pvalue),
                "mid_p": num(mid),
            },
            "function": {
                "exact_p": "statsmodels.stats.contingency_tables.mcnemar(exact=True)",
                "chi2": "statsmodels.stats.contingency_tables.mcnemar(exact=False, correction=False)",
                "chi2_p": "statsmodels.stats.contingency_tables.mcnemar(exact=False, correction=False)",
                "mid_p": "scipy.stats.binom: 2 cdf(min) - pmf(min); b = c: 1 - pmf/2 "
                         "(Fagerland et al. 2013)",
            },
        }
        if b + c > 2**32:
            # Binomial tails evaluated in double precision (scipy/Boost, GSL)
            # agree only to about 1e-5 relative at n ~ 5e9: lgamma of n
            # carries an absolute error of order n * machine epsilon.
            case["rel_tol"] = 1e-4
        cases.append(case)
    return cases


def oracle_case(y):
    """y: N x L 0/1 matrix, 1 = member right. Kuncheva & Whitaker (2003)
    definitions in numpy; interrater kappa via statsmodels fleiss_kappa."""
    n, L = y.shape
    pairs = []
    for i in range(L):
        for j in range(i + 1, L):
            a, b = y[:, i], y[:, j]
            n11 = int(np.sum((a == 1) & (b == 1)))
            n10 = int(np.sum((a == 1) & (b == 0)))
            n01 = int(np.sum((a == 0) & (b == 1)))
            n00 = int(np.sum((a == 0) & (b == 0)))
            den_q = n11 * n00 + n01 * n10
            q = (n11 * n00 - n01 * n10) / den_q if den_q else math.nan
            marg = (n11 + n10) * (n01 + n00) * (n11 + n01) * (n10 + n00)
            rho = (n11 * n00 - n01 * n10) / math.sqrt(marg) if marg else math.nan
            pairs.append({"i": i, "j": j, "counts": [n11, n10, n01, n00],
                          "q": num(q), "rho": num(rho),
                          "dis": num((n01 + n10) / n), "df": num(n00 / n)})
    l = y.sum(axis=1)
    p_bar = l.sum() / (n * L)
    e = np.mean(np.minimum(l, L - l)) / (L - math.ceil(L / 2))
    kw = np.sum(l * (L - l)) / (n * L * L)
    kappa = sm_fleiss_kappa(np.column_stack([l, L - l]), method="fleiss")
    theta = np.var(l / L)
    fails = L - l
    p_i = np.array([np.mean(fails == i) for i in range(L + 1)])
    i_ = np.arange(L + 1)
    p1 = np.sum(i_ / L * p_i)
    p2 = np.sum(i_ * (i_ - 1) / (L * (L - 1)) * p_i)
    gd = 1 - p2 / p1 if p1 > 0 else math.nan
    if p_i[0] == 1:
        cfd = 0.0
    else:
        cfd = np.sum((L - i_[1:]) / (L - 1) * p_i[1:]) / (1 - p_i[0])
    hist = [int(np.sum(l == v)) for v in range(L + 1)]

    def mean_defined(key):
        v = [p[key] for p in pairs if p[key] is not None]
        return num(np.mean(v)) if v else None

    return {
        "inputs": {"L": L, "matrix": y.tolist()},
        "expected": {
            "pairs": pairs,
            "hist": hist,
            "q_av": mean_defined("q"), "rho_av": mean_defined("rho"),
            "dis_av": mean_defined("dis"), "df_av": mean_defined("df"),
            "p_bar": num(p_bar), "entropy_e": num(e), "kw_variance": num(kw),
            "interrater_kappa": num(kappa), "difficulty": num(theta),
            "generalized_diversity": num(gd), "coincident_failure": num(cfd),
        },
        "function": {
            "pairs": "numpy, Kuncheva & Whitaker (2003) definitions",
            "nonpairwise": "numpy, Kuncheva & Whitaker (2003); Partridge & Krzanowski (1997)",
            "interrater_kappa": "statsmodels.stats.inter_rater.fleiss_kappa on [right, wrong] counts",
            "difficulty": "numpy.var(l / L)",
        },
    }


def oracle_cases(rng):
    cases = []
    for idx in range(10):
        n = int(rng.integers(8, 61))
        L = int(rng.integers(2, 7))
        acc = rng.uniform(0.3, 0.9, size=L)
        ease = rng.normal(size=(n, 1))
        y = (rng.normal(size=(n, L)) + ease < scipy_stats.norm.ppf(acc) * math.sqrt(2)).astype(int)
        if idx == 3:
            y[:, 0] = 1  # a member always right: Q and rho undefined for some pairs
        if y.sum() in (0, y.size):
            continue
        cases.append(oracle_case(y))
    return cases


def generate(path):
    import_libraries()
    cross_check_fleiss_1971()
    rng = np.random.default_rng(SEED)
    import sklearn
    import scipy
    import statsmodels
    out = {
        "about": "Reference values for metrics/ (tests/reference/gen_metrics_reference.py). "
                 "null = undefined (NaN).",
        "seed": SEED,
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__,
                     "sklearn": sklearn.__version__, "statsmodels": statsmodels.__version__},
        "cohen": cohen_cases(rng),
        "fleiss": fleiss_cases(rng),
        "uncertainty": uncertainty_cases(rng),
        "mcnemar": mcnemar_cases(rng),
        "oracle": oracle_cases(rng),
    }
    with open(path, "w") as f:
        json.dump(out, f, indent=1, allow_nan=False)
        f.write("\n")


def check(committed):
    return refcheck.check("metrics_reference_regenerates", committed, generate, import_libraries,
                          "numpy, scipy, sklearn, statsmodels", REL_TOL, ABS_TOL)


def main(argv):
    return refcheck.main(argv, __doc__, "metrics_reference.json", generate, check)


if __name__ == "__main__":
    sys.exit(main(sys.argv))
