/* report_json.c — the JSON report contract (README, "JSON report"). Fields
 * are only ever added, never renamed. Undefined values are null, never NaN. */
#include <cjson/cJSON.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"
#include "report.h"
#include "review_render.h"
#include "figures.h"
#include "json_print.h"
#include "tracked.h"

static cJSON *num(double x) { return isfinite(x) ? cJSON_CreateNumber(x) : cJSON_CreateNull(); }

static cJSON *date(int64_t day)
{
    char s[11];
    cc_format_date(day, s);
    return cJSON_CreateString(s);
}

static cJSON *names(char *const *v, int n)
{
    cJSON *a = cJSON_CreateArray();
    for (int i = 0; i < n; i++)
        cJSON_AddItemToArray(a, cJSON_CreateString(v[i]));
    return a;
}

static cJSON *counts(const int64_t *v, int n)
{
    cJSON *a = cJSON_CreateArray();
    for (int i = 0; i < n; i++)
        cJSON_AddItemToArray(a, cJSON_CreateNumber((double)v[i]));
    return a;
}

/* A rows x cols matrix of numbers as one raw cJSON item holding the text
 * cJSON_Print gives an array of arrays of numbers ("[[a, b], [c, d]]", each
 * number as cc_json_number writes it): the report's large matrices (k x k
 * confusion counts, m x m pair figures) then cost one item, not one per
 * number. at(ctx, i, j) gives entry (i, j); NAN prints as null. */
static cJSON *raw_matrix(int rows, int cols, double (*at)(const void *, int, int),
                         const void *ctx)
{
    const size_t cap = (size_t)rows * ((size_t)cols * (CC_JSON_NUMBER_MAX + 2) + 4) + 3;
    char *text = malloc(cap), *p = text;
    if (!text)
        return NULL;
    *p++ = '[';
    for (int i = 0; i < rows; i++) {
        if (i) {
            *p++ = ',';
            *p++ = ' ';
        }
        *p++ = '[';
        for (int j = 0; j < cols; j++) {
            if (j) {
                *p++ = ',';
                *p++ = ' ';
            }
            p += cc_json_number(p, at(ctx, i, j));
        }
        *p++ = ']';
    }
    *p++ = ']';
    *p = '\0';
    cJSON *raw = cJSON_CreateRaw(text);
    free(text);
    return raw;
}

typedef struct pairs_ctx {
    const double *pairs;
    int m;
} pairs_ctx;

static double pair_at(const void *ctx, int i, int j)
{
    const pairs_ctx *c = ctx;
    return c->pairs && i != j ? c->pairs[i * c->m + j] : NAN;
}

/* {"mean": x, "pairs": m x m with null diagonal} */
static cJSON *pair_matrix(const cc_pair_matrix *pm, int m)
{
    cJSON *o = cJSON_CreateObject();
    const pairs_ctx ctx = {pm->pairs, m};
    cJSON_AddItemToObject(o, "mean", num(pm->mean));
    cJSON_AddItemToObject(o, "pairs", raw_matrix(m, m, pair_at, &ctx));
    return o;
}

typedef struct confusion_ctx {
    const int64_t *confusion;
    int k;
} confusion_ctx;

/* rows: true class, columns: predicted class (the summary keeps predicted-major) */
static double confusion_at(const void *ctx, int t, int p)
{
    const confusion_ctx *c = ctx;
    return (double)c->confusion[p * c->k + t];
}

static cJSON *nums(const double *x, int n)
{
    cJSON *a = cJSON_CreateArray();
    for (int i = 0; i < n; i++)
        cJSON_AddItemToArray(a, num(x[i]));
    return a;
}

static cJSON *ks_json(cc_ks ks)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "ks", num(ks.d));
    cJSON_AddItemToObject(o, "p_value", num(ks.p_value));
    return o;
}

