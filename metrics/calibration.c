/* calibration.c — how well the averaged output's (or one member's)
 * confidence matches its accuracy on labelled events, from the counters a
 * summary keeps: per confidence bin (count, correct, confidence sum in fixed
 * point), and fixed-point sums of the Brier score and of the log-loss.
 * Pure numbers; NAN = undefined. */
#include "calibration.h"

#include <math.h>

static void set_undefined(cc_calibration *out)
{
    out->n = 0;
    out->ece = NAN;
    out->mce = NAN;
    out->brier = NAN;
    out->nll = NAN;
    for (int b = 0; b < CC_CALIB_BINS; b++) {
        out->bins[b].count = 0;
        out->bins[b].confidence = NAN;
        out->bins[b].accuracy = NAN;
    }
}

/* Bins B_b = (b/C, (b+1)/C], C = CC_CALIB_BINS, of the confidence
 * c_i = max_k p_ik (the summary puts a value on an edge in the lower bin).
 *   ECE = sum_b (|B_b| / n) |acc(B_b) - conf(B_b)| = (1/n) sum_b |correct_b - confsum_b|
 *   MCE = max over non-empty b of |acc(B_b) - conf(B_b)|
 * (Naeini, Cooper & Hauskrecht 2015, AAAI; Guo, Pleiss, Sun & Weinberger
 * 2017, ICML), empty bins skipped.
 *   Brier = (1/n) sum_i sum_k (p_ik - o_ik)^2, range [0, 2] (Brier 1950,
 *   Monthly Weather Review 78:1-3, multi-class form).
 *   NLL = -(1/n) sum_i ln max(p_i,y_i, CC_NLL_EPS)  (nats).
 * n = sum of the bin counts; n = 0, or counters that cannot come from events
 * (negative count, correct outside 0..count), leave everything undefined. */
void cc_calibration_compute(cc_calibration *out, const int64_t *calib, const int64_t *brier_fx,
                            const int64_t *nll_fx)
{
    set_undefined(out);
    int64_t n = 0;
    for (int b = 0; b < CC_CALIB_BINS; b++) {
        int64_t count = calib[b * CC_CALIB_STRIDE + 0], correct = calib[b * CC_CALIB_STRIDE + 1];
        if (count < 0 || correct < 0 || correct > count)
            return;
        n += count;
    }
    if (n <= 0)
        return;

    double gap_sum = 0.0, mce = 0.0;
    for (int b = 0; b < CC_CALIB_BINS; b++) {
        int64_t count = calib[b * CC_CALIB_STRIDE + 0];
        out->bins[b].count = count;
        if (count == 0)
            continue;
        double correct = (double)calib[b * CC_CALIB_STRIDE + 1];
        double conf_sum = cc_wide_value(calib + b * CC_CALIB_STRIDE + 2) / CC_FIXED_SCALE;
        out->bins[b].confidence = conf_sum / (double)count;
        out->bins[b].accuracy = correct / (double)count;
        gap_sum += fabs(correct - conf_sum);
        double gap = fabs(out->bins[b].accuracy - out->bins[b].confidence);
        if (gap > mce)
            mce = gap;
    }
    out->n = n;
    out->ece = gap_sum / (double)n;
    out->mce = mce;
    out->brier = cc_wide_value(brier_fx) / CC_FIXED_SCALE / (double)n;
    out->nll = cc_wide_value(nll_fx) / CC_FIXED_SCALE / (double)n;
}
