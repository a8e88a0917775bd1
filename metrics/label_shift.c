/* label_shift.c — how the class mix of the truth in a window has probably
 * moved from the baseline's, before the window's labels arrive. Two
 * estimators under label shift (p(x|y) fixed, p(y) moves): black box shift
 * estimation from confusion counts, and EM prior adjustment from source
 * posteriors. SVD from GSL. Pure numbers: no I/O, no globals. */
#include "label_shift.h"

#include <gsl/gsl_linalg.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_vector.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

static void fill_nan(double *x, int n)
{
    for (int i = 0; i < n; i++)
        x[i] = NAN;
}

/* Black Box Shift Estimation: Lipton, Wang & Smola (2018), "Detecting and
 * correcting for label shift with black box predictors", ICML.
 *
 *   C_ij = P_s(f(x) = i, y = j)      joint confusion on the labelled source
 *   mu_i = P_t(f(x) = i)             predicted-class fractions of the target
 *   p_j  = sum_i C_ij                source label fractions
 *   under label shift  mu = C w,  w_j = q_j / p_j,  so  q_j = w_j p_j.
 *
 * Classes with p_j = 0 carry no information about w_j: their columns are
 * dropped, leaving a K x m system (m = classes seen as labels), solved in
 * the least-squares sense by the SVD C = U S V^T (Golub & Van Loan, Matrix
 * Computations):  w = sum_l v_l (u_l . mu) / s_l  over the kept
 * singular values s_l >= s_max / CC_BBSE_MAX_COND (a truncated
 * pseudo-inverse, the same as numpy.linalg.lstsq with rcond = 1/MAX_COND).
 * The condition number reported is s_max / s_min of that K x m matrix.
 *
 * Negative w_j (sampling noise, or a violated assumption) are clipped to 0
 * and q renormalised to sum 1. This is not the same as non-negative least
 * squares, the other usual remedy, which gives slightly different values
 * (METHODS.md section 5, computed: [0, 0.678241, 0.321759] clipped vs
 * [0, 0.678910, 0.321090] by scipy's NNLS on the same counts). */
struct cc_bbse_plan {
    int k, m;         /* classes; classes seen as labels in the source */
    int *col;         /* m: their indices */
    double *u, *s, *v; /* SVD of the K x m joint confusion: U (k x m), s (m), V (m x m) */
    double *p;        /* m: source label fractions of the kept classes */
    double condition_number;
};

void cc_bbse_plan_free(cc_bbse_plan *plan)
{
    if (!plan)
        return;
    free(plan->col);
    free(plan->u);
    free(plan);
}

int cc_bbse_plan_create(cc_bbse_plan **out, const int64_t *confusion, int k)
{
    *out = NULL;
    if (k <= 0 || !confusion)
        return 0;
    int64_t n_source = 0;
    for (size_t i = 0; i < (size_t)k * (size_t)k; i++) {
        if (confusion[i] < 0)
            return 0;
        n_source += confusion[i];
    }
    if (n_source <= 0)
        return 0;

    cc_bbse_plan *P = calloc(1, sizeof *P);
    if (!P || !(P->col = malloc(sizeof(int) * (size_t)k))) {
        free(P);
        return -1;
    }
    /* columns kept: classes seen as labels in the source */
    int m = 0;
    for (int j = 0; j < k; j++) {
        int64_t s = 0;
        for (int i = 0; i < k; i++)
            s += confusion[(size_t)i * k + j];
        if (s > 0)
            P->col[m++] = j;
    }
    P->k = k;
    P->m = m;

    /* U: k x m (A, overwritten), V: m x m, s, work, p: m */
    const size_t K = (size_t)k, M = (size_t)m;
    if (!(P->u = malloc(sizeof(double) * (K * M + M * M + 3 * M)))) {
        cc_bbse_plan_free(P);
        return -1;
    }
    double *a = P->u, *work;
    P->v = a + K * M;
    P->s = P->v + M * M;
    work = P->s + M;
    P->p = work + M;
    const double ns = (double)n_source;
    for (size_t i = 0; i < K; i++)
        for (size_t c = 0; c < M; c++)
            a[i * M + c] = (double)confusion[i * K + (size_t)P->col[c]] / ns;
    for (size_t c = 0; c < M; c++) {
        double p = 0.0;
        for (size_t i = 0; i < K; i++)
            p += (double)confusion[i * K + (size_t)P->col[c]];
        P->p[c] = p / ns;
    }

    gsl_matrix_view av = gsl_matrix_view_array(a, K, M);
    gsl_matrix_view vv = gsl_matrix_view_array(P->v, M, M);
    gsl_vector_view sv = gsl_vector_view_array(P->s, M);
    gsl_vector_view wv = gsl_vector_view_array(work, M);
    gsl_linalg_SV_decomp(&av.matrix, &vv.matrix, &sv.vector, &wv.vector);

    double smax = 0.0, smin = INFINITY;
    for (size_t l = 0; l < M; l++) {
        smax = fmax(smax, P->s[l]);
        smin = fmin(smin, P->s[l]);
    }
    P->condition_number = smin > 0.0 ? smax / smin : INFINITY;
    *out = P;
    return 0;
}

