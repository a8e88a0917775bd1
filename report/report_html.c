/* report_html.c — the report as one self-contained HTML page: inline CSS and
 * inline SVG drawn here, no script, no font or image fetched from anywhere
 * (a Content-Security-Policy of default-src 'none' says so to the browser).
 * Every string that came from the logs is escaped (html_text.h). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"
#include "html_slices.h"
#include "html_text.h"
#include "page_inputs.h"
#include "report.h"
#include "review.h"
#include "review_render.h"
#include "svg.h"
#include "figures.h"
#include "tracked.h"

static const char css[] =
    ":root{--ink:#1b2d42;--paper:#fdfbf6;--rule:#d8d2c2;--teal:#3f7479;--alert:#b35900;"
    "--muted:#56646d}\n"
    "*{box-sizing:border-box}\n"
    "body{margin:0;background:#ebe7dc;color:var(--ink);"
    "font:14px/1.45 \"DejaVu Sans\",Verdana,sans-serif}\n"
    "main{max-width:1020px;margin:0 auto;background:var(--paper);padding:26px 34px 40px;"
    "border-left:1px solid var(--rule);border-right:1px solid var(--rule)}\n"
    ".masthead{border-bottom:3px double var(--ink);padding-bottom:10px}\n"
    ".kicker{letter-spacing:.2em;text-transform:uppercase;font-size:11px;color:var(--teal);"
    "margin:0}\n"
    "h1{font:600 27px/1.2 \"DejaVu Serif\",Georgia,serif;margin:4px 0 6px;"
    "overflow-wrap:anywhere}\n"
    "h2{font:600 19px/1.3 \"DejaVu Serif\",Georgia,serif;border-left:7px solid var(--teal);"
    "padding-left:10px;margin:36px 0 8px}\n"
    "h3{font-size:14px;margin:18px 0 4px}\n"
    ".meta{margin:0;color:var(--muted);font-size:13px}\n"
    ".note{margin:6px 0 0;font-size:13px;border:1px dashed var(--alert);padding:4px 8px;"
    "display:inline-block}\n"
    "nav{font-size:12.5px;margin:12px 0 0}nav a{color:var(--teal);margin-right:14px}\n"
    ".status{border:1.5px solid var(--ink);background:#fff;padding:10px 14px;margin:18px 0 0}\n"
    ".status.attention{border-left:12px solid var(--alert)}"
    ".status.quiet{border-left:12px solid var(--teal)}\n"
    ".status p{margin:2px 0}.status ul{margin:4px 0 0;padding-left:20px}\n"
    ".lede{color:var(--muted);font-size:13px;margin:0 0 8px}\n"
    "figure{margin:12px 0 20px;break-inside:avoid}\n"
    ".multiples{display:grid;grid-template-columns:repeat(auto-fill,minmax(290px,1fr));"
    "gap:0 14px}\n"
    ".multiples figure{margin:4px 0 10px}\n"
    "table.slices td,table.slices th{padding:3px 8px;text-align:right;"
    "border-bottom:1px solid var(--rule)}\n"
    "table.slices th[scope=row]{text-align:left;max-width:22ch;overflow-wrap:anywhere}\n"
    "table.slices .sub{display:block;font-weight:normal;color:var(--muted)}\n"
    "table.slices td{white-space:nowrap}table.slices th[scope=row]{min-width:9ch}\n"
    "figcaption{font-size:12.5px;color:var(--muted);margin:0 0 4px}figcaption b{color:var(--ink)}\n"
    "svg.chart{width:100%;height:auto;display:block}\n"
    "svg text{font-family:\"DejaVu Sans\",Verdana,sans-serif}\n"
    ".tick{font-size:11px;fill:var(--ink)}.axl{font-size:11.5px;fill:var(--muted);"
    "font-style:italic}.cell{font-size:12px}\n"
    ".trio{display:grid;grid-template-columns:repeat(auto-fit,minmax(270px,1fr));gap:8px 18px}\n"
    ".trio.solo{grid-template-columns:1fr}.trio.solo svg.chart{max-width:780px}\n"
    ".duo{display:grid;grid-template-columns:minmax(300px,460px) 1fr;gap:18px;align-items:start}\n"
    ".trio>*,.duo>*{min-width:0}\n"
    ".scroll{max-width:100%;overflow-x:auto;margin:6px 0 14px}.scroll>table{margin:0}\n"
    ".halo{paint-order:stroke;stroke:var(--paper);stroke-width:3px;stroke-linejoin:round}\n"
    "table{border-collapse:collapse;font-size:12.5px;width:100%;margin:6px 0 14px}\n"
    "th{text-align:left;border-bottom:1.5px solid var(--ink);font-weight:600;"
    "vertical-align:bottom}\n"
    "td,th{padding:3px 6px;vertical-align:top}tbody tr:nth-child(even) td{background:#f4f1e7}\n"
    ".num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}\n"
    ".id{font-family:\"DejaVu Sans Mono\",monospace}\n"
    "table.events{font-size:11.5px}table.events td{white-space:nowrap}\n"
    "table.events td.seg{white-space:normal;overflow-wrap:anywhere}\n"
    ".yes{font-weight:700}.no{color:var(--alert);font-weight:700}\n"
    ".empty{color:var(--muted);font-style:italic}\n"
    "footer{margin-top:40px;border-top:1px solid var(--rule);padding-top:8px;font-size:12px;"
    "color:var(--muted)}\n"
    "@media (max-width:720px){main{padding:14px}.duo{grid-template-columns:1fr}}\n"
    "@media print{body{background:#fff}main{border:0;max-width:none;padding:0}"
    ".scroll{overflow:visible}"
    "nav{display:none}h2{break-after:avoid}figure,table{break-inside:avoid}}\n";

typedef struct daily_spec {
    const char *path, *id, *title, *y_label, *value_name, *second_path, *second_name;
    int digits;
} daily_spec;

static const daily_spec daily[] = {
    {"diversity.disagreement.mean", "chart-disagreement", "Disagreement between members",
     "pairs that differ (0-1)", "disagreement", NULL, NULL, 3},
    {"uncertainty.mutual_information", "chart-mutual-information",
     "Mutual information (members' disagreement in the averaged output)", "nats per event",
     "mutual information", NULL, NULL, 3},
    {"uncertainty.entropy", "chart-entropy", "Predictive entropy of the averaged output",
     "nats per event", "entropy", NULL, NULL, 3},
    {"accuracy.ensemble", "chart-accuracy", "Accuracy on labelled events",
     "share right (0-1)", "ensemble accuracy", "accuracy.best_member_accuracy",
     "best member", 3},
    {"labels.coverage", "chart-label-coverage", "Label coverage", "labelled share (0-1)",
     "coverage", NULL, NULL, 3},
    {"drift.class_mix.psi", "chart-class-mix-psi",
     "Drift of the predicted class mix against the baseline (PSI)", "PSI (no unit)", "PSI",
     NULL, NULL, 3},
};
#define N_DAILY ((int)(sizeof daily / sizeof *daily))

static int tracked_index(const char *path)
{
    for (int t = 0; t < cc_tracked_count(); t++)
        if (strcmp(cc_tracked_path(t), path) == 0)
            return t;
    return -1;
}

static void esc(FILE *f, const char *s) { cc_html_escape(f, s); }

static void fmt_num(FILE *f, double x, int digits)
{
    if (isfinite(x))
        fprintf(f, "%.*f", digits, x);
    else
        fputs("&ndash;", f);
}

/* The report's range as one window (its windows' summaries merged, borrowed). */
typedef struct whole {
    const cc_summary *sum;
    cc_window_metrics wm;
    cc_comparison cmp;
    int ok;
} whole;

