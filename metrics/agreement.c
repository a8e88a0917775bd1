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

/* Cohen (1960), Educ. Psych. Meas. 20:37-46:
 * p_o = sum_a n_aa / n, p_e = sum_a n_a. n_.a / n^2,
 * kappa = (p_o - p_e) / (1 - p_e), written as
 * (n sum_a n_aa - sum_a n_a. n_.a) / (n^2 - sum_a n_a. n_.a).
 * p_e = 1 exactly when both raters put every item in the same single class. */
double cc_cohen_kappa(const int64_t *table, int k)
{
    int64_t n = 0, diag = 0;
    for (int a = 0; a < k; a++)
        for (int b = 0; b < k; b++) {
            n += table[(size_t)a * k + b];
            if (a == b)
                diag += table[(size_t)a * k + b];
        }
    if (n <= 0)
        return NAN;

    double chance = 0.0;
    for (int a = 0; a < k; a++) {
        int64_t row = 0, col = 0;
        for (int b = 0; b < k; b++) {
            row += table[(size_t)a * k + b];
            col += table[(size_t)b * k + a];
        }
        if (row == n && col == n)
            return NAN;
        chance += (double)row * (double)col;
    }
    double nn = (double)n * (double)n;
    return ((double)n * (double)diag - chance) / (nn - chance);
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
    int64_t ratings = n * (int64_t)m, seen = 0;
    for (int j = 0; j < k; j++) {
        if (class_totals[j] < 0)
            return NAN;
        if (class_totals[j] == ratings)
            return NAN;
        seen += class_totals[j];
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
