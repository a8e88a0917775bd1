/* test_label_shift.c — black box shift estimation and EM prior adjustment
 * against the check values of METHODS.md section 5, hand-derived edge cases
 * (singular and ill-conditioned confusion tables, empty inputs, weights) and
 * the synthetic known-prior cases of tests/reference/label_shift_reference.json
 * (path in argv[1]): agreement with numpy, recovery of the true priors, and
 * how far EM on concord's (predicted class x confidence) cells lands from EM
 * on the raw rows. */
#include "label_shift.h"
#include "checks.h"

#define MAXK 8

/* Bounds on the synthetic cases (n = 5000 source and 5000 target events,
 * K = 3..6, source accuracy 0.77..0.97), from the draws of
 * `gen_label_shift_reference.py --measure` (480 random shifts, 200 of the
 * "large" shift; numbers in README, "Label shift"). The first four
 * lie above the largest value seen for the kinds of shift they are applied
 * to (BBSE: random shifts only, as in the file), so a new seed should not
 * break them. The last is NOT a general bound: EM on the window's own cell
 * means drifts from EM on raw rows as the shift grows (up to 0.64 in those
 * draws); it only pins the four random-shift cases of the file (measured
 * max 0.053). */
#define BBSE_L1_BOUND 0.15       /* BBSE vs the true target priors (draws: p99 0.095, max 0.125) */
#define EM_L1_BOUND 0.10         /* EM on raw rows vs the true priors (max 0.089) */
#define CELL_B_L1_BOUND 0.12     /* EM on the baseline's cell means vs the true q (max 0.103) */
#define CELL_B_GAP_BOUND 0.08    /* EM on the baseline's cell means vs EM on raw rows (max 0.061) */
#define CELL_W_GAP_FIXTURE 0.10  /* EM on the window's cell means vs raw, fixture's random shifts */

/* SQUAREM vs numpy's plain EM on the reference cases: both stop when a step
 * moves less than tol = 1e-12, each some way short of the same fixed point
 * (the largest gap in this file passes at 1e-10) */
#define SQUAREM_VS_PLAIN 1e-9

#define SYNTHETIC_BOUND \
    "synthetic known-prior case; bound from gen_label_shift_reference.py --measure"

static const char *const METHODS5 = "computed (numpy/scipy), METHODS.md section 5";

static double l1(const double *a, const double *b, int k)
{
    double s = 0.0;
    for (int j = 0; j < k; j++)
        s += fabs(a[j] - b[j]);
    return s;
}

/* Checks that priors are finite, >= 0 and sum to 1. */
static void check_simplex(check_log *log, const char *what, const double *q, int k)
{
    char w[200];
    double sum = 0.0;
    int finite = 1, nonneg = 1;
    for (int j = 0; j < k; j++) {
        finite &= isfinite(q[j]) != 0;
        nonneg &= q[j] >= 0.0;
        sum += q[j];
    }
    snprintf(w, sizeof w, "%s: priors finite and >= 0", what);
    check_int(log, w, finite && nonneg, 1, "definition of a probability vector");
    snprintf(w, sizeof w, "%s: priors sum", what);
    check_close(log, w, sum, 1.0, 1e-12, 0, "definition of a probability vector");
}

static void check_vec(check_log *log, const char *what, const double *got, const double *want,
                      int k, double tol, const char *source)
{
    char w[200];
    for (int j = 0; j < k; j++) {
        snprintf(w, sizeof w, "%s [%d]", what, j);
        check_close(log, w, got[j], want[j], tol, 0, source);
    }
}

static void check_all_nan(check_log *log, const char *what, const double *q, int k)
{
    int all = 1;
    for (int j = 0; j < k; j++)
        all &= isnan(q[j]) != 0;
    check_int(log, what, all, 1, "metrics/label_shift.h: nothing estimated, priors NAN");
}

/* METHODS.md section 5: C^cond (columns = true class), p, q. The joint
 * confusion C^cond diag(p) is exactly the finite-count table / 1000. */
static const int64_t methods_joint[9] = {400, 30, 20, 75, 240, 40, 25, 30, 140};
static const double methods_ccond[9] = {0.80, 0.10, 0.10, 0.15, 0.80, 0.20, 0.05, 0.10, 0.70};
static const double methods_p[3] = {0.5, 0.3, 0.2};

