/* control.c — a window's daily figure against the spread of the same figure
 * over the baseline's days: baseline mean and sd (Phase I), z-scores and the
 * EWMA recursion (Roberts 1959). Pure numbers; NAN = undefined. */
#include "control.h"

#include <float.h>
#include <math.h>

/* Mean and population sd (divide by n, as for Phase I limits; Montgomery,
 * Introduction to Statistical Quality Control) of the non-NAN values, by two
 * passes. An sd at the level of rounding noise of the mean (all values equal
 * but the mean not exactly representable) is set to 0, so that such a
 * baseline is reported as flat rather than giving huge z-scores. */
void cc_baseline_stat_compute(cc_baseline_stat *out, const double *x, int n)
{
    int used = 0;
    double sum = 0.0;
    for (int i = 0; i < n; i++)
        if (!isnan(x[i])) {
            sum += x[i];
            used++;
        }
    out->n = used;
    if (used == 0) {
        out->mean = NAN;
        out->sd = NAN;
        return;
    }
    double mean = sum / used, ss = 0.0;
    for (int i = 0; i < n; i++)
        if (!isnan(x[i])) {
            double d = x[i] - mean;
            ss += d * d;
        }
    double sd = sqrt(ss / used);
    if (sd <= 8.0 * DBL_EPSILON * fabs(mean))
        sd = 0.0;
    out->mean = mean;
    out->sd = sd;
}

/* z = (x - mu0) / sigma0. Undefined for a missing value, a baseline of fewer
 * than CC_BASELINE_MIN_DAYS days, or a flat (sd = 0) or undefined baseline. */
double cc_zscore(double x, const cc_baseline_stat *b)
{
    if (isnan(x) || b->n < CC_BASELINE_MIN_DAYS || !isfinite(b->mean) || !isfinite(b->sd) ||
        !(b->sd > 0.0))
        return NAN;
    return (x - b->mean) / b->sd;
}

/* EWMA (Roberts 1959, Technometrics 1:239-250): z_t = lambda x_t + (1 - lambda) z_{t-1},
 * 0 < lambda <= 1, started at z_0 = mu0 by the caller. A missing day (NAN x)
 * carries z over unchanged; a NAN z_{t-1} (no start value) starts the
 * recursion at x_t; lambda outside (0, 1] is undefined. */
double cc_ewma_step(double prev, double x, double lambda)
{
    if (!(lambda > 0.0 && lambda <= 1.0))
        return NAN;
    if (isnan(x))
        return prev;
    if (isnan(prev))
        return x;
    return lambda * x + (1.0 - lambda) * prev;
}
