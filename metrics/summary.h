/* summary.h — the per-(model, UTC day) mergeable summary.
 *
 * A summary is a flat vector of int64 counters whose layout depends only on
 * (M members, K classes). Every quantity a report needs is a count or a
 * fixed-point sum, so two summaries of the same layout merge by element-wise
 * addition: exactly, in any order, across days and across shards. Because
 * addition of integers can be undone, an event's contribution can also be
 * retracted exactly (a label that is corrected later).
 *
 * Fixed-point sums hold nats (or squared-probability units) times
 * CC_FIXED_SCALE, rounded per event with llround().
 *
 * Pure numbers: no I/O, no globals. */
#ifndef CC_METRICS_SUMMARY_H
#define CC_METRICS_SUMMARY_H

#include <stddef.h>
#include <stdint.h>

#define CC_FIXED_SCALE 1e9     /* fixed-point units per nat (or per unit) */
#define CC_CALIB_BINS 15       /* equal-width confidence bins, Guo et al. 2017 */
#define CC_HIST_BINS 2048      /* fine score histograms, see cc_hist_bin_* */
#define CC_EM_BINS 10          /* confidence cells per predicted class for EM, see em_cells */
#define CC_SUMMARY_VERSION 1   /* bump when the layout below changes */
#define CC_MAX_MEMBERS 64
#define CC_MAX_CLASSES 256

/* Offsets (in counters) of each section; all derived from m and k. */
typedef struct cc_layout {
    int m, k, pairs;           /* pairs = m(m-1)/2, pair index of (i<j) by cc_pair_index */
    size_t len;                /* total number of int64 counters */
    /* label-free, one per event */
    size_t n_events;           /* 1 */
    size_t vote_ties;          /* 1: plurality vote had a tie, over all events */
    size_t pred_counts;        /* K: ensemble (averaged) argmax */
    size_t member_pred;        /* M*K: member m predicted class c */
    size_t pair_agree;         /* P: members i and j of pair p predict the same class */
    size_t fleiss_sumsq;       /* 1: sum over events of sum_c n_c^2, n_c = members voting c */
    size_t tu_fx;              /* 1: sum of H(mean p) */
    size_t au_fx;              /* 1: sum of mean_m H(p_m) */
    size_t contested;          /* K*K: [a*K+b], a<b, top-two of averaged output when member argmaxes differ */
    size_t hist_maxprob;       /* HIST_BINS: max_k of averaged output, probability binning */
    size_t hist_entropy;       /* HIST_BINS: H(mean p), nats binning */
    size_t hist_mi;            /* HIST_BINS: mutual information, nats binning */
    size_t hist_class;         /* K*HIST_BINS: averaged probability of class c, probability binning */
    /* labelled events only */
    size_t n_labeled;          /* 1 */
    size_t label_counts;       /* K: true class */
    size_t confusion;          /* K*K: [pred*K + true] of the averaged output */
    size_t member_correct;     /* M */
    size_t ens_correct;        /* 1 */
    size_t vote_correct;       /* 1 */
    size_t vote_ties_labeled;  /* 1 */
    size_t oracle_correct;     /* 1: at least one member right */
    size_t pair_oracle;        /* P*4: N11, N10, N01, N00 (1 = correct) for pair (i<j) */
    size_t n_right_hist;       /* M+1: events on which exactly l members are right */
    size_t ens_only;           /* M: ensemble right, member m wrong */
    size_t member_only;        /* M: member m right, ensemble wrong */
    size_t calib;              /* CALIB_BINS*3: count, correct, confidence_fx of averaged output */
    size_t brier_fx;           /* 1: sum_k (p_k - o_k)^2 of averaged output */
    size_t nll_fx;             /* 1: -ln max(p_y, CC_NLL_EPS) of averaged output */
    size_t member_calib;       /* M*CALIB_BINS*3 */
    size_t member_brier_fx;    /* M */
    size_t member_nll_fx;      /* M */
    /* label-free again (added for label-shift estimation and label age) */
    size_t em_cells;           /* K*EM_BINS*(1+K): per (predicted class, confidence cell):
                                  count, then K sums of the averaged output (fixed point) */
    size_t em_cell_labels;     /* K*EM_BINS*K: labelled events per (cell, true class), to
                                  recalibrate the cells' posteriors (histogram binning) */
    size_t delayed_labels;     /* 1: labels that arrived after their event was stored */
    size_t label_delay_s;      /* 1: sum of (label arrival - event time), seconds */
} cc_layout;

