/* window.c — turns the counters of a (merged) summary into the figures of one
 * report window. The formulas live in agreement.c, oracle.c and mcnemar.c;
 * this file only picks the counters, averages over member pairs and keeps
 * "undefined" (NAN) apart from zero. */
#include "window.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "agreement.h"
#include "mcnemar.h"

static int pair_matrix_alloc(cc_pair_matrix *pm, int m)
{
    size_t n = (size_t)m * (size_t)m;
    pm->mean = NAN;
    pm->defined_pairs = 0;
    pm->pairs = malloc(n * sizeof *pm->pairs);
    if (!pm->pairs)
        return -1;
    for (size_t i = 0; i < n; i++)
        pm->pairs[i] = NAN;
    return 0;
}

static void pair_matrix_set(cc_pair_matrix *pm, int m, int i, int j, double v)
{
    pm->pairs[(size_t)i * m + j] = v;
    pm->pairs[(size_t)j * m + i] = v;
}

/* Ensemble value of a pairwise measure: mean over the pairs where it is
 * defined (Kuncheva & Whitaker 2003 average over all L(L-1)/2 pairs; pairs
 * with an undefined value are left out and counted). */
static void pair_matrix_finish(cc_pair_matrix *pm, int m)
{
    double sum = 0.0;
    int defined = 0;
    for (int i = 0; i < m; i++)
        for (int j = i + 1; j < m; j++) {
            double v = pm->pairs[(size_t)i * m + j];
            if (!isnan(v)) {
                sum += v;
                defined++;
            }
        }
    pm->defined_pairs = defined;
    pm->mean = defined > 0 ? sum / defined : NAN;
}

static int cmp_contested(const void *pa, const void *pb)
{
    const struct cc_contested *x = pa, *y = pb;
    if (x->count != y->count)
        return x->count > y->count ? -1 : 1;
    if (x->a != y->a)
        return x->a < y->a ? -1 : 1;
    if (x->b != y->b)
        return x->b < y->b ? -1 : 1;
    return 0;
}

static int fill_contested(cc_window_metrics *out, const int64_t *tab, int k)
{
    int n = 0;
    for (int a = 0; a < k; a++)
        for (int b = a + 1; b < k; b++)
            n += tab[(size_t)a * k + b] != 0;
    out->n_contested = 0;
    out->contested = NULL;
    if (n == 0)
        return 0;
    out->contested = malloc((size_t)n * sizeof *out->contested);
    if (!out->contested)
        return -1;
    for (int a = 0; a < k; a++)
        for (int b = a + 1; b < k; b++) {
            int64_t cnt = tab[(size_t)a * k + b];
            if (cnt != 0) {
                struct cc_contested *e = &out->contested[out->n_contested++];
                e->a = a;
                e->b = b;
                e->count = cnt;
            }
        }
    qsort(out->contested, (size_t)n, sizeof *out->contested, cmp_contested);
    return 0;
}

/* Each member against the others, from the pairwise disagreement: its mean
 * disagreement with them, and how far that exceeds the others' mean
 * disagreement among themselves. A shift that moves every member alike
 * (harder inputs) leaves the second near zero; one member going its own way
 * raises it for that member only. */
static void member_spread(cc_window_metrics *out, int m)
{
    const double *d = out->disagreement.pairs;
    for (int i = 0; i < m; i++) {
        double own = 0, rest = 0;
        int n_own = 0, n_rest = 0;
        for (int j = 0; d && j < m; j++) {
            if (j == i)
                continue;
            if (isfinite(d[i * m + j])) {
                own += d[i * m + j];
                n_own++;
            }
            for (int l = j + 1; l < m; l++)
                if (l != i && isfinite(d[j * m + l])) {
                    rest += d[j * m + l];
                    n_rest++;
                }
        }
        out->member_disagreement[i] = n_own ? own / n_own : NAN;
        out->member_departure[i] = n_own && n_rest ? own / n_own - rest / n_rest : NAN;
    }
}

