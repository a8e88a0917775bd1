/* control.h — a window's figure against the spread of the baseline's daily
 * figures: z-scores and EWMA (Roberts 1959). Pure numbers; NAN = undefined. */
#ifndef CC_METRICS_CONTROL_H
#define CC_METRICS_CONTROL_H

#define CC_EWMA_LAMBDA 0.2      /* Montgomery: 0.05 <= lambda <= 0.25 usual */
#define CC_BASELINE_MIN_DAYS 3  /* fewer baseline days: no z-score (common practice) */

typedef struct cc_baseline_stat {
    int n;          /* baseline days with a defined value */
    double mean;
    double sd;      /* population sd (divides by n), as in Phase I charts */
} cc_baseline_stat;

/* Mean and sd of the defined (non-NAN) values among x[0..n-1]. */
void cc_baseline_stat_compute(cc_baseline_stat *out, const double *x, int n);

/* (x - mean) / sd; NAN when x is NAN, n < CC_BASELINE_MIN_DAYS or sd = 0. */
double cc_zscore(double x, const cc_baseline_stat *b);

/* z_t = lambda x_t + (1 - lambda) z_{t-1}; a NAN x_t leaves z unchanged. */
double cc_ewma_step(double prev, double x, double lambda);

#endif
