/* agreement.c — how often members agree on the predicted class, without
 * labels: pairwise disagreement, Cohen's kappa of one pair, Fleiss' kappa of
 * all members. Undefined values (0/0) are NAN. */
#include "agreement.h"

#include <math.h>
#include <stddef.h>

/* Disagreement of two raters: off-diagonal mass of their K x K table (the
 * label-free counterpart of Dis in Kuncheva & Whitaker 2003). */
double cc_disagreement(const int64_t *table, int k)
{
    int64_t n = 0, same = 0;
    for (int a = 0; a < k; a++)
        for (int b = 0; b < k; b++) {
            n += table[(size_t)a * k + b];
            if (a == b)
                same += table[(size_t)a * k + b];
        }
    if (n <= 0)
        return NAN;
    return (double)(n - same) / (double)n;
}

/* Cohen (1960), Educ. Psych. Meas. 20:37-46, from what a summary keeps:
 * n items, agree = items on which the two raters give the same class, and
 * each rater's class counts (the margins of their K x K table):
 * p_o = agree / n, p_e = sum_a row_a col_a / n^2,
 * kappa = (p_o - p_e) / (1 - p_e) = (n agree - sum_a row_a col_a) / (n^2 - sum_a row_a col_a).
 * p_e = 1 exactly when both raters put every item in the same single class. */
double cc_cohen_kappa_margins(int64_t n, int64_t agree, const int64_t *row, const int64_t *col,
                              int k)
{
    if (n <= 0)
        return NAN;
    double chance = 0.0;
    for (int a = 0; a < k; a++) {
        if (row[a] == n && col[a] == n)
            return NAN;
        chance += (double)row[a] * (double)col[a];
    }
    double nn = (double)n * (double)n;
    return ((double)n * (double)agree - chance) / (nn - chance);
}

/* The same from a full K x K table (row-major, table[a*k+b]). */
double cc_cohen_kappa(const int64_t *table, int k)
{
    int64_t n = 0, diag = 0, row[CC_KAPPA_MAX_K] = {0}, col[CC_KAPPA_MAX_K] = {0};
    if (k > CC_KAPPA_MAX_K)
        return NAN;
    for (int a = 0; a < k; a++)
        for (int b = 0; b < k; b++) {
            int64_t x = table[(size_t)a * k + b];
            n += x;
            row[a] += x;
            col[b] += x;
            if (a == b)
                diag += x;
        }
    return cc_cohen_kappa_margins(n, diag, row, col, k);
}

/* Fleiss (1971), Psych. Bull. 76:378-382, from sufficient statistics:
 * P_bar = (sumsq/n - m) / (m(m-1)), p_j = class_totals[j] / (n m),
 * P_e = sum_j p_j^2, kappa = (P_bar - P_e) / (1 - P_e).
 * Class totals that do not add up to n m mean unequal rater counts per item,
 * which the statistic does not allow: NAN. */
double cc_fleiss_kappa(int64_t n, int m, int64_t sumsq, const int64_t *class_totals, int k)
{
    if (n <= 0 || m < 2 || k < 1)
        return NAN;
    /* n m ratings and their class totals must be exact integers to check
     * that they add up; past int64 (more than about 1.8e18 ratings) the
     * statistic is not computed */
    int64_t ratings, seen = 0;
    if (__builtin_mul_overflow(n, (int64_t)m, &ratings))
        return NAN;
    for (int j = 0; j < k; j++) {
        if (class_totals[j] < 0)
            return NAN;
        if (class_totals[j] == ratings)
            return NAN;
        if (__builtin_add_overflow(seen, class_totals[j], &seen))
            return NAN;
    }
    if (seen != ratings)
        return NAN;

    double nm = (double)ratings;
    double p_bar = ((double)sumsq / (double)n - m) / ((double)m * (m - 1));
    double p_e = 0.0;
    for (int j = 0; j < k; j++) {
        double pj = (double)class_totals[j] / nm;
        p_e += pj * pj;
    }
    return (p_bar - p_e) / (1.0 - p_e);
}
