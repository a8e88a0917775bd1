/* drift.c — how far a window's distribution has moved from the baseline's,
 * computed only from counts that summaries can merge: class counts (chi-square
 * and G-test of homogeneity, PSI, Jensen-Shannon divergence) and fine
 * histograms sharing their bin edges (two-sample Kolmogorov-Smirnov).
 * Pure numbers; NAN = undefined. */
#include "drift.h"

#include <gsl/gsl_cdf.h>
#include <math.h>
#include <stddef.h>

/* Sum of a count vector; -1 when an entry is negative (not a count). */
static int64_t count_total(const int64_t *x, int k)
{
    int64_t t = 0;
    for (int j = 0; j < k; j++) {
        if (x[j] < 0)
            return -1;
        t += x[j];
    }
    return t;
}

/* Pearson (1900) test of homogeneity on the 2 x k table with rows a and b:
 *   E_ij = R_i C_j / T,  X^2 = sum (O - E)^2 / E,  df = (2-1)(k'-1),
 * k' = columns with a non-zero total (an empty column has E = 0 in both rows
 * and carries no information; dropping it is the usual reduction of df).
 * Likelihood-ratio statistic G^2 = 2 sum O ln(O / E), 0 ln 0 = 0 (Wilks 1938;
 * Sokal & Rohlf, Biometry, "G-test"), same df. p = upper tail of chi-square
 * with df degrees of freedom (GSL gsl_cdf_chisq_Q). */
void cc_chi2_homogeneity(cc_chi2 *out, const int64_t *a, const int64_t *b, int k)
{
    out->stat = NAN;
    out->dof = 0;
    out->p_value = NAN;
    out->g_stat = NAN;
    if (k < 2)
        return;
    int64_t ra = count_total(a, k), rb = count_total(b, k);
    if (ra <= 0 || rb <= 0)
        return;
    int cols = 0;
    for (int j = 0; j < k; j++)
        cols += (a[j] + b[j]) > 0;
    if (cols < 2)
        return;

    const double t = (double)ra + (double)rb;
    const double rows[2] = {(double)ra, (double)rb};
    double x2 = 0.0, g2 = 0.0;
    for (int j = 0; j < k; j++) {
        double cj = (double)a[j] + (double)b[j];
        if (cj <= 0.0)
            continue;
        const double obs[2] = {(double)a[j], (double)b[j]};
        for (int i = 0; i < 2; i++) {
            double e = rows[i] * cj / t;
            double d = obs[i] - e;
            x2 += d * d / e;
            if (obs[i] > 0.0)
                g2 += obs[i] * log(obs[i] / e);
        }
    }
    g2 *= 2.0;
    out->dof = cols - 1;
    out->stat = x2;
    out->g_stat = g2 > 0.0 ? g2 : 0.0; /* exact arithmetic gives G^2 >= 0 */
    out->p_value = gsl_cdf_chisq_Q(x2, (double)out->dof);
}

/* Population Stability Index (credit-scoring practice; Lewis 1994, Siddiqi
 * 2006; statistical properties in Yurdakul 2018):
 *   PSI = sum_b (c_b - r_b) ln(c_b / r_b)  =  KL(c||r) + KL(r||c),
 * r, c = baseline and current bin fractions, each smoothed as
 * (f + eps) / (1 + k eps) so that a bin empty on one side stays finite.
 * With eps = 0, a bin empty on one side only gives +infinity and a bin
 * empty on both sides contributes 0. */
double cc_psi(const int64_t *baseline, const int64_t *current, int k, double eps)
{
    if (k < 1 || !(eps >= 0.0))
        return NAN;
    int64_t nr = count_total(baseline, k), nc = count_total(current, k);
    if (nr <= 0 || nc <= 0)
        return NAN;
    const double norm = 1.0 + k * eps;
    double psi = 0.0;
    for (int j = 0; j < k; j++) {
        double r = ((double)baseline[j] / (double)nr + eps) / norm;
        double c = ((double)current[j] / (double)nc + eps) / norm;
        if (r == c)
            continue;
        if (r == 0.0 || c == 0.0)
            return INFINITY;
        psi += (c - r) * log(c / r);
    }
    return psi;
}

/* Jensen-Shannon divergence (Lin 1991, IEEE Trans. Inf. Theory 37:145-151)
 * of the fractions p = a/|a|, q = b/|b|:
 *   JSD = 1/2 KL(p||m) + 1/2 KL(q||m),  m = (p + q)/2,  0 ln 0 = 0,
 * in bits (divided by ln 2), so 0 <= JSD <= 1. Every term is finite: m > 0
 * wherever p or q is. */