static void bbse_methods_checks(check_log *log)
{
    double q[MAXK];
    cc_bbse r = {q, 0, 0, 0, 0};

    /* population: mu = C^cond q */
    const double q_true[3] = {0.2, 0.3, 0.5}, mu_want[3] = {0.24, 0.37, 0.39};
    double mu[3];
    for (int i = 0; i < 3; i++) {
        mu[i] = 0.0;
        for (int j = 0; j < 3; j++)
            mu[i] += methods_ccond[i * 3 + j] * q_true[j];
    }
    check_vec(log, "population BBSE inputs: mu = C^cond q", mu, mu_want, 3, 1e-15, METHODS5);
    const int64_t pop_target[3] = {240, 370, 390};
    check_int(log, "population BBSE: return", cc_bbse_estimate(&r, methods_joint, pop_target, 3), 0,
              "metrics/label_shift.h");
    check_int(log, "population BBSE: ok", r.ok, 1, METHODS5);
    check_vec(log, "population BBSE: q recovered", q, q_true, 3, 1e-12, METHODS5);
    double w[3], w_want[3] = {0.4, 1.0, 2.5};
    for (int j = 0; j < 3; j++)
        w[j] = q[j] / methods_p[j];
    check_vec(log, "population BBSE: w = q/p", w, w_want, 3, 1e-12, METHODS5);
    /* METHODS gives cond(C^cond) = 1.7052; ours is of the joint C^cond diag(p) */
    check_close(log, "population BBSE: condition number of the joint C = C^cond diag(p)",
                r.condition_number, 3.2590461000652677, 0, 1e-9,
                "computed (numpy.linalg.cond of C^cond diag(p)); METHODS.md gives 1.7052 "
                "for C^cond itself");
    check_int(log, "population BBSE: regularized", r.regularized, 0, METHODS5);
    check_int(log, "population BBSE: clipped", r.clipped, 0, METHODS5);

    /* finite counts */
    const int64_t t1[3] = {250, 360, 390};
    const double q1[3] = {0.214286, 0.284524, 0.501190}, w1[3] = {0.428571, 0.948413, 2.505952};
    cc_bbse_estimate(&r, methods_joint, t1, 3);
    check_int(log, "finite-count BBSE: ok", r.ok, 1, METHODS5);
    check_vec(log, "finite-count BBSE: q", q, q1, 3, 5e-7, METHODS5);
    for (int j = 0; j < 3; j++)
        w[j] = q[j] / methods_p[j]; /* source label fractions 500, 300, 200 of 1000 */
    check_vec(log, "finite-count BBSE: w", w, w1, 3, 5e-7, METHODS5);
    check_int(log, "finite-count BBSE: clipped", r.clipped, 0, METHODS5);

    /* negative weight, clipped and renormalised */
    const int64_t t2[3] = {80, 620, 300};
    const double q2[3] = {0.0, 0.678241, 0.321759};
    cc_bbse_estimate(&r, methods_joint, t2, 3);
    check_int(log, "negative-weight BBSE: ok", r.ok, 1, METHODS5);
    check_vec(log, "negative-weight BBSE: clip + renormalise", q, q2, 3, 5e-7, METHODS5);
    check_int(log, "negative-weight BBSE: clipped", r.clipped, 1, METHODS5);
    check_int(log, "negative-weight BBSE: regularized", r.regularized, 0, METHODS5);
    /* the raw q0 = -0.028571 is what was clipped: unclipped classes keep their ratio */
    check_close(log, "negative-weight BBSE: q2/q1 = raw 0.330952/0.697619", q[2] / q[1],
                0.330952 / 0.697619, 2e-6, 0, METHODS5);
}

/* x | y ~ N(+-1, 1) (class 1 at +1), source prior 0.5, target q(y=1) = 0.8:
 * population BBSE with the threshold at 0 and population EM by quadrature
 * both give 0.8 (METHODS.md section 5, consistency check). */
static double phi_cdf(double z)
{
    return 0.5 * erfc(-z / sqrt(2.0));
}

static double normal_pdf(double x, double m)
{
    return exp(-0.5 * (x - m) * (x - m)) / 2.5066282746310002; /* sqrt(2 pi) */
}

static void consistency_checks(check_log *log)
{
    const double scale = 1e12;
    double q[2];
    /* joint counts of a huge source sample: rows predicted, columns true */
    const double right = phi_cdf(1.0), wrong = 1.0 - right;
    const int64_t joint[4] = {llround(0.5 * right * scale), llround(0.5 * wrong * scale),
                              llround(0.5 * wrong * scale), llround(0.5 * right * scale)};
    /* target predicted fractions: P(x > 0) = 0.8 right + 0.2 wrong */
    const double t1 = 0.8 * right + 0.2 * wrong;
    const int64_t target[2] = {llround((1.0 - t1) * scale), llround(t1 * scale)};
    cc_bbse r = {q, 0, 0, 0, 0};
    cc_bbse_estimate(&r, joint, target, 2);
    check_close(log, "Gaussian +-1 population BBSE (threshold 0): q(y=1)", q[1], 0.8, 1e-9, 0,
                METHODS5);

    /* population EM: quadrature on [-12, 12], weights = target density * dx */
    enum { NODES = 24001 };
    static double rows[NODES * 2], wts[NODES];
    const double h = 24.0 / (NODES - 1);
    for (int i = 0; i < NODES; i++) {
        const double x = -12.0 + h * i;
        const double s1 = 1.0 / (1.0 + exp(-2.0 * x)); /* sigmoid(2x) */
        rows[2 * i] = 1.0 - s1;
        rows[2 * i + 1] = s1;
        wts[i] = (0.8 * normal_pdf(x, 1.0) + 0.2 * normal_pdf(x, -1.0)) * h *
                 (i == 0 || i == NODES - 1 ? 0.5 : 1.0);
    }
    const double p[2] = {0.5, 0.5};
    cc_em e = {q, 0, 0, 0};
    cc_em_estimate(&e, rows, wts, NODES, 2, p, 1e-12, 10000);
    check_int(log, "Gaussian +-1 population EM: converged", e.converged, 1, METHODS5);
    check_close(log, "Gaussian +-1 population EM (quadrature): q(y=1)", q[1], 0.8, 1e-6, 0,
                METHODS5);
}

static void em_methods_checks(check_log *log)
{
    const double s1[8] = {0.9, 0.8, 0.7, 0.6, 0.4, 0.3, 0.2, 0.95};
    double rows[16], q[2];
    for (int i = 0; i < 8; i++) {
        rows[2 * i] = 1.0 - s1[i];
        rows[2 * i + 1] = s1[i];
    }
    const double p[2] = {0.5, 0.5};
    cc_em e = {q, 0, 0, 0};
    check_int(log, "EM 8 items: return", cc_em_estimate(&e, rows, NULL, 8, 2, p, 1e-10, 10000), 0,
              "metrics/label_shift.h");
    check_int(log, "EM 8 items: ok", e.ok, 1, METHODS5);
    check_int(log, "EM 8 items: converged", e.converged, 1, METHODS5);
    check_close(log, "EM 8 items: q1", q[1], 0.882238, 1e-6, 0, METHODS5);
    check_close(log, "EM 8 items: q0", q[0], 1.0 - 0.882238, 1e-6, 0, METHODS5);
    check_close(log, "EM 8 items: iterations at tol 1e-10 (+-1)", e.iterations, 140, 1, 0,
                "computed, METHODS.md section 5 (140 iterations at tol 1e-10)");
}

