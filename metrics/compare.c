/* compare.c — a window against the baseline: the drift tests of drift.c on
 * the summaries' count vectors and histograms, the label-shift estimators of
 * label_shift.c, and calibration.c on the window's labelled events. */
#include "compare.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "label_shift.h"

void cc_comparison_free(cc_comparison *c)
{
    if (!c)
        return;
    free(c->per_class);
    free(c->members_psi);
    free(c->baseline_priors);
    free(c->bbse);
    free(c->em);
    free(c->label_mix);
    free(c->member_calibration);
    memset(c, 0, sizeof *c);
}

static void fill_nan(double *x, int n)
{
    for (int i = 0; i < n; i++)
        x[i] = NAN;
}

static double l1(const double *a, const double *b, int k)
{
    double s = 0.0;
    for (int c = 0; c < k; c++)
        s += fabs(a[c] - b[c]);
    return s;
}

static cc_ks ks_of(const int64_t *a, const int64_t *b)
{
    int64_t na, nb;
    cc_ks r;
    r.d = cc_ks_hist(a, b, CC_HIST_BINS, &na, &nb);
    r.p_value = cc_ks_pvalue(r.d, na, nb);
    if (na < CC_DRIFT_MIN_EVENTS || nb < CC_DRIFT_MIN_EVENTS)
        r.d = NAN;
    return r;
}

/* Saerens EM on the window's (predicted class x confidence) cells. EM needs
 * calibrated source posteriors (Saerens et al. 2002; Alexandari et al.
 * 2020), and an ensemble's averaged output often is not; so each cell's
 * posterior is the baseline's label distribution in that cell (histogram
 * binning, Zadrozny & Elkan 2001), shrunk toward the cell's mean averaged
 * output with EM_PRIOR_WEIGHT pseudo-events. Cells the baseline never saw
 * keep their own mean averaged output. Each cell weighs its window count.
 * SQUAREM-accelerated, and stopped when three steps raise the log-likelihood
 * by less than EM_LL_TOL per event: plain EM hit its 2,000-step cap in most
 * windows at 64 x 256 (5,000 events over 28 days) and took most of a by-day
 * report's time. On seven such windows the answers lie within 2e-4 (L1) of
 * 100,000 plain steps, closer than 2,000 plain steps came (5e-4). */
#define EM_PRIOR_WEIGHT 5.0
#define EM_LL_TOL 1e-11

static int em_from_cells(cc_comparison *out, const cc_layout *L, const int64_t *v,
                         const int64_t *bv, const double *source_priors)
{
    const int k = L->k, cells = k * CC_EM_BINS;
    double *post = malloc(sizeof(double) * (size_t)cells * (size_t)k);
    double *wt = malloc(sizeof(double) * (size_t)cells);
    int n = 0, rc = 0;
    if (!post || !wt) {
        rc = -1;
        goto done;
    }
    for (int g = 0; g < cells; g++) {
        const int64_t *cell = v + L->em_cells + (size_t)g * L->em_stride;
        const int64_t *bcell = bv + L->em_cells + (size_t)g * L->em_stride;
        const int64_t *blab = bv + L->em_cell_labels + (size_t)g * (size_t)k;
        if (cell[0] <= 0)
            continue;
        const int64_t *mean_of = bcell[0] > 0 ? bcell : cell;
        int64_t nlab = 0;
        for (int c = 0; c < k; c++)
            nlab += blab[c];
        double *row = post + (size_t)n * k, sum = 0.0;
        for (int c = 0; c < k; c++) {
            double mean = cc_wide_value(mean_of + 1 + 2 * c) / CC_FIXED_SCALE / (double)mean_of[0];
            row[c] = ((double)blab[c] + EM_PRIOR_WEIGHT * mean) / ((double)nlab + EM_PRIOR_WEIGHT);
            sum += row[c];
        }
        for (int c = 0; c < k; c++)
            row[c] /= sum;
        wt[n++] = (double)cell[0];
    }
    cc_em em = {out->em, 0, 0, 0};
    if (n > 0 && cc_em_estimate_squarem(&em, post, wt, n, k, source_priors, 1e-10, EM_LL_TOL,
                                        2000) != 0)
        rc = -1;
    out->em_iterations = em.iterations;
    out->em_converged = em.converged;
    out->em_ok = em.ok;
done:
    free(post);
    free(wt);
    return rc;
}

struct cc_comparison_cache {
    const cc_summary *baseline; /* what the plan was made from, checked on use */
    cc_bbse_plan *bbse;
};

int cc_comparison_cache_create(cc_comparison_cache **out, const cc_summary *b)
{
    *out = NULL;
    if (!b)
        return 0;
    const cc_layout *BL = cc_summary_layout(b);
    const int64_t *bv = cc_summary_data(b);
    if (bv[BL->n_labeled] < CC_DRIFT_MIN_EVENTS)
        return 0;
    cc_comparison_cache *c = calloc(1, sizeof *c);
    if (!c || cc_bbse_plan_create(&c->bbse, bv + BL->confusion, BL->k) != 0) {
        free(c);
        return -1;
    }
    c->baseline = b;
    *out = c;
    return 0;
}

void cc_comparison_cache_free(cc_comparison_cache *c)
{
    if (!c)
        return;
    cc_bbse_plan_free(c->bbse);
    free(c);
}

int cc_comparison_compute(cc_comparison *out, const cc_summary *w, const cc_summary *b)
{
    return cc_comparison_compute_cached(out, w, b, NULL);
}

