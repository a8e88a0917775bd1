/* test_window.c — window metrics from summaries built event by event with
 * cc_summary_add_unlabeled / cc_summary_add_labeled. Expected values are
 * recomputed here from the raw events with separate, direct code (argmax per
 * member, tables, per-item Fleiss, entropies, binomial sums), or taken from
 * the 10 x 3 oracle example of METHODS.md section 1. */
#include <math.h>
#include <stdlib.h>

#include "checks.h"
#include "window.h"

#define MAXM 4
#define MAXK 4
#define MAXE 64
#define KW_SOURCE "computed, METHODS.md section 1 (no published numeric example)"
#define DIRECT "recomputed in the test from the events"

typedef struct events {
    int m, k, n;
    float p[MAXE][MAXM * MAXK];
    int label[MAXE]; /* -1 = unlabelled */
} events;

static void add_event(events *ev, const float *probs, int label)
{
    for (int i = 0; i < ev->m * ev->k; i++)
        ev->p[ev->n][i] = probs[i];
    ev->label[ev->n] = label;
    ev->n++;
}

static cc_summary *build(const events *ev)
{
    cc_summary *s = cc_summary_create(ev->m, ev->k);
    if (!s)
        return NULL;
    for (int e = 0; e < ev->n; e++) {
        cc_summary_add_unlabeled(s, ev->p[e], 1);
        if (ev->label[e] >= 0)
            cc_summary_add_labeled(s, ev->p[e], ev->label[e], 1);
    }
    return s;
}

/* ---- direct recomputation from the events ---- */

static int first_max(const float *x, int n)
{
    int b = 0;
    for (int i = 1; i < n; i++)
        if (x[i] > x[b])
            b = i;
    return b;
}

static int member_top(const events *ev, int e, int i) { return first_max(ev->p[e] + i * ev->k, ev->k); }

static void averaged(const events *ev, int e, double *avg)
{
    for (int c = 0; c < ev->k; c++) {
        avg[c] = 0;
        for (int i = 0; i < ev->m; i++)
            avg[c] += ev->p[e][i * ev->k + c];
        avg[c] /= ev->m;
    }
}

static int ens_top(const events *ev, int e)
{
    double avg[MAXK];
    averaged(ev, e, avg);
    int b = 0;
    for (int c = 1; c < ev->k; c++)
        if (avg[c] > avg[b])
            b = c;
    return b;
}

static double direct_disagreement(const events *ev, int i, int j)
{
    if (ev->n == 0)
        return NAN;
    int d = 0;
    for (int e = 0; e < ev->n; e++)
        d += member_top(ev, e, i) != member_top(ev, e, j);
    return (double)d / ev->n;
}

static double direct_cohen(const events *ev, int i, int j)
{
    double po = 0, pe = 0, ri[MAXK] = {0}, rj[MAXK] = {0};
    if (ev->n == 0)
        return NAN;
    for (int e = 0; e < ev->n; e++) {
        int a = member_top(ev, e, i), b = member_top(ev, e, j);
        po += a == b;
        ri[a]++;
        rj[b]++;
    }
    po /= ev->n;
    for (int c = 0; c < ev->k; c++)
        pe += ri[c] / ev->n * rj[c] / ev->n;
    if (fabs(1 - pe) < 1e-15)
        return NAN;
    return (po - pe) / (1 - pe);
}

/* Fleiss (1971) in its per-item form: P_i = (sum_j n_ij^2 - m)/(m(m-1)). */
static double direct_fleiss(const events *ev)
{
    int m = ev->m, k = ev->k;
    if (ev->n == 0 || m < 2)
        return NAN;
    double pbar = 0, pj[MAXK] = {0}, pe = 0;
    for (int e = 0; e < ev->n; e++) {
        int cnt[MAXK] = {0};
        for (int i = 0; i < m; i++)
            cnt[member_top(ev, e, i)]++;
        double s = 0;
        for (int c = 0; c < k; c++) {
            s += (double)cnt[c] * cnt[c];
            pj[c] += cnt[c];
        }
        pbar += (s - m) / ((double)m * (m - 1)) / ev->n;
    }
    for (int c = 0; c < k; c++) {
        pj[c] /= (double)ev->n * m;
        pe += pj[c] * pj[c];
    }
    if (fabs(1 - pe) < 1e-15)
        return NAN;
    return (pbar - pe) / (1 - pe);
}

