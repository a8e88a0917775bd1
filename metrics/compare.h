/* compare.h — a window against the baseline period, from two merged
 * summaries: drift of the class mix and of the score distributions, each
 * member's class mix, label-shift estimates, calibration, label coverage.
 * Pure numbers; NAN = undefined (too few events, no labels, no baseline). */
#ifndef CC_METRICS_COMPARE_H
#define CC_METRICS_COMPARE_H

#include <stdint.h>

#include "calibration.h"
#include "drift.h"
#include "summary.h"

typedef struct cc_ks { double d, p_value; } cc_ks;

typedef struct cc_comparison {
    int m, k;
    int has_baseline;             /* baseline summary with events */
    int enough;                   /* both sides have >= CC_DRIFT_MIN_EVENTS events */

    /* drift of the window against the baseline (label-free) */
    cc_chi2 class_mix;
    double class_mix_psi, class_mix_js_bits;
    cc_ks max_prob, entropy, mutual_information;
    cc_ks *per_class;             /* k, KS of each class's averaged probability */
    double per_class_min_p_bonferroni; /* min_k p_k * k, capped at 1 (Rabanser et al. 2019) */
    double *members_psi;          /* m, each member's predicted-class mix */

    /* label shift (estimated window class mix of the truth) */
    double *baseline_priors;      /* k: baseline label fractions (NAN without labels) */
    double *bbse;                 /* k */
    double bbse_condition_number;
    int bbse_regularized, bbse_clipped, bbse_ok;
    double *em;                   /* k */
    int em_iterations, em_converged, em_ok;
    double bbse_l1, em_l1;        /* L1 distance of each estimate from baseline_priors */
    double *label_mix;            /* k: the window's own label fractions (NAN without labels) */

    /* calibration of the window's labelled events */
    int has_labels;
    cc_calibration calibration;
    cc_calibration *member_calibration; /* m */

    /* label coverage */
    double label_coverage;        /* labelled / events */
    int64_t delayed_labels;
    double mean_label_delay_hours;
} cc_comparison;

/* Computes *out for window w against baseline b (b may be NULL or empty).
 * Owns its arrays until cc_comparison_free. Returns 0 or -1 (out of memory). */
int cc_comparison_compute(cc_comparison *out, const cc_summary *w, const cc_summary *b);
void cc_comparison_free(cc_comparison *c);

/* What every comparison against one baseline shares (the SVD of its labelled
 * confusion, for BBSE), computed once: for reports that compare many windows
 * with the same baseline. *out is NULL (return 0) when b has too few labels
 * for BBSE. Returns 0 or -1 (out of memory). */
typedef struct cc_comparison_cache cc_comparison_cache;
int cc_comparison_cache_create(cc_comparison_cache **out, const cc_summary *b);
void cc_comparison_cache_free(cc_comparison_cache *c);

/* cc_comparison_compute with a cache made from the same b (NULL: none); the
 * figures are the same bit for bit. */
int cc_comparison_compute_cached(cc_comparison *out, const cc_summary *w, const cc_summary *b,
                                 const cc_comparison_cache *cache);

#endif