static cJSON *drift_json(const cc_comparison *c)
{
    if (!c->has_baseline)
        return cJSON_CreateNull();
    cJSON *o = cJSON_CreateObject();
    cJSON_AddBoolToObject(o, "too_few_events", !c->enough);
    cJSON *mix = cJSON_AddObjectToObject(o, "class_mix");
    cJSON_AddItemToObject(mix, "chi2", num(c->class_mix.stat));
    if (c->class_mix.dof > 0)
        cJSON_AddNumberToObject(mix, "dof", c->class_mix.dof);
    else
        cJSON_AddNullToObject(mix, "dof");
    cJSON_AddItemToObject(mix, "p_value", num(c->class_mix.p_value));
    cJSON_AddItemToObject(mix, "g2", num(c->class_mix.g_stat));
    cJSON_AddItemToObject(mix, "psi", num(c->class_mix_psi));
    cJSON_AddItemToObject(mix, "js", num(c->class_mix_js_bits));
    cJSON_AddItemToObject(o, "max_prob", ks_json(c->max_prob));
    cJSON_AddItemToObject(o, "entropy", ks_json(c->entropy));
    cJSON_AddItemToObject(o, "mutual_information", ks_json(c->mutual_information));
    cJSON *pc = cJSON_AddObjectToObject(o, "per_class");
    cJSON *ks = cJSON_AddArrayToObject(pc, "ks"), *ps = cJSON_AddArrayToObject(pc, "p_values");
    for (int i = 0; i < c->k; i++) {
        cJSON_AddItemToArray(ks, num(c->per_class[i].d));
        cJSON_AddItemToArray(ps, num(c->per_class[i].p_value));
    }
    cJSON_AddItemToObject(pc, "min_p_bonferroni", num(c->per_class_min_p_bonferroni));
    cJSON_AddItemToObject(o, "members_psi", nums(c->members_psi, c->m));
    return o;
}

static cJSON *label_shift_json(const cc_comparison *c)
{
    if (!c->has_baseline)
        return cJSON_CreateNull();
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "baseline_priors", nums(c->baseline_priors, c->k));
    cJSON_AddItemToObject(o, "bbse", c->bbse_ok ? nums(c->bbse, c->k) : cJSON_CreateNull());
    cJSON_AddItemToObject(o, "em", c->em_ok ? nums(c->em, c->k) : cJSON_CreateNull());
    cJSON_AddItemToObject(o, "condition_number", num(c->bbse_condition_number));
    cJSON_AddNumberToObject(o, "em_iterations", c->em_iterations);
    cJSON_AddBoolToObject(o, "em_converged", c->em_converged);
    cJSON_AddBoolToObject(o, "bbse_regularized", c->bbse_regularized);
    cJSON_AddBoolToObject(o, "bbse_clipped", c->bbse_clipped);
    cJSON_AddItemToObject(o, "bbse_l1", num(c->bbse_l1));
    cJSON_AddItemToObject(o, "em_l1", num(c->em_l1));
    cJSON_AddItemToObject(o, "label_mix", c->has_labels ? nums(c->label_mix, c->k)
                                                        : cJSON_CreateNull());
    return o;
}

static cJSON *calibration_one(const cc_calibration *cal)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "ece", num(cal->ece));
    cJSON_AddItemToObject(o, "mce", num(cal->mce));
    cJSON_AddItemToObject(o, "brier", num(cal->brier));
    cJSON_AddItemToObject(o, "nll", num(cal->nll));
    return o;
}

static cJSON *calibration_json(const cc_comparison *c)
{
    if (!c->has_labels)
        return cJSON_CreateNull();
    cJSON *o = calibration_one(&c->calibration);
    cJSON *bins = cJSON_AddArrayToObject(o, "bins");
    for (int b = 0; b < CC_CALIB_BINS; b++) {
        cJSON *e = cJSON_CreateObject();
        cJSON_AddNumberToObject(e, "count", (double)c->calibration.bins[b].count);
        cJSON_AddItemToObject(e, "confidence", num(c->calibration.bins[b].confidence));
        cJSON_AddItemToObject(e, "accuracy", num(c->calibration.bins[b].accuracy));
        cJSON_AddItemToArray(bins, e);
    }
    cJSON *mem = cJSON_AddArrayToObject(o, "members");
    for (int i = 0; i < c->m; i++)
        cJSON_AddItemToArray(mem, calibration_one(&c->member_calibration[i]));
    return o;
}

