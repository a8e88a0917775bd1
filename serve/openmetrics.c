/* openmetrics.c — writing the exposition. Families are written whole (every
 * sample of a family together, after its TYPE, HELP and UNIT lines), so the
 * per-model figures are gathered first. */
#include "openmetrics.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "figures.h"
#include "history.h"
#include "report.h"
#include "state.h"

/* One model's latest day. */
typedef struct model_row {
    char *name;
    int has_day;
    int64_t day;
    double fig[6];
} model_row;

/* The per-model gauges: the figure registry's path, and the family. */
static const struct {
    const char *path, *name, *unit, *help;
} gauges[] = {
    {"diversity.disagreement.mean", "concord_disagreement_ratio", "ratio",
     "Mean pairwise disagreement of the members on the model's latest day."},
    {"uncertainty.mutual_information", "concord_mutual_information_nats", "nats",
     "Mutual information between prediction and member (entropy of the averaged output "
     "minus the members' expected entropy) on the latest day."},
    {"drift.class_mix.p_value", "concord_class_mix_p_value", NULL,
     "Chi-square p-value of the latest day's predicted class mix against the baseline's "
     "(NaN without a baseline)."},
    {"accuracy.ensemble", "concord_ensemble_accuracy_ratio", "ratio",
     "Ensemble accuracy on the latest day's labelled events (NaN without labels)."},
    {"events", "concord_day_events", NULL, "Events stored for the model's latest day."},
    {"labeled", "concord_day_labeled_events", NULL,
     "Events with a label among the latest day's events."},
};
#define N_GAUGES ((int)(sizeof gauges / sizeof *gauges))

/* Label values: backslash, double quote and line feed escaped (OpenMetrics
 * 1.0, "ABNF": escaped-string). */
static void put_label(FILE *f, const char *s)
{
    for (; *s; s++) {
        if (*s == '\\')
            fputs("\\\\", f);
        else if (*s == '"')
            fputs("\\\"", f);
        else if (*s == '\n')
            fputs("\\n", f);
        else
            fputc(*s, f);
    }
}

static void put_number(FILE *f, double v)
{
    if (isnan(v))
        fputs("NaN", f);
    else if (isinf(v))
        fputs(v > 0 ? "+Inf" : "-Inf", f);
    else if (v == floor(v) && fabs(v) < 1e15)
        fprintf(f, "%.0f", v);
    else
        fprintf(f, "%.17g", v);
}

static void family(FILE *f, const char *name, const char *type, const char *unit,
                   const char *help)
{
    fprintf(f, "# TYPE %s %s\n", name, type);
    if (unit)
        fprintf(f, "# UNIT %s %s\n", name, unit);
    fprintf(f, "# HELP %s ", name);
    put_label(f, help);
    fputc('\n', f);
}

static int model_figures(cc_store *store, model_row *row, cc_error *err)
{
    cc_model *m = NULL;
    int rc = cc_store_model_get(store, row->name, &m, err);
    if (rc)
        return rc;
    int64_t *days = NULL;
    int n = 0;
    rc = cc_store_summary_days(store, m, INT64_MIN / 4, INT64_MAX / 4, &days, &n, err);
    if (!rc && n > 0) {
        row->has_day = 1;
        row->day = days[n - 1];
        cc_report_opts ro = {.model = row->name, .has_from = 1, .has_to = 1, .from = row->day,
                             .to = row->day, .by = CC_BY_DAY};
        cc_report *r = NULL;
        rc = cc_report_build(&r, store, &ro, err);
        if (!rc && r->n_windows > 0)
            for (int g = 0; g < N_GAUGES; g++) {
                const cc_figure *fig = cc_figures_find(gauges[g].path);
                row->fig[g] = fig ? cc_figures_value(fig, &r->windows[0].metrics,
                                                     &r->windows[0].cmp, 0)
                                  : NAN;
            }
        cc_report_free(r);
    }
    free(days);
    cc_model_free(m);
    return rc;
}

/* Hook for per-slice figures: once the store keeps summaries per slice
 * (segment), each model's latest-day gauges are repeated here for each of
 * its slices with a label slice="..." next to model="...". Until then a
 * model has no slices and nothing is written. */
static void slice_samples(FILE *f, cc_store *store, const model_row *row, int g)
{
    (void)f;
    (void)store;
    (void)row;
    (void)g;
}

typedef struct states_ctx {
    FILE *f;
} states_ctx;

static int put_state(void *ctx, const cc_state_row *r)
{
    states_ctx *c = ctx;
    for (int k = CC_STATE_QUIET; k <= CC_STATE_NOT_EVALUATED; k++) {
        const char *name = cc_state_name((cc_state_kind)k);
        fputs("concord_alert_state{model=\"", c->f);
        put_label(c->f, r->model);
        fputs("\",rule=\"", c->f);
        put_label(c->f, r->rule);
        fprintf(c->f, "\",concord_alert_state=\"%s\"} %d\n", name,
                strcmp(r->state, name) == 0);
    }
    return 0;
}