static double entropy_d(const double *p, int k)
{
    double h = 0;
    for (int c = 0; c < k; c++)
        if (p[c] > 0)
            h -= p[c] * log(p[c]);
    return h;
}

static void direct_uncertainty(const events *ev, double *tu, double *au)
{
    *tu = *au = 0;
    if (ev->n == 0) {
        *tu = *au = NAN;
        return;
    }
    for (int e = 0; e < ev->n; e++) {
        double avg[MAXK], row[MAXK];
        averaged(ev, e, avg);
        *tu += entropy_d(avg, ev->k) / ev->n;
        for (int i = 0; i < ev->m; i++) {
            for (int c = 0; c < ev->k; c++)
                row[c] = ev->p[e][i * ev->k + c];
            *au += entropy_d(row, ev->k) / ev->m / ev->n;
        }
    }
}

static double binom_two_sided(int b, int c)
{
    int n = b + c, k = b < c ? b : c;
    if (n == 0)
        return 1;
    double sum = 0, coef = 1;
    for (int i = 0; i <= k; i++) {
        sum += coef;
        coef = coef * (n - i) / (i + 1);
    }
    double p = 2 * sum / pow(2, n);
    return p < 1 ? p : 1;
}

/* ---- checks ---- */

static void check_pair_matrix(check_log *log, const char *name, const cc_pair_matrix *pm, int m,
                              const double *want, double tol, const char *source)
{
    char what[160];
    double sum = 0;
    int defined = 0;
    if (!pm->pairs) {
        log->failed++;
        fprintf(stderr, "FAIL %s: pairs is NULL\n", name);
        return;
    }
    for (int i = 0; i < m; i++)
        for (int j = 0; j < m; j++) {
            snprintf(what, sizeof what, "%s[%d][%d]", name, i, j);
            check_close(log, what, pm->pairs[i * m + j], i == j ? NAN : want[i * m + j], tol, 0,
                        i == j ? "window.h: diagonal NAN" : source);
            if (i < j && !isnan(want[i * m + j])) {
                sum += want[i * m + j];
                defined++;
            }
        }
    snprintf(what, sizeof what, "%s.defined_pairs", name);
    check_int(log, what, pm->defined_pairs, defined, source);
    snprintf(what, sizeof what, "%s.mean", name);
    check_close(log, what, pm->mean, defined ? sum / defined : NAN, tol, 0, source);
}

