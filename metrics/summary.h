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
 * Wide sums (layout version 2). A fixed-point sum grows by up to 34.5e9
 * units per event (the log-loss at CC_NLL_EPS), so one int64 would wrap
 * after about 2.7e8 events. Every fixed-point sum, and the seconds of label
 * delay, is therefore two counters (lo, hi) with value hi * 2^32 + lo, lo in
 * [0, 2^32) and hi signed: "normalized". Adding an event or merging carries
 * lo's excess into hi with floor division, so retractions (negative
 * amounts) work too. Why two words rather than a coarser scale: every
 * counter stays an int64 element, so merging stays element-wise addition
 * everywhere (C, and sumForEach on a ClickHouse cluster, which cannot
 * carry): up to 2^31 normalized vectors add without lo overflowing, and the
 * reader normalizes. Capacity: 1e12 events x 34.5e9 units / 2^32 gives
 * hi ~ 8e12, six orders below 2^63; counts stay one word (1e12 < 2^63).
 * Precision: reading hi * 2^32 + lo as a double keeps 2^-52 relative,
 * far inside the 1e-9 of the fixed point.
 *
 * Overflow is detected, never wrapped: every add, merge and retraction of a
 * count or hi word is checked. A summary that overflowed is marked
 * (cc_summary_overflowed), every merge with it fails, and the store and the
 * publisher refuse to write it.
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
#define CC_SUMMARY_VERSION 2   /* bump when the layout below changes (2: wide sums) */
#define CC_MAX_MEMBERS 64
#define CC_MAX_CLASSES 256
#define CC_WIDE_BASE 4294967296.0 /* 2^32: a wide sum is hi * CC_WIDE_BASE + lo */
#define CC_CALIB_STRIDE 4      /* counters per calibration bin: count, correct, confidence (wide) */

/* Wide sums in a layout: for o < outer, i < inner, a (lo, hi) pair starts at
 * at + o * outer_stride + 2 * i. */
typedef struct cc_wide_run {
    size_t at, outer, outer_stride, inner;
} cc_wide_run;
#define CC_WIDE_RUNS 12

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
    size_t tu_fx;              /* 2 (wide): sum of H(mean p) */
    size_t au_fx;              /* 2 (wide): sum of mean_m H(p_m) */
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
    size_t calib;              /* CALIB_BINS*CALIB_STRIDE: count, correct, confidence_fx
                                  (wide) of averaged output */
    size_t brier_fx;           /* 2 (wide): sum_k (p_k - o_k)^2 of averaged output */
    size_t nll_fx;             /* 2 (wide): -ln max(p_y, CC_NLL_EPS) of averaged output */
    size_t member_calib;       /* M*CALIB_BINS*CALIB_STRIDE */
    size_t member_brier_fx;    /* M*2 (wide) */
    size_t member_nll_fx;      /* M*2 (wide) */
    /* label-free again (added for label-shift estimation and label age) */
    size_t em_cells;           /* K*EM_BINS*em_stride: per (predicted class, confidence cell):
                                  count, then K wide sums of the averaged output (fixed point) */
    size_t em_stride;          /* 1 + 2K counters per EM cell */
    size_t em_cell_labels;     /* K*EM_BINS*K: labelled events per (cell, true class), to
                                  recalibrate the cells' posteriors (histogram binning) */
    size_t delayed_labels;     /* 1: labels that arrived after their event was stored */
    size_t label_delay_s;      /* 2 (wide): sum of (label arrival - event time), seconds */
    int version;               /* CC_SUMMARY_VERSION, or 1 (one word per sum) for conversion */
    int n_runs;                /* wide sums, in ascending order (version 2 only) */
    cc_wide_run runs[CC_WIDE_RUNS];
    size_t n_wide;             /* number of wide sums */
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

/* The layout of an older version, for reading stored vectors of it:
 * version 1 = this layout with every wide sum one word. Returns -1 for an
 * unknown version or a bad shape. */
int cc_layout_init_version(cc_layout *out, int m, int k, int version);

/* dst += src. Returns 0, -1 if the layouts differ, or CC_SUMMARY_OVERFLOW
 * if a counter would overflow or either summary overflowed before: dst is
 * then marked overflowed (its counters are not to be used). dst may be src. */
#define CC_SUMMARY_OVERFLOW (-2)
int cc_summary_merge(cc_summary *dst, const cc_summary *src);
/* dst += sign * src, sign = +1 or -1 (a retraction); returns as merge. */
int cc_summary_merge_signed(cc_summary *dst, const cc_summary *src, int sign);
/* 1 if every counter is equal. */
int cc_summary_equal(const cc_summary *a, const cc_summary *b);
/* 1 if an add or merge into s overflowed (cc_summary_clear resets it). */
int cc_summary_overflowed(const cc_summary *s);

/* Brings every wide sum of v (a vector of layout L written through
 * cc_summary_data_mut or summed element-wise elsewhere) to lo in [0, 2^32).
 * Returns 0, or CC_SUMMARY_OVERFLOW if a hi word would overflow. */
int cc_layout_normalize(const cc_layout *L, int64_t *v);
/* The same on a summary; marks it overflowed on failure. */
int cc_summary_normalize(cc_summary *s);
/* 1 if every wide sum of v is normalized. */
int cc_layout_is_normalized(const cc_layout *L, const int64_t *v);

/* Converts v_old (n_old counters of an older layout version of the same
 * shape as out) into out. Returns 0, or -1 if the length does not match. */
int cc_summary_convert(cc_summary *out, const int64_t *v_old, size_t n_old, int version);

/* A wide sum's value hi * 2^32 + lo, as a double (2^-52 relative). */
double cc_wide_value(const int64_t *w);
/* Sets a wide sum to x, normalized (for loading and tests). */
void cc_wide_set(int64_t *w, int64_t x);

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