int cc_bbse_plan_apply(const cc_bbse_plan *plan, cc_bbse *out, const int64_t *target_pred)
{
    out->condition_number = NAN;
    out->regularized = out->clipped = out->ok = 0;
    if (!plan)
        return 0;
    const int k = plan->k;
    fill_nan(out->priors, k);
    if (!target_pred)
        return 0;
    int64_t n_target = 0;
    for (int i = 0; i < k; i++) {
        if (target_pred[i] < 0)
            return 0;
        n_target += target_pred[i];
    }
    if (n_target <= 0)
        return 0;

    const size_t K = (size_t)k, M = (size_t)plan->m;
    double *buf = malloc(sizeof(double) * (M + K));
    if (!buf)
        return -1;
    double *w = buf, *mu = w + M;
    const double *a = plan->u, *v = plan->v, *s = plan->s;
    const double nt = (double)n_target;
    for (size_t i = 0; i < K; i++)
        mu[i] = (double)target_pred[i] / nt;
    out->condition_number = plan->condition_number;

    /* truncated pseudo-inverse: w = V S+ U^T mu */
    double smax = 0.0;
    for (size_t l = 0; l < M; l++)
        smax = fmax(smax, s[l]);
    const double floor_s = smax / CC_BBSE_MAX_COND;
    for (size_t c = 0; c < M; c++)
        w[c] = 0.0;
    for (size_t l = 0; l < M; l++) {
        if (!(s[l] > 0.0 && s[l] >= floor_s)) {
            out->regularized = 1;
            continue;
        }
        double ut_mu = 0.0;
        for (size_t i = 0; i < K; i++)
            ut_mu += a[i * M + l] * mu[i];
        const double coef = ut_mu / s[l];
        for (size_t c = 0; c < M; c++)
            w[c] += v[c * M + l] * coef;
    }

    /* q_j = w_j p_j, clipped at 0, renormalised */
    double total = 0.0;
    for (size_t c = 0; c < M; c++) {
        double q = w[c] * plan->p[c];
        if (q < 0.0) {
            q = 0.0;
            out->clipped = 1;
        }
        w[c] = q;
        total += q;
    }
    if (total > 0.0 && isfinite(total)) {
        for (int j = 0; j < k; j++)
            out->priors[j] = 0.0;
        for (size_t c = 0; c < M; c++)
            out->priors[plan->col[c]] = w[c] / total;
        out->ok = 1;
    }
    free(buf);
    return 0;
}

int cc_bbse_estimate(cc_bbse *out, const int64_t *confusion, const int64_t *target_pred, int k)
{
    out->condition_number = NAN;
    out->regularized = out->clipped = out->ok = 0;
    if (k <= 0)
        return 0;
    fill_nan(out->priors, k);
    if (!confusion || !target_pred)
        return 0;
    for (int i = 0; i < k; i++)
        if (target_pred[i] < 0)
            return 0;
    cc_bbse_plan *plan;
    if (cc_bbse_plan_create(&plan, confusion, k) != 0)
        return -1;
    const int rc = cc_bbse_plan_apply(plan, out, target_pred);
    cc_bbse_plan_free(plan);
    return rc;
}

/* Weight of row r: 1 without weights; rows with weight <= 0 or NaN are left out. */
static double row_weight(const double *weights, int r)
{
    if (!weights)
        return 1.0;
    const double x = weights[r];
    return x > 0.0 && isfinite(x) ? x : 0.0;
}

