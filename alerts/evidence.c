/* evidence.c — picking the few figures that explain an alert, from the
 * window's metrics and the baseline summary (it ranks and words figures;
 * computing them is metrics/window.c's and report/figures.c's job). */
#include "evidence.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "figures.h"

#define TOP 3

static cJSON *item(cJSON *arr, const char *kind)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "kind", kind);
    cJSON_AddItemToArray(arr, o);
    return o;
}

static void add_num(cJSON *o, const char *key, double x)
{
    cJSON_AddItemToObject(o, key, isfinite(x) ? cJSON_CreateNumber(x) : cJSON_CreateNull());
}

static void contested(cJSON *arr, const cc_report *r, const cc_report_window *w)
{
    for (int i = 0; i < w->metrics.n_contested && i < TOP; i++) {
        const struct cc_contested *c = &w->metrics.contested[i];
        cJSON *o = item(arr, "contested_pair");
        char text[256];
        double share = w->metrics.events ? (double)c->count / (double)w->metrics.events : NAN;
        cJSON_AddStringToObject(o, "a", r->model->classes[c->a]);
        cJSON_AddStringToObject(o, "b", r->model->classes[c->b]);
        cJSON_AddNumberToObject(o, "count", (double)c->count);
        add_num(o, "share", share);
        snprintf(text, sizeof text, "members split between %s and %s on %lld events (%.1f %%)",
                 r->model->classes[c->a], r->model->classes[c->b], (long long)c->count,
                 100 * share);
        cJSON_AddStringToObject(o, "text", text);
    }
}

static void members_diversity(cJSON *arr, const cc_report *r, const cc_report_window *w,
                              const cc_window_metrics *base)
{
    const int m = r->model->m;
    if (m < 2 || !w->metrics.disagreement.pairs)
        return;
    const double *bp = base ? base->disagreement.pairs : NULL;
    const double *wp = w->metrics.disagreement.pairs;
    int bi = -1, bj = -1;
    double best_key = 0;
    for (int i = 0; i < m; i++)
        for (int j = i + 1; j < m; j++) {
            double d = wp[i * m + j], d0 = bp ? bp[i * m + j] : NAN;
            /* the pair that moved most from the baseline; without one, the closest pair */
            double key = bp ? fabs(d - d0) : -d;
            if (isfinite(key) && (bi < 0 || key > best_key)) {
                bi = i;
                bj = j;
                best_key = key;
            }
        }
    char text[256];
    if (bi >= 0) {
        double d = wp[bi * m + bj], d0 = bp ? bp[bi * m + bj] : NAN;
        cJSON *o = item(arr, "member_pair");
        cJSON_AddStringToObject(o, "a", r->model->members[bi]);
        cJSON_AddStringToObject(o, "b", r->model->members[bj]);
        add_num(o, "disagreement", d);
        add_num(o, "baseline_disagreement", d0);
        snprintf(text, sizeof text, "%s and %s disagree on %.1f %% of events (baseline %.1f %%)",
                 r->model->members[bi], r->model->members[bj], 100 * d, 100 * d0);
        cJSON_AddStringToObject(o, "text", text);
    }
    if (!base)
        return;
    int best = -1;
    double best_delta = 0, now_v = NAN, then_v = NAN;
    for (int i = 0; i < m; i++) {
        double a = w->metrics.member_disagreement[i];
        double b = base->member_disagreement[i];
        if (isfinite(a) && isfinite(b) && (best < 0 || fabs(a - b) > fabs(best_delta))) {
            best = i;
            best_delta = a - b;
            now_v = a;
            then_v = b;
        }
    }
    if (best >= 0) {
        cJSON *o = item(arr, "member_moved");
        cJSON_AddStringToObject(o, "member", r->model->members[best]);
        add_num(o, "disagreement_with_others", now_v);
        add_num(o, "baseline", then_v);
        snprintf(text, sizeof text, "%s moved most: disagrees with the others on %.1f %% of "
                                    "events (baseline %.1f %%)",
                 r->model->members[best], 100 * now_v, 100 * then_v);
        cJSON_AddStringToObject(o, "text", text);
    }
}

