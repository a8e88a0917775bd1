/* page_inputs.c — gathers what the HTML page shows of each window (see
 * page_inputs.h) as the windows go by: a streamed report hands each window
 * over and lets it go, so the page holds the plotted numbers of every window
 * but the figures of one window only (the last one, for its member-pair
 * maps) and one merged summary (the range's), however many days it covers. */
#include "page_inputs.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "tracked.h"

static int grow(void **p, size_t count, size_t size)
{
    void *g = realloc(*p, count * size);
    if (!g)
        return -1;
    *p = g;
    return 0;
}

/* Room for one more window. */
static int reserve(cc_report_page *pg)
{
    if (pg->n < pg->cap)
        return 0;
    size_t cap = pg->cap ? 2 * (size_t)pg->cap : 32;
    size_t k = (size_t)pg->r->model->k, s = (size_t)pg->n_slices;
    if (grow((void **)&pg->from, cap, sizeof *pg->from) ||
        grow((void **)&pg->to, cap, sizeof *pg->to) ||
        grow((void **)&pg->ts_from, cap, sizeof *pg->ts_from) ||
        grow((void **)&pg->tracked, cap * (size_t)pg->nt, sizeof *pg->tracked) ||
        grow((void **)&pg->shares, cap * k, sizeof *pg->shares) ||
        grow((void **)&pg->whole, cap * CC_PAGE_SLICE_FIGS, sizeof *pg->whole) ||
        (s && (grow((void **)&pg->slice_figs, cap * s * CC_PAGE_SLICE_FIGS,
                    sizeof *pg->slice_figs) ||
               grow((void **)&pg->slice_events, cap * s, sizeof *pg->slice_events) ||
               grow((void **)&pg->slice_labeled, cap * s, sizeof *pg->slice_labeled))))
        return -1;
    pg->cap = (int)cap;
    return 0;
}

/* Window w's plotted numbers as window pg->n. -1 on out of memory. */
static int add_window(cc_report_page *pg, const cc_report_window *w)
{
    if (reserve(pg))
        return -1;
    const int i = pg->n, k = pg->r->model->k, s = pg->n_slices;
    pg->from[i] = w->from;
    pg->to[i] = w->to;
    pg->ts_from[i] = w->ts_from;
    for (int t = 0; t < pg->nt; t++)
        pg->tracked[(size_t)i * pg->nt + t] = cc_tracked_value(t, &w->metrics, &w->cmp);
    for (int c = 0; c < k; c++)
        pg->shares[(size_t)i * k + c] =
            w->metrics.events > 0
                ? (double)w->metrics.class_counts[c] / (double)w->metrics.events
                : NAN;
    cc_html_slices_figs(&w->metrics, &w->cmp, pg->whole + (size_t)i * CC_PAGE_SLICE_FIGS);
    for (int j = 0; j < s; j++) {
        double *f = pg->slice_figs + ((size_t)i * s + j) * CC_PAGE_SLICE_FIGS;
        for (int c = 0; c < CC_PAGE_SLICE_FIGS; c++)
            f[c] = NAN;
        pg->slice_events[(size_t)i * s + j] = 0;
        pg->slice_labeled[(size_t)i * s + j] = 0;
    }
    for (int j = 0; j < w->n_segments; j++) {
        const cc_report_window *sw = &w->segments[j];
        if (sw->slice < 0 || sw->slice >= s)
            continue;
        size_t at = (size_t)i * s + sw->slice;
        cc_html_slices_figs(&sw->metrics, &sw->cmp, pg->slice_figs + at * CC_PAGE_SLICE_FIGS);
        pg->slice_events[at] = sw->metrics.events;
        pg->slice_labeled[at] = sw->metrics.labeled;
    }
    pg->n++;
    return 0;
}

static cc_report_page *page_new(void)
{
    cc_report_page *pg = calloc(1, sizeof *pg);
    if (pg)
        pg->nt = cc_tracked_count();
    return pg;
}

void cc_report_page_free(cc_report_page *pg)
{
    if (!pg)
        return;
    free(pg->from);
    free(pg->to);
    free(pg->ts_from);
    free(pg->tracked);
    free(pg->shares);
    free(pg->whole);
    free(pg->slice_figs);
    free(pg->slice_events);
    free(pg->slice_labeled);
    cc_report_window_free(&pg->last_own);
    cc_summary_free(pg->range_own);
    cc_report_free(pg->own);
    free(pg);
}

/* cc_report_stream's callback: each window's numbers, its summary merged
 * into the range, the window itself kept until the next one comes. */
static int take_window(void *payload, const cc_report *r, cc_report_window *w)
{
    cc_report_page *pg = payload;
    if (!w) {
        pg->r = r;
        pg->n_slices = r->by_segment ? r->n_slices : 0;
        return (pg->range_own = cc_summary_create(r->model->m, r->model->k)) ? 0 : 1;
    }
    if (add_window(pg, w))
        return 1;
    cc_summary_merge(pg->range_own, w->summary);
    cc_report_window_free(&pg->last_own);
    pg->last_own = *w;
    pg->last_own.summary = NULL;
    memset(w, 0, sizeof *w);
    return 0;
}

int cc_report_page_build(cc_report_page **out, cc_store *store, const cc_report_opts *opts,
                         cc_error *err)
{
    *out = NULL;
    cc_report_page *pg = page_new();
    if (!pg)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    int rc = cc_report_stream(&pg->own, store, opts, take_window, pg, err);
    if (rc) {
        cc_report_page_free(pg);
        return rc;
    }
    pg->r = pg->own;
    pg->last = pg->n > 0 ? &pg->last_own : NULL;
    pg->range = pg->n > 0 ? pg->range_own : NULL;
    *out = pg;
    return 0;
}

cc_report_page *cc_report_page_of(const cc_report *r)
{
    cc_report_page *pg = page_new();
    if (!pg)
        return NULL;
    pg->r = r;
    pg->n_slices = r->by_segment ? r->n_slices : 0;
    for (int i = 0; i < r->n_windows; i++)
        if (add_window(pg, &r->windows[i])) {
            cc_report_page_free(pg);
            return NULL;
        }
    pg->last = r->n_windows > 0 ? &r->windows[r->n_windows - 1] : NULL;
    pg->range = r->n_windows > 0 ? r->range : NULL;
    return pg;
}

const cc_report *cc_report_page_head(const cc_report_page *pg) { return pg->r; }

int cc_report_page_windows(const cc_report_page *pg, int64_t *first_day, int64_t *last_day)
{
    *first_day = pg->n > 0 ? pg->from[0] : 0;
    *last_day = pg->n > 0 ? pg->to[pg->n - 1] : 0;
    return pg->n;
}

int64_t cc_report_page_events(const cc_report_page *pg)
{
    return pg->range ? cc_summary_data(pg->range)[cc_summary_layout(pg->range)->n_events] : 0;
}
