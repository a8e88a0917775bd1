/* mcnemar.h — McNemar (1947) test of two classifiers on the same items,
 * from the discordant counts b (first right, second wrong) and c (reverse).
 * Exact conditional binomial p-value (two-sided), with GSL's binomial CDF. */
#ifndef CC_METRICS_MCNEMAR_H
#define CC_METRICS_MCNEMAR_H

#include <stdint.h>

/* p = min(1, 2 * P(X <= min(b,c))), X ~ Bin(b+c, 1/2); 1 when b+c = 0. */
double cc_mcnemar_exact_p(int64_t b, int64_t c);
/* (b-c)^2/(b+c) and its chi-square(1) p-value; NAN when b+c = 0. */
double cc_mcnemar_chi2(int64_t b, int64_t c);
double cc_mcnemar_chi2_p(int64_t b, int64_t c);
/* Exact p minus P(X = min(b,c)) (Fagerland, Lydersen & Laake 2013). */
double cc_mcnemar_mid_p(int64_t b, int64_t c);

#endif