typedef struct totals_ctx {
    FILE *f;
    int which;
} totals_ctx;

static void put_total(void *ctx, const cc_writer_totals *t)
{
    totals_ctx *c = ctx;
    const int64_t v[] = {t->accepted, t->duplicates, t->rejected, t->labels_set, t->requests};
    static const char *const names[] = {"concord_accepted_events", "concord_duplicate_events",
                                        "concord_rejected_lines", "concord_applied_labels",
                                        "concord_ingest_requests"};
    fprintf(c->f, "%s_total{model=\"", names[c->which]);
    put_label(c->f, t->model);
    fprintf(c->f, "\"} %lld\n", (long long)v[c->which]);
}

char *cc_openmetrics_render(cc_store *store, cc_writer *w, cc_error *err)
{
    char **names = NULL;
    int n = 0;
    int rc = cc_store_model_list(store, &names, &n, err);
    if (rc)
        return NULL;
    model_row *rows = calloc((size_t)(n ? n : 1), sizeof *rows);
    if (!rows) {
        cc_error_set(err, CC_ENOMEM, "out of memory");
        goto fail;
    }
    for (int i = 0; i < n; i++) {
        rows[i].name = names[i];
        for (int g = 0; g < N_GAUGES; g++)
            rows[i].fig[g] = NAN;
        if ((rc = model_figures(store, &rows[i], err)))
            goto fail;
    }
    char *text = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&text, &len);
    if (!f) {
        cc_error_set(err, CC_ENOMEM, "out of memory");
        goto fail;
    }
    family(f, "concord_latest_day_seconds", "gauge", "seconds",
           "Start (00:00 UTC, Unix seconds) of the latest day with events of the model; the "
           "figures below are that day's.");
    for (int i = 0; i < n; i++)
        if (rows[i].has_day) {
            fputs("concord_latest_day_seconds{model=\"", f);
            put_label(f, rows[i].name);
            fprintf(f, "\"} %lld\n", (long long)rows[i].day * 86400);
        }
    for (int g = 0; g < N_GAUGES; g++) {
        family(f, gauges[g].name, "gauge", gauges[g].unit, gauges[g].help);
        for (int i = 0; i < n; i++) {
            if (!rows[i].has_day)
                continue;
            fprintf(f, "%s{model=\"", gauges[g].name);
            put_label(f, rows[i].name);
            fputs("\"} ", f);
            put_number(f, rows[i].fig[g]);
            fputc('\n', f);
            slice_samples(f, store, &rows[i], g);
        }
    }
    family(f, "concord_alert_state", "stateset", NULL,
           "State of each alert rule of each model at its last check.");
    for (int i = 0; i < n; i++)
        if (cc_history_evaluated(store, rows[i].name)) {
            states_ctx sc = {f};
            cc_error ignored = CC_ERROR_INIT;
            cc_history_states(store, rows[i].name, NULL, put_state, &sc, &ignored);
        }
    if (w) {
        static const char *const counters[][2] = {
            {"concord_accepted_events", "New events stored from requests since the server "
                                        "started."},
            {"concord_duplicate_events", "Events of requests whose id was already stored."},
            {"concord_rejected_lines", "Lines of requests refused (see each answer's "
                                       "rejects, and the rejects table)."},
            {"concord_applied_labels", "Delayed labels of requests applied to stored events."},
            {"concord_ingest_requests", "Ingest requests answered with 200."},
        };
        for (int c = 0; c < 5; c++) {
            family(f, counters[c][0], "counter", NULL, counters[c][1]);
            totals_ctx tc = {f, c};
            cc_writer_totals_each(w, put_total, &tc);
        }
        family(f, "concord_queued_requests", "gauge", NULL,
               "Ingest requests waiting for the writer.");
        fprintf(f, "concord_queued_requests %d\n", cc_writer_queued(w));
        family(f, "concord_commits", "counter", NULL,
               "Transactions the writer committed since the server started.");
        fprintf(f, "concord_commits_total %lld\n", (long long)cc_writer_commits(w));
    }
    fputs("# EOF\n", f);
    if (fclose(f) != 0) {
        free(text);
        cc_error_set(err, CC_ENOMEM, "out of memory");
        goto fail;
    }
    for (int i = 0; i < n; i++)
        free(names[i]);
    free(names);
    free(rows);
    return text;
fail:
    for (int i = 0; i < n; i++)
        free(names[i]);
    free(names);
    free(rows);
    return NULL;
}