static int whole_build(whole *w, const cc_report_page *pg)
{
    const cc_report *r = pg->r;
    memset(w, 0, sizeof *w);
    if (pg->n == 0)
        return 0;
    w->sum = pg->range;
    if (cc_window_metrics_compute(&w->wm, w->sum))
        return -1;
    if (cc_comparison_compute_cached(&w->cmp, w->sum, r->has_baseline ? r->baseline : NULL,
                                     r->cmp_cache)) {
        cc_window_metrics_free(&w->wm);
        return -1;
    }
    w->ok = 1;
    return 0;
}

static void whole_free(whole *w)
{
    if (w->ok) {
        cc_window_metrics_free(&w->wm);
        cc_comparison_free(&w->cmp);
    }
}

typedef struct page {
    FILE *f;
    const cc_report *r;         /* the head */
    const cc_report_page *pg;   /* the windows' numbers */
    int n;                      /* windows */
    const cc_html_extras *x;
    char (*dates)[17];          /* window labels: a date, or "YYYY-MM-DD HH:00" */
    const char **labels;
    int base_from, base_to;
    int outside[N_DAILY];
    int *outside_days;          /* per window: charts on which it is outside the band */
    whole all;
} page;

static void band_of(const page *p, int t, double *lo, double *mid, double *hi)
{
    *lo = *mid = *hi = NAN;
    if (!p->r->has_baseline || t < 0)
        return;
    const cc_baseline_stat *b = &p->r->stats[t];
    if (b->n < CC_BASELINE_MIN_DAYS || !isfinite(b->sd) || b->sd <= 0)
        return;
    /* never past what the figure can take (PSI >= 0, rates in [0, 1]) */
    double nlo, nhi;
    int index;
    cc_figures_range(cc_tracked_figure(t, p->r->model->m, p->r->model->k, &index), &nlo, &nhi);
    *mid = b->mean;
    *lo = fmax(b->mean - p->x->band_k * b->sd, nlo);
    *hi = fmin(b->mean + p->x->band_k * b->sd, nhi);
}

static const char *x_axis_name(cc_grouping by)
{
    return by == CC_BY_WEEK ? "ISO week (Monday, UTC)" : by == CC_BY_HOUR ? "UTC hour" : "UTC day";
}

