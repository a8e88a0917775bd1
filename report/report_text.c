/* report_text.c — the report for people: one row per window with the
 * headline figures, the class mix per window, and, for a single window, the
 * pair matrices, member accuracies and contested pairs. "-" = undefined. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"
#include "report.h"
#include "figures.h"
#include "tracked.h"
#include "utf8.h"

static void fnum(FILE *f, int width, int prec, double x)
{
    if (isfinite(x))
        fprintf(f, " %*.*f", width, prec, x);
    else
        fprintf(f, " %*s", width, "-");
}

static void window_name(const cc_report_window *w, char out[24])
{
    char a[11], b[11];
    cc_format_date(w->from, a);
    cc_format_date(w->to, b);
    if (w->ts_to > w->ts_from) /* an hour: "2026-11-03 14:00-15:00" (UTC) */
        snprintf(out, 24, "%s %02d:00-%02d:00", a, (int)((w->ts_from - w->from * 86400) / 3600),
                 (int)((w->ts_from - w->from * 86400) / 3600 + 1));
    else if (w->from == w->to)
        snprintf(out, 24, "%s", a);
    else if (memcmp(a, b, 4) == 0)
        snprintf(out, 24, "%s..%s", a, b + 5);
    else
        snprintf(out, 24, "%s..%s", a, b);
}

/* The window's dates, padded to the first column of the tables. */
static void window_label(FILE *f, const cc_report_window *w)
{
    char name[24];
    window_name(w, name);
    fprintf(f, "%-23s", name);
}

static void headline_head(FILE *f)
{
    fprintf(f, "%-23s %7s %7s %8s %6s %6s %7s %7s %6s %6s %6s %6s  %s\n", "window", "events",
            "labeled", "disagree", "kappa", "fleiss", "entropy", "mutual", "ens", "best", "vote",
            "oracle", "top contested pair");
    fprintf(f, "%-23s %7s %7s %8s %6s %6s %7s %7s %6s %6s %6s %6s\n", "", "", "", "(mean)",
            "(mean)", "", "(nats)", "(nats)", "acc", "acc", "acc", "acc");
}

static void headline_row(FILE *f, const cc_model *m, const cc_report_window *w)
{
    const cc_window_metrics *x = &w->metrics;
    window_label(f, w);
    fprintf(f, " %7lld %7lld", (long long)x->events, (long long)x->labeled);
    fnum(f, 8, 3, x->disagreement.mean);
    fnum(f, 6, 3, x->kappa.mean);
    fnum(f, 6, 3, x->fleiss_kappa);
    fnum(f, 7, 3, x->entropy);
    fnum(f, 7, 3, x->mutual_information);
    if (x->has_labels) {
        fnum(f, 6, 3, x->ensemble_accuracy);
        fnum(f, 6, 3, x->best_member >= 0 ? x->member_accuracy[x->best_member] : NAN);
        fnum(f, 6, 3, x->vote_accuracy);
        fnum(f, 6, 3, x->oracle_accuracy);
    } else {
        fprintf(f, " %6s %6s %6s %6s", "-", "-", "-", "-");
    }
    if (x->n_contested > 0)
        fprintf(f, "  %s/%s (%lld)", m->classes[x->contested[0].a],
                m->classes[x->contested[0].b], (long long)x->contested[0].count);
    fputc('\n', f);
}

static void class_mix_head(FILE *f, const cc_model *m, int labels)
{
    fprintf(f, "\n%s\n", labels ? "label mix (% of labelled events)"
                                 : "class mix of the ensemble's predictions (% of events)");
    fprintf(f, "%-23s", "window");
    for (int c = 0; c < m->k; c++)
        fprintf(f, " %7.7s", m->classes[c]);
    fputc('\n', f);
}

