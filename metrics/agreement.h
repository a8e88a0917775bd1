/* agreement.h — label-free agreement between members' predicted classes:
 * pairwise disagreement, Cohen's kappa per pair, Fleiss' kappa across members.
 * Undefined values (0/0) are returned as NAN. Pure numbers. */
#ifndef CC_METRICS_AGREEMENT_H
#define CC_METRICS_AGREEMENT_H

#include <stdint.h>

/* Fraction of items on which the two raters differ: off-diagonal mass of a
 * K x K table (row-major, table[a*k+b]). NAN when the table is empty. */
double cc_disagreement(const int64_t *table, int k);

#define CC_KAPPA_MAX_K 256

/* Cohen (1960): kappa = (p_o - p_e) / (1 - p_e) from a K x K table
 * (k <= CC_KAPPA_MAX_K). NAN when the table is empty or p_e = 1. */
double cc_cohen_kappa(const int64_t *table, int k);

/* The same from n, the count of items on which the raters agree, and each
 * rater's k class counts (the table's row and column sums). This is what a
 * summary keeps, so kappa needs O(K) counters per pair, not O(K^2). */
double cc_cohen_kappa_margins(int64_t n, int64_t agree, const int64_t *row, const int64_t *col,
                              int k);

/* Fleiss (1971) from sufficient statistics, so it merges across days:
 * n items each rated by m raters; sumsq = sum over items of sum_j n_ij^2;
 * class_totals[j] = sum over items of n_ij (k of them).
 * P_bar = (sumsq/n - m) / (m(m-1)), p_j = class_totals[j]/(n m),
 * P_e = sum_j p_j^2, kappa = (P_bar - P_e)/(1 - P_e).
 * NAN when n = 0, m < 2 or P_e = 1. */
double cc_fleiss_kappa(int64_t n, int m, int64_t sumsq, const int64_t *class_totals, int k);

#endif
