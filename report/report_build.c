/* report_build.c — choosing windows (day, ISO week, or all), merging the
 * stored per-day summaries into each, and setting each window against the
 * baseline: drift and label shift (metrics/compare.c), and z-scores and
 * EWMAs of the tracked figures against the baseline's day-to-day spread.
 * Windows are made one at a time in date order and handed on as soon as
 * their figures are computed, so memory holds a fixed number of summaries
 * (the baseline, one day, one window, and the range when windows are kept),
 * however many days the report covers. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"
#include "report.h"
#include "tracked.h"

void cc_report_window_free(cc_report_window *w)
{
    cc_window_metrics_free(&w->metrics);
    cc_comparison_free(&w->cmp);
    free(w->counts);
    free(w->z);
    free(w->ewma);
    memset(w, 0, sizeof *w);
}

void cc_report_free(cc_report *r)
{
    if (!r)
        return;
    for (int i = 0; i < r->n_windows; i++)
        cc_report_window_free(&r->windows[i]);
    free(r->windows);
    free(r->stats);
    cc_summary_free(r->baseline);
    cc_comparison_cache_free(r->cmp_cache);
    cc_summary_free(r->range);
    cc_model_free(r->model);
    free(r);
}

static int64_t window_key(int64_t day, cc_grouping by)
{
    return by == CC_BY_DAY ? day : by == CC_BY_WEEK ? cc_week_start(day) : 0;
}

/* The baseline: merged summary, and each tracked figure's mean and sd over
 * the baseline days (each day measured like a one-day window). */
