/* report_json.c — the JSON report contract (README, "JSON report"). Fields
 * are only ever added, never renamed. Undefined values are null, never NaN. */
#include <cjson/cJSON.h>
#include <math.h>
#include <stdlib.h>

#include "date.h"
#include "report.h"

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

/* {"mean": x, "pairs": m x m with null diagonal} */
static cJSON *pair_matrix(const cc_pair_matrix *pm, int m)
{
    cJSON *o = cJSON_CreateObject(), *rows = cJSON_CreateArray();
    cJSON_AddItemToObject(o, "mean", num(pm->mean));
    for (int i = 0; i < m; i++) {
        cJSON *row = cJSON_CreateArray();
        for (int j = 0; j < m; j++)
            cJSON_AddItemToArray(row, pm->pairs && i != j ? num(pm->pairs[i * m + j])
                                                          : cJSON_CreateNull());
        cJSON_AddItemToArray(rows, row);
    }
    cJSON_AddItemToObject(o, "pairs", rows);
    return o;
}

static cJSON *window_json(const cc_report_window *w, int m, int k)
{
    const cc_window_metrics *x = &w->metrics;
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "from", date(w->from));
    cJSON_AddItemToObject(o, "to", date(w->to));
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
        cJSON *mem = cJSON_AddArrayToObject(a, "members");
        for (int i = 0; i < m; i++)
            cJSON_AddItemToArray(mem, num(x->member_accuracy[i]));
        cJSON_AddItemToObject(a, "ensemble", num(x->ensemble_accuracy));
        cJSON_AddItemToObject(a, "vote", num(x->vote_accuracy));
        cJSON_AddNumberToObject(a, "vote_ties", (double)x->vote_ties_labeled);
        cJSON_AddItemToObject(a, "oracle", num(x->oracle_accuracy));
        cJSON_AddNumberToObject(a, "best_member", x->best_member);
        cJSON *mc = cJSON_AddObjectToObject(a, "mcnemar");
        cJSON_AddNumberToObject(mc, "ensemble_only", (double)x->mcnemar_ensemble_only);
        cJSON_AddNumberToObject(mc, "best_only", (double)x->mcnemar_best_only);
        cJSON_AddItemToObject(mc, "p_value", num(x->mcnemar_p));
    } else {
        cJSON_AddNullToObject(o, "accuracy");
    }

    cJSON *cp = cJSON_AddArrayToObject(o, "contested_pairs");
    for (int i = 0; i < x->n_contested; i++) {
        cJSON *e = cJSON_CreateObject();
        cJSON_AddNumberToObject(e, "a", x->contested[i].a);
        cJSON_AddNumberToObject(e, "b", x->contested[i].b);
        cJSON_AddNumberToObject(e, "count", (double)x->contested[i].count);
        cJSON_AddItemToArray(cp, e);
    }
    cJSON_AddNumberToObject(o, "vote_ties_all", (double)x->vote_ties);
    return o;
}

char *cc_report_json(const cc_report *r)
{
    const cc_model *m = r->model;
    cJSON *root = cJSON_CreateObject();
    cJSON_AddStringToObject(root, "model", m->name);
    cJSON_AddItemToObject(root, "members", names(m->members, m->m));
    cJSON_AddItemToObject(root, "classes", names(m->classes, m->k));
    if (r->has_baseline) {
        cJSON *b = cJSON_AddObjectToObject(root, "baseline");
        cJSON_AddItemToObject(b, "from", date(r->baseline_from));
        cJSON_AddItemToObject(b, "to", date(r->baseline_to));
        cJSON_AddNumberToObject(b, "events", (double)r->baseline_events);
    } else {
        cJSON_AddNullToObject(root, "baseline");
    }
    cJSON *ws = cJSON_AddArrayToObject(root, "windows");
    for (int i = 0; i < r->n_windows; i++)
        cJSON_AddItemToArray(ws, window_json(&r->windows[i], m->m, m->k));
    char *text = cJSON_Print(root);
    cJSON_Delete(root);
    return text;
}