/* One entry per tracked figure: a number, or an array for member and class
 * figures. make(t) gives slot t's value. */
static cJSON *tracked_json(int m, int k, cJSON *(*make)(const void *ctx, int t), const void *ctx)
{
    cJSON *o = cJSON_CreateObject();
    int t = 0;
    for (int i = 0; i < cc_figures_count(); i++) {
        const cc_figure *f = cc_figures_get(i);
        if (!f->tracked)
            continue;
        if (f->scope == CC_SCOPE_WINDOW) {
            cJSON_AddItemToObject(o, f->path, make(ctx, t++));
            continue;
        }
        cJSON *a = cJSON_AddArrayToObject(o, f->path);
        for (int j = 0; j < cc_figures_width(f, m, k); j++)
            cJSON_AddItemToArray(a, make(ctx, t++));
    }
    return o;
}

static cJSON *slot_num(const void *ctx, int t) { return num(((const double *)ctx)[t]); }

static cJSON *slot_stat(const void *ctx, int t)
{
    const cc_baseline_stat *s = (const cc_baseline_stat *)ctx + t;
    cJSON *e = cJSON_CreateObject();
    cJSON_AddItemToObject(e, "mean", num(s->mean));
    cJSON_AddItemToObject(e, "sd", num(s->sd));
    cJSON_AddNumberToObject(e, "days", s->n);
    return e;
}

static double fig(const char *path, const cc_report_window *w, int index)
{
    return cc_figures_value(cc_figures_find(path), &w->metrics, &w->cmp, index);
}

/* An array of a member- or class-scoped figure. */
static cJSON *fig_array(const char *path, const cc_report_window *w, int n)
{
    cJSON *a = cJSON_CreateArray();
    for (int i = 0; i < n; i++)
        cJSON_AddItemToArray(a, num(fig(path, w, i)));
    return a;
}

static cJSON *window_json(const cc_report *r, const cc_report_window *w);

cJSON *cc_report_window_json(const cc_report *r, int i)
{
    return window_json(r, &r->windows[i]);
}

static const char *const slice_kinds[] = {"segment", "none", "overflow", "pruned"};