static void class_mix_row(FILE *f, const cc_model *m, const cc_report_window *w, int labels)
{
    const int64_t *cnt = labels ? w->label_counts : w->metrics.class_counts;
    int64_t n = labels ? w->metrics.labeled : w->metrics.events;
    window_label(f, w);
    for (int c = 0; c < m->k; c++)
        fnum(f, 7, 1, n > 0 ? 100.0 * (double)cnt[c] / (double)n : NAN);
    fputc('\n', f);
}

static void fp(FILE *f, int width, double p)
{
    if (!isfinite(p))
        fprintf(f, " %*s", width, "-");
    else if (p < 1e-4)
        fprintf(f, " %*s", width, "<1e-4");
    else
        fprintf(f, " %*.4f", width, p);
}

static int tracked_index(const char *path)
{
    for (int t = 0; t < cc_tracked_count(); t++)
        if (strcmp(cc_tracked_path(t), path) == 0)
            return t;
    return -1;
}

static void drift_head(FILE *f)
{
    fprintf(f, "\nagainst the baseline (p-values of the class-mix chi-square, of KS on the\n"
               "averaged output's max probability and mutual information, and the\n"
               "Bonferroni minimum over per-class KS; z = (x - baseline mean)/sd of days)\n");
    fprintf(f, "%-23s %7s %6s %6s %6s %7s %6s %7s %7s %6s %6s %6s %6s %6s %6s\n", "window",
            "mix p", "PSI", "KS max", "p", "KS MI", "p", "class p", "BBSE L1", "EM L1", "ECE",
            "cover", "z dis", "z MI", "z acc");
}

static void drift_row(FILE *f, const cc_report_window *w)
{
    int zd = tracked_index("diversity.disagreement.mean");
    int zm = tracked_index("uncertainty.mutual_information");
    int za = tracked_index("accuracy.ensemble");
    const cc_comparison *c = &w->cmp;
    window_label(f, w);
    fp(f, 7, c->class_mix.p_value);
    fnum(f, 6, 3, c->class_mix_psi);
    fnum(f, 6, 3, c->max_prob.d);
    fp(f, 6, c->max_prob.p_value);
    fnum(f, 7, 3, c->mutual_information.d);
    fp(f, 6, c->mutual_information.p_value);
    fp(f, 7, c->per_class_min_p_bonferroni);
    fnum(f, 7, 3, c->bbse_l1);
    fnum(f, 6, 3, c->em_l1);
    fnum(f, 6, 3, c->has_labels ? c->calibration.ece : NAN);
    fnum(f, 6, 2, c->label_coverage);
    fnum(f, 6, 1, w->z[zd]);
    fnum(f, 6, 1, w->z[zm]);
    fnum(f, 6, 1, w->z[za]);
    fputc('\n', f);
}

static void segments_head(FILE *f)
{
    fprintf(f, "\nby segment (drift: each slice against its own baseline days; vs model: its\n"
               "class mix and max-probability distribution against the whole model's in the\n"
               "same window)\n");
    fprintf(f, "%-23s %-16s %7s %7s %8s %7s %6s %7s %6s %6s %6s %7s %6s %6s\n", "window",
            "segment", "events", "labeled", "disagree", "mutual", "ens", "mix p", "PSI",
            "KS max", "KS MI", "vs mix", "PSI", "KS max");
    fprintf(f, "%-23s %-16s %7s %7s %8s %7s %6s %7s %6s %6s %6s %7s %6s %6s\n", "", "", "", "",
            "(mean)", "(nats)", "acc", "", "", "p", "p", "p", "", "p");
}

/* The slice's name, sanitised, padded to width (longer names run on). */
static void slice_label(FILE *f, const cc_slice *sl, int width)
{
    long before = ftell(f);
    cc_text_put(f, cc_slice_name(sl));
    long wrote = before >= 0 ? ftell(f) - before : width;
    for (long i = wrote; i < width; i++)
        fputc(' ', f);
}

