/* evaluate.c — a rule's metric value for a window (tracked figures from the
 * report structures, other paths from the report's JSON, a few derived from
 * the store), the effective bound and the breach decision. */
#include "evaluate.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdarg.h>
#include <sqlite3.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "paths.h"
#include "report.h"
#include "tracked.h"

#define CACHE_MAX 8

typedef struct cached {
    int64_t day;
    cc_report *report;          /* NULL when the day has no events */
    cJSON *window_json;         /* parsed on first use */
} cached;

struct cc_evaluator {
    cc_store *store;
    char *model;
    int64_t model_id;
    int64_t day;
    cached cache[CACHE_MAX];
    int n_cache;
};

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
    ev->day = day;
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
        cJSON_Delete(ev->cache[i].window_json);
    }
    free(ev->model);
    free(ev);
}

static int get_cached(cc_evaluator *ev, int64_t day, cached **out, cc_error *err)
{
    for (int i = 0; i < ev->n_cache; i++)
        if (ev->cache[i].day == day) {
            *out = &ev->cache[i];
            return 0;
        }
    if (ev->n_cache == CACHE_MAX) {
        cc_report_free(ev->cache[0].report);
        cJSON_Delete(ev->cache[0].window_json);
        memmove(ev->cache, ev->cache + 1, sizeof *ev->cache * (CACHE_MAX - 1));
        ev->n_cache--;
    }
    cc_report_opts ro = {ev->model, 1, 1, day, day, CC_BY_DAY};
    cc_report *r = NULL;
    int rc = cc_report_build(&r, ev->store, &ro, err);
    if (rc)
        return rc;
    cached *c = &ev->cache[ev->n_cache++];
    c->day = day;
    c->window_json = NULL;
    c->report = r;
    if (r->n_windows == 0) {
        cc_report_free(r);
        c->report = NULL;
    }
    *out = c;
    return 0;
}

int cc_eval_report(cc_evaluator *ev, int64_t day, const cc_report **out, cc_error *err)
{
    cached *c;
    int rc = get_cached(ev, day, &c, err);
    *out = rc ? NULL : c->report;
    return rc;
}

/* A number at a dotted path of the window's JSON; NAN for null or absent. */
static double json_value(cached *c, const char *path)
{
    if (!c->window_json && !(c->window_json = cc_report_window_json(c->report, 0)))
        return NAN;
    const cJSON *node = c->window_json;
    char key[128];
    const char *p = path;
    while (node && *p) {
        const char *dot = strchr(p, '.');
        size_t len = dot ? (size_t)(dot - p) : strlen(p);
        if (len >= sizeof key)
            return NAN;
        memcpy(key, p, len);
        key[len] = '\0';
        node = cJSON_IsObject(node) ? cJSON_GetObjectItemCaseSensitive(node, key) : NULL;
        p += len + (dot ? 1 : 0);
    }
    return node && cJSON_IsNumber(node) ? node->valuedouble : NAN;
}