static void masthead(page *p)
{
    FILE *f = p->f;
    const cc_report *r = p->r;
    const cc_model *m = r->model;
    fputs("<header class=\"masthead\"><p class=\"kicker\">concord &middot; ensemble report</p>"
          "<h1>", f);
    esc(f, m->name);
    fprintf(f, "</h1>\n<p class=\"meta\">%d members (", m->m);
    for (int i = 0; i < m->m; i++) {
        if (i)
            fputs(", ", f);
        esc(f, m->members[i]);
    }
    fprintf(f, ") &middot; %d classes", m->k);
    if (p->n > 0 && r->by == CC_BY_HOUR) {
        fprintf(f, " &middot; %s to %s, %d UTC hour%s with events", p->dates[0],
                p->dates[p->n - 1], p->n, p->n == 1 ? "" : "s");
    } else if (p->n > 0) {
        char to[11];
        cc_format_date(p->pg->to[p->n - 1], to);
        fprintf(f, " &middot; %s to %s, %d %s", p->dates[0], to, p->n,
                r->by == CC_BY_DAY ? (p->n == 1 ? "day" : "days")
                : r->by == CC_BY_WEEK ? "ISO weeks" : "window");
    }
    if (r->has_baseline) {
        char a[11], b[11];
        cc_format_date(r->baseline_from, a);
        cc_format_date(r->baseline_to, b);
        fprintf(f, " &middot; baseline %s to %s: %d days, %lld events, %lld labelled", a, b,
                r->baseline_days, (long long)r->baseline_events,
                (long long)r->baseline_labeled);
    } else {
        fputs(" &middot; no baseline set, so no bands and no drift", f);
    }
    fputs("</p>\n", f);
    if (p->x->note) {
        fputs("<p class=\"note\">", f);
        esc(f, p->x->note);
        fputs("</p>\n", f);
    }
    fputs("<nav><a href=\"#status\">status</a><a href=\"#daily\">day by day</a>", f);
    if (cc_html_slices_shown(p->pg))
        fputs("<a href=\"#slices\">slices</a>", f);
    fputs("<a href=\"#pairs\">member pairs</a><a href=\"#classmix\">class mix</a>"
          "<a href=\"#reliability\">reliability</a><a href=\"#contested\">contested pairs</a>"
          "<a href=\"#review\">review</a></nav></header>\n", f);
}

/* The verdict comes from the alert rules replayed over the page's days
 * (the caller's rules, or the default rules); the bands only illustrate. */
static void status_line(page *p, int n_days_off)
{
    FILE *f = p->f;
    const cc_html_extras *x = p->x;
    const cc_report_timeline *t = x->timeline;
    (void)n_days_off;
    int attention = t ? t->n_raised > 0 : x->alerts_known && x->n_alerts > 0;
    fprintf(f, "<section id=\"status\" class=\"status %s\">\n",
            attention ? "attention" : "quiet");
    if (t) {
        char d[11];
        fprintf(f, "<p><b>Alerts raised after the last day: %d</b> (", t->n_raised);
        esc(f, t->rules);
        fputs(", replayed day by day over these days)</p>", f);
        if (t->n_raised > 0) {
            fputs("<ul>", f);
            for (int i = 0; i < t->n_raised; i++) {
                const cc_report_alert *a = &t->raised[i];
                char line[512];
                cc_format_date(a->since, d);
                snprintf(line, sizeof line, "%s (%s): raised since %s; %s%s%s%s = %.4g, bound %.4g",
                         a->rule, a->urgency, d, a->metric, a->subject[0] ? " [" : "",
                         a->subject, a->subject[0] ? "]" : "", a->value, a->bound);
                fputs("<li>", f);
                esc(f, line);
                fputs("</li>", f);
            }
            fputs("</ul>\n", f);
        }
        fprintf(f, "<p>%d transition(s) over the range", t->n);
        for (int i = 0; i < t->n && i < 12; i++) {
            cc_format_date(t->items[i].day, d);
            fprintf(f, "%s%s %s ", i ? "; " : ": ", d, t->items[i].kind);
            esc(f, t->items[i].rule);
            if (t->items[i].subject[0]) {
                fputs(" [", f);
                esc(f, t->items[i].subject);
                fputs("]", f);
            }
        }
        if (t->n > 12)
            fprintf(f, "; and %d more", t->n - 12);
        fputs(".", f);
        if (t->not_evaluated > 0)
            fprintf(f, " %d rule(s) could not judge the last day (too few events or labels, "
                       "or no baseline spread): not evaluated, which is not healthy.",
                    t->not_evaluated);
        fputs("</p>\n", f);
    } else if (x->alerts_known) {
        fprintf(f, "<p><b>Alerts raised: %d</b></p>", x->n_alerts);
        if (x->n_alerts > 0) {
            fputs("<ul>", f);
            for (int i = 0; i < x->n_alerts; i++) {
                fputs("<li>", f);
                esc(f, x->alerts[i]);
                fputs("</li>", f);
            }
            fputs("</ul>\n", f);
        }
    } else {
        fputs("<p><b>Alerts:</b> not evaluated for this page.</p>\n", f);
    }
    if (!p->r->has_baseline)
        fputs("<p>No baseline is set: there is no band, and rules that compare with the "
              "baseline are not evaluated.</p>\n", f);
    else if (p->r->baseline_days < CC_BASELINE_MIN_DAYS)
        fprintf(f, "<p>The baseline has %d day(s) with events; a band needs at least %d, so "
                   "there is no band and sigma rules are not evaluated.</p>\n",
                p->r->baseline_days, (int)CC_BASELINE_MIN_DAYS);
    else
        fprintf(f, "<p>The charts shade the baseline days' mean &plusmn; %g sd, clipped to "
                   "what each figure can take; a point outside the shade is not an alert by "
                   "itself.</p>\n",
                x->band_k);
    fputs("</section>\n", f);
}

