/* evaluate.c — a rule's value for a window (figures through the registry,
 * label age from the store), the effective bound and the breach decision. */
#include "evaluate.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "figures.h"
#include "paths.h"
#include "report.h"
#include "tracked.h"

#define CACHE_MAX 16

/* Reports are kept by (day, slice); a base report by slice (day BASE_DAY). */
#define BASE_DAY INT64_MIN

typedef struct cached {
    int64_t day;
    char *slice;                /* NULL: the whole model */
    cc_report *report;          /* NULL when the day has no events */
} cached;

struct cc_evaluator {
    cc_store *store;
    char *model;
    int64_t model_id;
    int m, k;                   /* the model's shape (a cluster store reads by it) */
    int64_t day;
    int horizon;                /* largest lag of the rules; -1: unknown */
    cached cache[CACHE_MAX];
    int n_cache;
};

static int same_slice(const char *a, const char *b)
{
    return a == b || (a && b && strcmp(a, b) == 0);
}

/* A rule's report options for a range of days: the whole model, or the
 * rule's slice alone (its window and baseline days from that slice's
 * summaries). */
static void report_opts(cc_report_opts *ro, const char *model, const char *slice, int64_t from,
                        int64_t to)
{
    memset(ro, 0, sizeof *ro);
    ro->model = model;
    ro->has_from = ro->has_to = 1;
    ro->from = from;
    ro->to = to;
    ro->by = CC_BY_DAY;
    ro->segment = slice;
}

/* A report of a window day before day - horizon is not asked for again: at
 * 64 members x 256 classes each holds two 16 MiB summaries (baseline, range). */
void cc_eval_set_day(cc_evaluator *ev, int64_t day)
{
    ev->day = day;
    if (ev->horizon < 0)
        return;
    int kept = 0;
    for (int i = 0; i < ev->n_cache; i++) {
        cached *c = &ev->cache[i];
        if (c->day != BASE_DAY && c->day < day - ev->horizon) {
            cc_report_free(c->report);
            free(c->slice);
        } else {
            ev->cache[kept++] = *c;
        }
    }
    ev->n_cache = kept;
}

void cc_eval_set_horizon(cc_evaluator *ev, int max_lag_days) { ev->horizon = max_lag_days; }