static void segments_rows(FILE *f, const cc_report *r, const cc_report_window *w)
{
    for (int i = 0; i < w->n_segments; i++) {
        const cc_report_window *sw = &w->segments[i];
        const cc_window_metrics *x = &sw->metrics;
        window_label(f, w);
        fputc(' ', f);
        slice_label(f, &r->slices[sw->slice], 16);
        fprintf(f, " %7lld %7lld", (long long)x->events, (long long)x->labeled);
        fnum(f, 8, 3, x->disagreement.mean);
        fnum(f, 7, 3, x->mutual_information);
        fnum(f, 6, 3, x->has_labels ? x->ensemble_accuracy : NAN);
        fp(f, 7, sw->cmp.class_mix.p_value);
        fnum(f, 6, 3, sw->cmp.class_mix_psi);
        fp(f, 6, sw->cmp.max_prob.p_value);
        fp(f, 6, sw->cmp.mutual_information.p_value);
        fp(f, 7, sw->vs_model.class_mix.p_value);
        fnum(f, 6, 3, sw->vs_model.class_mix_psi);
        fp(f, 6, sw->vs_model.max_prob.p_value);
        fputc('\n', f);
    }
}

static void shift_detail(FILE *f, const cc_report *r, const cc_comparison *c)
{
    const cc_model *m = r->model;
    if (!c->has_baseline)
        return;
    fprintf(f, "\nclass mix of the truth: baseline labels, estimates for this window, and\n"
               "the window's own labels (once they arrive)\n");
    fprintf(f, "  %-12s %9s %9s %9s %9s\n", "class", "baseline", "BBSE", "EM", "labels");
    for (int k = 0; k < m->k; k++) {
        fprintf(f, "  %-12.12s", m->classes[k]);
        fnum(f, 9, 3, c->baseline_priors[k]);
        fnum(f, 9, 3, c->bbse_ok ? c->bbse[k] : NAN);
        fnum(f, 9, 3, c->em_ok ? c->em[k] : NAN);
        fnum(f, 9, 3, c->label_mix[k]);
        fputc('\n', f);
    }
    fprintf(f, "  BBSE: condition number %.3g%s%s; EM: %d iterations%s\n",
            c->bbse_condition_number, c->bbse_regularized ? ", regularized" : "",
            c->bbse_clipped ? ", negative weights clipped" : "", c->em_iterations,
            c->em_converged ? "" : " (did not converge)");
    fprintf(f, "\neach member's predicted-class mix against the baseline (PSI)\n ");
    for (int i = 0; i < m->m; i++) {
        fprintf(f, " %s", m->members[i]);
        fnum(f, 1, 4, c->members_psi[i]);
    }
    fprintf(f, "\nKS per class of the averaged probability (p)\n ");
    for (int k = 0; k < m->k; k++) {
        fprintf(f, " %s", m->classes[k]);
        fp(f, 1, c->per_class[k].p_value);
    }
    fputc('\n', f);
}

static void calibration_detail(FILE *f, const cc_model *m, const cc_comparison *c)
{
    if (!c->has_labels)
        return;
    const cc_calibration *cal = &c->calibration;
    fprintf(f, "\ncalibration of the averaged output on %lld labelled events: ECE %.4f, MCE %.4f, "
               "Brier %.4f, NLL %.4f\n",
            (long long)cal->n, cal->ece, cal->mce, cal->brier, cal->nll);
    fprintf(f, "  %-13s %8s %10s %9s\n", "confidence", "events", "mean conf", "accuracy");
    for (int b = 0; b < CC_CALIB_BINS; b++) {
        if (cal->bins[b].count == 0)
            continue;
        fprintf(f, "  (%.3f,%.3f] %8lld", (double)b / CC_CALIB_BINS, (double)(b + 1) / CC_CALIB_BINS,
                (long long)cal->bins[b].count);
        fnum(f, 10, 3, cal->bins[b].confidence);
        fnum(f, 9, 3, cal->bins[b].accuracy);
        fputc('\n', f);
    }
    fprintf(f, "  members' ECE:");
    for (int i = 0; i < m->m; i++) {
        fprintf(f, " %s", m->members[i]);
        fnum(f, 1, 4, c->member_calibration[i].ece);
    }
    fputc('\n', f);
}

