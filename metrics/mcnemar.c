/* mcnemar.c — McNemar's test of two classifiers scored on the same labelled
 * items, from the discordant counts b (first right, second wrong) and c
 * (second right, first wrong). Binomial and chi-square tails from GSL. */
#include "mcnemar.h"

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_randist.h>
#include <limits.h>
#include <math.h>

/* P(X <= k), X ~ Bin(n, 1/2). GSL's binomial CDF takes unsigned int; beyond
 * that range the same value comes from the regularized incomplete beta
 * function, P(X <= k) = I_{1/2}(n-k, k+1). */
static double binom_half_cdf(int64_t k, int64_t n)
{
    if (k >= n)
        return 1.0;
    if (n <= (int64_t)UINT_MAX)
        return gsl_cdf_binomial_P((unsigned int)k, 0.5, (unsigned int)n);
    return gsl_cdf_beta_Q(0.5, (double)k + 1.0, (double)(n - k));
}

/* P(X = k), X ~ Bin(n, 1/2), by difference of the CDF when n is too large
 * for GSL's unsigned-int pdf. */
static double binom_half_pmf(int64_t k, int64_t n)
{
    if (n <= (int64_t)UINT_MAX)
        return gsl_ran_binomial_pdf((unsigned int)k, 0.5, (unsigned int)n);
    return binom_half_cdf(k, n) - (k > 0 ? binom_half_cdf(k - 1, n) : 0.0);
}

/* Exact conditional test (McNemar 1947, in the binomial form recommended
 * by Fagerland, Lydersen & Laake 2013, BMC Med. Res. Methodol. 13:91):
 * p = min(1, 2 P(X <= min(b,c))), X ~ Bin(b+c, 1/2); no discordant items
 * give no evidence, p = 1. */
double cc_mcnemar_exact_p(int64_t b, int64_t c)
{
    if (b < 0 || c < 0)
        return NAN;
    int64_t n = b + c;
    if (n == 0)
        return 1.0;
    double p = 2.0 * binom_half_cdf(b < c ? b : c, n);
    return p < 1.0 ? p : 1.0;
}

/* McNemar (1947), Psychometrika 12:153-157, without continuity correction:
 * X^2 = (b-c)^2 / (b+c), chi-square with 1 degree of freedom. */
double cc_mcnemar_chi2(int64_t b, int64_t c)
{
    if (b < 0 || c < 0 || b + c == 0)
        return NAN;
    double d = (double)b - (double)c;
    return d * d / ((double)b + (double)c);
}

double cc_mcnemar_chi2_p(int64_t b, int64_t c)
{
    double x2 = cc_mcnemar_chi2(b, c);
    if (isnan(x2))
        return NAN;
    return gsl_cdf_chisq_Q(x2, 1.0);
}

/* Mid-p (Fagerland, Lydersen & Laake 2013):
 * mid-p = 2 [P(X <= min(b,c)) - P(X = min(b,c)) / 2], i.e. the exact p minus
 * the point probability of the observed count. When b = c (exact p = 1),
 * 1 - P(X = b)/2, the convention of the paper's supplementary material.
 * With no discordant items there is no evidence either way: 1. */
double cc_mcnemar_mid_p(int64_t b, int64_t c)
{
    if (b < 0 || c < 0)
        return NAN;
    int64_t n = b + c;
    if (n == 0)
        return 1.0;
    int64_t k = b < c ? b : c;
    double point = binom_half_pmf(k, n);
    if (b == c)
        return 1.0 - 0.5 * point;
    double p = 2.0 * binom_half_cdf(k, n) - point;
    return p < 1.0 ? p : 1.0;
}