int cc_eval_create(cc_evaluator **out, cc_store *store, const char *model, int64_t day,
                   cc_error *err)
{
    *out = NULL;
    cc_model *m = NULL;
    int rc = cc_store_model_get(store, model, &m, err);
    if (rc)
        return rc;
    cc_evaluator *ev = calloc(1, sizeof *ev);
    if (!ev || !(ev->model = strdup(model))) {
        free(ev);
        cc_model_free(m);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    ev->store = store;
    ev->model_id = m->id;
    ev->m = m->m;
    ev->k = m->k;
    ev->day = day;
    ev->horizon = -1;
    cc_model_free(m);
    *out = ev;
    return 0;
}

void cc_eval_free(cc_evaluator *ev)
{
    if (!ev)
        return;
    for (int i = 0; i < ev->n_cache; i++) {
        cc_report_free(ev->cache[i].report);
        free(ev->cache[i].slice);
    }
    free(ev->model);
    free(ev);
}

/* The one-day report of (day, slice), built on first use; day BASE_DAY:
 * a report without windows, for the baseline's figures when the window
 * day has no events. */
static int get_cached(cc_evaluator *ev, int64_t day, const char *slice, cached **out,
                      cc_error *err)
{
    for (int i = 0; i < ev->n_cache; i++)
        if (ev->cache[i].day == day && same_slice(ev->cache[i].slice, slice)) {
            *out = &ev->cache[i];
            return 0;
        }
    if (ev->n_cache == CACHE_MAX) {
        cc_report_free(ev->cache[0].report);
        free(ev->cache[0].slice);
        memmove(ev->cache, ev->cache + 1, sizeof *ev->cache * (CACHE_MAX - 1));
        ev->n_cache--;
    }
    cc_report_opts ro;
    if (day == BASE_DAY)
        report_opts(&ro, ev->model, slice, 1, 0);   /* an empty range */
    else
        report_opts(&ro, ev->model, slice, day, day);
    cc_report *r = NULL;
    char *copy = slice ? strdup(slice) : NULL;
    if (slice && !copy)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    int rc = cc_report_build(&r, ev->store, &ro, err);
    if (rc) {
        free(copy);
        return rc;
    }
    /* the rules read the window's figures and the baseline, not the range */
    cc_summary_free(r->range);
    r->range = NULL;
    cached *c = &ev->cache[ev->n_cache++];
    c->day = day;
    c->slice = copy;
    c->report = r;
    if (day != BASE_DAY && r->n_windows == 0) {
        cc_report_free(r);
        c->report = NULL;
    }
    *out = c;
    return 0;
}

int cc_eval_report(cc_evaluator *ev, int64_t day, const cc_report **out, cc_error *err)
{
    return cc_eval_report_slice(ev, day, NULL, out, err);
}

int cc_eval_report_slice(cc_evaluator *ev, int64_t day, const char *slice,
                         const cc_report **out, cc_error *err)
{
    cached *c;
    int rc = get_cached(ev, day, slice, &c, err);
    *out = rc ? NULL : c->report;
    return rc;
}

/* Days from the newest day up to `day` with labelled events; NAN if none. */
static int label_age(cc_evaluator *ev, int64_t day, double *out, cc_error *err)
{
    cc_model m = {.id = ev->model_id, .name = ev->model, .m = ev->m, .k = ev->k};
    int64_t last = 0;
    int found = 0;
    int rc = cc_store_labeled_day_last(ev->store, &m, day, &found, &last, err);
    *out = found ? (double)(day - last) : NAN;
    return rc;
}

static void skip(cc_eval_result *out, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

static void skip(cc_eval_result *out, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    out->status = CC_EVAL_SKIPPED;
    vsnprintf(out->reason, sizeof out->reason, fmt, ap);
    va_end(ap);
}

/* The traffic-scaled minimum: a share of the baseline's mean daily count,
 * at least the floor; a fixed default without a baseline. */
static int64_t auto_min(const cc_report *r, const char *path)
{
    const cc_figure *f = cc_figures_find(path);
    int slot = r && r->stats ? cc_tracked_slot(f, 0, r->model->m, r->model->k) : -1;
    if (slot < 0 || !(r->stats[slot].n > 0) || !isfinite(r->stats[slot].mean))
        return CC_RULE_AUTO_NO_BASELINE;
    int64_t n = (int64_t)llround(CC_RULE_AUTO_SHARE * r->stats[slot].mean);
    return n > CC_RULE_AUTO_FLOOR ? n : CC_RULE_AUTO_FLOOR;
}

/* The bound of one value: fixed, or the baseline's mean moved by
 * max(k sd, min_shift, min_relative_shift |mean|). 0, or -1 with a reason. */
static int set_bound(const cc_rule *rule, cc_eval_result *out)
{
    if (rule->cond == CC_COND_ABOVE || rule->cond == CC_COND_BELOW) {
        out->bound = rule->threshold;
        return 0;
    }
    if (!out->has_baseline) {
        skip(out, "no baseline for a sigma condition ('concord baseline')");
        return -1;
    }
    if (out->baseline_days < CC_BASELINE_MIN_DAYS || !isfinite(out->sd) ||
        !isfinite(out->mean)) {
        skip(out, "baseline spread undefined (%d baseline days with a value, need %d)",
             out->baseline_days, (int)CC_BASELINE_MIN_DAYS);
        return -1;
    }
    double width = rule->threshold * out->sd;
    if (rule->min_shift > width)
        width = rule->min_shift;
    if (rule->min_relative_shift * fabs(out->mean) > width)
        width = rule->min_relative_shift * fabs(out->mean);
    if (!(width > 0)) {
        skip(out, "baseline spread is 0 and the rule sets no min_shift");
        return -1;
    }
    out->bound = rule->cond == CC_COND_SIGMAS_ABOVE ? out->mean + width : out->mean - width;
    return 0;
}

/* One value of the rule's figure (index: member or class, 0 otherwise). */
static void eval_one(const cc_rule *rule, const cc_path_info *pi, const cc_report *r,
                     int index, cc_eval_result *out)
{
    const cc_report_window *w = &r->windows[0];
    out->value = cc_figures_value(pi->fig, &w->metrics, &w->cmp, index);
    out->has_baseline = 0;
    out->mean = out->sd = out->z = out->bound = NAN;
    int slot = r->has_baseline && r->stats
                   ? cc_tracked_slot(pi->fig, index, r->model->m, r->model->k)
                   : -1;
    if (slot >= 0) {
        const cc_baseline_stat *bs = &r->stats[slot];
        out->has_baseline = bs->n > 0;
        out->mean = bs->mean;
        out->sd = bs->sd;
        out->baseline_days = bs->n;
        out->z = cc_zscore(out->value, bs);
    }
    if (isnan(out->value)) {
        if (pi->needs_labels && out->labeled == 0)
            skip(out, "no labelled events");
        else if (strncmp(rule->metric, "drift.", 6) == 0 ||
                 strncmp(rule->metric, "label_shift.", 12) == 0)
            skip(out, "undefined (no baseline, or fewer than %d events on a side)",
                 (int)CC_DRIFT_MIN_EVENTS);
        else
            skip(out, "undefined for this window");
        return;
    }
    if (set_bound(rule, out))
        return;
    int above = rule->cond == CC_COND_ABOVE || rule->cond == CC_COND_SIGMAS_ABOVE;
    out->status = (above ? out->value > out->bound : out->value < out->bound) ? CC_EVAL_BREACH
                                                                              : CC_EVAL_CLEAR;
}

/* How far past its bound (positive) or short of it (negative) a result is. */
static double excess(const cc_rule *rule, const cc_eval_result *e)
{
    int above = rule->cond == CC_COND_ABOVE || rule->cond == CC_COND_SIGMAS_ABOVE;
    return above ? e->value - e->bound : e->bound - e->value;
}

static int find_name(char *const *names, int n, const char *name)
{
    for (int i = 0; i < n; i++)
        if (strcmp(names[i], name) == 0)
            return i;
    return -1;
}

int cc_eval_rule(cc_evaluator *ev, const cc_rule *rule, cc_eval_result *out, cc_error *err)
{
    memset(out, 0, sizeof *out);
    out->value = out->bound = out->mean = out->sd = out->z = NAN;
    out->window_day = ev->day - rule->lag_days;
    out->subject_index = -1;
    cc_path_info pi;
    if (cc_paths_lookup(rule->metric, &pi))
        return cc_error_set(err, CC_EINPUT, "rule '%s': key 'metric': unknown path '%s'",
                            rule->name, rule->metric);
    cached *c;
    int rc = get_cached(ev, out->window_day, rule->slice, &c, err);
    if (rc)
        return rc;
    const cc_report *r = c->report;
    const cc_report_window *w = r ? &r->windows[0] : NULL;
    out->events = w ? w->metrics.events : 0;
    out->labeled = w ? w->metrics.labeled : 0;

    /* the minimum counts, scaled to traffic unless the rule sets them */
    const cc_report *base = r;
    if (!base) {
        /* the cache may drop the window's entry, but r is NULL here */
        cached *b;
        if ((rc = get_cached(ev, BASE_DAY, rule->slice, &b, err)))
            return rc;
        base = b->report;
    }
    out->min_events = rule->min_events != CC_RULE_MIN_AUTO ? rule->min_events
                      : pi.kind == CC_PATH_DERIVED || !strcmp(rule->metric, "events") ||
                              !strcmp(rule->metric, "labeled") || pi.needs_labels
                          ? 0
                          : auto_min(base, "events");
    out->min_labels = rule->min_labels != CC_RULE_MIN_AUTO ? rule->min_labels
                      : pi.needs_labels ? auto_min(base, "labeled")
                                        : 0;

    if (pi.kind == CC_PATH_DERIVED) {
        if ((rc = label_age(ev, out->window_day, &out->value, err)))
            return rc;
    } else if (!w && (!strcmp(rule->metric, "events") || !strcmp(rule->metric, "labeled"))) {
        out->value = 0;
    }
    if (out->events < out->min_events) {
        skip(out, "too few events (%lld < %lld)", (long long)out->events,
             (long long)out->min_events);
        return 0;
    }
    if (out->labeled < out->min_labels) {
        skip(out, "too few labels (%lld < %lld)", (long long)out->labeled,
             (long long)out->min_labels);
        return 0;
    }
    if (pi.kind == CC_PATH_DERIVED || !w) {
        if (!w && pi.kind != CC_PATH_DERIVED && isnan(out->value)) {
            skip(out, "no events on this day");
            return 0;
        }
        if (isnan(out->value)) {
            skip(out, "no labelled day yet");
            return 0;
        }
        if (!set_bound(rule, out)) {
            int above = rule->cond == CC_COND_ABOVE || rule->cond == CC_COND_SIGMAS_ABOVE;
            out->status = (above ? out->value > out->bound : out->value < out->bound)
                              ? CC_EVAL_BREACH
                              : CC_EVAL_CLEAR;
        }
        return 0;
    }
    if (pi.scope == CC_SCOPE_WINDOW) {
        eval_one(rule, &pi, r, 0, out);
        return 0;
    }
    char *const *names = pi.scope == CC_SCOPE_MEMBER ? r->model->members : r->model->classes;
    int n = pi.scope == CC_SCOPE_MEMBER ? r->model->m : r->model->k;
    int lo = 0, hi = n;
    if (!rule->each) {
        lo = find_name(names, n, rule->subject);
        if (lo < 0) {
            skip(out, "the model has no %s '%s'", cc_figures_scope_name(pi.scope),
                 rule->subject);
            return 0;
        }
        hi = lo + 1;
    }
    /* the breaching one furthest past its bound, else the evaluated one
     * closest to it, else the first reason */
    cc_eval_result best, one;
    int have = 0;
    for (int i = lo; i < hi; i++) {
        one = *out;
        eval_one(rule, &pi, r, i, &one);
        one.subject_index = i;
        snprintf(one.subject, sizeof one.subject, "%s", names[i]);
        int better = !have || (one.status != CC_EVAL_SKIPPED && best.status == CC_EVAL_SKIPPED) ||
                     (one.status != CC_EVAL_SKIPPED && best.status != CC_EVAL_SKIPPED &&
                      excess(rule, &one) > excess(rule, &best));
        if (better) {
            best = one;
            have = 1;
        }
    }
    if (have)
        *out = best;
    return 0;
}