static void daily_section(page *p, FILE *charts)
{
    const cc_report *r = p->r;
    const cc_report_page *pg = p->pg;
    int n = p->n;
    double *y = malloc(sizeof(double) * (size_t)(n ? n : 1));
    double *y2 = malloc(sizeof(double) * (size_t)(n ? n : 1));
    fputs("<section id=\"daily\"><h2>Day by day</h2>\n<p class=\"lede\">One point per window. ",
          charts);
    if (r->has_baseline)
        fprintf(charts, "The shaded band is the baseline days' mean &plusmn; %g standard "
                        "deviations (a Shewhart-style limit, common practice); a square marks "
                        "a window outside it. Hatched columns are the baseline's own days. ",
                p->x->band_k);
    else
        fputs("No baseline is set, so there is no band to compare with. ", charts);
    fputs("Hover a point for its value.</p>\n", charts);
    for (int c = 0; c < N_DAILY && y && y2; c++) {
        int t = tracked_index(daily[c].path), t2 = daily[c].second_path
                                                       ? tracked_index(daily[c].second_path)
                                                       : -1;
        for (int i = 0; i < n; i++) {
            y[i] = t >= 0 ? pg->tracked[(size_t)i * pg->nt + t] : NAN;
            y2[i] = t2 >= 0 ? pg->tracked[(size_t)i * pg->nt + t2] : NAN;
        }
        cc_svg_series s = {0};
        s.id = daily[c].id;
        s.y_label = daily[c].y_label;
        s.value_name = daily[c].value_name;
        s.n = n;
        s.y = y;
        s.y2 = t2 >= 0 ? y2 : NULL;
        s.y2_name = daily[c].second_name;
        s.x_labels = p->labels;
        s.x_label = x_axis_name(r->by);
        band_of(p, t, &s.band_lo, &s.band_mid, &s.band_hi);
        char band_text[64];
        snprintf(band_text, sizeof band_text, "baseline mean \xC2\xB1 %g sd", p->x->band_k);
        s.band_text = band_text;
        s.base_from = p->base_from;
        s.base_to = p->base_to;
        s.digits = daily[c].digits;
        fprintf(charts, "<figure><figcaption><b>%s</b>", daily[c].title);
        if (isfinite(s.band_mid))
            fprintf(charts, " &middot; baseline %.*f, band %.*f to %.*f", s.digits, s.band_mid,
                    s.digits, s.band_lo, s.digits, s.band_hi);
        fputs("</figcaption>\n", charts);
        cc_svg_series_chart(charts, &s, &p->outside[c]);
        fputs("</figure>\n", charts);
        for (int i = 0; i < n && isfinite(s.band_lo); i++)
            if (isfinite(y[i]) && (y[i] < s.band_lo || y[i] > s.band_hi))
                p->outside_days[i]++;
    }
    /* class mix per window */
    const cc_model *m = r->model;
    static const double none[1];
    const double *shares = n > 0 ? pg->shares : none;
    fputs("<figure><figcaption><b>Class mix of the ensemble's answers</b> per window "
          "(share of events per class)</figcaption>\n", charts);
    cc_svg_stacked_chart(charts, "chart-class-mix-daily", n, p->labels,
                         x_axis_name(r->by), m->k,
                         m->classes, shares, p->base_from, p->base_to);
    fputs("</figure>\n", charts);
    fputs("</section>\n", charts);
    free(y);
    free(y2);
}

static void heatmap_fig(FILE *f, const char *id, const char *caption, const cc_pair_matrix *pm,
                        const cc_model *m, const char *value_name, double lo, double hi,
                        const char *legend)
{
    fprintf(f, "<figure><figcaption><b>%s</b> &middot; mean ", caption);
    fmt_num(f, pm->mean, 3);
    fputs("</figcaption>\n", f);
    double *v = malloc(sizeof(double) * (size_t)m->m * (size_t)m->m);
    if (v) {
        for (int i = 0; i < m->m * m->m; i++)
            v[i] = pm->pairs && i / m->m != i % m->m ? pm->pairs[i] : NAN;
        cc_svg_heatmap h = {id, m->m, m->m, v, NULL, m->members, m->members, "member", "member",
                            value_name, lo, hi, legend, 2};
        cc_svg_heatmap_chart(f, &h);
        free(v);
    }
    fputs("</figure>\n", f);
}

