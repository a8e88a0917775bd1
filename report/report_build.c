/* report_build.c — choosing windows (day, ISO week, or all), merging the
 * stored per-day summaries into each, and setting each window against the
 * baseline: drift and label shift (metrics/compare.c), and z-scores and
 * EWMAs of the tracked figures against the baseline's day-to-day spread.
 * Windows are made one at a time in date order and handed on as soon as
 * their figures are computed, so memory holds a fixed number of summaries
 * (the baseline, one day, one window, and the range when windows are kept),
 * however many days the report covers.
 *
 * A slice's report (--segment) reads that slice's summaries in place of the
 * model's, baseline included; --by-segment adds to every window one window
 * per slice (summaries merged the same way), against the slice's own
 * baseline and against the whole model's window. */
#include <math.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"
#include "report.h"
#include "tracked.h"

/* The testing hook's count of window figure sets alive in the process (see
 * cc_report_live_windows): a set is alive from its counts' allocation in
 * window_figures to cc_report_window_free. */
static atomic_long live_windows, peak_windows;

static void live_add(long d)
{
    long now = atomic_fetch_add(&live_windows, d) + d;
    long peak = atomic_load(&peak_windows);
    while (now > peak && !atomic_compare_exchange_weak(&peak_windows, &peak, now))
        ;
}

void cc_report_live_windows(long *now, long *peak)
{
    *now = atomic_load(&live_windows);
    *peak = atomic_load(&peak_windows);
}

void cc_report_live_windows_reset(void) { atomic_store(&peak_windows, atomic_load(&live_windows)); }

void cc_report_window_free(cc_report_window *w)
{
    if (w->counts)
        live_add(-1);
    for (int i = 0; i < w->n_segments; i++)
        cc_report_window_free(&w->segments[i]);
    free(w->segments);
    cc_comparison_free(&w->vs_model);
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
    for (int i = 0; r->slice_baselines && i < r->n_slices; i++)
        cc_summary_free(r->slice_baselines[i]);
    free(r->slice_baselines);
    cc_slice_list_free(r->slices, r->n_slices);
    cc_model_free(r->model);
    free(r);
}

int64_t cc_report_overflow_events(const cc_report *r) { return r->overflow_events; }

/* The days with events of what the report covers: the model, or one slice. */
static int src_days(const cc_report *r, cc_store *store, int64_t from, int64_t to,
                    int64_t **days, int *n, cc_error *err)
{
    if (r->slice < 0)
        return cc_store_summary_days(store, r->model, from, to, days, n, err);
    return cc_store_slice_summary_days(store, r->model, r->slices[r->slice].id, from, to, days,
                                       n, err);
}

/* A day's summary of what the report covers. */
static int src_get(const cc_report *r, cc_store *store, int64_t day, cc_summary *out,
                   cc_error *err)
{
    if (r->slice < 0)
        return cc_store_summary_get(store, r->model, day, out, err);
    return cc_store_slice_summary_get(store, r->model, day, r->slices[r->slice].id, out, err);
}

/* The model's slices, and the one --segment names (an unknown name is
 * CC_ENOTFOUND with the valid names listed). */
static int load_slices(cc_report *r, cc_store *store, const cc_report_opts *opts, cc_error *err)
{
    int rc;
    r->slice = -1;
    r->by_segment = opts->by_segment;
    if (!cc_store_slices_kept(store) && !opts->segment && !opts->by_segment)
        return 0; /* a schema-3 file, read as it is */
    if ((rc = cc_store_slice_overview(store, r->model, &r->slice_count, &r->overflow_events,
                                      err)) ||
        (rc = cc_store_slice_limit_get(store, r->model, &r->slice_limit, err)))
        return rc;
    if (!opts->segment && !opts->by_segment)
        return 0;
    if ((rc = cc_store_slice_list(store, r->model, &r->slices, &r->n_slices, err)))
        return rc;
    if (!opts->segment)
        return 0;
    if ((r->slice = cc_slice_find(r->slices, r->n_slices, opts->segment)) >= 0)
        return 0;
    char names[512];
    size_t len = 0;
    names[0] = '\0';
    for (int i = 0; i < r->n_slices && len < sizeof names - 1; i++)
        len += (size_t)snprintf(names + len, sizeof names - len, "%s'%s'", i ? ", " : "",
                                cc_slice_name(&r->slices[i]));
    if (len >= sizeof names - 1)
        strcpy(names + sizeof names - 5, "...");
    return cc_error_set(err, CC_ENOTFOUND, "model '%s' has no segment '%s'; its slices: %s",
                        r->model->name, opts->segment,
                        r->n_slices ? names : "none (no events yet)");
}