static cJSON *window_json(const cc_report *r, const cc_report_window *w)
{
    const cc_window_metrics *x = &w->metrics;
    const int m = r->model->m, k = r->model->k;
    const int is_segment = w->slice >= 0 && w->slice < r->n_slices && r->by_segment &&
                           w->z == NULL;
    cJSON *o = cJSON_CreateObject();
    if (is_segment) {
        const cc_slice *sl = &r->slices[w->slice];
        cJSON_AddStringToObject(o, "segment", cc_slice_name(sl));
        cJSON_AddStringToObject(o, "kind", slice_kinds[sl->kind >= 0 && sl->kind <= 3 ? sl->kind
                                                                                      : 0]);
    }
    cJSON_AddItemToObject(o, "from", date(w->from));
    cJSON_AddItemToObject(o, "to", date(w->to));
    if (w->ts_to > w->ts_from) {
        /* an hour window (report --by hour): its UTC hour, end excluded */
        char t[21];
        cc_review_format_time(w->ts_from, t);
        cJSON_AddStringToObject(o, "start", t);
        cc_review_format_time(w->ts_to, t);
        cJSON_AddStringToObject(o, "end", t);
    }
    cJSON_AddNumberToObject(o, "events", (double)x->events);
    cJSON_AddNumberToObject(o, "labeled", (double)x->labeled);
    cJSON_AddItemToObject(o, "class_counts", counts(x->class_counts, k));

    cJSON *d = cJSON_AddObjectToObject(o, "diversity");
    cJSON_AddItemToObject(d, "disagreement", pair_matrix(&x->disagreement, m));
    cJSON_AddItemToObject(d, "kappa", pair_matrix(&x->kappa, m));
    cJSON_AddItemToObject(d, "fleiss_kappa", num(x->fleiss_kappa));
    if (x->has_labels) {
        cJSON_AddItemToObject(d, "q", pair_matrix(&x->q, m));
        cJSON_AddItemToObject(d, "rho", pair_matrix(&x->rho, m));
        cJSON_AddItemToObject(d, "double_fault", pair_matrix(&x->double_fault, m));
        cJSON_AddItemToObject(d, "oracle_disagreement", pair_matrix(&x->oracle_disagreement, m));
        cJSON_AddItemToObject(d, "kw_variance", num(x->nonpairwise.kw_variance));
        cJSON_AddItemToObject(d, "entropy_e", num(x->nonpairwise.entropy_e));
        cJSON_AddItemToObject(d, "interrater_kappa", num(x->nonpairwise.interrater_kappa));
        cJSON_AddItemToObject(d, "difficulty", num(x->nonpairwise.difficulty));
        cJSON_AddItemToObject(d, "generalized_diversity",
                              num(x->nonpairwise.generalized_diversity));
        cJSON_AddItemToObject(d, "coincident_failure_diversity",
                              num(x->nonpairwise.coincident_failure));
    } else {
        const char *keys[] = {"q", "rho", "double_fault", "oracle_disagreement", "kw_variance",
                              "entropy_e", "interrater_kappa", "difficulty",
                              "generalized_diversity", "coincident_failure_diversity"};
        for (size_t i = 0; i < sizeof keys / sizeof *keys; i++)
            cJSON_AddNullToObject(d, keys[i]);
    }

    cJSON *u = cJSON_AddObjectToObject(o, "uncertainty");
    cJSON_AddItemToObject(u, "entropy", num(x->entropy));
    cJSON_AddItemToObject(u, "expected_entropy", num(x->expected_entropy));
    cJSON_AddItemToObject(u, "mutual_information", num(x->mutual_information));

    if (x->has_labels) {
        cJSON *a = cJSON_AddObjectToObject(o, "accuracy");
        cJSON_AddItemToObject(a, "members", fig_array("accuracy.members", w, m));
        cJSON_AddItemToObject(a, "ensemble", num(x->ensemble_accuracy));
        cJSON_AddItemToObject(a, "vote", num(x->vote_accuracy));
        cJSON_AddNumberToObject(a, "vote_ties", (double)x->vote_ties_labeled);
        cJSON_AddItemToObject(a, "oracle", num(x->oracle_accuracy));
        cJSON_AddNumberToObject(a, "best_member", x->best_member);
        cJSON_AddItemToObject(a, "best_member_accuracy",
                              num(x->member_accuracy[x->best_member]));
        cJSON_AddItemToObject(a, "ensemble_gain", num(fig("accuracy.ensemble_gain", w, 0)));
        const confusion_ctx cc = {x->confusion, k};
        cJSON_AddItemToObject(a, "confusion", raw_matrix(k, k, confusion_at, &cc));
        cJSON *mc = cJSON_AddObjectToObject(a, "mcnemar");
        cJSON_AddNumberToObject(mc, "ensemble_only", (double)x->mcnemar_ensemble_only);
        cJSON_AddNumberToObject(mc, "best_only", (double)x->mcnemar_best_only);
        cJSON_AddItemToObject(mc, "p_value", num(x->mcnemar_p));
    } else {
        cJSON_AddNullToObject(o, "accuracy");
    }

    cJSON *bm = cJSON_AddObjectToObject(o, "by_member");
    cJSON_AddItemToObject(bm, "disagreement", fig_array("by_member.disagreement", w, m));
    cJSON_AddItemToObject(bm, "departure", fig_array("by_member.departure", w, m));
    cJSON *bc = cJSON_AddObjectToObject(o, "by_class");
    cJSON_AddItemToObject(bc, "predicted_share", fig_array("by_class.predicted_share", w, k));
    cJSON_AddItemToObject(bc, "precision", fig_array("by_class.precision", w, k));
    cJSON_AddItemToObject(bc, "recall", fig_array("by_class.recall", w, k));

    cJSON *cp = cJSON_AddArrayToObject(o, "contested_pairs");
    for (int i = 0; i < x->n_contested; i++) {
        cJSON *e = cJSON_CreateObject();
        cJSON_AddNumberToObject(e, "a", x->contested[i].a);
        cJSON_AddNumberToObject(e, "b", x->contested[i].b);
        cJSON_AddNumberToObject(e, "count", (double)x->contested[i].count);
        cJSON_AddItemToArray(cp, e);
    }
    cJSON_AddNumberToObject(o, "vote_ties_all", (double)x->vote_ties);

    const cc_comparison *c = &w->cmp;
    cJSON_AddItemToObject(o, "drift", drift_json(c));
    cJSON_AddItemToObject(o, "label_shift", label_shift_json(c));
    cJSON_AddItemToObject(o, "calibration", calibration_json(c));
    cJSON *lab = cJSON_AddObjectToObject(o, "labels");
    cJSON_AddItemToObject(lab, "coverage", num(c->label_coverage));
    cJSON_AddNumberToObject(lab, "delayed", (double)c->delayed_labels);
    cJSON_AddItemToObject(lab, "mean_delay_hours", num(c->mean_label_delay_hours));
    if (w->z)
        cJSON_AddItemToObject(o, "zscores", tracked_json(m, k, slot_num, w->z));
    else
        cJSON_AddNullToObject(o, "zscores");
    if (w->ewma)
        cJSON_AddItemToObject(o, "ewma", tracked_json(m, k, slot_num, w->ewma));
    if (is_segment) {
        /* the slice against the whole model in the same window */
        cJSON_AddItemToObject(o, "against_model", drift_json(&w->vs_model));
    } else if (r->by_segment) {
        cJSON *sa = cJSON_AddArrayToObject(o, "segments");
        for (int i = 0; i < w->n_segments; i++)
            cJSON_AddItemToArray(sa, window_json(r, &w->segments[i]));
    }
    return o;
}