/* Singular and ill-conditioned confusion tables, empty and invalid inputs. */
static void bbse_edge_checks(check_log *log)
{
    double q[MAXK];
    cc_bbse r = {q, 0, 0, 0, 0};
    const char *hand = "hand-derived (Lipton et al. 2018 estimator on a degenerate table)";

    const int64_t zero9[9] = {0};
    const int64_t t[3] = {10, 20, 30};
    cc_bbse_estimate(&r, zero9, t, 3);
    check_int(log, "BBSE empty source: ok", r.ok, 0, "metrics/label_shift.h: empty inputs");
    check_all_nan(log, "BBSE empty source: priors NAN", q, 3);
    cc_bbse_estimate(&r, methods_joint, (const int64_t[3]){0, 0, 0}, 3);
    check_int(log, "BBSE empty target: ok", r.ok, 0, "metrics/label_shift.h: empty inputs");
    check_all_nan(log, "BBSE empty target: priors NAN", q, 3);
    const int64_t negative[4] = {5, -1, 2, 7};
    cc_bbse_estimate(&r, negative, (const int64_t[2]){3, 3}, 2);
    check_int(log, "BBSE negative count: ok", r.ok, 0, "metrics/label_shift.c: invalid counts");
    check_int(log, "BBSE k = 0: return", cc_bbse_estimate(&r, negative, t, 0), 0,
              "metrics/label_shift.h");
    check_int(log, "BBSE k = 0: ok", r.ok, 0, "metrics/label_shift.h");

    /* classes 0 and 1 never told apart: both always predicted 0 */
    const int64_t merged[9] = {300, 200, 0, 0, 0, 0, 0, 0, 500};
    cc_bbse_estimate(&r, merged, (const int64_t[3]){600, 0, 400}, 3);
    check_int(log, "BBSE classes 0,1 never told apart: ok", r.ok, 1, hand);
    check_simplex(log, "BBSE classes 0,1 never told apart", q, 3);
    check_int(log, "BBSE classes 0,1 never told apart: regularized", r.regularized, 1, hand);
    check_int(log, "BBSE classes 0,1 never told apart: condition number > CC_BBSE_MAX_COND",
              r.condition_number > CC_BBSE_MAX_COND, 1, hand);
    /* minimum-norm w: [0.3, 0.2] (w0, w1) = 0.6 -> (w0, w1) = 0.6 (0.3, 0.2) / 0.13,
     * so q_j = w_j p_j splits mu0 = 0.6 in proportion to p_j^2 */
    check_close(log, "BBSE classes 0,1 never told apart: q0 (minimum-norm w)", q[0],
                0.6 * 0.09 / 0.13, 1e-12, 0, hand);
    check_close(log, "BBSE classes 0,1 never told apart: q1 (minimum-norm w)", q[1],
                0.6 * 0.04 / 0.13, 1e-12, 0, hand);
    check_close(log, "BBSE classes 0,1 never told apart: q2 = mu2", q[2], 0.4, 1e-12, 0, hand);

    /* a class never predicted anywhere: its row of C is 0 */
    const int64_t unpredicted[9] = {400, 50, 30, 60, 300, 40, 0, 0, 0};
    cc_bbse_estimate(&r, unpredicted, (const int64_t[3]){450, 550, 0}, 3);
    check_int(log, "BBSE class never predicted: ok", r.ok, 1, hand);
    check_simplex(log, "BBSE class never predicted", q, 3);
    check_int(log, "BBSE class never predicted: regularized", r.regularized, 1, hand);
    check_int(log, "BBSE class never predicted: condition number > CC_BBSE_MAX_COND",
              r.condition_number > CC_BBSE_MAX_COND, 1, hand);

    /* a class absent from the source labels: dropped, q_j = 0 */
    const int64_t absent[9] = {400, 0, 30, 60, 0, 40, 20, 0, 300};
    cc_bbse_estimate(&r, absent, (const int64_t[3]){300, 200, 500}, 3);
    check_int(log, "BBSE class absent from source labels: ok", r.ok, 1,
              "METHODS.md section 5: p_j = 0 -> drop class");
    check_close(log, "BBSE class absent from source labels: q1", q[1], 0.0, 0, 0,
                "METHODS.md section 5: p_j = 0 -> drop class");
    check_simplex(log, "BBSE class absent from source labels", q, 3);
    check_int(log, "BBSE class absent from source labels: regularized", r.regularized, 0, hand);
    check_int(log, "BBSE class absent from source labels: condition number finite",
              isfinite(r.condition_number) != 0, 1, hand);

    /* only one class labelled and predicted in the source */
    const int64_t one_cell[4] = {100, 0, 0, 0};
    cc_bbse_estimate(&r, one_cell, (const int64_t[2]){40, 60}, 2);
    check_int(log, "BBSE one source cell: ok", r.ok, 1, hand);
    check_close(log, "BBSE one source cell: q0", q[0], 1.0, 0, 0, hand);
    check_close(log, "BBSE one source cell: q1", q[1], 0.0, 0, 0, hand);

    /* everything predicted 0: rank 1 */
    const int64_t flat[9] = {100, 200, 300, 0, 0, 0, 0, 0, 0};
    cc_bbse_estimate(&r, flat, (const int64_t[3]){1000, 0, 0}, 3);
    check_simplex(log, "BBSE everything predicted class 0", q, 3);
    check_int(log, "BBSE everything predicted class 0: regularized", r.regularized, 1, hand);

    /* a perfect classifier: C diagonal, q = mu */
    int64_t diag[MAXK * MAXK] = {0};
    const int64_t tg[MAXK] = {5, 1, 9, 0, 7, 3, 2, 8};
    double mu[MAXK];
    for (int j = 0; j < MAXK; j++) {
        diag[j * MAXK + j] = 10 + 5 * j;
        mu[j] = (double)tg[j] / 35.0;
    }
    cc_bbse_estimate(&r, diag, tg, MAXK);
    check_vec(log, "BBSE perfect classifier, K = 8: q = mu", q, mu, MAXK, 1e-14, hand);
    check_int(log, "BBSE perfect classifier: regularized", r.regularized, 0, hand);
}