static void check_label_free(check_log *log, const char *tag, const cc_window_metrics *w,
                             const events *ev)
{
    char name[160];
    int m = ev->m;
    double dis[MAXM * MAXM], kap[MAXM * MAXM];
    for (int i = 0; i < m; i++)
        for (int j = 0; j < m; j++) {
            dis[i * m + j] = i == j ? NAN : direct_disagreement(ev, i < j ? i : j, i < j ? j : i);
            kap[i * m + j] = i == j ? NAN : direct_cohen(ev, i < j ? i : j, i < j ? j : i);
        }
    snprintf(name, sizeof name, "%s disagreement", tag);
    check_pair_matrix(log, name, &w->disagreement, m, dis, 1e-12, DIRECT);
    snprintf(name, sizeof name, "%s kappa", tag);
    check_pair_matrix(log, name, &w->kappa, m, kap, 1e-12, DIRECT " (Cohen 1960)");
    snprintf(name, sizeof name, "%s fleiss_kappa", tag);
    check_close(log, name, w->fleiss_kappa, direct_fleiss(ev), 1e-12, 0,
                DIRECT " (Fleiss 1971 per-item form)");

    double tu, au;
    direct_uncertainty(ev, &tu, &au);
    snprintf(name, sizeof name, "%s entropy", tag);
    check_close(log, name, w->entropy, tu, 1e-8, 0, DIRECT " (fixed point 1e-9 per event)");
    snprintf(name, sizeof name, "%s expected_entropy", tag);
    check_close(log, name, w->expected_entropy, au, 1e-8, 0, DIRECT);
    snprintf(name, sizeof name, "%s mutual_information", tag);
    check_close(log, name, w->mutual_information, ev->n ? fmax(0, tu - au) : NAN, 2e-8, 0,
                DIRECT);

    snprintf(name, sizeof name, "%s events", tag);
    check_int(log, name, w->events, ev->n, DIRECT);
    int64_t cls[MAXK] = {0};
    for (int e = 0; e < ev->n; e++)
        cls[ens_top(ev, e)]++;
    for (int c = 0; c < ev->k; c++) {
        snprintf(name, sizeof name, "%s class_counts[%d]", tag, c);
        check_int(log, name, w->class_counts[c], cls[c], DIRECT " (averaged argmax)");
    }

    /* contested pairs: top two of the averaged output where members differ */
    int64_t con[MAXK][MAXK] = {{0}};
    for (int e = 0; e < ev->n; e++) {
        int differ = 0;
        for (int i = 1; i < m; i++)
            differ |= member_top(ev, e, i) != member_top(ev, e, 0);
        if (!differ)
            continue;
        double avg[MAXK];
        averaged(ev, e, avg);
        int a = ens_top(ev, e), b = -1;
        for (int c = 0; c < ev->k; c++)
            if (c != a && (b < 0 || avg[c] > avg[b]))
                b = c;
        con[a < b ? a : b][a < b ? b : a]++;
    }
    int n_con = 0;
    for (int a = 0; a < ev->k; a++)
        for (int b = a + 1; b < ev->k; b++)
            n_con += con[a][b] != 0;
    snprintf(name, sizeof name, "%s n_contested", tag);
    if (!check_int(log, name, w->n_contested, n_con, DIRECT))
        return;
    for (int t = 0; t < w->n_contested; t++) {
        const struct cc_contested *x = &w->contested[t];
        snprintf(name, sizeof name, "%s contested[%d] count", tag, t);
        check_int(log, name, x->count, con[x->a][x->b], DIRECT);
        if (t > 0) {
            const struct cc_contested *p = &w->contested[t - 1];
            int ordered = p->count > x->count ||
                          (p->count == x->count && (p->a < x->a || (p->a == x->a && p->b < x->b)));
            snprintf(name, sizeof name, "%s contested[%d] sorted after [%d]", tag, t, t - 1);
            check_int(log, name, ordered, 1, "window.h: count desc, then a, then b");
        }
    }
}

static void check_labels(check_log *log, const char *tag, const cc_window_metrics *w,
                         const events *ev)
{
    char name[160];
    int m = ev->m, n = 0, ens = 0, oracle = 0, right[MAXM] = {0};
    for (int e = 0; e < ev->n; e++) {
        if (ev->label[e] < 0)
            continue;
        n++;
        int any = 0;
        for (int i = 0; i < m; i++) {
            int r = member_top(ev, e, i) == ev->label[e];
            right[i] += r;
            any |= r;
        }
        oracle += any;
        ens += ens_top(ev, e) == ev->label[e];
    }
    snprintf(name, sizeof name, "%s has_labels", tag);
    check_int(log, name, w->has_labels, n > 0, DIRECT);
    snprintf(name, sizeof name, "%s labeled", tag);
    check_int(log, name, w->labeled, n, DIRECT);
    int best = -1;
    for (int i = 0; i < m && n > 0; i++)
        if (best < 0 || right[i] > right[best])
            best = i;
    snprintf(name, sizeof name, "%s best_member", tag);
    check_int(log, name, w->best_member, best, "window.h: highest accuracy, ties to lowest");
    for (int i = 0; i < m; i++) {
        snprintf(name, sizeof name, "%s member_accuracy[%d]", tag, i);
        check_close(log, name, w->member_accuracy[i], n ? (double)right[i] / n : NAN, 1e-15, 0,
                    DIRECT);
    }
    snprintf(name, sizeof name, "%s ensemble_accuracy", tag);
    check_close(log, name, w->ensemble_accuracy, n ? (double)ens / n : NAN, 1e-15, 0, DIRECT);
    snprintf(name, sizeof name, "%s oracle_accuracy", tag);
    check_close(log, name, w->oracle_accuracy, n ? (double)oracle / n : NAN, 1e-15, 0, DIRECT);

    if (n == 0) {
        snprintf(name, sizeof name, "%s mcnemar_p without labels", tag);
        check_close(log, name, w->mcnemar_p, NAN, 0, 0, "window.h: NAN without labels");
        snprintf(name, sizeof name, "%s vote_accuracy without labels", tag);
        check_close(log, name, w->vote_accuracy, NAN, 0, 0, "window.h: NAN without labels");
        snprintf(name, sizeof name, "%s nonpairwise KW without labels", tag);
        check_close(log, name, w->nonpairwise.kw_variance, NAN, 0, 0, "METHODS.md 1: N = 0");
        const cc_pair_matrix *pm[] = {&w->q, &w->rho, &w->double_fault,
                                      &w->oracle_disagreement};
        for (int t = 0; t < 4; t++) {
            snprintf(name, sizeof name, "%s oracle pair matrix %d mean without labels", tag, t);
            check_close(log, name, pm[t]->mean, NAN, 0, 0, "window.h: NAN without labels");
            check_int(log, name, pm[t]->defined_pairs, 0, "window.h");
        }
        return;
    }
    int b = 0, c = 0;
    for (int e = 0; e < ev->n; e++) {
        if (ev->label[e] < 0)
            continue;
        int er = ens_top(ev, e) == ev->label[e], mr = member_top(ev, e, best) == ev->label[e];
        b += er && !mr;
        c += mr && !er;
    }
    snprintf(name, sizeof name, "%s mcnemar_ensemble_only", tag);
    check_int(log, name, w->mcnemar_ensemble_only, b, DIRECT);
    snprintf(name, sizeof name, "%s mcnemar_best_only", tag);
    check_int(log, name, w->mcnemar_best_only, c, DIRECT);
    snprintf(name, sizeof name, "%s mcnemar_p", tag);
    check_close(log, name, w->mcnemar_p, binom_two_sided(b, c), 1e-12, 0,
                DIRECT " (binomial sums, McNemar 1947 exact form)");
}