static cJSON *alert_json(const cc_report_alert *a)
{
    cJSON *e = cJSON_CreateObject();
    cJSON_AddItemToObject(e, "day", date(a->day));
    cJSON_AddStringToObject(e, "rule", a->rule_name ? a->rule_name : a->rule);
    if (a->slice)
        cJSON_AddStringToObject(e, "slice", a->slice);
    cJSON_AddStringToObject(e, "kind", a->kind);
    cJSON_AddStringToObject(e, "urgency", a->urgency);
    if (a->subject && a->subject[0])
        cJSON_AddStringToObject(e, "subject", a->subject);
    cJSON_AddItemToObject(e, "value", num(a->value));
    cJSON_AddItemToObject(e, "bound", num(a->bound));
    if (a->sentence)
        cJSON_AddStringToObject(e, "sentence", a->sentence);
    return e;
}

static cJSON *timeline_json(const cc_report_timeline *t)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "rules", t->rules);
    cJSON *a = cJSON_AddArrayToObject(o, "transitions");
    for (int i = 0; i < t->n; i++)
        cJSON_AddItemToArray(a, alert_json(&t->items[i]));
    cJSON *raised = cJSON_AddArrayToObject(o, "raised_at_end");
    for (int i = 0; i < t->n_raised; i++)
        cJSON_AddItemToArray(raised, alert_json(&t->raised[i]));
    cJSON_AddNumberToObject(o, "not_evaluated_at_end", t->not_evaluated);
    return o;
}