static int load_baseline(cc_report *r, cc_store *store, cc_summary *day_sum, cc_error *err)
{
    const cc_model *m = r->model;
    const int nt = cc_tracked_slots(m->m, m->k);
    int64_t *days = NULL;
    double *series = NULL;
    int n_days = 0, rc;
    if ((rc = cc_store_summary_days(store, m, r->baseline_from, r->baseline_to, &days, &n_days,
                                    err)))
        return rc;
    r->baseline = cc_summary_create(m->m, m->k);
    r->stats = calloc((size_t)nt, sizeof *r->stats);
    series = malloc(sizeof(double) * (size_t)nt * (size_t)(n_days ? n_days : 1));
    if (!r->baseline || !r->stats || !series) {
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    for (int i = 0; i < n_days; i++) {
        if ((rc = cc_store_summary_get(store, m, days[i], day_sum, err)))
            goto done;
        cc_summary_merge(r->baseline, day_sum);
    }
    if (cc_comparison_cache_create(&r->cmp_cache, r->baseline) != 0) {
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    const cc_layout *L = cc_summary_layout(r->baseline);
    r->baseline_events = cc_summary_data(r->baseline)[L->n_events];
    r->baseline_labeled = cc_summary_data(r->baseline)[L->n_labeled];
    r->baseline_days = n_days;
    for (int i = 0; i < n_days; i++) {
        cc_window_metrics wm;
        cc_comparison cmp;
        if ((rc = cc_store_summary_get(store, m, days[i], day_sum, err)))
            goto done;
        if (cc_window_metrics_compute(&wm, day_sum) ||
            cc_comparison_compute_cached(&cmp, day_sum, r->baseline, r->cmp_cache)) {
            cc_window_metrics_free(&wm);
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            goto done;
        }
        for (int t = 0; t < nt; t++)
            series[(size_t)t * n_days + i] = cc_tracked_value(t, &wm, &cmp);
        cc_window_metrics_free(&wm);
        cc_comparison_free(&cmp);
    }
    for (int t = 0; t < nt; t++)
        cc_baseline_stat_compute(&r->stats[t], series + (size_t)t * n_days, n_days);
done:
    free(days);
    free(series);
    return rc;
}

/* z-scores of a window; EWMAs when windows are days, started at the
 * baseline mean (Roberts 1959) and carried in level from window to window. */
static int score_window(const cc_report *r, cc_report_window *w, double *level)
{
    const int nt = cc_tracked_slots(r->model->m, r->model->k);
    w->z = malloc(sizeof(double) * (size_t)nt);
    if (r->by == CC_BY_DAY)
        w->ewma = malloc(sizeof(double) * (size_t)nt);
    if (!w->z || (r->by == CC_BY_DAY && !w->ewma))
        return -1;
    for (int t = 0; t < nt; t++) {
        double x = cc_tracked_value(t, &w->metrics, &w->cmp);
        w->z[t] = r->stats ? cc_zscore(x, &r->stats[t]) : NAN;
        if (w->ewma) {
            level[t] = isfinite(level[t]) ? cc_ewma_step(level[t], x, CC_EWMA_LAMBDA) : x;
            w->ewma[t] = level[t];
        }
    }
    return 0;
}

/* Figures of a window whose summary is complete, then the callback. The
 * window owns copies of its class counts, so it outlives the summary. */
static int finish_window(cc_report *r, cc_report_window *w, cc_summary *sum, double *level,
                         cc_report_window_fn fn, void *payload, cc_error *err)
{
    const cc_layout *L = cc_summary_layout(sum);
    const int64_t *v = cc_summary_data(sum);
    const size_t k = (size_t)L->k;
    if (cc_window_metrics_compute(&w->metrics, sum) ||
        cc_comparison_compute_cached(&w->cmp, sum, r->baseline, r->cmp_cache) ||
        !(w->counts = malloc((2 + k) * k * sizeof *w->counts)) || score_window(r, w, level))
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    memcpy(w->counts, v + L->pred_counts, k * sizeof *w->counts);
    memcpy(w->counts + k, v + L->label_counts, k * sizeof *w->counts);
    memcpy(w->counts + 2 * k, v + L->confusion, k * k * sizeof *w->counts);
    w->label_counts = w->counts + k;
    w->metrics.class_counts = w->counts;
    w->metrics.confusion = w->counts + 2 * k;
    w->summary = sum;
    int rc = fn(payload, r, w);
    w->summary = NULL;
    if (rc > 0)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    return rc;
}

/* Fills r (zeroed) and hands each window to fn; see cc_report_stream. */
static int stream(cc_report *r, cc_store *store, const cc_report_opts *opts,
                  cc_report_window_fn fn, void *payload, cc_error *err)
{
    int64_t *days = NULL;
    int n_days = 0, rc;
    cc_summary *day_sum = NULL, *win_sum = NULL;
    double *level = NULL;
    cc_report_window w;
    memset(&w, 0, sizeof w);
    r->by = opts->by;
    if ((rc = cc_store_model_get(store, opts->model, &r->model, err)))
        goto done;
    const cc_model *m = r->model;
    day_sum = cc_summary_create(m->m, m->k);
    win_sum = cc_summary_create(m->m, m->k);
    level = malloc(sizeof(double) * (size_t)cc_tracked_slots(m->m, m->k));
    if (!day_sum || !win_sum || !level) {
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    if ((rc = cc_store_baseline_get(store, m, &r->has_baseline, &r->baseline_from,
                                    &r->baseline_to, err)))
        goto done;
    if (r->has_baseline && (rc = load_baseline(r, store, day_sum, err)))
        goto done;
    for (int t = 0; t < cc_tracked_slots(m->m, m->k); t++)
        level[t] = r->stats ? r->stats[t].mean : NAN;

    int64_t from = opts->has_from ? opts->from : INT64_MIN / 4;
    int64_t to = opts->has_to ? opts->to : INT64_MAX / 4;
    if ((rc = cc_store_summary_days(store, m, from, to, &days, &n_days, err)))
        goto done;
    if ((rc = fn(payload, r, NULL)) != 0) {
        rc = rc > 0 ? cc_error_set(err, CC_ENOMEM, "out of memory") : rc;
        goto done;
    }
    int have = 0;
    for (int i = 0; i < n_days; i++) {
        if ((rc = cc_store_summary_get(store, m, days[i], day_sum, err)))
            goto done;
        int64_t key = window_key(days[i], opts->by);
        if (have && window_key(w.from, opts->by) != key) {
            if ((rc = finish_window(r, &w, win_sum, level, fn, payload, err)))
                goto done;
            cc_report_window_free(&w);
            have = 0;
        }
        if (!have) {
            have = 1;
            cc_summary_clear(win_sum);
            /* a window spans its whole period, clipped to the asked range */
            if (opts->by == CC_BY_DAY) {
                w.from = w.to = days[i];
            } else if (opts->by == CC_BY_WEEK) {
                w.from = key;
                w.to = key + 6;
            } else {
                w.from = opts->has_from ? opts->from : days[0];
                w.to = opts->has_to ? opts->to : days[n_days - 1];
            }
            if (opts->has_from && w.from < opts->from)
                w.from = opts->from;
            if (opts->has_to && w.to > opts->to)
                w.to = opts->to;
        }
        cc_summary_merge(win_sum, day_sum);
    }
    if (have && (rc = finish_window(r, &w, win_sum, level, fn, payload, err)))
        goto done;
done:
    cc_report_window_free(&w);
    free(days);
    free(level);
    cc_summary_free(day_sum);
    cc_summary_free(win_sum);
    return rc;
}

int cc_report_stream(cc_report **out, cc_store *store, const cc_report_opts *opts,
                     cc_report_window_fn fn, void *payload, cc_error *err)
{
    cc_report *r = calloc(1, sizeof *r);
    *out = NULL;
    if (!r)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    int rc = stream(r, store, opts, fn, payload, err);
    if (rc) {
        cc_report_free(r);
        return rc;
    }
    *out = r;
    return 0;
}

/* cc_report_build's callback: keeps each window (without its summary) and
 * merges the summaries into the range. */
static int keep_window(void *payload, const cc_report *same, cc_report_window *w)
{
    cc_report *r = payload;
    (void)same;
    if (!w)
        return (r->range = cc_summary_create(r->model->m, r->model->k)) ? 0 : 1;
    if (r->n_windows == r->cap_windows) {
        int cap = r->cap_windows ? 2 * r->cap_windows : 8;
        cc_report_window *grown = realloc(r->windows, (size_t)cap * sizeof *grown);
        if (!grown)
            return 1;
        r->windows = grown;
        r->cap_windows = cap;
    }
    cc_summary_merge(r->range, w->summary);
    cc_report_window *kept = &r->windows[r->n_windows++];
    *kept = *w;
    kept->summary = NULL;
    memset(w, 0, sizeof *w);
    return 0;
}

int cc_report_build(cc_report **out, cc_store *store, const cc_report_opts *opts,
                    cc_error *err)
{
    cc_report *r = calloc(1, sizeof *r);
    *out = NULL;
    if (!r)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    int rc = stream(r, store, opts, keep_window, r, err);
    if (rc) {
        cc_report_free(r);
        return rc;
    }
    *out = r;
    return 0;
}