/* ---- scenarios ---- */

/* METHODS.md section 1: rows = items, columns = members, 1 = right. */
static const int kw_matrix[10][3] = {{1, 1, 1}, {1, 1, 1}, {1, 1, 1}, {1, 1, 0}, {1, 1, 0},
                                     {1, 0, 1}, {0, 1, 1}, {1, 0, 0}, {0, 0, 1}, {0, 0, 0}};

static void kw_events(events *ev)
{
    /* label 0 throughout; a right member's argmax is 0, a wrong one's 1;
     * class 2 is never anyone's argmax. Confidences differ per member so
     * the averaged output and the plurality vote can disagree. */
    static const float right[3][3] = {{0.6f, 0.3f, 0.1f}, {0.8f, 0.15f, 0.05f},
                                      {0.45f, 0.4f, 0.15f}};
    static const float wrong[3][3] = {{0.35f, 0.55f, 0.1f}, {0.2f, 0.7f, 0.1f},
                                      {0.05f, 0.9f, 0.05f}};
    ev->m = 3;
    ev->k = 3;
    ev->n = 0;
    for (int r = 0; r < 10; r++) {
        float p[9];
        for (int i = 0; i < 3; i++)
            for (int c = 0; c < 3; c++)
                p[i * 3 + c] = kw_matrix[r][i] ? right[i][c] : wrong[i][c];
        add_event(ev, p, 0);
    }
}