/* A posterior entry, with negative or non-finite values read as 0. */
static double posterior_at(const double *row, int j)
{
    const double x = row[j];
    return x > 0.0 && isfinite(x) ? x : 0.0;
}

/* One EM step of Saerens, Latinne & Decaestecker (2002), Neural Computation
 * 14(1):21-41, with row weights:
 *   E: a_rj = (q_j / p_j) s_rj / sum_l (q_l / p_l) s_rl
 *   M: q'_j = sum_r u_r a_rj / sum_r u_r
 * over classes with p_j > 0. Rows whose denominator is 0 (all their mass on
 * classes absent from the source) are left out of both sums. Writes q' into
 * next and returns sum_r u_r over the rows used (0: nothing to estimate). */
static double em_step(double *next, double *ratio, const double *q, const double *p,
                      const double *posteriors, const double *weights, int n, int k)
{
    for (int j = 0; j < k; j++) {
        ratio[j] = p[j] > 0.0 ? q[j] / p[j] : 0.0;
        next[j] = 0.0;
    }
    double used = 0.0;
    for (int r = 0; r < n; r++) {
        const double u = row_weight(weights, r);
        if (u == 0.0)
            continue;
        const double *row = posteriors + (size_t)r * (size_t)k;
        double denom = 0.0;
        for (int j = 0; j < k; j++)
            denom += ratio[j] * posterior_at(row, j);
        if (!(denom > 0.0) || !isfinite(denom))
            continue;
        const double scale = u / denom;
        for (int j = 0; j < k; j++)
            next[j] += scale * ratio[j] * posterior_at(row, j);
        used += u;
    }
    if (used > 0.0)
        for (int j = 0; j < k; j++)
            next[j] /= used;
    return used;
}

/* The start both EM estimators share: clears out, fills its priors with NAN,
 * and returns 1 when there is something to estimate, with *psum the sum of
 * the usable source priors (> 0, finite) and *kept how many there are. */
static int em_begin(cc_em *out, const double *posteriors, int n, int k,
                    const double *source_priors, double *psum, int *kept)
{
    out->iterations = out->converged = out->ok = 0;
    if (k <= 0)
        return 0;
    fill_nan(out->priors, k);
    if (n <= 0 || !posteriors || !source_priors)
        return 0;
    *psum = 0.0;
    *kept = 0;
    for (int j = 0; j < k; j++)
        if (source_priors[j] > 0.0 && isfinite(source_priors[j])) {
            *psum += source_priors[j];
            (*kept)++;
        }
    return *psum > 0.0 && isfinite(*psum);
}

/* EM prior adjustment (Saerens, Latinne & Decaestecker 2002). Starting at
 * q = p (source priors, renormalised over the classes with p_j > 0), each
 * step cannot lower the log-likelihood sum_r u_r ln sum_j (q_j/p_j) s_rj;
 * stops when max_j |q'_j - q_j| < tol or after max_iter steps. With group
 * means as rows and group counts as weights the E-step is applied to each
 * group's mean posterior, an approximation to running it on every row (the
 * E-step is not linear in s). Classes with p_j = 0 stay at 0. */
int cc_em_estimate(cc_em *out, const double *posteriors, const double *weights, int n, int k,
                   const double *source_priors, double tol, int max_iter)
{
    double psum;
    int kept;
    if (!em_begin(out, posteriors, n, k, source_priors, &psum, &kept))
        return 0;

    double *buf = malloc(sizeof(double) * (size_t)k * 4);
    if (!buf)
        return -1;
    double *p = buf, *q = p + k, *next = q + k, *ratio = next + k;
    for (int j = 0; j < k; j++) {
        const double x = source_priors[j];
        p[j] = x > 0.0 && isfinite(x) ? x / psum : 0.0;
        q[j] = p[j];
    }

    int ok = 1;
    if (max_iter <= 0) {
        /* no step taken: still report whether the rows could be used */
        ok = em_step(next, ratio, q, p, posteriors, weights, n, k) > 0.0;
    }
    for (int it = 0; it < max_iter; it++) {
        if (em_step(next, ratio, q, p, posteriors, weights, n, k) <= 0.0) {
            ok = 0;
            break;
        }
        double delta = 0.0;
        for (int j = 0; j < k; j++) {
            delta = fmax(delta, fabs(next[j] - q[j]));
            q[j] = next[j];
        }
        out->iterations = it + 1;
        if (delta < tol) {
            out->converged = 1;
            break;
        }
    }
    if (ok) {
        for (int j = 0; j < k; j++)
            out->priors[j] = q[j];
        out->ok = 1;
    }
    free(buf);
    return 0;
}