/* The report's object with an empty "windows" array (the last key). */
static cJSON *report_root(const cc_report *r)
{
    const cc_model *m = r->model;
    cJSON *root = cJSON_CreateObject();
    cJSON_AddStringToObject(root, "model", m->name);
    if (r->slice >= 0)
        cJSON_AddStringToObject(root, "segment", cc_slice_name(&r->slices[r->slice]));
    else
        cJSON_AddNullToObject(root, "segment");
    cJSON_AddItemToObject(root, "members", names(m->members, m->m));
    cJSON_AddItemToObject(root, "classes", names(m->classes, m->k));
    if (r->has_baseline) {
        cJSON *b = cJSON_AddObjectToObject(root, "baseline");
        cJSON_AddItemToObject(b, "from", date(r->baseline_from));
        cJSON_AddItemToObject(b, "to", date(r->baseline_to));
        cJSON_AddNumberToObject(b, "events", (double)r->baseline_events);
        cJSON_AddNumberToObject(b, "labeled", (double)r->baseline_labeled);
        cJSON_AddNumberToObject(b, "days", r->baseline_days);
        cJSON_AddItemToObject(b, "daily", tracked_json(m->m, m->k, slot_stat, r->stats));
        char found[4][320];
        int nf = cc_report_findings(r, found, 4);
        cJSON *fa = cJSON_AddArrayToObject(b, "findings");
        for (int i = 0; i < nf; i++)
            cJSON_AddItemToArray(fa, cJSON_CreateString(found[i]));
    } else {
        cJSON_AddNullToObject(root, "baseline");
    }
    if (r->slice_limit > 0) {
        cJSON *sl = cJSON_AddObjectToObject(root, "slices");
        cJSON_AddNumberToObject(sl, "count", r->slice_count);
        cJSON_AddNumberToObject(sl, "limit", r->slice_limit);
        cJSON_AddNumberToObject(sl, "overflow_events", (double)cc_report_overflow_events(r));
    } else {
        cJSON_AddNullToObject(root, "slices");
    }
    cJSON *set = cJSON_AddObjectToObject(root, "settings");
    cJSON_AddNumberToObject(set, "psi_epsilon", CC_PSI_EPSILON);
    cJSON_AddNumberToObject(set, "ewma_lambda", CC_EWMA_LAMBDA);
    cJSON_AddNumberToObject(set, "min_events_for_tests", CC_DRIFT_MIN_EVENTS);
    cJSON_AddNumberToObject(set, "min_baseline_days_for_z", CC_BASELINE_MIN_DAYS);
    cJSON_AddNumberToObject(set, "calibration_bins", CC_CALIB_BINS);
    cJSON_AddNumberToObject(set, "nll_epsilon", CC_NLL_EPS);
    cJSON_AddNumberToObject(set, "histogram_bins", CC_HIST_BINS);
    cJSON_AddStringToObject(set, "ks_p_value", "Kolmogorov limit, sqrt(nm/(n+m)) D");
    cJSON_AddArrayToObject(root, "windows");
    return root;
}

char *cc_report_json(const cc_report *r) { return cc_report_json_with(r, NULL); }

char *cc_report_json_with(const cc_report *r, const cc_report_timeline *tl)
{
    cJSON *root = report_root(r);
    cJSON *ws = cJSON_GetObjectItemCaseSensitive(root, "windows");
    for (int i = 0; i < r->n_windows; i++)
        cJSON_AddItemToArray(ws, window_json(r, &r->windows[i]));
    if (tl)
        cJSON_AddItemToObject(root, "alerts", timeline_json(tl));
    char *text = cc_json_print(root, 0);
    cJSON_Delete(root);
    return text;
}

/* Streaming: the root is printed with its empty windows array left open,
 * then each window as cJSON_Print would lay it out inside that array (at
 * depth 2: two more tabs after every line break), then the closing brackets. */
typedef struct json_stream {
    FILE *out;
    int n_windows;
} json_stream;

static int json_window(void *payload, const cc_report *r, cc_report_window *w)
{
    json_stream *js = payload;
    cJSON *tree = w ? window_json(r, w) : report_root(r);
    char *text = tree ? cc_json_print(tree, w ? 2 : 0) : NULL;
    cJSON_Delete(tree);
    if (!text)
        return 1;
    size_t len = strlen(text);
    if (!w) {
        /* the printed root ends with "[]\n}": keep up to the '[' */
        if (len < 4 || strcmp(text + len - 4, "[]\n}") != 0) {
            free(text);
            return 1;
        }
        fwrite(text, 1, len - 3, js->out);
    } else {
        if (js->n_windows++)
            fputs(", ", js->out);
        fwrite(text, 1, len, js->out);
    }
    free(text);
    return 0;
}

int cc_report_write_json(FILE *out, cc_store *store, const cc_report_opts *opts, cc_error *err)
{
    json_stream js = {out, 0};
    cc_report *r = NULL;
    int rc = cc_report_stream(&r, store, opts, json_window, &js, err);
    if (!rc)
        fputs("]\n}", out);
    cc_report_free(r);
    return rc;
}