static int scenario_kw(check_log *log)
{
    events ev;
    kw_events(&ev);
    cc_summary *s = build(&ev);
    cc_window_metrics w;
    if (!s || cc_window_metrics_compute(&w, s) != 0) {
        fprintf(stderr, "FAIL kw example: out of memory\n");
        cc_summary_free(s);
        return -1;
    }
    check_label_free(log, "kw", &w, &ev);
    check_labels(log, "kw", &w, &ev);

    const double N = NAN;
    const double q[9] = {N, 2.0 / 3, -0.2, 2.0 / 3, N, 1.0 / 3, -0.2, 1.0 / 3, N};
    const double rho[9] = {N, 0.356348, -0.089087, 0.356348, N, 0.166667, -0.089087, 0.166667, N};
    const double dis[9] = {N, 0.3, 0.5, 0.3, N, 0.4, 0.5, 0.4, N};
    const double df[9] = {N, 0.2, 0.1, 0.2, N, 0.2, 0.1, 0.2, N};
    check_pair_matrix(log, "kw q", &w.q, 3, q, 5e-7, KW_SOURCE);
    check_pair_matrix(log, "kw rho", &w.rho, 3, rho, 5e-7, KW_SOURCE);
    check_pair_matrix(log, "kw oracle_disagreement", &w.oracle_disagreement, 3, dis, 1e-12,
                      KW_SOURCE);
    check_pair_matrix(log, "kw double_fault", &w.double_fault, 3, df, 1e-12, KW_SOURCE);
    check_close(log, "kw Q_av", w.q.mean, 0.266667, 5e-7, 0, KW_SOURCE);
    check_close(log, "kw rho_av", w.rho.mean, 0.144643, 5e-7, 0, KW_SOURCE);
    check_close(log, "kw DF_av", w.double_fault.mean, 0.166667, 5e-7, 0, KW_SOURCE);

    const cc_nonpairwise *np = &w.nonpairwise;
    check_close(log, "kw E", np->entropy_e, 0.6, 1e-12, 0, KW_SOURCE);
    check_close(log, "kw KW variance", np->kw_variance, 0.133333, 5e-7, 0, KW_SOURCE);
    check_close(log, "kw interrater kappa", np->interrater_kappa, 0.138756, 5e-7, 0, KW_SOURCE);
    check_close(log, "kw theta", np->difficulty, 0.098889, 5e-7, 0, KW_SOURCE);
    check_close(log, "kw GD", np->generalized_diversity, 6.0 / 11, 1e-12, 0, KW_SOURCE);
    check_close(log, "kw CFD", np->coincident_failure, 5.0 / 7, 1e-12, 0, KW_SOURCE);
    check_close(log, "kw p_bar", np->p_bar, 19.0 / 30, 1e-12, 0, KW_SOURCE);
    check_close(log, "kw member_accuracy[0]", w.member_accuracy[0], 0.7, 1e-15, 0, KW_SOURCE);
    check_close(log, "kw member_accuracy[1]", w.member_accuracy[1], 0.6, 1e-15, 0, KW_SOURCE);
    check_close(log, "kw member_accuracy[2]", w.member_accuracy[2], 0.6, 1e-15, 0, KW_SOURCE);
    check_int(log, "kw best_member", w.best_member, 0, KW_SOURCE);
    check_close(log, "kw oracle_accuracy", w.oracle_accuracy, 0.9, 1e-15, 0, KW_SOURCE);
    check_close(log, "kw vote_accuracy (wrong votes all go to class 1)", w.vote_accuracy, 0.7,
                1e-15, 0, KW_SOURCE ": items with l >= 2");
    check_int(log, "kw vote_ties (two classes, three voters)", w.vote_ties, 0, DIRECT);
    check_close(log, "kw kappa defined although class 2 is never predicted", isnan(w.kappa.mean),
                0, 0, 0, "Cohen 1960: unused classes do not enter p_e");

    /* merging two halves gives the same window */
    events a = ev, b = ev;
    a.n = 4;
    b.n = 0;
    for (int e = 4; e < ev.n; e++)
        add_event(&b, ev.p[e], ev.label[e]);
    cc_summary *sa = build(&a), *sb = build(&b);
    cc_window_metrics wm;
    if (sa && sb && cc_summary_merge(sa, sb) == 0 && cc_window_metrics_compute(&wm, sa) == 0) {
        check_close(log, "merged halves: q.mean", wm.q.mean, w.q.mean, 0, 0, "exact merge");
        check_close(log, "merged halves: kappa.mean", wm.kappa.mean, w.kappa.mean, 0, 0,
                    "exact merge");
        check_close(log, "merged halves: entropy", wm.entropy, w.entropy, 0, 0, "exact merge");
        check_close(log, "merged halves: fleiss", wm.fleiss_kappa, w.fleiss_kappa, 0, 0,
                    "exact merge");
        cc_window_metrics_free(&wm);
    } else {
        log->failed++;
        fprintf(stderr, "FAIL merged halves: could not build\n");
    }
    cc_summary_free(sa);
    cc_summary_free(sb);

    cc_window_metrics_free(&w);
    cc_summary_free(s);
    return 0;
}