/* The rows and classes SQUAREM works on: rows with weight > 0, columns of the
 * classes with source prior > 0, entries read through posterior_at, and 1/p. */
typedef struct em_problem {
    double *rows; /* n x k */
    double *u;    /* n */
    double *pinv; /* k */
    int *col;     /* k: the class (index into the caller's k) of each column */
    int n, k;
    double used;
} em_problem;

/* A prior below EM_DROP that the last EM step lowered further is set to 0
 * and its column dropped (an EM step keeps a zero prior at zero). At
 * 64 x 256 with about 180 events a day, some 215 of the 256 priors of a day's
 * estimate end below 1e-12 and keep falling; each step's work is
 * proportional to the columns left. What is dropped moves the estimate by
 * less than EM_DROP per class. */
#define EM_DROP 1e-20

static int dropped(const double *q0, const double *q1, int j)
{
    return q1[j] < EM_DROP && q1[j] <= q0[j];
}

/* Drops the columns of the classes whose prior q1 (the EM step's output
 * from q0) is below EM_DROP and below q0's, when there are enough of them to
 * pay for rewriting the rows (at least 8, or an eighth of the columns). q0
 * and q1 are compacted along with the problem; q1 is renormalised to sum 1. */
static void drop_classes(em_problem *P, double *q0, double *q1)
{
    const int k = P->k;
    int drop = 0;
    for (int j = 0; j < k; j++)
        drop += dropped(q0, q1, j);
    if (drop == 0 || drop == k || (drop < 8 && drop * 8 < k))
        return;
    /* in place, row by row: entry j of row r moves to r * kept + c <= r * k + j */
    const int kept = k - drop;
    for (int r = 0; r < P->n; r++) {
        const double *src = P->rows + (size_t)r * (size_t)k;
        double *dst = P->rows + (size_t)r * (size_t)kept;
        for (int j = 0, c = 0; j < k; j++)
            if (!dropped(q0, q1, j))
                dst[c++] = src[j];
    }
    double sum = 0.0;
    for (int j = 0, c = 0; j < k; j++) {
        if (dropped(q0, q1, j))
            continue;
        P->pinv[c] = P->pinv[j];
        P->col[c] = P->col[j];
        q0[c] = q0[j];
        q1[c] = q1[j];
        sum += q1[c];
        c++;
    }
    P->k = kept;
    for (int j = 0; j < kept; j++)
        q1[j] /= sum;
}

/* One EM step (the same E and M steps as em_step) on a compacted problem;
 * also gives (loglik not NULL) the log-likelihood at q,
 * sum_r u_r ln sum_j (q_j/p_j) s_rj, over the rows used. ratio and acc are
 * k-sized scratch. Returns sum_r u_r over the rows used (0: nothing to
 * estimate). */
static double sq_step(double *next, double *loglik, double *ratio, double *acc, const double *q,
                      const em_problem *P)
{
    const int k = P->k;
    for (int j = 0; j < k; j++) {
        ratio[j] = q[j] * P->pinv[j];
        acc[j] = 0.0;
    }
    double used = 0.0, ll = 0.0;
    for (int r = 0; r < P->n; r++) {
        const double *row = P->rows + (size_t)r * (size_t)k;
        /* four partial sums: independent additions the CPU can overlap */
        double d4[4] = {0.0, 0.0, 0.0, 0.0};
        int c = 0;
        for (; c + 4 <= k; c += 4)
            for (int t = 0; t < 4; t++)
                d4[t] += ratio[c + t] * row[c + t];
        for (; c < k; c++)
            d4[0] += ratio[c] * row[c];
        const double denom = (d4[0] + d4[1]) + (d4[2] + d4[3]);
        if (!(denom > 0.0) || !isfinite(denom))
            continue;
        const double scale = P->u[r] / denom;
        for (int j = 0; j < k; j++)
            acc[j] += scale * row[j];
        used += P->u[r];
        if (loglik)
            ll += P->u[r] * log(denom);
    }
    if (used > 0.0)
        for (int j = 0; j < k; j++)
            next[j] = ratio[j] * acc[j] / used;
    if (loglik)
        *loglik = ll;
    return used;
}

