/* report.h — windows of days read from stored summaries, their metrics, and
 * the two renderings: the JSON contract (other tools read it; fields are
 * only ever added) and a text table for people. Reads summaries, never rows. */
#ifndef CC_REPORT_REPORT_H
#define CC_REPORT_REPORT_H

#include <stdint.h>
#include <stdio.h>

#include "compare.h"
#include "control.h"
#include "error.h"
#include "store.h"
#include "store_slices.h"
#include "window.h"

/* CC_BY_HOUR windows are UTC hours built from the stored event rows (never
 * stored themselves); the others merge stored per-day summaries. */
typedef enum cc_grouping { CC_BY_DAY, CC_BY_WEEK, CC_BY_ALL, CC_BY_HOUR } cc_grouping;

typedef struct cc_report_opts {
    const char *model;
    int has_from, has_to;
    int64_t from, to;           /* UTC day numbers, inclusive */
    cc_grouping by;
    const char *segment;        /* one slice's report (cc_slice_find names), or NULL */
    int by_segment;             /* also one row per slice in each window */
    int64_t ts_from, ts_to;     /* CC_BY_HOUR only: Unix seconds, [ts_from, ts_to); from
                                   and to (days) are ignored then */
} cc_report_opts;

typedef struct cc_report_window {
    int64_t from, to;           /* days */
    int64_t ts_from, ts_to;     /* CC_BY_HOUR: the hour, [ts_from, ts_to) in Unix
                                   seconds; 0 and 0 for the other groupings */
    cc_summary *summary;        /* merged days; only while a cc_report_stream callback
                                   runs (NULL in a built report, see cc_report.range) */
    int64_t *counts;            /* (2 + k)k: predicted-class counts (metrics.class_counts
                                   points here), label counts, then the k x k confusion
                                   matrix (metrics.confusion points there) */
    const int64_t *label_counts; /* counts + k: labelled events per true class */
    cc_window_metrics metrics;
    cc_comparison cmp;          /* against the baseline (has_baseline = 0 without one) */
    double *z;                  /* cc_tracked_slots(m, k): z-score against the baseline days */
    double *ewma;               /* the same figures' EWMA over day windows; NULL otherwise */
    /* --by-segment: the window's slices with events, in slice order; each
     * is a window of that slice alone (cmp against the slice's own baseline
     * days; z and ewma NULL), with vs_model its class mix and score
     * distributions against the whole model's in the same window */
    struct cc_report_window *segments;
    int n_segments;
    int slice;                  /* a segment row: index in cc_report.slices; -1 otherwise */
    cc_comparison vs_model;
} cc_report_window;

typedef struct cc_report {
    cc_model *model;
    int has_baseline;
    int64_t baseline_from, baseline_to, baseline_events, baseline_labeled;
    int baseline_days;          /* days with events in the baseline period */
    cc_summary *baseline;       /* merged baseline summary, NULL without one */
    cc_baseline_stat *stats;    /* cc_tracked_slots(m, k): the baseline days' mean and sd */
    cc_grouping by;
    cc_report_window *windows;  /* cc_report_build only; none when streamed */
    int n_windows, cap_windows;
    cc_summary *range;          /* cc_report_build only: all windows merged */
    cc_comparison_cache *cmp_cache; /* shared by the comparisons with baseline; NULL without */
    /* slices (empty for a schema-3 file read as it is) */
    cc_slice *slices;           /* loaded for --segment and --by-segment only */
    int n_slices, slice_limit;
    int slice_count;            /* the model's slices (also when slices is not loaded) */
    int64_t overflow_events;    /* events in its overflow slice */
    int slice;                  /* --segment: index in slices of the one reported; -1 */
    int by_segment;
    cc_summary **slice_baselines; /* by_segment: n_slices merged baselines (NULL entries: none) */
} cc_report;

/* The events of the model's overflow slice (0 when it has none). */
int64_t cc_report_overflow_events(const cc_report *r);

/* Builds the report with every window's figures kept (summaries are not:
 * each window's is merged into r->range and dropped); *out is NULL on error.
 * An unknown model is -CC_ENOTFOUND. A range without events yields zero
 * windows, not an error. Memory grows with the number of windows by their
 * figures (pair matrices: about 6 x 8 x m^2 bytes each), not their summaries. */
int cc_report_build(cc_report **out, cc_store *store, const cc_report_opts *opts,
                    cc_error *err);
void cc_report_free(cc_report *r);

/* Called once with w = NULL when the head of r (model, baseline) is ready,
 * then once per window in date order. w is the callback's during the call:
 * it may move members out (leaving NULL behind); whatever is left, and
 * w->summary, is freed or reused after it returns. Return 0 to go on, a
 * positive value for out of memory, or a negative error code (with the
 * payload's own message) to stop. */
typedef int (*cc_report_window_fn)(void *payload, const cc_report *r, cc_report_window *w);

/* The same windows as cc_report_build, handed to fn one at a time, so a
 * caller that renders each window and lets it go needs memory for one
 * window whatever the number of days. *out is the head, with no windows.
 *
 * CC_BY_HOUR: the hours of [opts->ts_from, opts->ts_to) that hold events,
 * each summed from its event rows with the per-event summary code
 * (metrics/summary.c) into a fresh summary, one hour in memory at a time.
 * A range that touches a pruned day is -CC_ENOTFOUND, the message naming
 * the pruned days. z-scores compare each hour with the baseline days'
 * spread; there is no EWMA. */
