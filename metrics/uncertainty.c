/* uncertainty.c — uncertainty of the averaged ensemble output and its split
 * into the members' expected entropy and the mutual information between the
 * prediction and the choice of member. Nats; float inputs, double arithmetic. */
#include "uncertainty.h"

#include <math.h>
#include <stddef.h>

/* Shannon entropy H(p) = -sum_k p_k ln p_k, with 0 ln 0 = 0. */
double cc_entropy_nats(const double *p, int k)
{
    double h = 0.0;
    for (int i = 0; i < k; i++)
        if (p[i] > 0.0)
            h -= p[i] * log(p[i]);
    return h;
}

/* Ensemble output p_bar = (1/M) sum_m p_m (Lakshminarayanan, Pritzel &
 * Blundell 2017). Split of Houlsby et al. (2011) and Depeweg et al. (2018),
 * members as equally weighted samples:
 *   total    = H(p_bar)
 *   expected = (1/M) sum_m H(p_m)
 *   mutual   = total - expected  (>= 0 in exact arithmetic, being the
 *              equal-weight Jensen-Shannon divergence of the members,
 *              Lin 1991; rounding below 0 is clamped). */
void cc_uncertainty_split(cc_uncertainty *out, const float *probs, int m, int k, double *avg_out)
{
    if (m < 1 || k < 1) {
        out->total_nats = NAN;
        out->expected_nats = NAN;
        out->mutual_nats = NAN;
        return;
    }

    double expected = 0.0, total = 0.0;
    for (int c = 0; c < k; c++) {
        double sum = 0.0;
        for (int i = 0; i < m; i++)
            sum += (double)probs[(size_t)i * (size_t)k + (size_t)c];
        double mean = sum / m;
        if (avg_out)
            avg_out[c] = mean;
        if (mean > 0.0)
            total -= mean * log(mean);
    }
    for (int i = 0; i < m; i++) {
        double h = 0.0;
        for (int c = 0; c < k; c++) {
            double p = (double)probs[(size_t)i * (size_t)k + (size_t)c];
            if (p > 0.0)
                h -= p * log(p);
        }
        expected += h;
    }
    expected /= m;

    out->total_nats = total;
    out->expected_nats = expected;
    out->mutual_nats = total > expected ? total - expected : 0.0;
}