static void pairs_section(page *p)
{
    FILE *f = p->f;
    const cc_report *r = p->r;
    const cc_model *m = r->model;
    fputs("<section id=\"pairs\"><h2>Member pairs</h2>\n<p class=\"lede\">Each cell compares "
          "two members; the value is printed in the cell and given on hover. Disagreement: "
          "share of events on which the two predict different classes. Cohen's &kappa;: "
          "agreement beyond chance (Cohen 1960). Yule's Q on right/wrong: how alike their "
          "mistakes are, from &minus;1 to 1 (Kuncheva &amp; Whitaker 2003). Columns: the "
          "baseline, the whole range, and the last window.</p>\n", f);
    if (m->m < 2 || p->n == 0) {
        fputs("<p class=\"empty\">Needs two members and at least one window.</p></section>\n", f);
        return;
    }
    cc_window_metrics base;
    int has_base = r->has_baseline && r->baseline &&
                   cc_window_metrics_compute(&base, r->baseline) == 0;
    const cc_window_metrics *last = &p->pg->last->metrics;
    char last_name[64];
    snprintf(last_name, sizeof last_name, "last window, %s", p->dates[p->n - 1]);
    const struct { const char *what, *key; } rows[] = {
        {"disagreement", "dis"}, {"Cohen's kappa", "kappa"}, {"Yule's Q", "q"}};
    for (int row = 0; row < 3; row++) {
        /* with many members three maps side by side are too small to read */
        fprintf(f, "<h3>%s</h3><div class=\"trio%s\">\n", rows[row].what,
                m->m > 6 ? " solo" : "");
        for (int col = 0; col < 3; col++) {
            const cc_window_metrics *wm = col == 0 ? (has_base ? &base : NULL)
                                          : col == 1 ? &p->all.wm
                                                     : last;
            if (!wm || (col == 2 && p->n < 2))
                continue;
            const char *cap = col == 0 ? "baseline" : col == 1 ? "whole range" : last_name;
            const cc_pair_matrix *pm = row == 0 ? &wm->disagreement
                                       : row == 1 ? &wm->kappa
                                                  : &wm->q;
            char id[48];
            snprintf(id, sizeof id, "heat-%s-%s", rows[row].key,
                     col == 0 ? "baseline" : col == 1 ? "range" : "last");
            if (row == 2 && !wm->has_labels) {
                fprintf(f, "<figure><figcaption><b>%s</b></figcaption><p class=\"empty\">no "
                           "labels</p></figure>\n", cap);
                continue;
            }
            heatmap_fig(f, id, cap, pm, m,
                        row == 0 ? "disagreement" : row == 1 ? "kappa" : "Q",
                        row == 2 ? -1.0 : 0.0, 1.0,
                        row == 0 ? "disagreement, 0 to 1"
                        : row == 1 ? "kappa, 0 to 1 (below 0 drawn as 0)"
                                   : "Q, -1 to 1");
        }
        fputs("</div>\n", f);
    }
    if (has_base)
        cc_window_metrics_free(&base);
    fputs("</section>\n", f);
}

static void classmix_section(page *p)
{
    FILE *f = p->f;
    const cc_model *m = p->r->model;
    fputs("<section id=\"classmix\"><h2>Class mix</h2>\n<p class=\"lede\">Over the whole "
          "range: the ensemble's answers, the baseline's labels, the two estimates of the "
          "true class mix that need no labels (BBSE, Lipton et al. 2018; EM, Saerens et al. "
          "2002), and the range's own labels once they arrive. The estimates assume that only "
          "the class mix moved.</p>\n", f);
    if (!p->all.ok) {
        fputs("<p class=\"empty\">No events in the range.</p></section>\n", f);
        return;
    }
    const cc_comparison *c = &p->all.cmp;
    const cc_window_metrics *wm = &p->all.wm;
    const cc_layout *lay = cc_summary_layout(p->all.sum);
    const int64_t *sv = cc_summary_data(p->all.sum);
    double *v = malloc(sizeof(double) * 5 * (size_t)m->k);
    if (!v) {
        fputs("</section>\n", f);
        return;
    }
    for (int k = 0; k < m->k; k++) {
        v[0 * m->k + k] = (double)wm->class_counts[k] / (double)wm->events;
        v[1 * m->k + k] = c->has_baseline ? c->baseline_priors[k] : NAN;
        v[2 * m->k + k] = c->has_baseline && c->bbse_ok ? c->bbse[k] : NAN;
        v[3 * m->k + k] = c->has_baseline && c->em_ok ? c->em[k] : NAN;
        v[4 * m->k + k] = sv[lay->n_labeled] > 0 ? (double)sv[lay->label_counts + k] /
                                                       (double)sv[lay->n_labeled]
                                                 : NAN;
    }
    const char *names[5] = {"ensemble's answers", "labels, baseline", "BBSE estimate",
                            "EM estimate", "labels, this range"};
    fputs("<figure><figcaption><b>Share of events per class</b>", f);
    if (c->has_baseline)
        fprintf(f, " &middot; PSI of the answers against the baseline %.3f", c->class_mix_psi);
    fputs("</figcaption>\n", f);
    cc_svg_grouped_bars(f, "chart-class-mix", m->k, m->classes, 5, names, v, "% of events");
    fputs("</figure>\n", f);
    fputs("<div class=\"scroll\"><table><thead><tr><th>class</th>", f);
    for (int s = 0; s < 5; s++)
        fprintf(f, "<th class=\"num\">%s</th>", names[s]);
    fputs("</tr></thead><tbody>\n", f);
    for (int k = 0; k < m->k; k++) {
        fputs("<tr><td>", f);
        esc(f, m->classes[k]);
        fputs("</td>", f);
        for (int s = 0; s < 5; s++) {
            fputs("<td class=\"num\">", f);
            if (isfinite(v[s * m->k + k]))
                fprintf(f, "%.1f %%", 100 * v[s * m->k + k]);
            else
                fputs("&ndash;", f);
            fputs("</td>", f);
        }
        fputs("</tr>\n", f);
    }
    fputs("</tbody></table></div></section>\n", f);
    free(v);
}

