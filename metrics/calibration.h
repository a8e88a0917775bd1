/* calibration.h — calibration of the averaged output (or one member) on
 * labelled events, from the counters a summary keeps: per confidence bin
 * (count, correct, confidence sum in fixed point), and sums of the Brier
 * score and of the log-loss. Pure numbers; NAN = undefined. */
#ifndef CC_METRICS_CALIBRATION_H
#define CC_METRICS_CALIBRATION_H

#include <stdint.h>

#include "summary.h"

typedef struct cc_calib_bin {
    int64_t count;
    double confidence;   /* mean confidence in the bin, NAN when empty */
    double accuracy;     /* share correct in the bin, NAN when empty */
} cc_calib_bin;

typedef struct cc_calibration {
    int64_t n;
    double ece;          /* Guo et al. 2017, CC_CALIB_BINS equal-width bins */
    double mce;          /* max over non-empty bins */
    double brier;        /* multi-class Brier (Brier 1950), 0..2 */
    double nll;          /* mean -ln p_y, p clipped at CC_NLL_EPS */
    cc_calib_bin bins[CC_CALIB_BINS];
} cc_calibration;

/* calib: CC_CALIB_BINS bins of CC_CALIB_STRIDE counters (count, correct,
 * confidence_fx as a wide sum); brier_fx, nll_fx: wide sums in fixed point
 * (CC_FIXED_SCALE), see summary.h. */
void cc_calibration_compute(cc_calibration *out, const int64_t *calib, const int64_t *brier_fx,
                            const int64_t *nll_fx);

#endif