typedef int (*em_fn)(cc_em *, const double *, const double *, int, int, const double *, double,
                     int);

/* "tag what" in one of four rotating buffers, for check names */
static const char *tagged(const char *tag, const char *what)
{
    static char buf[4][200];
    static int i;
    i = (i + 1) % 4;
    snprintf(buf[i], sizeof buf[i], "%s %s", tag, what);
    return buf[i];
}

/* Edge cases of either estimator (fn, named tag in the check names). */
static void em_edge_checks(check_log *log, em_fn fn, const char *tag)
{
    double q[3];
    cc_em e = {q, 0, 0, 0};
    const char *hand = "hand-derived (Saerens et al. 2002 EM)";
    const double p2[2] = {0.5, 0.5};
    const double rows[8] = {0.9, 0.1, 0.3, 0.7, 0.6, 0.4, 0.2, 0.8};

    fn(&e, rows, NULL, 0, 2, p2, 1e-10, 100);
    check_int(log, tagged(tag, "no rows: ok"), e.ok, 0, "metrics/label_shift.h: empty inputs");
    check_all_nan(log, tagged(tag, "no rows: priors NAN"), q, 2);
    fn(&e, rows, (const double[4]){0, 0, -1, NAN}, 4, 2, p2, 1e-10, 100);
    check_int(log, tagged(tag, "all weights <= 0: ok"), e.ok, 0, "metrics/label_shift.c: no usable row");
    fn(&e, rows, NULL, 4, 2, (const double[2]){0, 0}, 1e-10, 100);
    check_int(log, tagged(tag, "source priors all 0: ok"), e.ok, 0, "metrics/label_shift.c");

    /* max_iter 0: the source priors, not converged */
    fn(&e, rows, NULL, 4, 2, (const double[2]){0.3, 0.7}, 1e-10, 0);
    check_int(log, tagged(tag, "max_iter 0: ok"), e.ok, 1, hand);
    check_int(log, tagged(tag, "max_iter 0: iterations"), e.iterations, 0, hand);
    check_int(log, tagged(tag, "max_iter 0: converged"), e.converged, 0, hand);
    check_close(log, tagged(tag, "max_iter 0: q0 = p0"), q[0], 0.3, 1e-15, 0, hand);

    /* mean posterior = p: q = p is a fixed point, one step */
    const double fixed[4] = {0.8, 0.2, 0.2, 0.8};
    fn(&e, fixed, NULL, 2, 2, p2, 1e-12, 100);
    check_int(log, tagged(tag, "no shift: iterations"), e.iterations, 1, hand);
    check_int(log, tagged(tag, "no shift: converged"), e.converged, 1, hand);
    check_close(log, tagged(tag, "no shift: q0"), q[0], 0.5, 1e-15, 0, hand);

    /* one-hot posteriors: q = class fractions after one step */
    const double onehot[8] = {1, 0, 0, 1, 0, 1, 0, 1};
    fn(&e, onehot, NULL, 4, 2, p2, 1e-12, 100);
    check_close(log, tagged(tag, "one-hot rows: q1 = 3/4"), q[1], 0.75, 1e-15, 0, hand);
    check_int(log, tagged(tag, "one-hot rows: iterations"), e.iterations, 2, hand);

    /* a weight of 3 equals the row repeated 3 times */
    double twice[2], rep_rows[12];
    for (int i = 0; i < 6; i++) {
        const int src = i < 3 ? 0 : i - 2; /* row 0 three times, then rows 1..3 */
        rep_rows[2 * i] = rows[2 * src];
        rep_rows[2 * i + 1] = rows[2 * src + 1];
    }
    fn(&e, rep_rows, NULL, 6, 2, p2, 1e-13, 10000);
    twice[0] = q[0];
    twice[1] = q[1];
    fn(&e, rows, (const double[4]){3, 1, 1, 1}, 4, 2, p2, 1e-13, 10000);
    check_vec(log, tagged(tag, "weight 3 = row repeated 3 times"), q, twice, 2, 1e-12, hand);

    /* source priors not normalised: same as normalised */
    fn(&e, rows, NULL, 4, 2, (const double[2]){2, 2}, 1e-13, 10000);
    twice[0] = q[0];
    twice[1] = q[1];
    fn(&e, rows, NULL, 4, 2, p2, 1e-13, 10000);
    check_vec(log, tagged(tag, "source priors [2,2] = [0.5,0.5]"), q, twice, 2, 1e-15, hand);

    /* a class with source prior 0 stays 0; a row all on it is left out */
    const double p3[3] = {0.5, 0.0, 0.5};
    const double rows3[12] = {0.7, 0.1, 0.2, 0.2, 0.3, 0.5, 0.0, 1.0, 0.0, 0.4, 0.2, 0.4};
    fn(&e, rows3, NULL, 4, 3, p3, 1e-12, 10000);
    check_int(log, tagged(tag, "zero source prior: ok"), e.ok, 1, hand);
    check_close(log, tagged(tag, "zero source prior: q1 stays 0"), q[1], 0.0, 0, 0,
                "METHODS.md section 5: p_j = 0 -> drop class");
    check_simplex(log, tagged(tag, "zero source prior"), q, 3);
    double q_without[3];
    cc_em e2 = {q_without, 0, 0, 0};
    fn(&e2, rows3, (const double[4]){1, 1, 0, 1}, 4, 3, p3, 1e-12, 10000);
    check_vec(log, tagged(tag, "row all on a zero-prior class = row left out"), q, q_without, 3, 1e-15, hand);

    /* not converged within max_iter */
    fn(&e, rows, NULL, 4, 2, (const double[2]){0.05, 0.95}, 1e-15, 3);
    check_int(log, tagged(tag, "max_iter 3: iterations"), e.iterations, 3, hand);
    check_int(log, tagged(tag, "max_iter 3: converged"), e.converged, 0, hand);
    check_int(log, tagged(tag, "max_iter 3: ok"), e.ok, 1, hand);
}

