/* report_build.c — choosing windows (day, ISO week, or all) and merging the
 * stored per-day summaries into each; metrics come from metrics/window.c. */
#include <stdlib.h>
#include <string.h>

#include "date.h"
#include "report.h"

void cc_report_free(cc_report *r)
{
    if (!r)
        return;
    for (int i = 0; i < r->n_windows; i++) {
        cc_window_metrics_free(&r->windows[i].metrics);
        cc_summary_free(r->windows[i].summary);
    }
    free(r->windows);
    cc_model_free(r->model);
    free(r);
}

static int64_t window_key(int64_t day, cc_grouping by)
{
    return by == CC_BY_DAY ? day : by == CC_BY_WEEK ? cc_week_start(day) : 0;
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
    if (r->has_baseline) {
        free(days);
        days = NULL;
        if ((rc = cc_store_summary_days(store, m, r->baseline_from, r->baseline_to, &days,
                                        &n_days, err)))
            goto done;
        for (int i = 0; i < n_days; i++) {
            if ((rc = cc_store_summary_get(store, m, days[i], day_sum, err)))
                goto done;
            r->baseline_events += cc_summary_data(day_sum)[cc_summary_layout(day_sum)->n_events];
        }
        free(days);
        days = NULL;
    }

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
                w->from = days[0];
                w->to = days[n_days - 1];
            }
            if (opts->has_from && w->from < opts->from)
                w->from = opts->from;
            if (opts->has_to && w->to > opts->to)
                w->to = opts->to;
            if (opts->by == CC_BY_ALL) {
                if (opts->has_from)
                    w->from = opts->from;
                if (opts->has_to)
                    w->to = opts->to;
            }
        }
        cc_summary_merge(w->summary, day_sum);
    }
    for (int i = 0; i < r->n_windows; i++)
        if (cc_window_metrics_compute(&r->windows[i].metrics, r->windows[i].summary)) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            goto done;
        }
done:
    free(days);
    cc_summary_free(day_sum);
    if (rc) {
        /* windows whose metrics were never computed hold zeroed structs */
        cc_report_free(r);
        return rc;
    }
    *out = r;
    return 0;
}