int cc_comparison_compute_cached(cc_comparison *out, const cc_summary *w, const cc_summary *b,
                                 const cc_comparison_cache *cache)
{
    const cc_layout *L = cc_summary_layout(w);
    const int64_t *v = cc_summary_data(w);
    const int m = L->m, k = L->k;
    memset(out, 0, sizeof *out);
    out->m = m;
    out->k = k;
    out->per_class = calloc((size_t)k, sizeof *out->per_class);
    out->members_psi = malloc(sizeof(double) * (size_t)m);
    out->baseline_priors = malloc(sizeof(double) * (size_t)k);
    out->bbse = malloc(sizeof(double) * (size_t)k);
    out->em = malloc(sizeof(double) * (size_t)k);
    out->label_mix = malloc(sizeof(double) * (size_t)k);
    out->member_calibration = calloc((size_t)m, sizeof *out->member_calibration);
    if (!out->per_class || !out->members_psi || !out->baseline_priors || !out->bbse || !out->em ||
        !out->label_mix || !out->member_calibration) {
        cc_comparison_free(out);
        return -1;
    }
    fill_nan(out->members_psi, m);
    fill_nan(out->baseline_priors, k);
    fill_nan(out->bbse, k);
    fill_nan(out->em, k);
    fill_nan(out->label_mix, k);
    out->class_mix = (cc_chi2){NAN, 0, NAN, NAN};
    out->class_mix_psi = out->class_mix_js_bits = NAN;
    out->max_prob = out->entropy = out->mutual_information = (cc_ks){NAN, NAN};
    for (int c = 0; c < k; c++)
        out->per_class[c] = (cc_ks){NAN, NAN};
    out->per_class_min_p_bonferroni = NAN;
    out->bbse_condition_number = out->bbse_l1 = out->em_l1 = NAN;

    const int64_t events = v[L->n_events], labeled = v[L->n_labeled];
    out->has_labels = labeled > 0;
    cc_calibration_compute(&out->calibration, v + L->calib, v + L->brier_fx, v + L->nll_fx);
    for (int i = 0; i < m; i++)
        cc_calibration_compute(&out->member_calibration[i],
                               v + L->member_calib + (size_t)i * CC_CALIB_BINS * CC_CALIB_STRIDE,
                               v + L->member_brier_fx + 2 * (size_t)i,
                               v + L->member_nll_fx + 2 * (size_t)i);
    out->label_coverage = events > 0 ? (double)labeled / (double)events : NAN;
    out->delayed_labels = v[L->delayed_labels];
    out->mean_label_delay_hours = out->delayed_labels > 0
                                      ? cc_wide_value(v + L->label_delay_s) / 3600.0 /
                                            (double)out->delayed_labels
                                      : NAN;
    for (int c = 0; labeled > 0 && c < k; c++)
        out->label_mix[c] = (double)v[L->label_counts + c] / (double)labeled;

    if (!b)
        return 0;
    const cc_layout *BL = cc_summary_layout(b);
    const int64_t *bv = cc_summary_data(b);
    if (BL->m != m || BL->k != k || bv[BL->n_events] <= 0)
        return 0;
    out->has_baseline = 1;
    const int64_t base_events = bv[BL->n_events], base_labeled = bv[BL->n_labeled];
    out->enough = events >= CC_DRIFT_MIN_EVENTS && base_events >= CC_DRIFT_MIN_EVENTS;

    if (out->enough) {
        cc_chi2_homogeneity(&out->class_mix, bv + BL->pred_counts, v + L->pred_counts, k);
        out->class_mix_psi = cc_psi(bv + BL->pred_counts, v + L->pred_counts, k, CC_PSI_EPSILON);
        out->class_mix_js_bits = cc_js_bits(bv + BL->pred_counts, v + L->pred_counts, k);
        for (int i = 0; i < m; i++)
            out->members_psi[i] = cc_psi(bv + BL->member_pred + (size_t)i * k,
                                         v + L->member_pred + (size_t)i * k, k, CC_PSI_EPSILON);
        out->max_prob = ks_of(bv + BL->hist_maxprob, v + L->hist_maxprob);
        out->entropy = ks_of(bv + BL->hist_entropy, v + L->hist_entropy);
        out->mutual_information = ks_of(bv + BL->hist_mi, v + L->hist_mi);
        double min_p = INFINITY;
        for (int c = 0; c < k; c++) {
            size_t off = (size_t)c * CC_HIST_BINS;
            out->per_class[c] = ks_of(bv + BL->hist_class + off, v + L->hist_class + off);
            if (out->per_class[c].p_value < min_p)
                min_p = out->per_class[c].p_value;
        }
        if (isfinite(min_p))
            out->per_class_min_p_bonferroni = fmin(1.0, min_p * k);
    }

    /* label shift: source priors from the baseline's labels */
    double *source = out->baseline_priors;
    if (base_labeled > 0)
        for (int c = 0; c < k; c++)
            source[c] = (double)bv[BL->label_counts + c] / (double)base_labeled;
    if (base_labeled >= CC_DRIFT_MIN_EVENTS && events > 0) {
        cc_bbse bb = {out->bbse, NAN, 0, 0, 0};
        const int brc = cache && cache->baseline == b && cache->bbse
                            ? cc_bbse_plan_apply(cache->bbse, &bb, v + L->pred_counts)
                            : cc_bbse_estimate(&bb, bv + BL->confusion, v + L->pred_counts, k);
        if (brc != 0) {
            cc_comparison_free(out);
            return -1;
        }
        out->bbse_condition_number = bb.condition_number;
        out->bbse_regularized = bb.regularized;
        out->bbse_clipped = bb.clipped;
        out->bbse_ok = bb.ok;
        if (bb.ok)
            out->bbse_l1 = l1(out->bbse, source, k);
        if (em_from_cells(out, L, v, bv, source) != 0) {
            cc_comparison_free(out);
            return -1;
        }
        if (out->em_ok)
            out->em_l1 = l1(out->em, source, k);
    }
    return 0;
}