/* cc_em_estimate_squarem without, and with, the log-likelihood stop */
static int squarem_exact(cc_em *out, const double *post, const double *w, int n, int k,
                         const double *p, double tol, int max_iter)
{
    return cc_em_estimate_squarem(out, post, w, n, k, p, tol, 0.0, max_iter);
}

static int squarem_ll(cc_em *out, const double *post, const double *w, int n, int k,
                      const double *p, double tol, int max_iter)
{
    return cc_em_estimate_squarem(out, post, w, n, k, p, tol, 1e-11, max_iter);
}

/* Score of the two-class log-likelihood sum_r ln((1 - t) s_r0/p0 + t s_r1/p1)
 * with p = (1/2, 1/2), in t = q(y = 1); its root is the EM fixed point. */
static double score2(const double *s1, int n, double t)
{
    double f = 0.0;
    for (int r = 0; r < n; r++)
        f += (2.0 * s1[r] - 1.0) / ((1.0 - t) * (1.0 - s1[r]) + t * s1[r]);
    return f;
}

/* SQUAREM against values found without EM: METHODS.md section 5's checks,
 * and a nearly uninformative two-class case where plain EM needs about
 * 10,000 steps at tol 1e-12 (numpy: 10,173) and stops 2,000 steps short of
 * its fixed point, whose q(y = 1) is the root of the score, found here by
 * bisection (scipy.optimize.brentq on the same score: 0.956651778982921). */
static void squarem_checks(check_log *log)
{
    const char *vr = "Varadhan & Roland (2008): same fixed point as EM";
    double q[2], qp[2];
    cc_em e = {q, 0, 0, 0}, ep = {qp, 0, 0, 0};
    const double p[2] = {0.5, 0.5};

    const double m1[8] = {0.9, 0.8, 0.7, 0.6, 0.4, 0.3, 0.2, 0.95};
    double rows[16];
    for (int i = 0; i < 8; i++) {
        rows[2 * i] = 1.0 - m1[i];
        rows[2 * i + 1] = m1[i];
    }
    cc_em_estimate_squarem(&e, rows, NULL, 8, 2, p, 1e-10, 0.0, 10000);
    check_int(log, "EM (SQUAREM) 8 items: converged", e.converged, 1, METHODS5);
    check_close(log, "EM (SQUAREM) 8 items: q1", q[1], 0.882238, 1e-6, 0, METHODS5);

    const double s1[6] = {0.45, 0.58, 0.48, 0.56, 0.52, 0.44};
    for (int i = 0; i < 6; i++) {
        rows[2 * i] = 1.0 - s1[i];
        rows[2 * i + 1] = s1[i];
    }
    double lo = 0.0, hi = 1.0; /* score(0) > 0 > score(1) */
    for (int i = 0; i < 200 && hi - lo > 1e-16; i++) {
        const double mid = 0.5 * (lo + hi);
        if (score2(s1, 6, mid) > 0.0)
            lo = mid;
        else
            hi = mid;
    }
    const double root = 0.5 * (lo + hi);
    check_close(log, "score root by bisection = scipy brentq", root, 0.956651778982921, 1e-12, 0,
                "computed (scipy.optimize.brentq on the score)");
    cc_em_estimate_squarem(&e, rows, NULL, 6, 2, p, 1e-12, 0.0, 2000);
    cc_em_estimate(&ep, rows, NULL, 6, 2, p, 1e-12, 2000);
    check_int(log, "slow case, cap 2000: plain EM converged", ep.converged, 0,
              "computed (numpy: 10,173 steps at tol 1e-12)");
    check_int(log, "slow case, cap 2000: EM (SQUAREM) converged", e.converged, 1, vr);
    check_close(log, "slow case: EM (SQUAREM) q1 = root of the score", q[1], root, 1e-9, 0, vr);
    check_int(log, "slow case: plain EM at the cap is more than 1e-6 short of the root",
              fabs(root - qp[1]) > 1e-6, 1, "computed (numpy: 10,173 steps at tol 1e-12)");
    printf("  slow case: root %.12f, SQUAREM %.12f in %d steps, plain EM %.12f after %d steps\n",
           root, q[1], e.iterations, qp[1], ep.iterations);

    /* stopped by the log-likelihood: a rise of 1e-11 per row over three steps
     * leaves q within sqrt(2 * 1e-11 / curvature) of the root, the
     * curvature (minus the score's slope per row) being about 0.02 here */
    double slope = (score2(s1, 6, root + 1e-6) - score2(s1, 6, root - 1e-6)) / 2e-6 / 6.0;
    cc_em_estimate_squarem(&e, rows, NULL, 6, 2, p, 1e-12, 1e-11, 2000);
    check_int(log, "slow case, ll_tol 1e-11: converged", e.converged, 1, vr);
    check_close(log, "slow case, ll_tol 1e-11: q1 near the root", q[1], root,
                sqrt(2.0 * 1e-11 / fabs(slope)), 0, "hand-derived (quadratic model of ln L)");
    printf("  slow case, ll_tol 1e-11: %.12f in %d steps (curvature per row %.4f)\n", q[1],
           e.iterations, -slope);
}