/* dst += the summary of one day (of a slice when slice is not NULL); an
 * overflowing counter is an error, never a wrapped figure (summary.h). */
static int merge_day(cc_summary *dst, const cc_summary *src, const cc_model *m, int64_t day,
                     const char *slice, cc_error *err)
{
    if (cc_summary_merge(dst, src) == 0)
        return 0;
    char date[11];
    cc_format_date(day, date);
    return cc_error_set(err, CC_EIO, "summary counter overflow at model '%s', %s%s%s",
                        m->name, date, slice ? ", slice " : "", slice ? slice : "");
}

/* Each slice's baseline (--by-segment): its days within the baseline period, merged. */
static int load_slice_baselines(cc_report *r, cc_store *store, cc_summary *day_sum,
                                cc_error *err)
{
    const cc_model *m = r->model;
    if (!(r->slice_baselines = calloc((size_t)r->n_slices + 1, sizeof *r->slice_baselines)))
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    for (int i = 0; i < r->n_slices; i++) {
        int64_t *days = NULL;
        int n = 0, rc;
        if ((rc = cc_store_slice_summary_days(store, m, r->slices[i].id, r->baseline_from,
                                              r->baseline_to, &days, &n, err)))
            return rc;
        if (n > 0 && !(r->slice_baselines[i] = cc_summary_create(m->m, m->k))) {
            free(days);
            return cc_error_set(err, CC_ENOMEM, "out of memory");
        }
        for (int d = 0; d < n && !rc; d++)
            if (!(rc = cc_store_slice_summary_get(store, m, days[d], r->slices[i].id, day_sum,
                                                  err)))
                rc = merge_day(r->slice_baselines[i], day_sum, m, days[d],
                               cc_slice_name(&r->slices[i]), err);
        free(days);
        if (rc)
            return rc;
    }
    return 0;
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
    if ((rc = src_days(r, store, r->baseline_from, r->baseline_to, &days, &n_days, err)))
        return rc;
    r->baseline = cc_summary_create(m->m, m->k);
    r->stats = calloc((size_t)nt, sizeof *r->stats);
    series = malloc(sizeof(double) * (size_t)nt * (size_t)(n_days ? n_days : 1));
    if (!r->baseline || !r->stats || !series) {
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    for (int i = 0; i < n_days; i++) {
        if ((rc = src_get(r, store, days[i], day_sum, err)) ||
            (rc = merge_day(r->baseline, day_sum, m, days[i], NULL, err)))
            goto done;
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
        if ((rc = src_get(r, store, days[i], day_sum, err)))
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

/* A window's figures from its complete summary, against baseline (may be
 * NULL; cache made from it, or NULL). The window owns copies of its class
 * counts, so it outlives the summary. -1 on out of memory. */
static int window_figures(cc_report_window *w, const cc_summary *sum, const cc_summary *baseline,
                          const cc_comparison_cache *cache)
{
    const cc_layout *L = cc_summary_layout(sum);
    const int64_t *v = cc_summary_data(sum);
    const size_t k = (size_t)L->k;
    if (cc_window_metrics_compute(&w->metrics, sum) ||
        cc_comparison_compute_cached(&w->cmp, sum, baseline, cache) ||
        !(w->counts = malloc((2 + k) * k * sizeof *w->counts)))
        return -1;
    live_add(1);
    memcpy(w->counts, v + L->pred_counts, k * sizeof *w->counts);
    memcpy(w->counts + k, v + L->label_counts, k * sizeof *w->counts);
    memcpy(w->counts + 2 * k, v + L->confusion, k * k * sizeof *w->counts);
    w->label_counts = w->counts + k;
    w->metrics.class_counts = w->counts;
    w->metrics.confusion = w->counts + 2 * k;
    return 0;
}

/* The window's segment rows from the slices' merged summaries seg[]. */
static int segment_rows(const cc_report *r, cc_report_window *w, const cc_summary *whole,
                        cc_summary *const *seg)
{
    if (!(w->segments = calloc((size_t)r->n_slices + 1, sizeof *w->segments)))
        return -1;
    for (int i = 0; i < r->n_slices; i++) {
        if (cc_summary_data(seg[i])[cc_summary_layout(seg[i])->n_events] == 0)
            continue;
        cc_report_window *sw = &w->segments[w->n_segments++];
        sw->from = w->from;
        sw->to = w->to;
        sw->slice = i;
        if (window_figures(sw, seg[i], r->slice_baselines ? r->slice_baselines[i] : NULL,
                           NULL) ||
            cc_comparison_compute(&sw->vs_model, seg[i], whole))
            return -1;
    }
    return 0;
}

/* Figures of a window whose summary is complete (and its slices' when
 * seg is not NULL), then the callback. */
static int finish_window(cc_report *r, cc_report_window *w, cc_summary *sum,
                         cc_summary *const *seg, double *level, cc_report_window_fn fn,
                         void *payload, cc_error *err)
{
    if (cc_summary_overflowed(sum)) { /* an hour's rows added past 2^63 (summary.h) */
        char date[11];
        cc_format_date(w->from, date);
        return cc_error_set(err, CC_EIO, "summary counter overflow at model '%s', %s",
                            r->model->name, date);
    }
    if (window_figures(w, sum, r->baseline, r->cmp_cache) || score_window(r, w, level) ||
        (seg && segment_rows(r, w, sum, seg)))
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    w->summary = sum;
    int rc = fn(payload, r, w);
    w->summary = NULL;
    if (rc > 0)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    return rc;
}

/* The walk over one range's event rows for CC_BY_HOUR windows. */
typedef struct hour_walk {
    cc_report *r;
    cc_report_window *w;
    cc_summary *sum;            /* the current hour's, rebuilt from its rows */
    double *level;
    cc_report_window_fn fn;
    void *payload;
    cc_error *err;
    int have;
} hour_walk;

static int64_t hour_of(int64_t ts)
{
    return ts >= 0 ? ts / 3600 : -((-ts + 3599) / 3600);
}

/* One row: closes the previous hour's window when the hour changes, then
 * adds the row as cc_store_summary_from_rows does for a day. */
static int hour_row(void *payload, int64_t ts, int label, int64_t label_at, const float *probs)
{
    hour_walk *h = payload;
    int64_t start = hour_of(ts) * 3600;
    int rc;
    if (h->have && start != h->w->ts_from) {
        if ((rc = finish_window(h->r, h->w, h->sum, NULL, h->level, h->fn, h->payload, h->err)))
            return rc;
        cc_report_window_free(h->w);
        h->have = 0;
    }
    if (!h->have) {
        h->have = 1;
        h->w->slice = -1;
        cc_summary_clear(h->sum);
        h->w->ts_from = start;
        h->w->ts_to = start + 3600;
        h->w->from = h->w->to = cc_day_of_unix(start);
    }
    cc_summary_add_unlabeled(h->sum, probs, 1);
    if (label >= 0)
        cc_summary_add_labeled(h->sum, probs, label, 1);
    if (label_at >= 0)
        cc_summary_add_label_delay(h->sum, label_at - ts, 1);
    return 0;
}

/* A pruned day in [ts_from, ts_to) makes the hours incomplete: refused. */
static int check_rows_kept(cc_store *store, const cc_model *m, int64_t ts_from, int64_t ts_to,
                           cc_error *err)
{
    cc_pruned_range pr;
    int rc = cc_store_pruned_range(store, m, cc_day_of_unix(ts_from), cc_day_of_unix(ts_to - 1),
                                   &pr, err);
    if (rc || pr.days == 0)
        return rc;
    char first[11], last[11];
    cc_format_date(pr.first, first);
    cc_format_date(pr.last, last);
    if (pr.days == 1)
        return cc_error_set(err, CC_ENOTFOUND,
                            "model '%s': the day %s was pruned (its event rows are gone), so "
                            "hours cannot be computed for it; choose a range without it or "
                            "report that day with --by day",
                            m->name, first);
    return cc_error_set(err, CC_ENOTFOUND,
                        "model '%s': %d days from %s to %s were pruned (their event rows are "
                        "gone), so hours cannot be computed for them; choose a range without "
                        "them or report those days with --by day",
                        m->name, pr.days, first, last);
}

/* Fills r (zeroed) and hands each window to fn; see cc_report_stream. */
static int stream(cc_report *r, cc_store *store, const cc_report_opts *opts,
                  cc_report_window_fn fn, void *payload, cc_error *err)
{
    int64_t *days = NULL;
    int n_days = 0, rc;
    cc_summary *day_sum = NULL, *win_sum = NULL, **seg = NULL;
    double *level = NULL;
    cc_report_window w;
    memset(&w, 0, sizeof w);
    r->by = opts->by;
    if ((rc = cc_store_model_get(store, opts->model, &r->model, err)) ||
        (rc = load_slices(r, store, opts, err)))
        goto done;
    const cc_model *m = r->model;
    if (r->by_segment) {
        int ok = (seg = calloc((size_t)r->n_slices + 1, sizeof *seg)) != NULL;
        for (int i = 0; ok && i < r->n_slices; i++)
            ok = (seg[i] = cc_summary_create(m->m, m->k)) != NULL;
        if (!ok) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            goto done;
        }
    }
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
    if (r->has_baseline && ((rc = load_baseline(r, store, day_sum, err)) ||
                            (r->by_segment && (rc = load_slice_baselines(r, store, day_sum, err)))))
        goto done;
    for (int t = 0; t < cc_tracked_slots(m->m, m->k); t++)
        level[t] = r->stats ? r->stats[t].mean : NAN;

    if (opts->by == CC_BY_HOUR) {
        if (opts->segment || opts->by_segment) {
            rc = cc_error_set(err, CC_EUSAGE, "hour windows are of the whole model: "
                                              "--by hour does not take --segment or "
                                              "--by-segment");
            goto done;
        }
        if ((rc = check_rows_kept(store, m, opts->ts_from, opts->ts_to, err)))
            goto done;
        if ((rc = fn(payload, r, NULL)) != 0) {
            rc = rc > 0 ? cc_error_set(err, CC_ENOMEM, "out of memory") : rc;
            goto done;
        }
        hour_walk h = {r, &w, win_sum, level, fn, payload, err, 0};
        if ((rc = cc_store_events_between(store, m, opts->ts_from, opts->ts_to, hour_row, &h,
                                          err)))
            goto done;
        if (h.have && (rc = finish_window(r, &w, win_sum, NULL, level, fn, payload, err)))
            goto done;
        goto done;
    }
    int64_t from = opts->has_from ? opts->from : INT64_MIN / 4;
    int64_t to = opts->has_to ? opts->to : INT64_MAX / 4;
    if ((rc = src_days(r, store, from, to, &days, &n_days, err)))
        goto done;
    if ((rc = fn(payload, r, NULL)) != 0) {
        rc = rc > 0 ? cc_error_set(err, CC_ENOMEM, "out of memory") : rc;
        goto done;
    }
    int have = 0;
    for (int i = 0; i < n_days; i++) {
        if ((rc = src_get(r, store, days[i], day_sum, err)))
            goto done;
        int64_t key = window_key(days[i], opts->by);
        if (have && window_key(w.from, opts->by) != key) {
            if ((rc = finish_window(r, &w, win_sum, seg, level, fn, payload, err)))
                goto done;
            cc_report_window_free(&w);
            have = 0;
        }
        if (!have) {
            have = 1;
            w.slice = -1;
            cc_summary_clear(win_sum);
            for (int j = 0; seg && j < r->n_slices; j++)
                cc_summary_clear(seg[j]);
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
        if ((rc = merge_day(win_sum, day_sum, m, days[i], NULL, err)))
            goto done;
        for (int j = 0; seg && j < r->n_slices; j++) {
            if ((rc = cc_store_slice_summary_get(store, m, days[i], r->slices[j].id, day_sum,
                                                 err)) ||
                (rc = merge_day(seg[j], day_sum, m, days[i], cc_slice_name(&r->slices[j]), err)))
                goto done;
        }
    }
    if (have && (rc = finish_window(r, &w, win_sum, seg, level, fn, payload, err)))
        goto done;
done:
    for (int j = 0; seg && j < r->n_slices; j++)
        cc_summary_free(seg[j]);
    free(seg);
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
    if (cc_summary_merge(r->range, w->summary) != 0)
        return 1;
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