static int run(check_log *log, const char *tag, const events *ev, cc_window_metrics *w,
               cc_summary **s)
{
    *s = build(ev);
    if (!*s || cc_window_metrics_compute(w, *s) != 0) {
        fprintf(stderr, "FAIL %s: could not build\n", tag);
        log->failed++;
        cc_summary_free(*s);
        *s = NULL;
        return -1;
    }
    check_label_free(log, tag, w, ev);
    check_labels(log, tag, w, ev);
    return 0;
}

static void scenario_identical(check_log *log)
{
    events ev = {.m = 2, .k = 3, .n = 0};
    static const float rows[4][3] = {
        {0.7f, 0.2f, 0.1f}, {0.1f, 0.6f, 0.3f}, {0.2f, 0.5f, 0.3f}, {0.9f, 0.05f, 0.05f}};
    for (int e = 0; e < 12; e++) {
        float p[6];
        for (int c = 0; c < 3; c++)
            p[c] = p[3 + c] = rows[e % 4][c];
        add_event(&ev, p, e % 3 == 0 ? 1 : 0);
    }
    cc_window_metrics w;
    cc_summary *s;
    if (run(log, "identical", &ev, &w, &s) != 0)
        return;
    check_close(log, "identical disagreement", w.disagreement.mean, 0.0, 0, 0,
                "identical members never differ");
    check_close(log, "identical kappa", w.kappa.mean, 1.0, 1e-12, 0,
                "Cohen 1960: p_o = 1 with two classes used");
    check_close(log, "identical fleiss", w.fleiss_kappa, 1.0, 1e-12, 0, "Fleiss 1971: P_bar = 1");
    check_close(log, "identical mutual information", w.mutual_information, 0.0, 0, 0,
                "METHODS.md section 3 example B: identical members, EU = 0");
    check_int(log, "identical n_contested", w.n_contested, 0, "members never differ");
    check_close(log, "identical Q", w.q.mean, 1.0, 1e-12, 0,
                "Kuncheva & Whitaker 2003: N10 = N01 = 0, N11 N00 > 0");
    cc_window_metrics_free(&w);
    cc_summary_free(s);

    /* identical and constant: kappa undefined, disagreement 0 */
    ev.n = 0;
    for (int e = 0; e < 5; e++) {
        float p[6] = {0.8f, 0.1f, 0.1f, 0.8f, 0.1f, 0.1f};
        add_event(&ev, p, -1);
    }
    if (run(log, "constant", &ev, &w, &s) != 0)
        return;
    check_close(log, "constant kappa", w.kappa.mean, NAN, 0, 0,
                "METHODS.md section 2: p_e = 1 undefined");
    check_int(log, "constant kappa defined_pairs", w.kappa.defined_pairs, 0, "METHODS.md 2");
    check_close(log, "constant disagreement", w.disagreement.mean, 0.0, 0, 0, "definition");
    check_close(log, "constant fleiss", w.fleiss_kappa, NAN, 0, 0,
                "METHODS.md section 2: P_e = 1 undefined");
    cc_window_metrics_free(&w);
    cc_summary_free(s);
}

static void scenario_partly_defined(check_log *log)
{
    /* members 0 and 1 always say class 0, member 2 varies: kappa of (0,1)
     * is undefined, the other two pairs have kappa 0. Label 0 throughout,
     * so members 0 and 1 are always right: Q and rho of (0,1) undefined. */
    events ev = {.m = 3, .k = 4, .n = 0};
    for (int e = 0; e < 8; e++) {
        float p[12] = {0.7f, 0.1f, 0.1f, 0.1f, 0.6f, 0.2f, 0.1f, 0.1f, 0, 0, 0, 0};
        p[8 + e % 3] = 1.0f;
        add_event(&ev, p, 0);
    }
    cc_window_metrics w;
    cc_summary *s;
    if (run(log, "partly", &ev, &w, &s) != 0)
        return;
    check_int(log, "partly kappa defined_pairs", w.kappa.defined_pairs, 2,
              "METHODS.md 2: pair (0,1) has p_e = 1");
    check_close(log, "partly kappa mean", w.kappa.mean, 0.0, 1e-12, 0,
                "Cohen 1960: a constant rater gives p_o = p_e");
    check_int(log, "partly disagreement defined_pairs", w.disagreement.defined_pairs, 3,
              "definition");
    check_close(log, "partly rho (0,1)", w.rho.pairs[1], NAN, 0, 0,
                "METHODS.md section 1: zero marginal");
    check_close(log, "partly Q (0,1)", w.q.pairs[1], NAN, 0, 0,
                "METHODS.md section 1: Q 0/0 when both members are always right");
    check_int(log, "partly best_member (tie of 0 and 1)", w.best_member, 0,
              "window.h: ties to the lowest index");
    cc_window_metrics_free(&w);
    cc_summary_free(s);
}