static void reliability_section(page *p)
{
    FILE *f = p->f;
    fputs("<section id=\"reliability\"><h2>Reliability</h2>\n", f);
    if (!p->all.ok || !p->all.cmp.has_labels) {
        fputs("<p class=\"empty\">No labelled events in the range.</p>"
              "<svg class=\"chart\" id=\"chart-reliability\" viewBox=\"0 0 460 40\">"
              "<text class=\"tick\" x=\"10\" y=\"24\">no labelled events</text></svg>"
              "</section>\n", f);
        return;
    }
    const cc_calibration *cal = &p->all.cmp.calibration;
    fprintf(f, "<div class=\"duo\"><figure><figcaption><b>Accuracy against confidence</b> on "
               "%lld labelled events, %d equal-width bins (Guo et al. 2017)</figcaption>\n",
            (long long)cal->n, CC_CALIB_BINS);
    cc_svg_reliability(f, "chart-reliability", cal);
    fputs("</figure><div><p class=\"lede\">A dot below the dashed line means that in this bin "
          "the ensemble was right less often than its confidence said (over-confident); a dot "
          "above it, that it was right more often than it claimed (under-confident). The "
          "hatched bar is the gap, in either direction. The bars underneath count the events "
          "in each bin.", f);
    int64_t over = 0, under = 0;
    for (int b = 0; b < CC_CALIB_BINS; b++) {
        const cc_calib_bin *bin = &cal->bins[b];
        if (bin->count > 0 && isfinite(bin->accuracy) && bin->accuracy < bin->confidence)
            over += bin->count;
        else if (bin->count > 0 && isfinite(bin->accuracy) && bin->accuracy > bin->confidence)
            under += bin->count;
    }
    if (cal->n > 0)
        fprintf(f, " Here %.0f %% of the labelled events fall in bins above the line "
                   "(under-confident) and %.0f %% in bins below it (over-confident).",
                100.0 * (double)under / (double)cal->n, 100.0 * (double)over / (double)cal->n);
    fputs("</p><table><tbody>", f);
    fprintf(f, "<tr><td>expected calibration error (ECE)</td><td class=\"num\">%.4f</td></tr>"
               "<tr><td>largest bin gap (MCE)</td><td class=\"num\">%.4f</td></tr>"
               "<tr><td>Brier score (0 to 2)</td><td class=\"num\">%.4f</td></tr>"
               "<tr><td>log-loss (nats)</td><td class=\"num\">%.4f</td></tr>",
            cal->ece, cal->mce, cal->brier, cal->nll);
    fputs("</tbody></table></div></div></section>\n", f);
}

static void contested_section(page *p)
{
    FILE *f = p->f;
    const cc_model *m = p->r->model;
    fputs("<section id=\"contested\"><h2>Contested class pairs</h2>\n<p class=\"lede\">Events "
          "on which the members' classes were not unanimous, counted by the averaged output's "
          "top two classes (the ten largest pairs of the range).</p>\n", f);
    int n = p->all.ok ? p->all.wm.n_contested : 0;
    n = n > 10 ? 10 : n;
    char **labels = calloc((size_t)(n ? n : 1), sizeof *labels);
    double *counts = calloc((size_t)(n ? n : 1), sizeof *counts);
    for (int i = 0; labels && counts && i < n; i++) {
        const struct cc_contested *c = &p->all.wm.contested[i];
        size_t len = strlen(m->classes[c->a]) + strlen(m->classes[c->b]) + 4;
        if ((labels[i] = malloc(len)))
            snprintf(labels[i], len, "%s / %s", m->classes[c->a], m->classes[c->b]);
        else
            n = i;
        counts[i] = (double)c->count;
    }
    fputs("<figure><figcaption><b>Events per contested pair</b></figcaption>\n", f);
    if (labels && counts)
        cc_svg_hbars(f, "chart-contested", n, labels, counts, "events");
    fputs("</figure></section>\n", f);
    for (int i = 0; labels && i < n; i++)
        free(labels[i]);
    free(labels);
    free(counts);
}

static void event_rows(FILE *f, const cc_review_event *ev, int n, const cc_model *m)
{
    fputs("<div class=\"scroll\"><table class=\"events\"><thead><tr><th>#</th><th>id</th>"
          "<th>time (UTC)</th>"
          "<th>segment</th>"
          "<th>label</th><th>ensemble</th><th class=\"num\">margin</th>"
          "<th class=\"num\">MI (nats)</th>", f);
    for (int i = 0; i < m->m; i++) {
        fputs("<th>", f);
        esc(f, m->members[i]);
        fputs("</th>", f);
    }
    fputs("</tr></thead><tbody>\n", f);
    for (int r = 0; r < n; r++) {
        const cc_review_event *e = &ev[r];
        const cc_event_view *v = &e->view;
        char t[21];
        cc_review_format_time(e->ts, t);
        fprintf(f, "<tr><td class=\"num\">%d</td><td class=\"id\" title=\"", r + 1);
        esc(f, e->id);
        fputs("\">", f);
        cc_html_escape_short(f, e->id, 22);
        fprintf(f, "</td><td class=\"num\">%.10s %.8s</td><td class=\"seg\">", t, t + 11);
        if (e->segment)
            esc(f, e->segment);
        else
            fputs("&ndash;", f);
        fputs("</td><td>", f);
        if (e->label >= 0)
            esc(f, m->classes[e->label]);
        else
            fputs("&ndash;", f);
        fputs("</td><td>", f);
        esc(f, m->classes[v->ens]);
        fprintf(f, " %.2f%s</td><td class=\"num\">%.3f</td><td class=\"num\">%.3f</td>",
                v->avg[v->ens], v->ens_right < 0 ? "" : v->ens_right ? " &#10003;" : " &#10007;",
                v->margin, v->mutual_information);
        for (int i = 0; i < m->m; i++) {
            const float *row = e->probs + (size_t)i * (size_t)m->k;
            int c = v->member_class[i];
            fputs("<td>", f);
            if (v->member_right[i] >= 0)
                fprintf(f, "<span class=\"%s\" title=\"%s\">%s</span> ",
                        v->member_right[i] ? "yes" : "no",
                        v->member_right[i] ? "right" : "wrong",
                        v->member_right[i] ? "&#10003;" : "&#10007;");
            esc(f, m->classes[c]);
            fprintf(f, " %.2f</td>", row[c]);
        }
        fputs("</tr>\n", f);
    }
    fputs("</tbody></table></div>\n", f);
}