/* Days from the newest day up to `day` with labelled events; NAN if none. */
static int label_age(cc_evaluator *ev, int64_t day, double *out, cc_error *err)
{
    sqlite3 *db = cc_store_db(ev->store);
    sqlite3_stmt *st = NULL;
    if (sqlite3_prepare_v2(db, "SELECT max(day) FROM summaries WHERE model_id = ?1 AND "
                               "day <= ?2 AND labeled > 0", -1, &st, NULL) != SQLITE_OK)
        return cc_error_set(err, CC_EIO, "%s: label age: %s", cc_store_path(ev->store),
                            sqlite3_errmsg(db));
    sqlite3_bind_int64(st, 1, ev->model_id);
    sqlite3_bind_int64(st, 2, day);
    int rc = sqlite3_step(st);
    *out = NAN;
    if (rc == SQLITE_ROW && sqlite3_column_type(st, 0) != SQLITE_NULL)
        *out = (double)(day - sqlite3_column_int64(st, 0));
    sqlite3_finalize(st);
    if (rc != SQLITE_ROW)
        return cc_error_set(err, CC_EIO, "%s: label age: %s", cc_store_path(ev->store),
                            sqlite3_errmsg(db));
    return 0;
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

int cc_eval_rule(cc_evaluator *ev, const cc_rule *rule, cc_eval_result *out, cc_error *err)
{
    memset(out, 0, sizeof *out);
    out->value = out->bound = out->mean = out->sd = out->z = NAN;
    out->window_day = ev->day - rule->lag_days;
    cc_path_info pi;
    if (cc_paths_lookup(rule->metric, &pi))
        return cc_error_set(err, CC_EINPUT, "rule '%s': key 'metric': unknown path '%s'",
                            rule->name, rule->metric);
    cached *c;
    int rc = get_cached(ev, out->window_day, &c, err);
    if (rc)
        return rc;
    const cc_report *r = c->report;
    const cc_report_window *w = r ? &r->windows[0] : NULL;
    out->events = w ? w->metrics.events : 0;
    out->labeled = w ? w->metrics.labeled : 0;

    if (pi.kind == CC_PATH_DERIVED) {
        if (strcmp(rule->metric, "events") == 0)
            out->value = (double)out->events;
        else if (strcmp(rule->metric, "labeled") == 0)
            out->value = (double)out->labeled;
        else if ((rc = label_age(ev, out->window_day, &out->value, err)))
            return rc;
    } else if (w) {
        out->value = pi.kind == CC_PATH_TRACKED
                         ? cc_tracked_value(pi.tracked, &w->metrics, &w->cmp)
                         : json_value(c, rule->metric);
    }
    if (r && r->has_baseline && r->stats && pi.kind == CC_PATH_TRACKED) {
        const cc_baseline_stat *bs = &r->stats[pi.tracked];
        out->has_baseline = bs->n > 0;
        out->mean = bs->mean;
        out->sd = bs->sd;
        out->baseline_days = bs->n;
        out->z = cc_zscore(out->value, bs);
    }

    if (out->events < rule->min_events) {
        skip(out, "too few events (%lld < %lld)", (long long)out->events,
             (long long)rule->min_events);
        return 0;
    }
    if (out->labeled < rule->min_labels) {
        skip(out, "too few labels (%lld < %lld)", (long long)out->labeled,
             (long long)rule->min_labels);
        return 0;
    }
    if (!w && pi.kind != CC_PATH_DERIVED) {
        skip(out, "no events on this day");
        return 0;
    }
    if (isnan(out->value)) {
        if (pi.needs_labels && out->labeled == 0)
            skip(out, "no labelled events");
        else if (strcmp(rule->metric, "labels.age_days") == 0)
            skip(out, "no labelled day yet");
        else if (strncmp(rule->metric, "drift.", 6) == 0 ||
                 strncmp(rule->metric, "label_shift.", 12) == 0)
            skip(out, "undefined (no baseline, or fewer than 30 events on a side)");
        else
            skip(out, "undefined for this window");
        return 0;
    }
    switch (rule->cond) {
    case CC_COND_ABOVE:
    case CC_COND_BELOW:
        out->bound = rule->threshold;
        break;
    case CC_COND_SIGMAS_ABOVE:
    case CC_COND_SIGMAS_BELOW: {
        if (!out->has_baseline) {
            skip(out, "no baseline for a sigma condition ('concord baseline')");
            return 0;
        }
        if (out->baseline_days < CC_BASELINE_MIN_DAYS || !(out->sd > 0)) {
            skip(out, "baseline spread undefined (%lld days with a value, need %lld, and "
                      "sd > 0)", (long long)out->baseline_days, (long long)CC_BASELINE_MIN_DAYS);
            return 0;
        }
        double width = rule->threshold * out->sd;
        if (rule->min_shift > width)
            width = rule->min_shift;
        if (rule->min_relative_shift * fabs(out->mean) > width)
            width = rule->min_relative_shift * fabs(out->mean);
        out->bound = rule->cond == CC_COND_SIGMAS_ABOVE ? out->mean + width : out->mean - width;
        break;
    }
    }
    int above = rule->cond == CC_COND_ABOVE || rule->cond == CC_COND_SIGMAS_ABOVE;
    out->status = (above ? out->value > out->bound : out->value < out->bound) ? CC_EVAL_BREACH
                                                                              : CC_EVAL_CLEAR;
    return 0;
}