/* Many classes whose priors fall to 0 (SQUAREM drops their columns once
 * below 1e-20): 32 classes with equal source priors, 24 rows each with 0.7 on
 * one of the classes 0..3 and the rest spread evenly, weighted 1..24. At the
 * maximum the 28 other classes have gradient ratio (s_rj/p_j)/denominator
 * about 0.05 < 1, so plain EM (Saerens et al. 2002) drives them to 0 at that
 * rate, and its long run (tol 1e-15) is the fixed point both must reach. */
static void squarem_drop_checks(check_log *log)
{
    enum { K = 32, N = 24 };
    const char *src = "plain EM, 200,000-step cap at tol 1e-15 (Saerens et al. 2002)";
    double rows[N * K], w[N], p[K], q[K], qp[K];
    for (int j = 0; j < K; j++)
        p[j] = 1.0 / K;
    for (int r = 0; r < N; r++) {
        for (int j = 0; j < K; j++)
            rows[r * K + j] = 0.3 / (K - 1);
        rows[r * K + (r % 4)] = 0.7;
        w[r] = 1.0 + r;
    }
    cc_em e = {q, 0, 0, 0}, ep = {qp, 0, 0, 0};
    cc_em_estimate(&ep, rows, w, N, K, p, 1e-15, 200000);
    /* 60 steps without a stop: the 28 priors pass 1e-20 and are dropped */
    cc_em_estimate_squarem(&e, rows, w, N, K, p, 1e-300, 0.0, 60);
    check_int(log, "32 classes, 28 falling to 0: plain EM converged", ep.converged, 1, src);
    check_int(log, "32 classes, 28 falling to 0: EM (SQUAREM) took its 60 steps", e.iterations,
              60, "hand-derived (tol 1e-300)");
    double sum = 0.0;
    for (int j = 0; j < K; j++) {
        char what[96];
        snprintf(what, sizeof what, "32 classes, 28 falling to 0: EM (SQUAREM) q[%d]", j);
        check_close(log, what, q[j], qp[j], 1e-9, 0, src);
        sum += q[j];
    }
    check_close(log, "32 classes, 28 falling to 0: EM (SQUAREM) priors sum to 1", sum, 1.0, 1e-12,
                0, "hand-derived");
    printf("  32 classes, 28 falling to 0: SQUAREM %d steps, plain EM %d steps, q[0] %.12f\n",
           e.iterations, ep.iterations, q[0]);
}

/* ---------------------------------------------------------------- reference file */

static int read_doubles(const cJSON *arr, double *out, int n)
{
    if (!cJSON_IsArray(arr) || cJSON_GetArraySize(arr) != n)
        return -1;
    for (int i = 0; i < n; i++) {
        const cJSON *v = cJSON_GetArrayItem(arr, i);
        if (!cJSON_IsNumber(v))
            return -1;
        out[i] = v->valuedouble;
    }
    return 0;
}

/* rows x cols numbers from an array of arrays; returns the row count or -1 */
static int read_rows(const cJSON *arr, double *out, int max_rows, int cols)
{
    int n = cJSON_GetArraySize(arr);
    if (!cJSON_IsArray(arr) || n > max_rows)
        return -1;
    for (int i = 0; i < n; i++)
        if (read_doubles(cJSON_GetArrayItem(arr, i), out + (size_t)i * cols, cols))
            return -1;
    return n;
}

static int read_counts(const cJSON *arr, int64_t *out, int n)
{
    double tmp[MAXK * MAXK];
    if (n > MAXK * MAXK || read_doubles(arr, tmp, n))
        return -1;
    for (int i = 0; i < n; i++)
        out[i] = (int64_t)tmp[i];
    return 0;
}

/* largest errors over the reference cases, printed at the end */
static double em_max_gap_window, em_max_gap_baseline, em_max_raw, bbse_max_l1;
static long sq_steps, plain_steps; /* EM steps over the reference cases */

