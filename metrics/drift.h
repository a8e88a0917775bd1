/* drift.h — comparing a window with the baseline from mergeable counts:
 * class-mix tests on count vectors, and two-sample Kolmogorov-Smirnov on
 * fine histograms that share their bin edges. Pure numbers; NAN = undefined. */
#ifndef CC_METRICS_DRIFT_H
#define CC_METRICS_DRIFT_H

#include <stdint.h>

#define CC_PSI_EPSILON 1e-4     /* added to every bin fraction before renormalising */
#define CC_DRIFT_MIN_EVENTS 30  /* fewer events on either side: no test (common practice) */

/* Pearson (1900) chi-square test of homogeneity of two count vectors
 * (a 2 x k table). Columns that are zero in both are dropped (dof shrinks).
 * p from GSL's chi-square upper tail. All NAN (dof 0) when either side has
 * no counts or fewer than two columns remain. */
typedef struct cc_chi2 { double stat; int dof; double p_value; double g_stat; } cc_chi2;
void cc_chi2_homogeneity(cc_chi2 *out, const int64_t *a, const int64_t *b, int k);

/* Population Stability Index, sum_b (c_b - r_b) ln(c_b / r_b), with
 * r = baseline fractions, c = current fractions, each smoothed as
 * (f + eps) / (1 + k eps). NAN when either side is empty. */
double cc_psi(const int64_t *baseline, const int64_t *current, int k, double eps);

/* Jensen-Shannon divergence (Lin 1991) of the two count vectors' fractions,
 * in bits (0..1). NAN when either side is empty. */
double cc_js_bits(const int64_t *a, const int64_t *b, int k);

/* Two-sample KS statistic from two histograms over the same bins (bins in
 * increasing order of the value): D = max_b |F_a(edge_b) - F_b(edge_b)|,
 * evaluated at bin edges. n_a, n_b receive the sample sizes. */
double cc_ks_hist(const int64_t *a, const int64_t *b, int bins, int64_t *n_a, int64_t *n_b);

/* Asymptotic p-value P(D >= d) = Q_KS(sqrt(en) d), en = n m/(n + m),
 * Q_KS(l) = 2 sum_{j>=1} (-1)^{j-1} exp(-2 j^2 l^2) (Kolmogorov 1933,
 * Smirnov 1939). NAN when n or m is below CC_DRIFT_MIN_EVENTS. */
double cc_ks_pvalue(double d, int64_t n, int64_t m);

#endif
