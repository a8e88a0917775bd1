/* report_build.c — choosing windows (day, ISO week, or all), merging the
 * stored per-day summaries into each, and setting each window against the
 * baseline: drift and label shift (metrics/compare.c), and z-scores and
 * EWMAs of the tracked figures against the baseline's day-to-day spread. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"
#include "report.h"
#include "tracked.h"

static void window_free(cc_report_window *w)
{
    cc_window_metrics_free(&w->metrics);
    cc_comparison_free(&w->cmp);
    cc_summary_free(w->summary);
    free(w->z);
    free(w->ewma);
}

void cc_report_free(cc_report *r)
{
    if (!r)
        return;
    for (int i = 0; i < r->n_windows; i++)
        window_free(&r->windows[i]);
    free(r->windows);
    free(r->stats);
    cc_summary_free(r->baseline);
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
            cc_comparison_compute(&cmp, day_sum, r->baseline)) {
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

/* z-scores of every window; EWMAs when windows are days, started at the
 * baseline mean (Roberts 1959). */
static int score_windows(cc_report *r)
{
    const int nt = cc_tracked_slots(r->model->m, r->model->k);
    double *level = malloc(sizeof(double) * (size_t)nt);
    if (!level)
        return -1;
    for (int t = 0; t < nt; t++)
        level[t] = r->stats ? r->stats[t].mean : NAN;
    for (int i = 0; i < r->n_windows; i++) {
        cc_report_window *w = &r->windows[i];
        w->z = malloc(sizeof(double) * (size_t)nt);
        if (r->by == CC_BY_DAY)
            w->ewma = malloc(sizeof(double) * (size_t)nt);
        if (!w->z || (r->by == CC_BY_DAY && !w->ewma)) {
            free(level);
            return -1;
        }
        for (int t = 0; t < nt; t++) {
            double x = cc_tracked_value(t, &w->metrics, &w->cmp);
            w->z[t] = r->stats ? cc_zscore(x, &r->stats[t]) : NAN;
            if (w->ewma) {
                level[t] = isfinite(level[t]) ? cc_ewma_step(level[t], x, CC_EWMA_LAMBDA) : x;
                w->ewma[t] = level[t];
            }
        }
    }
    free(level);
    return 0;
}

int cc_report_build(cc_report **out, cc_store *store, const cc_report_opts *opts,
                    cc_error *err)
{
    cc_report *r = calloc(1, sizeof *r);
    int64_t *days = NULL;
    int n_days = 0, rc;
    cc_summary *day_sum = NULL;
    *out = NULL;
    if (!r)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    r->by = opts->by;
    if ((rc = cc_store_model_get(store, opts->model, &r->model, err)))
        goto done;
    const cc_model *m = r->model;
    day_sum = cc_summary_create(m->m, m->k);
    if (!day_sum) {
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    if ((rc = cc_store_baseline_get(store, m, &r->has_baseline, &r->baseline_from,
                                    &r->baseline_to, err)))
        goto done;
    if (r->has_baseline && (rc = load_baseline(r, store, day_sum, err)))
        goto done;

    int64_t from = opts->has_from ? opts->from : INT64_MIN / 4;
    int64_t to = opts->has_to ? opts->to : INT64_MAX / 4;
    if ((rc = cc_store_summary_days(store, m, from, to, &days, &n_days, err)))
        goto done;
    if (n_days > 0) {
        r->windows = calloc((size_t)n_days, sizeof *r->windows);
        if (!r->windows) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            goto done;
        }
    }
    for (int i = 0; i < n_days; i++) {
        if ((rc = cc_store_summary_get(store, m, days[i], day_sum, err)))
            goto done;
        int64_t key = window_key(days[i], opts->by);
        cc_report_window *w = r->n_windows ? &r->windows[r->n_windows - 1] : NULL;
        if (!w || window_key(w->from, opts->by) != key) {
            w = &r->windows[r->n_windows++];
            w->summary = cc_summary_create(m->m, m->k);
            if (!w->summary) {
                rc = cc_error_set(err, CC_ENOMEM, "out of memory");
                goto done;
            }
            /* a window spans its whole period, clipped to the asked range */
            if (opts->by == CC_BY_DAY) {
                w->from = w->to = days[i];
            } else if (opts->by == CC_BY_WEEK) {
                w->from = key;
                w->to = key + 6;
            } else {
                w->from = opts->has_from ? opts->from : days[0];
                w->to = opts->has_to ? opts->to : days[n_days - 1];
            }
            if (opts->has_from && w->from < opts->from)
                w->from = opts->from;
            if (opts->has_to && w->to > opts->to)
                w->to = opts->to;
        }
        cc_summary_merge(w->summary, day_sum);
    }
    for (int i = 0; i < r->n_windows; i++) {
        cc_report_window *w = &r->windows[i];
        if (cc_window_metrics_compute(&w->metrics, w->summary) ||
            cc_comparison_compute(&w->cmp, w->summary, r->baseline)) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            goto done;
        }
    }
    if (score_windows(r))
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
done:
    free(days);
    cc_summary_free(day_sum);
    if (rc) {
        cc_report_free(r);
        return rc;
    }
    *out = r;
    return 0;
}