#define CC_NLL_EPS 1e-15       /* probability floor for the log-loss (common practice) */

typedef struct cc_summary cc_summary;

/* Fills *out for m members, k classes. Returns 0, or -1 if m or k is out of
 * range (1..CC_MAX_MEMBERS, 2..CC_MAX_CLASSES). */
int cc_layout_init(cc_layout *out, int m, int k);

/* Index of member pair (i, j), i < j, in 0..m(m-1)/2-1 (row-major upper triangle). */
int cc_pair_index(int m, int i, int j);

/* A zeroed summary; NULL on bad (m, k) or out of memory. Free with cc_summary_free. */
cc_summary *cc_summary_create(int m, int k);
void cc_summary_free(cc_summary *s);
void cc_summary_clear(cc_summary *s);
const cc_layout *cc_summary_layout(const cc_summary *s);

/* The counters, layout->len of them. Writable for loading from storage. */
const int64_t *cc_summary_data(const cc_summary *s);
int64_t *cc_summary_data_mut(cc_summary *s);

/* dst += src. Returns -1 if the layouts differ. */
int cc_summary_merge(cc_summary *dst, const cc_summary *src);
/* dst += sign * src, sign = +1 or -1. */
int cc_summary_merge_signed(cc_summary *dst, const cc_summary *src, int sign);
/* 1 if every counter is equal. */
int cc_summary_equal(const cc_summary *a, const cc_summary *b);

/* Contribution of one event, probs = M rows of K probabilities (row-major).
 * Values should already be what storage keeps (float32) so that a summary
 * recomputed from stored rows is identical. sign = +1 to add, -1 to retract.
 * The label-free part and the labelled part are separate so a delayed label
 * adds only the latter. label in 0..K-1. */
void cc_summary_add_unlabeled(cc_summary *s, const float *probs, int sign);
void cc_summary_add_labeled(cc_summary *s, const float *probs, int label, int sign);

/* The same from an event view already computed from the same probs
 * (metrics/event_view.h; for the labelled part, computed with the label),
 * so a caller that needs the view too computes it once. When the view's
 * entropies are filled (cc_event_view_uncertainty) they are used instead of
 * computing them again. */
struct cc_event_view;
void cc_summary_add_unlabeled_view(cc_summary *s, const struct cc_event_view *e,
                                   const float *probs, int sign);
void cc_summary_add_labeled_view(cc_summary *s, const struct cc_event_view *e,
                                 const float *probs, int sign);

/* A delayed label's age: arrival time minus event time, in seconds. */
void cc_summary_add_label_delay(cc_summary *s, int64_t delay_s, int sign);

/* EM cell of an averaged output: predicted class * CC_EM_BINS + confidence
 * bin (equal-width on [0, 1], edges to the lower bin). */
int cc_em_cell(const double *avg, int k);

/* Argmax of x[0..n-1] with ties to the lowest index. */
int cc_argmax_f(const float *x, int n);
int cc_argmax_d(const double *x, int n);

/* Histogram binning shared by writer and reader. Probabilities use a logit
 * scale so bins are fine where values crowd (near 0 and 1);
 * nats use a log10 scale on [1e-15, 16], with bin 0 = [0, 1e-15).
 * Probabilities: logit clamped to [-48, 21]. With 2048 bins: 0.034 logit
 * units, or about 1.9 % of the value in nats. See summary.c. */
int cc_hist_bin_prob(double p);
int cc_hist_bin_nats(double h);
/* Upper edge of bin b of each scale (for CDFs). */
double cc_hist_edge_prob(int b);
double cc_hist_edge_nats(int b);

#endif