int cc_report_stream(cc_report **out, cc_store *store, const cc_report_opts *opts,
                     cc_report_window_fn fn, void *payload, cc_error *err);

/* Frees what a window owns and zeroes it (for windows moved out of a
 * cc_report_stream callback). */
void cc_report_window_free(cc_report_window *w);

/* Testing hook: window figure sets (a window's or a slice row's computed
 * figures, from their computation to cc_report_window_free) alive in the
 * process now, and the most alive at once since the last reset. */
void cc_report_live_windows(long *now, long *peak);
void cc_report_live_windows_reset(void);


/* An alert timeline the caller evaluated over the report's range (the cli's
 * `report --rules`): the transitions day by day, and the rules still raised
 * after the last day. Strings are borrowed. */
typedef struct cc_report_alert {
    int64_t day;
    const char *rule, *kind, *urgency, *subject, *sentence;  /* subject may be "" */
    const char *metric;
    double value, bound;
    int64_t since;              /* raised_at_end: the day it was raised */
    const char *slice;          /* an each-slice rule's slice; NULL for the whole model */
    const char *rule_name;      /* with slice: the rule's own name (rule is then its state
                                   key, "<rule>@<slice>"); NULL otherwise */
} cc_report_alert;

typedef struct cc_report_timeline {
    const char *rules;          /* the rules file, or "default rules" */
    const cc_report_alert *items;
    int n;
    const cc_report_alert *raised;  /* still raised after the last day (kind "raised") */
    int n_raised;
    int not_evaluated;          /* rules that could not judge the last day */
    int64_t last_day;
} cc_report_timeline;

/* Findings about the baseline itself, stated once (not alerts): e.g. the
 * ensemble does not beat its best member even on the baseline days. Fills
 * up to cap sentences; returns how many. */
int cc_report_findings(const cc_report *r, char out[][320], int cap);

/* Renderings; malloc'd NUL-terminated text, NULL on out of memory. The
 * _with forms add the alert timeline when t is not NULL. */
char *cc_report_json(const cc_report *r);
char *cc_report_json_with(const cc_report *r, const cc_report_timeline *t);

/* Window i of the JSON contract as a cJSON tree (caller frees with
 * cJSON_Delete). Its matrices (diversity pairs, accuracy.confusion) are raw
 * items (cJSON_IsRaw) holding their JSON text, which cJSON_Parse reads.
 * Figures by path are better read through figures.h. */
struct cJSON *cc_report_window_json(const cc_report *r, int i);
char *cc_report_text(const cc_report *r);
char *cc_report_text_with(const cc_report *r, const cc_report_timeline *t);

/* The JSON or text rendering of the report opts asks for, built with
 * cc_report_stream and written to out window by window: the same bytes as
 * cc_report_json (without its final newline) or cc_report_text of
 * cc_report_build, in memory bounded by one window's figures (text keeps
 * its tables' rows, a few hundred bytes per window and class). Returns
 * cc_report_build's errors; write errors are left in out (ferror). */
int cc_report_write_json(FILE *out, cc_store *store, const cc_report_opts *opts, cc_error *err);
int cc_report_write_text(FILE *out, cc_store *store, const cc_report_opts *opts, cc_error *err);

/* The HTML page's inputs besides the report. alerts: lines for the status
 * line, when the caller evaluated alert rules (alerts_known = 1); review:
 * the event lists of the report's range (collector/review.h), or NULL. */
struct cc_review;
typedef struct cc_html_extras {
    const struct cc_review *review;
    int alerts_known;
    const char *const *alerts;
    int n_alerts;
    double band_k;              /* band = baseline mean +- band_k sd of its days */
    const char *note;           /* a line under the title, or NULL */
    const cc_report_timeline *timeline; /* rules evaluated over the range, or NULL */
    int64_t review_range_events; /* events of the range, said when the review read a sample */
} cc_html_extras;

#define CC_HTML_EXTRAS_INIT {NULL, 0, NULL, 0, 3.0, NULL, NULL, 0}

/* One self-contained HTML page (inline CSS and SVG, no script); extras may
 * be NULL. Strings from the logs are escaped. Reads r's windows. */
char *cc_report_html(const cc_report *r, const cc_html_extras *extras);

/* What the page shows of a report, gathered from cc_report_stream: per
 * window only the numbers the page plots (a few dozen numbers, plus k class
 * shares and a few per slice), the last window's figures (its member-pair
 * maps) and one merged summary of the range; so the page needs memory for
 * one window's figures whatever the number of days. Errors are
 * cc_report_build's. */
typedef struct cc_report_page cc_report_page;
int cc_report_page_build(cc_report_page **out, cc_store *store, const cc_report_opts *opts,
                         cc_error *err);
/* The same from a built report r, which must outlive it; NULL on out of memory. */
cc_report_page *cc_report_page_of(const cc_report *r);
void cc_report_page_free(cc_report_page *p);
/* The report's head: model, baseline, slices; its windows are not kept. */
const cc_report *cc_report_page_head(const cc_report_page *p);
/* Number of windows; the first window's first day and the last one's last day. */
int cc_report_page_windows(const cc_report_page *p, int64_t *first_day, int64_t *last_day);
/* Events of the whole range. */
int64_t cc_report_page_events(const cc_report_page *p);
/* The page of p: the same bytes as cc_report_html of the built report. */
char *cc_report_page_html(const cc_report_page *p, const cc_html_extras *extras);

#endif