static void label_free_part(cc_window_metrics *out, const cc_layout *L, const int64_t *v)
{
    const int m = L->m, k = L->k;
    const int64_t n = v[L->n_events];

    for (int i = 0; i < m; i++)
        for (int j = i + 1; j < m; j++) {
            int64_t agree = v[L->pair_agree + (size_t)cc_pair_index(m, i, j)];
            pair_matrix_set(&out->disagreement, m, i, j,
                            n > 0 ? (double)(n - agree) / (double)n : NAN);
            pair_matrix_set(&out->kappa, m, i, j,
                            cc_cohen_kappa_margins(n, agree, v + L->member_pred + (size_t)i * k,
                                                   v + L->member_pred + (size_t)j * k, k));
        }
    pair_matrix_finish(&out->disagreement, m);
    pair_matrix_finish(&out->kappa, m);
    member_spread(out, m);

    /* Each event is an item rated by all m members (Fleiss 1971). */
    int64_t totals[CC_MAX_CLASSES];
    for (int c = 0; c < k; c++) {
        totals[c] = 0;
        for (int i = 0; i < m; i++)
            totals[c] += v[L->member_pred + (size_t)i * k + c];
    }
    out->fleiss_kappa = cc_fleiss_kappa(out->events, m, v[L->fleiss_sumsq], totals, k);

    if (out->events > 0) {
        double events = (double)out->events;
        out->entropy = cc_wide_value(v + L->tu_fx) / CC_FIXED_SCALE / events;
        out->expected_entropy = cc_wide_value(v + L->au_fx) / CC_FIXED_SCALE / events;
        double mi = out->entropy - out->expected_entropy;
        out->mutual_information = mi > 0.0 ? mi : 0.0;
    }
}

static void labeled_part(cc_window_metrics *out, const cc_layout *L, const int64_t *v)
{
    const int m = L->m;
    const double n = (double)out->labeled;

    for (int i = 0; i < m; i++)
        for (int j = i + 1; j < m; j++) {
            const int64_t *o = v + L->pair_oracle + (size_t)cc_pair_index(m, i, j) * 4;
            cc_pair_counts c = {o[0], o[1], o[2], o[3]};
            pair_matrix_set(&out->q, m, i, j, cc_yule_q(c));
            pair_matrix_set(&out->rho, m, i, j, cc_oracle_rho(c));
            pair_matrix_set(&out->double_fault, m, i, j, cc_double_fault(c));
            pair_matrix_set(&out->oracle_disagreement, m, i, j, cc_oracle_disagreement(c));
        }
    pair_matrix_finish(&out->q, m);
    pair_matrix_finish(&out->rho, m);
    pair_matrix_finish(&out->double_fault, m);
    pair_matrix_finish(&out->oracle_disagreement, m);

    cc_nonpairwise_compute(&out->nonpairwise, v + L->n_right_hist, m);

    int best = 0;
    for (int i = 0; i < m; i++) {
        int64_t right = v[L->member_correct + i];
        out->member_accuracy[i] = (double)right / n;
        if (right > v[L->member_correct + best])
            best = i;
    }
    /* per class, from the confusion matrix of the averaged output */
    for (int c = 0; c < L->k; c++) {
        int64_t pred = 0, truth = 0, right = v[L->confusion + (size_t)c * L->k + c];
        for (int x = 0; x < L->k; x++) {
            pred += v[L->confusion + (size_t)c * L->k + x];
            truth += v[L->confusion + (size_t)x * L->k + c];
        }
        out->class_precision[c] = pred ? (double)right / (double)pred : NAN;
        out->class_recall[c] = truth ? (double)right / (double)truth : NAN;
    }
    out->ensemble_accuracy = (double)v[L->ens_correct] / n;
    out->vote_accuracy = (double)v[L->vote_correct] / n;
    out->oracle_accuracy = (double)v[L->oracle_correct] / n;

    /* McNemar (1947) of the averaged output against the best member:
     * b = ensemble right and member wrong, c = the reverse. */
    out->best_member = best;
    out->mcnemar_ensemble_only = v[L->ens_only + best];
    out->mcnemar_best_only = v[L->member_only + best];
    out->mcnemar_p = cc_mcnemar_exact_p(out->mcnemar_ensemble_only, out->mcnemar_best_only);
}