static void check_all_nan(check_log *log, const char *tag, const cc_window_metrics *w)
{
    char name[160];
    struct {
        const char *what;
        double v;
    } v[] = {{"disagreement.mean", w->disagreement.mean},
             {"kappa.mean", w->kappa.mean},
             {"fleiss_kappa", w->fleiss_kappa},
             {"entropy", w->entropy},
             {"expected_entropy", w->expected_entropy},
             {"mutual_information", w->mutual_information},
             {"q.mean", w->q.mean},
             {"rho.mean", w->rho.mean},
             {"double_fault.mean", w->double_fault.mean},
             {"oracle_disagreement.mean", w->oracle_disagreement.mean},
             {"E", w->nonpairwise.entropy_e},
             {"KW", w->nonpairwise.kw_variance},
             {"interrater kappa", w->nonpairwise.interrater_kappa},
             {"theta", w->nonpairwise.difficulty},
             {"GD", w->nonpairwise.generalized_diversity},
             {"CFD", w->nonpairwise.coincident_failure},
             {"p_bar", w->nonpairwise.p_bar},
             {"ensemble_accuracy", w->ensemble_accuracy},
             {"vote_accuracy", w->vote_accuracy},
             {"oracle_accuracy", w->oracle_accuracy},
             {"mcnemar_p", w->mcnemar_p}};
    for (size_t i = 0; i < sizeof v / sizeof v[0]; i++) {
        snprintf(name, sizeof name, "%s %s", tag, v[i].what);
        check_close(log, name, v[i].v, NAN, 0, 0, "brief: events = 0 gives NAN, not 0");
    }
    for (int i = 0; i < w->m; i++) {
        snprintf(name, sizeof name, "%s member_accuracy[%d]", tag, i);
        check_close(log, name, w->member_accuracy[i], NAN, 0, 0, "no labels");
    }
    snprintf(name, sizeof name, "%s best_member", tag);
    check_int(log, name, w->best_member, -1, "window.h: -1 without labels");
    snprintf(name, sizeof name, "%s has_labels", tag);
    check_int(log, name, w->has_labels, 0, "window.h");
    snprintf(name, sizeof name, "%s n_contested", tag);
    check_int(log, name, w->n_contested, 0, "empty");
}

static void scenario_empty(check_log *log)
{
    cc_summary *s = cc_summary_create(3, 4);
    cc_window_metrics w;
    if (!s || cc_window_metrics_compute(&w, s) != 0) {
        log->failed++;
        fprintf(stderr, "FAIL empty: could not build\n");
        cc_summary_free(s);
        return;
    }
    check_int(log, "empty events", w.events, 0, "empty summary");
    check_all_nan(log, "empty", &w);
    cc_window_metrics_free(&w);

    /* an event added and retracted leaves an empty window again */
    float p[12] = {0.5f, 0.3f, 0.1f, 0.1f, 0.1f, 0.6f, 0.2f, 0.1f, 0.25f, 0.25f, 0.25f, 0.25f};
    cc_summary_add_unlabeled(s, p, 1);
    cc_summary_add_labeled(s, p, 2, 1);
    cc_summary_add_labeled(s, p, 2, -1);
    cc_summary_add_unlabeled(s, p, -1);
    if (cc_window_metrics_compute(&w, s) == 0) {
        check_all_nan(log, "retracted", &w);
        cc_window_metrics_free(&w);
    } else {
        log->failed++;
    }
    cc_summary_free(s);
}