/* ln x, with 0 (a prior that underflowed) read as the smallest normal double */
static double log_floor(double x)
{
    return log(fmax(x, DBL_MIN));
}

static double max_abs_diff(const double *a, const double *b, int k)
{
    double d = 0.0;
    for (int j = 0; j < k; j++)
        d = fmax(d, fabs(a[j] - b[j]));
    return d;
}

/* SQUAREM with the S3 step length (Varadhan & Roland 2008, "Simple and
 * globally convergent methods for accelerating the convergence of any EM
 * algorithm", Scand. J. Statist. 35:335-353). From q0, two EM steps give
 * q1 = F(q0), q2 = F(q1). In log coordinates (l = ln q, so that every
 * extrapolated point has positive priors; many priors head for 0 when K is
 * large and a window small), r = l1 - l0, v = l2 - 2 l1 + l0,
 * alpha = -|r| / |v| and
 *   x = exp(l0 - 2 alpha r + alpha^2 v), renormalised to sum 1,
 * which is q2 at alpha = -1. |alpha| is capped by a bound that starts at 1,
 * grows fourfold each time it is reached and shrinks fourfold (not below 1)
 * after a refusal (the step control of the authors' SQUAREM package). A
 * stabilising EM step F(x) follows; x is refused when the log-likelihood at x
 * is below q0's, and the next cycle then starts from q2 (plain EM steps never
 * lower it). Stops when an EM step changes no prior by tol or more, as
 * cc_em_estimate does, or (ll_tol > 0) when a cycle raised the log-likelihood
 * by less than ll_tol per unit of row weight. Classes whose priors keep
 * falling below EM_DROP leave the problem on the way (drop_classes). */
static int squarem_run(double *q, int *iterations, int *converged, em_problem *P, double tol,
                       double ll_tol, int max_iter)
{
    int k = P->k; /* columns left; drop_classes lowers it */
    const size_t K = (size_t)k;
    double *buf = malloc(sizeof(double) * K * 9);
    if (!buf)
        return -1;
    double *q0 = buf, *q1 = q0 + K, *q2 = q1 + K, *r = q2 + K, *v = r + K, *x = v + K,
           *fx = x + K, *ratio = fx + K, *acc = ratio + K;
    const double slack = 1e-12;
    double step_max = 1.0;
    int it = 0, ok = 1;
    double ll0, ll, llprev = -INFINITY;
    *converged = 0;
    while (it < max_iter && !*converged) {
        memcpy(q0, q, sizeof(double) * (size_t)k);
        /* two plain steps; q follows the latest EM output */
        if (sq_step(q1, &ll0, ratio, acc, q0, P) <= 0.0) {
            ok = 0;
            break;
        }
        it++;
        drop_classes(P, q0, q1);
        k = P->k;
        memcpy(q, q1, sizeof(double) * (size_t)k);
        /* the log-likelihood at the cycle's start rose by less than ll_tol per unit weight */
        if (max_abs_diff(q1, q0, k) < tol || (ll_tol > 0.0 && ll0 - llprev < ll_tol * P->used)) {
            *converged = 1;
            break;
        }
        llprev = ll0;
        if (it >= max_iter)
            break;
        /* this step's log-likelihood is not used: no logarithms */
        if (sq_step(q2, NULL, ratio, acc, q1, P) <= 0.0) {
            ok = 0;
            break;
        }
        it++;
        memcpy(q, q2, sizeof(double) * (size_t)k);
        if (max_abs_diff(q2, q1, k) < tol) {
            *converged = 1;
            break;
        }

        /* r and v in log coordinates: every extrapolated point is positive */
        double nr = 0.0, nv = 0.0;
        for (int j = 0; j < k; j++) {
            const double l0 = log_floor(q0[j]), l1 = log_floor(q1[j]), l2 = log_floor(q2[j]);
            r[j] = l1 - l0;
            v[j] = l2 - 2.0 * l1 + l0;
            q0[j] = l0;
            nr += r[j] * r[j];
            nv += v[j] * v[j];
        }
        /* S3 step length, bounded by step_max, which grows fourfold while the
         * bound is reached and shrinks fourfold (not below 1) after a refusal
         * (the step-length control of the authors' SQUAREM package) */
        double alpha = nv > 0.0 ? -sqrt(nr / nv) : -1.0;
        if (!(alpha < -1.0) || it >= max_iter)
            continue; /* the next cycle starts at q2 */
        if (alpha <= -step_max) {
            alpha = -step_max;
            step_max *= 4.0;
        }
        double top = -INFINITY, sum = 0.0;
        for (int j = 0; j < k; j++) {
            x[j] = q0[j] - 2.0 * alpha * r[j] + alpha * alpha * v[j];
            top = fmax(top, x[j]);
        }
        for (int j = 0; j < k; j++) {
            x[j] = exp(x[j] - top);
            sum += x[j];
        }
        for (int j = 0; j < k; j++)
            x[j] /= sum;
        const double used = sq_step(fx, &ll, ratio, acc, x, P);
        it++;
        if (used > 0.0 && ll >= ll0 - slack * (1.0 + fabs(ll0))) {
            memcpy(q, fx, sizeof(double) * (size_t)k);
            if (max_abs_diff(fx, x, k) < tol)
                *converged = 1;
        } else {
            step_max = fmax(1.0, step_max / 4.0);
        }
    }
    free(buf);
    *iterations = it;
    return ok;
}