static void drifted_classes(cJSON *arr, const cc_report *r, const cc_report_window *w)
{
    const int k = r->model->k;
    if (!r->baseline || w->metrics.events == 0)
        return;
    const cc_layout *L = cc_summary_layout(r->baseline);
    const int64_t *b = cc_summary_data(r->baseline) + L->pred_counts;
    int64_t bn = 0;
    for (int c = 0; c < k; c++)
        bn += b[c];
    if (bn == 0)
        return;
    int used[CC_MAX_CLASSES] = {0};
    const cc_figure *share = cc_figures_find("by_class.predicted_share");
    for (int t = 0; t < TOP && t < k; t++) {
        int pick = -1;
        double pick_d = -1;
        for (int c = 0; c < k; c++) {
            double d = fabs(cc_figures_value(share, &w->metrics, &w->cmp, c) -
                            (double)b[c] / (double)bn);
            if (!used[c] && d > pick_d) {
                pick = c;
                pick_d = d;
            }
        }
        used[pick] = 1;
        double now_s = cc_figures_value(share, &w->metrics, &w->cmp, pick);
        double then_s = (double)b[pick] / (double)bn;
        double est = w->cmp.bbse_ok ? w->cmp.bbse[pick] : NAN;
        cJSON *o = item(arr, "drifted_class");
        char text[256];
        cJSON_AddStringToObject(o, "class", r->model->classes[pick]);
        add_num(o, "predicted_share", now_s);
        add_num(o, "baseline_share", then_s);
        add_num(o, "estimated_true_share", est);
        snprintf(text, sizeof text, "%s: %.1f %% of predictions (baseline %.1f %%)",
                 r->model->classes[pick], 100 * now_s, 100 * then_s);
        cJSON_AddStringToObject(o, "text", text);
    }
    if (w->cmp.members_psi) {
        int best = -1;
        for (int i = 0; i < r->model->m; i++)
            if (isfinite(w->cmp.members_psi[i]) &&
                (best < 0 || w->cmp.members_psi[i] > w->cmp.members_psi[best]))
                best = i;
        if (best >= 0) {
            cJSON *o = item(arr, "member_moved");
            char text[256];
            cJSON_AddStringToObject(o, "member", r->model->members[best]);
            add_num(o, "class_mix_psi", w->cmp.members_psi[best]);
            snprintf(text, sizeof text, "%s's own class mix moved most (PSI %.3f)",
                     r->model->members[best], w->cmp.members_psi[best]);
            cJSON_AddStringToObject(o, "text", text);
        }
    }
}

static void members_accuracy(cJSON *arr, const cc_report *r, const cc_report_window *w,
                             const cc_window_metrics *base)
{
    const cc_window_metrics *x = &w->metrics;
    if (!x->has_labels)
        return;
    char text[256];
    cJSON *o = item(arr, "accuracy");
    add_num(o, "ensemble", x->ensemble_accuracy);
    add_num(o, "best_member_accuracy", x->member_accuracy[x->best_member]);
    cJSON_AddStringToObject(o, "best_member", r->model->members[x->best_member]);
    add_num(o, "baseline_ensemble", base && base->has_labels ? base->ensemble_accuracy : NAN);
    snprintf(text, sizeof text, "ensemble %.1f %% right on %lld labels, best member %s %.1f %%",
             100 * x->ensemble_accuracy, (long long)x->labeled,
             r->model->members[x->best_member], 100 * x->member_accuracy[x->best_member]);
    cJSON_AddStringToObject(o, "text", text);
    if (!base || !base->has_labels)
        return;
    int worst = -1;
    for (int i = 0; i < r->model->m; i++)
        if (isfinite(x->member_accuracy[i]) && isfinite(base->member_accuracy[i]) &&
            (worst < 0 || x->member_accuracy[i] - base->member_accuracy[i] <
                              x->member_accuracy[worst] - base->member_accuracy[worst]))
            worst = i;
    if (worst >= 0) {
        cJSON *m = item(arr, "member_moved");
        cJSON_AddStringToObject(m, "member", r->model->members[worst]);
        add_num(m, "accuracy", x->member_accuracy[worst]);
        add_num(m, "baseline_accuracy", base->member_accuracy[worst]);
        snprintf(text, sizeof text, "%s lost most: %.1f %% right (baseline %.1f %%)",
                 r->model->members[worst], 100 * x->member_accuracy[worst],
                 100 * base->member_accuracy[worst]);
        cJSON_AddStringToObject(m, "text", text);
    }
}

static void labels(cJSON *arr, const cc_report_window *w)
{
    char text[200];
    cJSON *o = item(arr, "labels");
    cJSON_AddNumberToObject(o, "events", (double)w->metrics.events);
    cJSON_AddNumberToObject(o, "labeled", (double)w->metrics.labeled);
    add_num(o, "coverage", w->cmp.label_coverage);
    snprintf(text, sizeof text, "%lld of %lld events labelled", (long long)w->metrics.labeled,
             (long long)w->metrics.events);
    cJSON_AddStringToObject(o, "text", text);
}

static int starts(const char *s, const char *prefix)
{
    return strncmp(s, prefix, strlen(prefix)) == 0;
}

cJSON *cc_evidence_build(const cc_report *r, const cc_rule *rule)
{
    cJSON *arr = cJSON_CreateArray();
    if (!arr || !r || r->n_windows == 0)
        return arr;
    const cc_report_window *w = &r->windows[0];
    cc_window_metrics base;
    int has_base = r->baseline && cc_window_metrics_compute(&base, r->baseline) == 0;
    const char *p = rule->metric;
    if (starts(p, "by_member.")) {
        members_diversity(arr, r, w, has_base ? &base : NULL);
        contested(arr, r, w);
    } else if (starts(p, "by_class.")) {
        if (starts(p, "by_class.predicted_share"))
            drifted_classes(arr, r, w);
        else
            members_accuracy(arr, r, w, has_base ? &base : NULL);
    } else if (starts(p, "diversity.") || starts(p, "uncertainty.")) {
        contested(arr, r, w);
        members_diversity(arr, r, w, has_base ? &base : NULL);
    } else if (starts(p, "drift.") || starts(p, "label_shift.")) {
        drifted_classes(arr, r, w);
    } else if (starts(p, "accuracy.") || starts(p, "calibration.")) {
        members_accuracy(arr, r, w, has_base ? &base : NULL);
    } else {
        labels(arr, w);
    }
    if (has_base)
        cc_window_metrics_free(&base);
    return arr;
}