static void scenario_one_member(check_log *log)
{
    events ev = {.m = 1, .k = 3, .n = 0};
    static const float rows[3][3] = {{0.7f, 0.2f, 0.1f}, {0.1f, 0.6f, 0.3f}, {0.2f, 0.3f, 0.5f}};
    for (int e = 0; e < 9; e++)
        add_event(&ev, rows[e % 3], e % 2);
    cc_window_metrics w;
    cc_summary *s;
    if (run(log, "m=1", &ev, &w, &s) != 0)
        return;
    check_close(log, "m=1 disagreement.mean", w.disagreement.mean, NAN, 0, 0,
                "brief: m = 1 has no pairs");
    check_int(log, "m=1 disagreement.defined_pairs", w.disagreement.defined_pairs, 0, "no pairs");
    check_close(log, "m=1 kappa.mean", w.kappa.mean, NAN, 0, 0, "no pairs");
    check_close(log, "m=1 q.mean", w.q.mean, NAN, 0, 0, "METHODS.md section 1: L = 1");
    check_close(log, "m=1 fleiss", w.fleiss_kappa, NAN, 0, 0, "METHODS.md section 2: m < 2");
    check_close(log, "m=1 mutual information", w.mutual_information, 0.0, 0, 0,
                "METHODS.md section 3: M = 1 gives EU = 0");
    check_close(log, "m=1 E", w.nonpairwise.entropy_e, NAN, 0, 0, "METHODS.md section 1: L = 1");
    check_close(log, "m=1 interrater kappa", w.nonpairwise.interrater_kappa, NAN, 0, 0,
                "METHODS.md section 1: L = 1");
    check_close(log, "m=1 mcnemar_p (ensemble = member)", w.mcnemar_p, 1.0, 0, 0,
                "METHODS.md section 7: b + c = 0 gives p = 1");
    cc_window_metrics_free(&w);
    cc_summary_free(s);
}

static void scenario_unlabeled(check_log *log)
{
    events ev;
    kw_events(&ev);
    for (int e = 0; e < ev.n; e++)
        ev.label[e] = -1;
    cc_window_metrics w;
    cc_summary *s;
    if (run(log, "unlabelled", &ev, &w, &s) != 0)
        return;
    check_int(log, "unlabelled best_member", w.best_member, -1, "window.h");
    cc_window_metrics_free(&w);
    cc_summary_free(s);
}

static void scenario_contested(check_log *log)
{
    /* contested counts (2,3): 3, then three pairs with count 2 whose order
     * depends on a, then b: (0,1), (0,3), (1,2). */
    events ev = {.m = 2, .k = 4, .n = 0};
    static const int want[4][2] = {{2, 3}, {0, 1}, {0, 3}, {1, 2}};
    static const int times[4] = {3, 2, 2, 2};
    for (int t = 3; t >= 0; t--)
        for (int r = 0; r < times[t]; r++) {
            int a = want[t][0], b = want[t][1];
            float p[8];
            for (int c = 0; c < 8; c++)
                p[c] = 0.05f;
            p[a] = 0.7f, p[b] = 0.2f;
            p[4 + b] = 0.6f, p[4 + a] = 0.3f;
            add_event(&ev, p, r % 4);
        }
    cc_window_metrics w;
    cc_summary *s;
    if (run(log, "contested", &ev, &w, &s) != 0)
        return;
    if (check_int(log, "contested n", w.n_contested, 4, "constructed"))
        for (int t = 0; t < 4; t++) {
            char name[80];
            snprintf(name, sizeof name, "contested[%d] = (%d,%d)", t, want[t][0], want[t][1]);
            check_int(log, name, w.contested[t].a * 10 + w.contested[t].b,
                      want[t][0] * 10 + want[t][1], "window.h: count desc, then a, then b");
            check_int(log, name, w.contested[t].count, times[t], "constructed");
        }
    cc_window_metrics_free(&w);
    cc_summary_free(s);
}

int main(void)
{
    check_log log = {"test_window", 0, 0};
    if (scenario_kw(&log) != 0)
        log.failed++;
    scenario_identical(&log);
    scenario_partly_defined(&log);
    scenario_empty(&log);
    scenario_one_member(&log);
    scenario_unlabeled(&log);
    scenario_contested(&log);
    return check_finish(&log);
}