static void matrix(FILE *f, const char *title, const cc_pair_matrix *pm, const cc_model *m)
{
    fprintf(f, "\n%s (mean ", title);
    if (isfinite(pm->mean))
        fprintf(f, "%.3f over %d pairs)\n", pm->mean, pm->defined_pairs);
    else
        fprintf(f, "undefined)\n");
    fprintf(f, "%8s", "");
    for (int j = 0; j < m->m; j++)
        fprintf(f, " %7.7s", m->members[j]);
    fputc('\n', f);
    for (int i = 0; i < m->m; i++) {
        fprintf(f, "%8.8s", m->members[i]);
        for (int j = 0; j < m->m; j++)
            fnum(f, 7, 3, pm->pairs && i != j ? pm->pairs[i * m->m + j] : NAN);
        fputc('\n', f);
    }
}

/* Precision and recall per class, and the confusion matrix of the averaged
 * output (rows: true class, columns: predicted). */
static void per_class(FILE *f, const cc_model *m, const cc_report_window *w)
{
    const cc_figure *prec = cc_figures_find("by_class.precision");
    const cc_figure *rec = cc_figures_find("by_class.recall");
    fprintf(f, "\nper class on labelled events (precision: right of those predicted as the "
               "class; recall: right of those that are)\n  %-12s %9s %9s\n", "class",
            "precision", "recall");
    for (int c = 0; c < m->k; c++) {
        fprintf(f, "  %-12s", m->classes[c]);
        fnum(f, 9, 4, cc_figures_value(prec, &w->metrics, &w->cmp, c));
        fnum(f, 9, 4, cc_figures_value(rec, &w->metrics, &w->cmp, c));
        fputc('\n', f);
    }
    fprintf(f, "\nconfusion matrix (rows: true class, columns: predicted)\n  %-12s", "");
    for (int c = 0; c < m->k; c++)
        fprintf(f, " %10.10s", m->classes[c]);
    fputc('\n', f);
    for (int t = 0; t < m->k; t++) {
        fprintf(f, "  %-12s", m->classes[t]);
        for (int p = 0; p < m->k; p++)
            fprintf(f, " %10lld", (long long)w->metrics.confusion[p * m->k + t]);
        fputc('\n', f);
    }
}

static void timeline(FILE *f, const cc_report_timeline *t)
{
    char d[11];
    fprintf(f, "\nalerts (%s, evaluated day by day over the range)\n", t->rules);
    if (t->n == 0)
        fprintf(f, "  no rule was raised or cleared\n");
    for (int i = 0; i < t->n; i++) {
        const cc_report_alert *a = &t->items[i];
        cc_format_date(a->day, d);
        fprintf(f, "  %s %-8s %-6s %s\n", d, a->kind, a->urgency,
                a->sentence ? a->sentence : a->rule);
    }
    cc_format_date(t->last_day, d);
    fprintf(f, "after %s: %d rule(s) raised", d, t->n_raised);
    for (int i = 0; i < t->n_raised; i++)
        fprintf(f, "%s%s%s%s%s", i ? ", " : ": ", t->raised[i].rule,
                t->raised[i].subject[0] ? " [" : "", t->raised[i].subject,
                t->raised[i].subject[0] ? "]" : "");
    fprintf(f, "; %d not evaluated on that day\n", t->not_evaluated);
}