static void bbse_reference_case(check_log *log, const cJSON *c, const char *section, int idx,
                                int synthetic)
{
    char what[240];
    int bad = 0;
    const cJSON *in = ref_get(c, "inputs"), *ex = ref_get(c, "expected");
    const int k = (int)ref_num(in, "k", &bad);
    int64_t conf[MAXK * MAXK], tgt[MAXK];
    double table[MAXK * MAXK], want[MAXK], q[MAXK], truth[MAXK];
    if (bad || k < 1 || k > MAXK || read_rows(ref_get(in, "confusion"), table, MAXK, k) != k ||
        read_counts(ref_get(in, "target_pred"), tgt, k) ||
        read_doubles(ref_get(ex, "priors"), want, k)) {
        fprintf(stderr, "FAIL %s[%d]: bad inputs\n", section, idx);
        log->failed++;
        return;
    }
    for (int i = 0; i < k * k; i++)
        conf[i] = (int64_t)table[i];
    const char *src = ref_function(c, "priors");
    cc_bbse r = {q, 0, 0, 0, 0};
    cc_bbse_estimate(&r, conf, tgt, k);

    /* the plan (SVD once, solve per target) gives the same bits */
    double qp[MAXK];
    cc_bbse rp = {qp, 0, 0, 0, 0};
    cc_bbse_plan *plan = NULL;
    if (cc_bbse_plan_create(&plan, conf, k) == 0 && cc_bbse_plan_apply(plan, &rp, tgt) == 0) {
        snprintf(what, sizeof what, "cc_bbse_plan_apply %s[%d] = cc_bbse_estimate", section, idx);
        check_vec(log, what, qp, q, k, 0.0, "label_shift.h: same computation");
        check_int(log, what, rp.ok == r.ok && rp.clipped == r.clipped &&
                                 rp.regularized == r.regularized &&
                                 (rp.condition_number == r.condition_number ||
                                  (isnan(rp.condition_number) && isnan(r.condition_number))),
                  1, "label_shift.h: same computation");
    } else {
        log->failed++;
    }
    cc_bbse_plan_free(plan);
    snprintf(what, sizeof what, "cc_bbse_estimate, reference %s[%d] (%s)", section, idx,
             cJSON_GetStringValue(ref_get(c, "name")));
    check_int(log, what, r.ok, 1, src);
    check_vec(log, what, q, want, k, 1e-9, src);
    check_simplex(log, what, q, k);
    snprintf(what, sizeof what, "cc_bbse_estimate %s[%d]: regularized", section, idx);
    check_int(log, what, r.regularized, (int64_t)ref_num(ex, "regularized", &bad), src);
    snprintf(what, sizeof what, "cc_bbse_estimate %s[%d]: clipped", section, idx);
    check_int(log, what, r.clipped, (int64_t)ref_num(ex, "clipped", &bad), src);
    const double cond = ref_num(ex, "condition_number", &bad);
    if (isnan(cond) || cond > 1e8) {
        snprintf(what, sizeof what,
                 "cc_bbse_estimate %s[%d]: condition number > CC_BBSE_MAX_COND (numpy: singular)",
                 section, idx);
        check_int(log, what, r.condition_number > CC_BBSE_MAX_COND, 1,
                  "numpy.linalg.lstsq singular values, max/min");
    } else {
        snprintf(what, sizeof what, "cc_bbse_estimate %s[%d]: condition number", section, idx);
        check_close(log, what, r.condition_number, cond, 0, 1e-6,
                    "numpy.linalg.lstsq singular values, max/min");
    }
    if (synthetic) {
        if (read_doubles(ref_get(c, "true_q"), truth, k)) {
            bad = 1;
        } else {
            const double err = l1(q, truth, k);
            printf("  BBSE %s: L1 to true q %.4f\n", cJSON_GetStringValue(ref_get(c, "name")), err);
            bbse_max_l1 = fmax(bbse_max_l1, err);
            snprintf(what, sizeof what, "BBSE L1 to the true q, %s[%d] (bound)", section, idx);
            check_close(log, what, err, 0.0, BBSE_L1_BOUND, 0,
                        SYNTHETIC_BOUND);
        }
    }
    if (bad) {
        fprintf(stderr, "FAIL %s[%d]: reference entry incomplete\n", section, idx);
        log->failed++;
    }
}