double cc_js_bits(const int64_t *a, const int64_t *b, int k)
{
    if (k < 1)
        return NAN;
    int64_t na = count_total(a, k), nb = count_total(b, k);
    if (na <= 0 || nb <= 0)
        return NAN;
    double js = 0.0;
    for (int j = 0; j < k; j++) {
        double p = (double)a[j] / (double)na, q = (double)b[j] / (double)nb;
        double m = 0.5 * (p + q);
        if (p > 0.0)
            js += 0.5 * p * log(p / m);
        if (q > 0.0)
            js += 0.5 * q * log(q / m);
    }
    js /= log(2.0);
    return js < 0.0 ? 0.0 : js > 1.0 ? 1.0 : js;
}

/* Two-sample Kolmogorov-Smirnov statistic (Kolmogorov 1933; Smirnov 1939),
 * D = sup_x |F_a(x) - F_b(x)|, restricted to the bins' upper edges:
 * D_hist = max_b |A_b / n_a - B_b / n_b|, A_b, B_b cumulative counts. Since
 * the edges are a subset of all x, D_hist <= D; the two agree when no bin
 * holds interleaved values of both samples where the supremum is reached.
 * NAN when either histogram is empty (or holds a negative count). */
double cc_ks_hist(const int64_t *a, const int64_t *b, int bins, int64_t *n_a, int64_t *n_b)
{
    int64_t na = bins > 0 ? count_total(a, bins) : 0;
    int64_t nb = bins > 0 ? count_total(b, bins) : 0;
    if (n_a)
        *n_a = na < 0 ? 0 : na;
    if (n_b)
        *n_b = nb < 0 ? 0 : nb;
    if (na <= 0 || nb <= 0)
        return NAN;
    /* |A_b/n_a - B_b/n_b| = |A_b n_b - B_b n_a| / (n_a n_b): the largest
     * numerator, then one division (in double: exact while the products stay
     * below 2^53). Past the bin where both cumulative counts reach their
     * totals every difference is 0, so the scan stops there; a by-day report
     * runs this on (3 + K) histograms of 2,048 bins per window. */
    const double fa = (double)na, fb = (double)nb;
    int64_t ca = 0, cb = 0;
    double num = 0.0;
    for (int i = 0; i < bins && (ca < na || cb < nb); i++) {
        ca += a[i];
        cb += b[i];
        double diff = fabs((double)ca * fb - (double)cb * fa);
        if (diff > num)
            num = diff;
    }
    return num / (fa * fb);
}

/* Kolmogorov's limiting distribution (Kolmogorov 1933):
 *   Q_KS(l) = P(K > l) = 2 sum_{j>=1} (-1)^{j-1} exp(-2 j^2 l^2).
 * The alternating series converges fast for l >= 1 but needs many terms
 * near 0; there the Jacobi theta-function form of the CDF is used instead:
 *   P(K <= l) = sqrt(2 pi) / l sum_{j>=1} exp(-(2j-1)^2 pi^2 / (8 l^2))
 * (the same function after Jacobi's theta transformation; from memory, and
 * checked in tests against scipy.stats.kstwobign). Both series are truncated once a term drops below 1e-20 of the sum. */
static double kolmogorov_q(double l)
{
    if (!(l > 0.0))
        return 1.0;
    if (l < 1.0) {
        const double pi = 3.14159265358979323846;
        double s = 0.0, w = pi * pi / (8.0 * l * l);
        for (int j = 1; j < 100; j++) {
            double odd = 2.0 * j - 1.0;
            double term = exp(-odd * odd * w);
            s += term;
            if (term <= 1e-20 * s)
                break;
        }
        double cdf = sqrt(2.0 * pi) / l * s;
        double q = 1.0 - cdf;
        return q < 0.0 ? 0.0 : q > 1.0 ? 1.0 : q;
    }
    double s = 0.0;
    for (int j = 1; j < 100; j++) {
        double term = exp(-2.0 * j * j * l * l);
        s += (j % 2 ? term : -term);
        if (term <= 1e-20 * s)
            break;
    }
    double q = 2.0 * s;
    return q < 0.0 ? 0.0 : q > 1.0 ? 1.0 : q;
}

/* Asymptotic two-sample p-value P(D >= d) ~ Q_KS(sqrt(en) d),
 * en = n m / (n + m) (Smirnov 1939). This is the plain Kolmogorov limit
 * (scipy.stats.kstwobign.sf(sqrt(en) d)); scipy's ks_2samp(method='asymp')
 * uses kstwo.sf(d, round(en)) instead and gives other numbers. Ties in the
 * data (saturated probabilities) make the test conservative. */
double cc_ks_pvalue(double d, int64_t n, int64_t m)
{
    if (n < CC_DRIFT_MIN_EVENTS || m < CC_DRIFT_MIN_EVENTS || isnan(d) || d < 0.0)
        return NAN;
    if (d > 1.0)
        d = 1.0;
    double en = (double)n * (double)m / ((double)n + (double)m);
    return kolmogorov_q(sqrt(en) * d);
}