static void detail(FILE *f, const cc_report *r, const cc_report_window *w)
{
    const cc_model *m = r->model;
    const cc_window_metrics *x = &w->metrics;
    char name[24];
    window_name(w, name);
    fprintf(f, "\ndetail of %s\n", name);
    if (m->m > 1) {
        matrix(f, "disagreement of predicted classes", &x->disagreement, m);
        matrix(f, "Cohen's kappa", &x->kappa, m);
    }
    if (x->has_labels) {
        if (m->m > 1) {
            matrix(f, "Yule's Q on right/wrong", &x->q, m);
            matrix(f, "double fault", &x->double_fault, m);
        }
        fprintf(f, "\naccuracy on %lld labelled events\n", (long long)x->labeled);
        for (int i = 0; i < m->m; i++)
            fprintf(f, "  %-10s %.4f%s\n", m->members[i], x->member_accuracy[i],
                    i == x->best_member ? "  (best member)" : "");
        fprintf(f, "  %-10s %.4f\n  %-10s %.4f  (%lld ties broken to the lowest class)\n"
                   "  %-10s %.4f  (any member right)\n",
                "ensemble", x->ensemble_accuracy, "vote", x->vote_accuracy,
                (long long)x->vote_ties_labeled, "oracle", x->oracle_accuracy);
        fprintf(f, "  McNemar, ensemble vs %s: ensemble only right %lld, member only right "
                   "%lld, exact p = ",
                m->members[x->best_member], (long long)x->mcnemar_ensemble_only,
                (long long)x->mcnemar_best_only);
        fprintf(f, isfinite(x->mcnemar_p) ? "%.4g\n" : "-\n", x->mcnemar_p);
        fprintf(f, "  KW variance %.4f, entropy E %.4f, interrater kappa %.4f, difficulty "
                   "%.4f, generalized diversity %.4f\n",
                x->nonpairwise.kw_variance, x->nonpairwise.entropy_e,
                x->nonpairwise.interrater_kappa, x->nonpairwise.difficulty,
                x->nonpairwise.generalized_diversity);
    }
    if (x->has_labels)
        per_class(f, m, w);
    shift_detail(f, r, &w->cmp);
    calibration_detail(f, m, &w->cmp);
    if (x->n_contested > 0) {
        fprintf(f, "\ncontested class pairs (members' top classes differ; averaged top two)\n");
        for (int i = 0; i < x->n_contested && i < 10; i++)
            fprintf(f, "  %-12s %-12s %lld\n", m->classes[x->contested[i].a],
                    m->classes[x->contested[i].b], (long long)x->contested[i].count);
    }
}

static void head(FILE *f, const cc_report *r)
{
    const cc_model *m = r->model;
    fprintf(f, "model %s: %d members, %d classes\n", m->name, m->m, m->k);
    if (r->slice >= 0) {
        fputs("segment ", f);
        cc_text_put(f, cc_slice_name(&r->slices[r->slice]));
        fprintf(f, ": one slice of %d; its windows and its baseline days are its own\n",
                r->slice_count);
    }
    int64_t over = cc_report_overflow_events(r);
    if (over > 0)
        fprintf(f, "note: the model reached its limit of %d slices; %lld events of further "
                   "segments are summed in the slice (overflow)\n",
                r->slice_limit, (long long)over);
    if (r->has_baseline) {
        char a[11], b[11];
        cc_format_date(r->baseline_from, a);
        cc_format_date(r->baseline_to, b);
        fprintf(f, "baseline %s..%s: %d days, %lld events, %lld labelled\n", a, b,
                r->baseline_days, (long long)r->baseline_events, (long long)r->baseline_labeled);
        char found[4][320];
        int nf = cc_report_findings(r, found, 4);
        for (int i = 0; i < nf; i++)
            fprintf(f, "finding: %s\n", found[i]);
    } else {
        fprintf(f, "no baseline set\n");
    }
}

char *cc_report_text(const cc_report *r) { return cc_report_text_with(r, NULL); }