static void em_reference_case(check_log *log, const cJSON *c, int idx)
{
    char what[240];
    int bad = 0;
    const cJSON *in = ref_get(c, "inputs"), *ex = ref_get(c, "expected");
    const char *name = cJSON_GetStringValue(ref_get(c, "name"));
    const int k = (int)ref_num(in, "k", &bad), n = (int)ref_num(in, "n", &bad);
    const double scale = ref_num(in, "posterior_scale", &bad), tol = ref_num(in, "tol", &bad);
    const int max_iter = (int)ref_num(in, "max_iter", &bad);
    const int large = strcmp(cJSON_GetStringValue(ref_get(c, "shift")), "large") == 0;
    double p[MAXK], truth[MAXK], want[MAXK], q_raw[MAXK], q_w[MAXK], q_b[MAXK];
    if (bad || k < 2 || k > MAXK || n <= 0 || read_doubles(ref_get(in, "source_priors"), p, k) ||
        read_doubles(ref_get(c, "true_q"), truth, k)) {
        fprintf(stderr, "FAIL em[%d]: bad inputs\n", idx);
        log->failed++;
        return;
    }
    double *rows = malloc(sizeof(double) * (size_t)n * k);
    const int cells = cJSON_GetArraySize(ref_get(in, "cell_counts"));
    double *wmeans = malloc(sizeof(double) * (size_t)(cells + 1) * k);
    double *bmeans = malloc(sizeof(double) * (size_t)(cells + 1) * k);
    double *counts = malloc(sizeof(double) * (size_t)(cells + 1));
    if (!rows || !wmeans || !bmeans || !counts ||
        read_rows(ref_get(in, "posteriors"), rows, n, k) != n ||
        read_rows(ref_get(in, "cell_means"), wmeans, cells, k) != cells ||
        read_rows(ref_get(in, "baseline_cell_means"), bmeans, cells, k) != cells ||
        read_doubles(ref_get(in, "cell_counts"), counts, cells)) {
        fprintf(stderr, "FAIL em[%d]: bad inputs\n", idx);
        log->failed++;
        goto done;
    }
    for (size_t i = 0; i < (size_t)n * k; i++)
        rows[i] /= scale;

    static const struct {
        const char *label, *prior_key, *iter_key, *conv_key;
    } variant[3] = {
        {"raw rows", "priors", "iterations", "converged"},
        {"window cell means", "cell_priors", "cell_iterations", "cell_converged"},
        {"baseline cell means", "baseline_cell_priors", "baseline_cell_iterations",
         "baseline_cell_converged"},
    };
    double *out[3] = {q_raw, q_w, q_b};
    for (int v = 0; v < 3; v++) {
        cc_em e = {out[v], 0, 0, 0};
        const double *post = v == 0 ? rows : v == 1 ? wmeans : bmeans;
        cc_em_estimate(&e, post, v == 0 ? NULL : counts, v == 0 ? n : cells, k, p, tol, max_iter);
        const char *src = ref_function(c, variant[v].prior_key);
        snprintf(what, sizeof what, "cc_em_estimate on %s, reference em[%d] (%s)",
                 variant[v].label, idx, name);
        check_int(log, what, e.ok, 1, src);
        char sub[300];
        snprintf(sub, sizeof sub, "%s: converged", what);
        check_int(log, sub, e.converged, (int64_t)ref_num(ex, variant[v].conv_key, &bad), src);
        snprintf(sub, sizeof sub, "%s: iterations (numpy +-1)", what);
        check_close(log, sub, e.iterations, ref_num(ex, variant[v].iter_key, &bad), 1, 0, src);
        if (read_doubles(ref_get(ex, variant[v].prior_key), want, k))
            bad = 1;
        else
            check_vec(log, what, out[v], want, k, 1e-9, src);
        check_simplex(log, what, out[v], k);

        /* SQUAREM lands on the same fixed point; its own stopping point differs
         * from plain EM's by about tol / (1 - rate) */
        double q_sq[MAXK];
        cc_em es = {q_sq, 0, 0, 0};
        cc_em_estimate_squarem(&es, post, v == 0 ? NULL : counts, v == 0 ? n : cells, k, p, tol, 0.0,
                               max_iter);
        snprintf(what, sizeof what, "cc_em_estimate_squarem on %s, reference em[%d] (%s)",
                 variant[v].label, idx, name);
        check_int(log, what, es.ok, 1, src);
        snprintf(sub, sizeof sub, "%s: converged", what);
        check_int(log, sub, es.converged, 1, src);
        if (!read_doubles(ref_get(ex, variant[v].prior_key), want, k))
            check_vec(log, what, q_sq, want, k, SQUAREM_VS_PLAIN, src);
        check_simplex(log, what, q_sq, k);
        sq_steps += es.iterations;
        plain_steps += e.iterations;
    }

    const double e_raw = l1(q_raw, truth, k), e_b = l1(q_b, truth, k);
    const double gap_w = l1(q_w, q_raw, k), gap_b = l1(q_b, q_raw, k);
    printf("  EM %s: L1 to true q raw %.4f, window cells %.4f, baseline cells %.4f; "
           "gap to raw: window cells %.4f, baseline cells %.4f\n",
           name, e_raw, l1(q_w, truth, k), e_b, gap_w, gap_b);
    snprintf(what, sizeof what, "EM (raw rows) L1 to the true q, em[%d] (bound)", idx);
    check_close(log, what, e_raw, 0.0, EM_L1_BOUND, 0, SYNTHETIC_BOUND);
    snprintf(what, sizeof what, "EM (baseline cell means) L1 to the true q, em[%d] (bound)", idx);
    check_close(log, what, e_b, 0.0, CELL_B_L1_BOUND, 0, SYNTHETIC_BOUND);
    snprintf(what, sizeof what, "EM baseline cell means vs raw rows, L1, em[%d] (bound)", idx);
    check_close(log, what, gap_b, 0.0, CELL_B_GAP_BOUND, 0, SYNTHETIC_BOUND);
    if (!large) {
        snprintf(what, sizeof what,
                 "EM window cell means vs raw rows, L1, em[%d] (this file's cases only)", idx);
        check_close(log, what, gap_w, 0.0, CELL_W_GAP_FIXTURE, 0,
                    "synthetic known-prior case; measured on this fixture, not a general bound");
    }
    em_max_raw = fmax(em_max_raw, e_raw);
    em_max_gap_baseline = fmax(em_max_gap_baseline, gap_b);
    if (!large)
        em_max_gap_window = fmax(em_max_gap_window, gap_w);
    if (bad) {
        fprintf(stderr, "FAIL em[%d]: reference entry incomplete\n", idx);
        log->failed++;
    }
done:
    free(rows);
    free(wmeans);
    free(bmeans);
    free(counts);
}

static void reference_checks(check_log *log, const cJSON *root)
{
    const cJSON *c, *bb = ref_section(root, "bbse"), *deg = ref_section(root, "bbse_degenerate"),
                    *em = ref_section(root, "em");
    if (!bb || !deg || !em) {
        log->failed++;
        return;
    }
    int idx = 0;
    cJSON_ArrayForEach(c, bb)
    {
        bbse_reference_case(log, c, "bbse", idx++, 1);
    }
    idx = 0;
    cJSON_ArrayForEach(c, deg)
    {
        bbse_reference_case(log, c, "bbse_degenerate", idx++, 0);
    }
    idx = 0;
    cJSON_ArrayForEach(c, em)
    {
        em_reference_case(log, c, idx++);
    }
    printf("  max over cases: BBSE L1 %.4f; EM raw L1 %.4f; EM cell-vs-raw gap: "
           "window means %.4f (random shifts), baseline means %.4f\n",
           bbse_max_l1, em_max_raw, em_max_gap_window, em_max_gap_baseline);
    printf("  EM steps over the reference cases: plain %ld, SQUAREM %ld\n", plain_steps, sq_steps);
}

int main(int argc, char **argv)
{
    check_log log = {"test_label_shift", 0, 0};
    bbse_methods_checks(&log);
    consistency_checks(&log);
    em_methods_checks(&log);
    bbse_edge_checks(&log);
    em_edge_checks(&log, cc_em_estimate, "EM");
    em_edge_checks(&log, squarem_exact, "EM (SQUAREM)");
    em_edge_checks(&log, squarem_ll, "EM (SQUAREM, ll_tol 1e-11)");
    squarem_checks(&log);
    squarem_drop_checks(&log);
    reference_run(&log, argc, argv, reference_checks);
    return check_finish(&log);
}