static void review_section(page *p)
{
    FILE *f = p->f;
    const cc_model *m = p->r->model;
    const cc_review *rv = p->x->review;
    fputs("<section id=\"review\"><h2>Review of the range</h2>\n", f);
    if (!rv) {
        fputs("<p class=\"empty\">The event lists were not read for this page.</p>"
              "</section>\n", f);
        return;
    }
    const cc_review_summary *s = cc_review_get_summary(rv);
    const cc_review_opts *o = cc_review_get_opts(rv);
    char a[21], b[21];
    cc_review_format_time(o->from, a);
    cc_review_format_time(o->to, b);
    fprintf(f, "<p class=\"lede\">From the stored events of %s to %s: %lld events, %lld "
               "labelled.", a, b, (long long)s->events, (long long)s->labeled);
    if (s->best_member >= 0) {
        fputs(" The best member of the range is <b>", f);
        esc(f, m->members[s->best_member]);
        fprintf(f, "</b> (accuracy %.3f; the ensemble %.3f).",
                (double)s->member_correct[s->best_member] / (double)s->labeled,
                s->ensemble_accuracy);
    }
    fputs(" &#10003; right, &#10007; wrong.</p>\n", f);
    if (o->sample_every > 1)
        fprintf(f, "<p class=\"note\" id=\"review-sample\"><b>A sample.</b> The range has "
                   "%lld events; to keep this page quick to write, its review read the %lld "
                   "whose storage number (SQLite rowid, given in arrival order) is a multiple "
                   "of %lld, about one in %lld, spread over the range. The counts and lists "
                   "below are of these events only. <code>concord review</code> reads every "
                   "event of a range, and <code>concord report --format html --review-max "
                   "all</code> writes this page from all of them.</p>\n",
                (long long)p->x->review_range_events, (long long)s->events,
                (long long)o->sample_every, (long long)o->sample_every);
    fprintf(f, "<table class=\"counts\"><tbody>"
               "<tr><td>wrong: the ensemble wrong</td><td class=\"num\">%lld</td></tr>"
               "<tr><td>helped: the ensemble right, the best member wrong</td>"
               "<td class=\"num\">%lld</td></tr>"
               "<tr><td>hurt: the best member right, the ensemble wrong</td>"
               "<td class=\"num\">%lld</td></tr>"
               "<tr><td>members not unanimous</td><td class=\"num\">%lld</td></tr>"
               "<tr><td>unlabelled</td><td class=\"num\">%lld</td></tr></tbody></table>\n",
            (long long)s->wrong, (long long)s->helped, (long long)s->hurt,
            (long long)s->split_events, (long long)s->low_margin);
    if (s->labeled > 0) {
        double *v = malloc(sizeof(double) * (size_t)m->k * (size_t)m->k);
        double *shade = malloc(sizeof(double) * (size_t)m->k * (size_t)m->k);
        if (v && shade) {
            for (int t = 0; t < m->k; t++) {
                int64_t row = 0;
                for (int c = 0; c < m->k; c++)
                    row += s->confusion[(size_t)t * m->k + c];
                for (int c = 0; c < m->k; c++) {
                    v[t * m->k + c] = (double)s->confusion[(size_t)t * m->k + c];
                    shade[t * m->k + c] = row ? v[t * m->k + c] / (double)row : 0.0;
                }
            }
            fputs("<div class=\"duo\"><figure><figcaption><b>Confusion of the ensemble</b> "
                  "(events; colour: share of the label's row)</figcaption>\n", f);
            cc_svg_heatmap h = {"heat-confusion", m->k, m->k, v, shade, m->classes, m->classes,
                                "label", "ensemble's class", "events", 0.0, 1.0,
                                "share of the row, 0 to 1", -1};
            cc_svg_heatmap_chart(f, &h);
            fputs("</figure><div><h3>Lone voices on labelled events</h3><div class=\"scroll\">"
                  "<table><thead><tr>"
                  "<th>member</th><th class=\"num\">accuracy</th><th class=\"num\">alone "
                  "right</th><th class=\"num\">alone wrong</th></tr></thead><tbody>\n", f);
            for (int i = 0; i < m->m; i++) {
                fputs("<tr><td>", f);
                esc(f, m->members[i]);
                fprintf(f, "%s</td><td class=\"num\">%.3f</td><td class=\"num\">%lld</td>"
                           "<td class=\"num\">%lld</td></tr>\n",
                        i == s->best_member ? " (best)" : "",
                        (double)s->member_correct[i] / (double)s->labeled,
                        (long long)s->lone_right[i], (long long)s->lone_wrong[i]);
            }
            fputs("</tbody></table></div></div></div>\n", f);
        }
        free(v);
        free(shade);
    }
    static const struct { cc_review_where w; const char *title; } lists[] = {
        {CC_REVIEW_WRONG, "The ensemble was wrong (most confident first)"},
        {CC_REVIEW_HELPED, "Averaging helped: the ensemble right, the best member wrong"},
        {CC_REVIEW_HURT, "Averaging hurt: the best member right, the ensemble wrong"},
        {CC_REVIEW_TOP_MI, "Highest mutual information"},
        {CC_REVIEW_TOP_DISAGREEMENT, "Most member pairs disagreeing"},
        {CC_REVIEW_LOW_MARGIN, "Unlabelled closest calls (smallest margin)"},
    };
    for (size_t l = 0; l < sizeof lists / sizeof *lists; l++) {
        int n;
        int64_t matched;
        const cc_review_event *ev = cc_review_get_list(rv, lists[l].w, &n, &matched);
        if (!(o->lists & (1u << lists[l].w)))
            continue;
        fprintf(f, "<h3 id=\"list-%s\">%s &middot; %d of %lld</h3>\n",
                cc_review_where_name(lists[l].w), lists[l].title, n, (long long)matched);
        if (n == 0)
            fputs("<p class=\"empty\">none</p>\n", f);
        else
            event_rows(f, ev, n, m);
    }
    fputs("</section>\n", f);
}