char *cc_report_text_with(const cc_report *r, const cc_report_timeline *t)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    if (!f)
        return NULL;
    const cc_model *m = r->model;
    head(f, r);
    if (r->n_windows == 0) {
        fprintf(f, "no events in the requested range\n");
    } else {
        fputc('\n', f);
        headline_head(f);
        for (int i = 0; i < r->n_windows; i++)
            headline_row(f, m, &r->windows[i]);
        for (int labels = 0; labels < 2; labels++) {
            class_mix_head(f, m, labels);
            for (int i = 0; i < r->n_windows; i++)
                class_mix_row(f, m, &r->windows[i], labels);
        }
        if (r->has_baseline) {
            drift_head(f);
            for (int i = 0; i < r->n_windows; i++)
                drift_row(f, &r->windows[i]);
        }
        if (r->by_segment) {
            segments_head(f);
            for (int i = 0; i < r->n_windows; i++)
                segments_rows(f, r, &r->windows[i]);
        }
        if (r->n_windows == 1)
            detail(f, r, &r->windows[0]);
    }
    if (t)
        timeline(f, t);
    if (fclose(f) != 0) {
        free(buf);
        return NULL;
    }
    return buf;
}

/* Streaming: each table's rows go to its own text buffer as windows arrive
 * (the text is all that grows with the days), the first window is kept for
 * the detail a one-window report shows. */
enum { T_HEADLINE, T_PREDICTED, T_LABELS, T_DRIFT, T_SEGMENTS, T_TABLES };

typedef struct text_stream {
    FILE *table[T_TABLES];
    char *buf[T_TABLES];
    size_t len[T_TABLES];
    int n_windows;
    cc_report_window first;
} text_stream;

static int text_window(void *payload, const cc_report *r, cc_report_window *w)
{
    text_stream *ts = payload;
    const cc_model *m = r->model;
    if (!w) {
        for (int t = 0; t < T_TABLES; t++)
            if (!(ts->table[t] = open_memstream(&ts->buf[t], &ts->len[t])))
                return 1;
        headline_head(ts->table[T_HEADLINE]);
        class_mix_head(ts->table[T_PREDICTED], m, 0);
        class_mix_head(ts->table[T_LABELS], m, 1);
        drift_head(ts->table[T_DRIFT]);
        segments_head(ts->table[T_SEGMENTS]);
        return 0;
    }
    headline_row(ts->table[T_HEADLINE], m, w);
    class_mix_row(ts->table[T_PREDICTED], m, w, 0);
    class_mix_row(ts->table[T_LABELS], m, w, 1);
    drift_row(ts->table[T_DRIFT], w);
    segments_rows(ts->table[T_SEGMENTS], r, w);
    if (ts->n_windows++ == 0) {
        ts->first = *w;
        ts->first.summary = NULL;
        memset(w, 0, sizeof *w);
    } else if (ts->n_windows == 2) {
        cc_report_window_free(&ts->first);
    }
    for (int t = 0; t < T_TABLES; t++)
        if (ferror(ts->table[t]))
            return 1;
    return 0;
}

int cc_report_write_text(FILE *out, cc_store *store, const cc_report_opts *opts, cc_error *err)
{
    text_stream ts;
    memset(&ts, 0, sizeof ts);
    cc_report *r = NULL;
    int rc = cc_report_stream(&r, store, opts, text_window, &ts, err);
    for (int t = 0; t < T_TABLES; t++)
        if (ts.table[t] && fclose(ts.table[t]) != 0 && !rc)
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
    if (!rc) {
        head(out, r);
        if (ts.n_windows == 0) {
            fprintf(out, "no events in the requested range\n");
        } else {
            fputc('\n', out);
            for (int t = 0; t < T_TABLES; t++)
                if ((t != T_DRIFT || r->has_baseline) && (t != T_SEGMENTS || r->by_segment))
                    fwrite(ts.buf[t], 1, ts.len[t], out);
            if (ts.n_windows == 1)
                detail(out, r, &ts.first);
        }
    }
    for (int t = 0; t < T_TABLES; t++)
        free(ts.buf[t]);
    cc_report_window_free(&ts.first);
    cc_report_free(r);
    return rc;
}
