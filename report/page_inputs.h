/* page_inputs.h — what the HTML page keeps of a report (private to
 * report_html.c, html_slices.c and page_inputs.c): per window only the
 * numbers it plots (the tracked window figures, the class shares, the slice
 * rows' few figures), the last window whole (its member-pair maps), and the
 * range's merged summary. Gathered from a streamed report, one window in
 * memory at a time, or from a built report (cc_report_html). */
#ifndef CC_REPORT_PAGE_INPUTS_H
#define CC_REPORT_PAGE_INPUTS_H

#include <stdint.h>

#include "report.h"

/* Figures of a slice row (and of the whole model beside it) the slice
 * section reads: html_slices.c's candidates, in its order. */
#define CC_PAGE_SLICE_FIGS 6

struct cc_report_page {
    cc_report *own;             /* the head, when streamed (windows none) */
    const cc_report *r;         /* the head: own, or the built report */
    int n, cap;                 /* windows gathered */
    int64_t *from, *to, *ts_from; /* per window */
    int nt;                     /* cc_tracked_count() */
    double *tracked;            /* n x nt: the tracked window figures (cc_tracked_value) */
    double *shares;             /* n x k: share of events per predicted class (NAN: none) */
    int n_slices;               /* r->n_slices with --by-segment, else 0 */
    double *whole;              /* n x CC_PAGE_SLICE_FIGS: the whole model's */
    double *slice_figs;         /* n x n_slices x CC_PAGE_SLICE_FIGS (NAN without a row) */
    int64_t *slice_events;      /* n x n_slices: the row's events; 0 without a row */
    int64_t *slice_labeled;     /* n x n_slices */
    cc_report_window last_own;  /* the last window, when streamed */
    const cc_report_window *last; /* the last window (last_own or the report's), or NULL */
    cc_summary *range_own;      /* when streamed: the windows' summaries merged */
    const cc_summary *range;    /* range_own or the report's range; NULL without windows */
};

/* The slice section's figures of one window or slice row (html_slices.c). */
void cc_html_slices_figs(const cc_window_metrics *wm, const cc_comparison *cmp, double *out);

#endif
