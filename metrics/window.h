/* window.h — every figure of one report window, derived from a (merged)
 * summary. This is the only place that turns counters into metrics; the
 * report only formats what is here. NAN marks an undefined value. */
#ifndef CC_METRICS_WINDOW_H
#define CC_METRICS_WINDOW_H

#include <stdint.h>
#include "summary.h"
#include "oracle.h"

typedef struct cc_pair_matrix {
    double mean;           /* mean over defined pairs; NAN if none */
    int defined_pairs;     /* pairs that entered the mean */
    double *pairs;         /* m*m, symmetric, diagonal NAN */
} cc_pair_matrix;

typedef struct cc_window_metrics {
    int m, k;
    int64_t events, labeled;
    const int64_t *class_counts;      /* k, borrowed from the summary */
    int64_t vote_ties;                /* over all events */

    /* label-free diversity */
    cc_pair_matrix disagreement;
    double *member_disagreement;      /* m: member i's mean disagreement with each other member */
    double *member_departure;         /* m: member_disagreement[i] minus the mean disagreement of
                                         the other members among themselves; NAN for m < 3 */
    cc_pair_matrix kappa;
    double fleiss_kappa;

    /* uncertainty, means per event (nats) */
    double entropy, expected_entropy, mutual_information;

    /* with labels (has_labels = labeled > 0) */
    int has_labels;
    cc_pair_matrix q, rho, double_fault, oracle_disagreement;
    cc_nonpairwise nonpairwise;

    double *member_accuracy;          /* m */
    const int64_t *confusion;         /* k*k [pred*k + true] of the averaged output, borrowed */
    double *class_precision;          /* k: right / predicted as c; NAN when none predicted */
    double *class_recall;             /* k: right / labelled c; NAN when none labelled */
    double ensemble_accuracy, vote_accuracy, oracle_accuracy;
    int64_t vote_ties_labeled;
    int best_member;                  /* highest accuracy, ties to lowest index; -1 without labels */
    int64_t mcnemar_ensemble_only, mcnemar_best_only;
    double mcnemar_p;

    /* contested class pairs, sorted by count desc then (a, b) */
    int n_contested;
    struct cc_contested { int a, b; int64_t count; } *contested;
} cc_window_metrics;

/* Computes *out from s; out owns its arrays until cc_window_metrics_free.
 * out borrows s for class_counts: keep s alive while using out.
 * Returns 0, or -1 on out of memory. */
int cc_window_metrics_compute(cc_window_metrics *out, const cc_summary *s);
void cc_window_metrics_free(cc_window_metrics *w);

#endif
