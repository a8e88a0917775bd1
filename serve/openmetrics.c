/* openmetrics.c — writing the exposition. Families are written whole (every
 * sample of a family together, after its TYPE, HELP and UNIT lines), so the
 * per-model and per-slice figures are gathered first. */
#include "openmetrics.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "figures.h"
#include "history.h"
#include "report.h"
#include "state.h"
#include "store_slices.h"

#define N_FIGS 6

/* One slice's figures on its model's latest day. */
typedef struct slice_row {
    char *name;
    double fig[N_FIGS];
} slice_row;

/* One model's latest day, and its slices with events on that day. */
typedef struct model_row {
    char *name;
    int has_day;
    int64_t day;
    double fig[N_FIGS];
    slice_row *slices;
    int n_slices;
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
_Static_assert(N_GAUGES == N_FIGS, "one figure slot per gauge");

/* Label values: backslash, double quote and line feed escaped (OpenMetrics
 * 1.0, "ABNF": escaped-string). */
static void put_label_n(FILE *f, const char *s, size_t n)
{
    for (const char *end = s + n; s < end; s++) {
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

static void put_label(FILE *f, const char *s)
{
    put_label_n(f, s, strlen(s));
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

/* The gauges' figures of one report window (the model's, or a slice's). */
static void window_gauges(const cc_report_window *w, double *fig)
{
    for (int g = 0; g < N_GAUGES; g++) {
        const cc_figure *f = cc_figures_find(gauges[g].path);
        fig[g] = f ? cc_figures_value(f, &w->metrics, &w->cmp, 0) : NAN;
    }
}

/* The slices' rows of the latest day's window: the report's per-slice rows
 * (--by-segment), each the window `report --segment S` gives for that day
 * (the slice's summary against the slice's own baseline days). Only slices
 * with events that day have a row, so there are at most the model's slices
 * (its slice limit, 64 by default, plus the unnamed ones). */
static int slice_figures(const cc_report *r, const cc_report_window *w, model_row *row,
                         cc_error *err)
{
    if (w->n_segments == 0)
        return 0;
    row->slices = calloc((size_t)w->n_segments, sizeof *row->slices);
    if (!row->slices)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    for (int i = 0; i < w->n_segments; i++) {
        const cc_report_window *sw = &w->segments[i];
        slice_row *sr = &row->slices[row->n_slices];
        if (!(sr->name = strdup(cc_slice_name(&r->slices[sw->slice]))))
            return cc_error_set(err, CC_ENOMEM, "out of memory");
        row->n_slices++;
        window_gauges(sw, sr->fig);
    }
    return 0;
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
        /* one report gives the model's window and its slices' rows (a file
         * without slice tables, read as it is, has none) */
        cc_report_opts ro = {.model = row->name, .has_from = 1, .has_to = 1, .from = row->day,
                             .to = row->day, .by = CC_BY_DAY,
                             .by_segment = cc_store_slices_kept(store)};
        cc_report *r = NULL;
        rc = cc_report_build(&r, store, &ro, err);
        if (!rc && r->n_windows > 0) {
            window_gauges(&r->windows[0], row->fig);
            rc = slice_figures(r, &r->windows[0], row, err);
        }
        cc_report_free(r);
    }
    free(days);
    cc_model_free(m);
    return rc;
}

static void model_row_free(model_row *row)
{
    for (int i = 0; i < row->n_slices; i++)
        free(row->slices[i].name);
    free(row->slices);
}

/* Gauge g of each slice of the model, with a slice label beside the model
 * label (the model's own sample has no slice label). */
static void slice_samples(FILE *f, const model_row *row, int g)
{
    for (int i = 0; i < row->n_slices; i++) {
        fprintf(f, "%s{model=\"", gauges[g].name);
        put_label(f, row->name);
        fputs("\",slice=\"", f);
        put_label(f, row->slices[i].name);
        fputs("\"} ", f);
        put_number(f, row->slices[i].fig[g]);
        fputc('\n', f);
    }
}

typedef struct states_ctx {
    FILE *f;
} states_ctx;

/* A label value written from the state key's slice part: %2F and %25 (how
 * alerts/check.c keeps '/' and '%' out of the key) read back as '/' and '%'. */
static void put_key_slice(FILE *f, const char *s)
{
    for (; *s; s++) {
        if (s[0] == '%' && s[1] == '2' && (s[2] == 'F' || s[2] == '5')) {
            fputc(s[2] == 'F' ? '/' : '%', f);
            s += 2;
        } else {
            put_label_n(f, s, 1);
        }
    }
}

static int put_state(void *ctx, const cc_state_row *r)
{
    states_ctx *c = ctx;
    /* an each-slice rule's copy has the key "<rule>@<slice>" (rule names
     * have no '@'): the rule and slice labels */
    const char *at = strchr(r->rule, '@');
    const size_t rule_len = at ? (size_t)(at - r->rule) : strlen(r->rule);
    for (int k = CC_STATE_QUIET; k <= CC_STATE_NOT_EVALUATED; k++) {
        const char *name = cc_state_name((cc_state_kind)k);
        fputs("concord_alert_state{model=\"", c->f);
        put_label(c->f, r->model);
        fputs("\",rule=\"", c->f);
        put_label_n(c->f, r->rule, rule_len);
        if (at) {
            fputs("\",slice=\"", c->f);
            put_key_slice(c->f, at + 1);
        }
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
            slice_samples(f, &rows[i], g);
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
    for (int i = 0; i < n; i++) {
        model_row_free(&rows[i]);
        free(names[i]);
    }
    free(names);
    free(rows);
    return text;
fail:
    for (int i = 0; i < n; i++) {
        if (rows)
            model_row_free(&rows[i]);
        free(names[i]);
    }
    free(names);
    free(rows);
    return NULL;
}