int cc_em_estimate_squarem(cc_em *out, const double *posteriors, const double *weights, int n,
                           int k, const double *source_priors, double tol, double ll_tol,
                           int max_iter)
{
    double psum;
    int kk, nn = 0;
    if (!em_begin(out, posteriors, n, k, source_priors, &psum, &kk))
        return 0;
    for (int r = 0; r < n; r++)
        nn += row_weight(weights, r) > 0.0;
    if (nn == 0)
        return 0;

    em_problem P = {NULL, NULL, NULL, NULL, nn, kk, 0.0};
    int *col = malloc(sizeof(int) * (size_t)kk);
    double *q = malloc(sizeof(double) * (size_t)kk);
    P.rows = malloc(sizeof(double) * (size_t)nn * (size_t)kk);
    P.u = malloc(sizeof(double) * (size_t)nn);
    P.pinv = malloc(sizeof(double) * (size_t)kk);
    int rc = 0;
    if (!col || !q || !P.rows || !P.u || !P.pinv) {
        rc = -1;
        goto done;
    }
    P.col = col;
    for (int j = 0, c = 0; j < k; j++)
        if (source_priors[j] > 0.0 && isfinite(source_priors[j])) {
            col[c] = j;
            q[c] = source_priors[j] / psum;
            P.pinv[c] = 1.0 / q[c];
            c++;
        }
    for (int r = 0, o = 0; r < n; r++) {
        const double u = row_weight(weights, r);
        if (u == 0.0)
            continue;
        const double *row = posteriors + (size_t)r * (size_t)k;
        double *dst = P.rows + (size_t)o * (size_t)kk;
        for (int c = 0; c < kk; c++)
            dst[c] = posterior_at(row, col[c]);
        P.u[o++] = u;
        P.used += u;
    }

    int ok;
    if (max_iter <= 0) {
        /* no step taken: still report whether the rows could be used */
        double *scratch = malloc(sizeof(double) * (size_t)kk * 3);
        if (!scratch) {
            rc = -1;
            goto done;
        }
        ok = sq_step(scratch, NULL, scratch + kk, scratch + 2 * kk, q, &P) > 0.0;
        free(scratch);
    } else {
        ok = squarem_run(q, &out->iterations, &out->converged, &P, tol, ll_tol, max_iter);
        if (ok < 0) {
            out->iterations = out->converged = 0;
            rc = -1;
            goto done;
        }
    }
    if (ok) {
        for (int j = 0; j < k; j++)
            out->priors[j] = 0.0;
        for (int c = 0; c < P.k; c++)
            out->priors[col[c]] = q[c];
        out->ok = 1;
    }
done:
    free(col);
    free(q);
    free(P.rows);
    free(P.u);
    free(P.pinv);
    return rc;
}
