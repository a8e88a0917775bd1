/* oracle.c — diversity of an ensemble measured on oracle outputs (each member
 * right or wrong on each labelled item): the pairwise and non-pairwise
 * measures of Kuncheva & Whitaker (2003), Machine Learning 51:181-207, and
 * the generalized / coincident failure diversity of Partridge & Krzanowski
 * (1997), Inf. Softw. Technol. 39:707-717. Undefined values are NAN. */
#include "oracle.h"

#include <math.h>

static int64_t pair_total(cc_pair_counts c) { return c.n11 + c.n10 + c.n01 + c.n00; }

/* Yule's Q (Yule 1900), as used by Kuncheva & Whitaker (2003):
 * Q = (N11 N00 - N01 N10) / (N11 N00 + N01 N10); 0/0 is undefined. */
double cc_yule_q(cc_pair_counts c)
{
    double agree = (double)c.n11 * (double)c.n00;
    double cross = (double)c.n01 * (double)c.n10;
    if (agree + cross == 0.0)
        return NAN;
    return (agree - cross) / (agree + cross);
}

/* Correlation of the oracle outputs, Kuncheva & Whitaker (2003):
 * rho = (N11 N00 - N01 N10) /
 *       sqrt((N11+N10)(N01+N00)(N11+N01)(N10+N00));
 * undefined when a member is always right or always wrong (zero marginal). */
double cc_oracle_rho(cc_pair_counts c)
{
    int64_t first_right = c.n11 + c.n10, first_wrong = c.n01 + c.n00;
    int64_t second_right = c.n11 + c.n01, second_wrong = c.n10 + c.n00;
    if (first_right == 0 || first_wrong == 0 || second_right == 0 || second_wrong == 0)
        return NAN;
    double num = (double)c.n11 * (double)c.n00 - (double)c.n01 * (double)c.n10;
    double den = sqrt((double)first_right * (double)first_wrong) *
                 sqrt((double)second_right * (double)second_wrong);
    return num / den;
}

/* Kuncheva & Whitaker (2003): Dis = (N01 + N10) / N. */
double cc_oracle_disagreement(cc_pair_counts c)
{
    int64_t n = pair_total(c);
    if (n <= 0)
        return NAN;
    return (double)(c.n01 + c.n10) / (double)n;
}

/* Kuncheva & Whitaker (2003): DF = N00 / N. */
double cc_double_fault(cc_pair_counts c)
{
    int64_t n = pair_total(c);
    if (n <= 0)
        return NAN;
    return (double)c.n00 / (double)n;
}

static void set_all_nan(cc_nonpairwise *out)
{
    out->entropy_e = NAN;
    out->kw_variance = NAN;
    out->interrater_kappa = NAN;
    out->difficulty = NAN;
    out->generalized_diversity = NAN;
    out->coincident_failure = NAN;
    out->p_bar = NAN;
}

/* hist[l] = items with exactly l of L members right; N = sum_l hist[l].
 *
 * Kuncheva & Whitaker (2003):
 *   p_bar = sum_l l hist[l] / (N L)
 *   E     = (1/N) sum_l hist[l] min(l, L-l) / (L - ceil(L/2))
 *   KW    = (1/(N L^2)) sum_l hist[l] l (L-l)
 *   kappa = 1 - (1/L) sum_l hist[l] l (L-l) / (N (L-1) p_bar (1-p_bar))
 *   theta = Var(l/L), variance dividing by N
 * Partridge & Krzanowski (1997), with p_i = hist[L-i]/N the fraction of items
 * on which exactly i members fail:
 *   p(1) = sum_i (i/L) p_i, p(2) = sum_i i(i-1)/(L(L-1)) p_i, GD = 1 - p(2)/p(1)
 *   CFD  = 0 if p_0 = 1, else (1/(1-p_0)) sum_{i=1..L} (L-i)/(L-1) p_i
 * Undefined: N = 0 (all); L = 1 (E, kappa, GD, CFD); p_bar in {0,1} (kappa);
 * p(1) = 0 (GD). */
void cc_nonpairwise_compute(cc_nonpairwise *out, const int64_t *hist, int L)
{
    set_all_nan(out);
    if (L < 1)
        return;

    int64_t n = 0, right = 0;
    for (int l = 0; l <= L; l++) {
        n += hist[l];
        right += (int64_t)l * hist[l];
    }
    if (n <= 0)
        return;

    const double N = (double)n, dL = (double)L;
    const double p_bar = (double)right / (N * dL);
    out->p_bar = p_bar;

    double split = 0.0, minority = 0.0, spread = 0.0;
    for (int l = 0; l <= L; l++) {
        double h = (double)hist[l];
        double d = (double)l / dL - p_bar;
        split += h * (double)l * (double)(L - l);
        minority += h * (double)(l < L - l ? l : L - l);
        spread += h * d * d;
    }
    out->kw_variance = split / (N * dL * dL);
    out->difficulty = spread / N;

    if (L == 1)
        return;

    out->entropy_e = minority / N / (double)(L / 2);

    if (right > 0 && right < n * (int64_t)L)
        out->interrater_kappa = 1.0 - (split / dL) / (N * (dL - 1.0) * p_bar * (1.0 - p_bar));

    double p1 = 0.0, p2 = 0.0, tail = 0.0;
    for (int i = 1; i <= L; i++) {
        double pi = (double)hist[L - i] / N;
        p1 += (double)i / dL * pi;
        p2 += (double)i * (double)(i - 1) / (dL * (dL - 1.0)) * pi;
        tail += (double)(L - i) / (dL - 1.0) * (double)hist[L - i];
    }
    if (p1 > 0.0)
        out->generalized_diversity = 1.0 - p2 / p1;

    if (hist[L] == n)
        out->coincident_failure = 0.0;
    else
        out->coincident_failure = tail / (double)(n - hist[L]);
}