int cc_window_metrics_compute(cc_window_metrics *out, const cc_summary *s)
{
    const cc_layout *L = cc_summary_layout(s);
    const int64_t *v = cc_summary_data(s);
    const int m = L->m;

    memset(out, 0, sizeof *out);
    out->m = m;
    out->k = L->k;
    out->events = v[L->n_events];
    out->labeled = v[L->n_labeled];
    out->class_counts = v + L->pred_counts;
    out->confusion = v + L->confusion;
    out->vote_ties = v[L->vote_ties];
    out->fleiss_kappa = NAN;
    out->entropy = NAN;
    out->expected_entropy = NAN;
    out->mutual_information = NAN;
    out->ensemble_accuracy = NAN;
    out->vote_accuracy = NAN;
    out->oracle_accuracy = NAN;
    out->vote_ties_labeled = v[L->vote_ties_labeled];
    out->best_member = -1;
    out->mcnemar_p = NAN;

    cc_pair_matrix *mats[] = {&out->disagreement, &out->kappa, &out->q, &out->rho,
                              &out->double_fault, &out->oracle_disagreement};
    for (size_t i = 0; i < sizeof mats / sizeof mats[0]; i++)
        if (pair_matrix_alloc(mats[i], m) != 0)
            goto oom;
    out->member_accuracy = malloc((size_t)m * sizeof *out->member_accuracy);
    out->member_disagreement = malloc((size_t)m * sizeof *out->member_disagreement);
    out->member_departure = malloc((size_t)m * sizeof *out->member_departure);
    out->class_precision = malloc((size_t)L->k * sizeof *out->class_precision);
    out->class_recall = malloc((size_t)L->k * sizeof *out->class_recall);
    if (!out->member_accuracy || !out->member_disagreement || !out->member_departure ||
        !out->class_precision || !out->class_recall)
        goto oom;
    for (int i = 0; i < m; i++)
        out->member_accuracy[i] = out->member_disagreement[i] = out->member_departure[i] = NAN;
    for (int c = 0; c < L->k; c++)
        out->class_precision[c] = out->class_recall[c] = NAN;
    cc_nonpairwise_compute(&out->nonpairwise, NULL, 0);

    label_free_part(out, L, v);

    out->has_labels = out->labeled > 0;
    if (out->has_labels)
        labeled_part(out, L, v);

    if (fill_contested(out, v + L->contested, L->k) != 0)
        goto oom;
    return 0;

oom:
    cc_window_metrics_free(out);
    return -1;
}

void cc_window_metrics_free(cc_window_metrics *w)
{
    if (!w)
        return;
    free(w->disagreement.pairs);
    free(w->kappa.pairs);
    free(w->q.pairs);
    free(w->rho.pairs);
    free(w->double_fault.pairs);
    free(w->oracle_disagreement.pairs);
    free(w->member_accuracy);
    free(w->member_disagreement);
    free(w->member_departure);
    free(w->class_precision);
    free(w->class_recall);
    free(w->contested);
    w->disagreement.pairs = NULL;
    w->kappa.pairs = NULL;
    w->q.pairs = NULL;
    w->rho.pairs = NULL;
    w->double_fault.pairs = NULL;
    w->oracle_disagreement.pairs = NULL;
    w->member_accuracy = NULL;
    w->member_disagreement = w->member_departure = NULL;
    w->class_precision = w->class_recall = NULL;
    w->contested = NULL;
    w->n_contested = 0;
}