char *cc_report_page_html(const cc_report_page *pg, const cc_html_extras *extras)
{
    cc_html_extras defaults = CC_HTML_EXTRAS_INIT;
    const cc_report *r = pg->r;
    page p;
    memset(&p, 0, sizeof p);
    p.r = r;
    p.pg = pg;
    p.n = pg->n;
    p.x = extras ? extras : &defaults;
    p.base_from = p.base_to = -1;
    int n = pg->n;
    p.dates = malloc(sizeof *p.dates * (size_t)(n ? n : 1));
    p.labels = malloc(sizeof *p.labels * (size_t)(n ? n : 1));
    p.outside_days = calloc((size_t)(n ? n : 1), sizeof *p.outside_days);
    char *buf = NULL, *charts_buf = NULL;
    size_t len = 0, charts_len = 0;
    FILE *charts = NULL;
    if (!p.dates || !p.labels || !p.outside_days || whole_build(&p.all, pg) ||
        !(p.f = open_memstream(&buf, &len)) ||
        !(charts = open_memstream(&charts_buf, &charts_len)))
        goto fail;
    for (int i = 0; i < n; i++) {
        cc_format_date(pg->from[i], p.dates[i]);
        if (r->by == CC_BY_HOUR)
            snprintf(p.dates[i] + 10, 7, " %02d:00",
                     (int)((pg->ts_from[i] - pg->from[i] * 86400) / 3600));
        p.labels[i] = p.dates[i];
        if (r->has_baseline && pg->from[i] >= r->baseline_from &&
            pg->to[i] <= r->baseline_to) {
            if (p.base_from < 0)
                p.base_from = i;
            p.base_to = i;
        }
    }
    FILE *f = p.f;
    fputs("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\n"
          "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "
          "style-src 'unsafe-inline'; img-src data:\">\n"
          "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
          "<title>concord report: ", f);
    esc(f, r->model->name);
    fprintf(f, "</title>\n<style>\n%s</style></head>\n<body><main>\n", css);
    masthead(&p);
    /* the charts are drawn first: the status line counts what they show */
    daily_section(&p, charts);
    if (fclose(charts) != 0) {
        charts = NULL;
        goto fail;
    }
    charts = NULL;
    int days_off = 0;
    for (int i = 0; i < n; i++)
        days_off += p.outside_days[i] > 0;
    status_line(&p, days_off);
    fputs(charts_buf, f);
    cc_html_slices_section(f, pg, p.labels, x_axis_name(r->by));
    pairs_section(&p);
    classmix_section(&p);
    reliability_section(&p);
    contested_section(&p);
    review_section(&p);
    fputs("<footer>Written by concord from the stored per-day summaries (charts) and the "
          "stored event rows (review). Disagreement and &kappa; need no labels; Q, accuracy "
          "and reliability use the labelled events only. Mutual information = entropy of "
          "the averaged output minus the members' mean entropy (Depeweg et al. 2018). PSI "
          "with &epsilon; = 10<sup>&minus;4</sup> smoothing. Statistical signals, not "
          "verdicts.</footer>\n</main></body></html>\n", f);
    if (fclose(p.f) != 0) {
        p.f = NULL;
        goto fail;
    }
    free(charts_buf);
    free(p.dates);
    free(p.labels);
    free(p.outside_days);
    whole_free(&p.all);
    return buf;
fail:
    if (charts)
        fclose(charts);
    if (p.f)
        fclose(p.f);
    free(charts_buf);
    free(buf);
    free(p.dates);
    free(p.labels);
    free(p.outside_days);
    whole_free(&p.all);
    return NULL;
}

char *cc_report_html(const cc_report *r, const cc_html_extras *extras)
{
    cc_report_page *pg = cc_report_page_of(r);
    char *out = pg ? cc_report_page_html(pg, extras) : NULL;
    cc_report_page_free(pg);
    return out;
}
