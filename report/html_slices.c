/* html_slices.c — the slice section of the HTML page: one table row per
 * slice over the page's windows (from each window's per-slice rows, i.e.
 * report --by-segment), and small multiples: for the figures whose values
 * differ most between slices on some window, one small daily chart per
 * slice, with the whole model's line beside the slice's. Figures come from
 * the registry (figures.h); nothing is computed here but medians and
 * extremes of those values. */
#include "html_slices.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"
#include "figures.h"
#include "html_text.h"
#include "page_inputs.h"
#include "svg.h"

/* Figures the section may chart; the table shows the first four. */
static const struct candidate {
    const char *path, *title, *y_label;
    int lowest;                 /* the table shows the lowest value (accuracy), not the highest */
} cands[] = {
    {"diversity.disagreement.mean", "Disagreement", "share of member pairs", 0},
    {"uncertainty.mutual_information", "Mutual information", "nats", 0},
    {"accuracy.ensemble", "Ensemble accuracy", "share of labelled events", 1},
    {"drift.class_mix.psi", "Class-mix PSI (own baseline)", "PSI", 0},
    {"uncertainty.entropy", "Entropy of the averaged output", "nats", 0},
    {"drift.max_prob.ks", "KS distance of the top probability", "KS D", 0},
};
#define N_CANDS ((int)(sizeof cands / sizeof *cands))
_Static_assert(N_CANDS == CC_PAGE_SLICE_FIGS, "page_inputs.h keeps one number per candidate");
#define N_TABLE 4
#define N_CHARTED 2

int cc_html_slices_shown(const cc_report_page *pg)
{
    return pg->r->by_segment && pg->r->n_slices >= 2 && pg->n > 0;
}

void cc_html_slices_figs(const cc_window_metrics *wm, const cc_comparison *cmp, double *out)
{
    for (int c = 0; c < N_CANDS; c++) {
        const cc_figure *fig = cc_figures_find(cands[c].path);
        out[c] = fig ? cc_figures_value(fig, wm, cmp, 0) : NAN;
    }
}

/* The value of candidate c for slice s in window i; NAN without a row. */
static double slice_value(const cc_report_page *pg, int i, int s, int c)
{
    if (s >= pg->n_slices)
        return NAN;
    return pg->slice_figs[((size_t)i * pg->n_slices + s) * CC_PAGE_SLICE_FIGS + c];
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

/* Median of the defined values among n; NAN when none. Reorders v. */
static double median(double *v, int n)
{
    int k = 0;
    for (int i = 0; i < n; i++)
        if (isfinite(v[i]))
            v[k++] = v[i];
    if (k == 0)
        return NAN;
    qsort(v, (size_t)k, sizeof *v, cmp_double);
    return k % 2 ? v[k / 2] : (v[k / 2 - 1] + v[k / 2]) / 2;
}

static void cell_num(FILE *f, double x)
{
    if (isfinite(x))
        fprintf(f, "%.3f", x);
    else
        fputs("&ndash;", f);
}

/* How far apart the slices are on candidate c: the largest spread between
 * slices on one window, in units of the whole model's baseline day-to-day
 * sd (of the typical value when there is no baseline spread). */
static double spread_score(const cc_report_page *pg, int c, double *scratch)
{
    const cc_report *r = pg->r;
    const cc_figure *fig = cc_figures_find(cands[c].path);
    int slot = fig && r->stats ? cc_tracked_slot(fig, 0, r->model->m, r->model->k) : -1;
    double scale = slot >= 0 && r->stats[slot].n >= 2 && r->stats[slot].sd > 0
                       ? r->stats[slot].sd
                       : NAN;
    double best = 0;
    int n = 0;
    for (int i = 0; i < pg->n; i++) {
        double lo = INFINITY, hi = -INFINITY;
        for (int s = 0; s < r->n_slices; s++) {
            double v = slice_value(pg, i, s, c);
            if (!isfinite(v))
                continue;
            scratch[n++] = fabs(v);
            lo = fmin(lo, v);
            hi = fmax(hi, v);
        }
        if (hi > lo)
            best = fmax(best, hi - lo);
    }
    if (!isfinite(scale))
        scale = median(scratch, n);
    return isfinite(scale) && scale > 0 ? best / scale : 0;
}

static void table(FILE *f, const cc_report_page *pg, const char *const *x_labels,
                  double *scratch)
{
    const cc_report *r = pg->r;
    fputs("<div class=\"scroll\"><table class=\"slices\"><thead><tr><th>slice</th>"
          "<th>windows</th><th>events</th><th>labelled</th>", f);
    for (int c = 0; c < N_TABLE; c++) {
        fputs("<th>", f);
        cc_html_escape(f, cands[c].title);
        fprintf(f, " <span class=\"sub\">median &middot; %s (window)</span></th>",
                cands[c].lowest ? "lowest" : "highest");
    }
    fputs("</tr></thead><tbody>\n", f);
    for (int s = 0; s < r->n_slices; s++) {
        int64_t events = 0, labeled = 0;
        int windows = 0;
        for (int i = 0; i < pg->n && s < pg->n_slices; i++) {
            size_t at = (size_t)i * pg->n_slices + s;
            if (pg->slice_events[at] > 0) {     /* a window's slice row has events */
                events += pg->slice_events[at];
                labeled += pg->slice_labeled[at];
                windows++;
            }
        }
        if (windows == 0)
            continue;
        fputs("<tr><th scope=\"row\">", f);
        cc_html_escape_short(f, cc_slice_name(&r->slices[s]), 40);
        fprintf(f, "</th><td>%d</td><td>%lld</td><td>%lld</td>", windows, (long long)events,
                (long long)labeled);
        for (int c = 0; c < N_TABLE; c++) {
            int at = -1;
            double ext = NAN;
            for (int i = 0; i < pg->n; i++) {
                double v = scratch[i] = slice_value(pg, i, s, c);
                if (isfinite(v) && (at < 0 || (cands[c].lowest ? v < ext : v > ext))) {
                    ext = v;
                    at = i;
                }
            }
            fputs("<td>", f);
            cell_num(f, median(scratch, pg->n));
            fputs(" &middot; ", f);
            cell_num(f, ext);
            if (at >= 0) {
                fputs(" (", f);
                cc_html_escape(f, x_labels[at]);
                fputs(")", f);
            }
            fputs("</td>", f);
        }
        fputs("</tr>\n", f);
    }
    fputs("</tbody></table></div>\n", f);
}

/* One small chart per slice for candidate c, the whole model's line beside. */
static void multiples(FILE *f, const cc_report_page *pg, int c, const char *const *x_labels,
                      const char *x_label, double *y, double *whole)
{
    const cc_report *r = pg->r;
    for (int i = 0; i < pg->n; i++)
        whole[i] = pg->whole[(size_t)i * CC_PAGE_SLICE_FIGS + c];
    fputs("<h3>", f);
    cc_html_escape(f, cands[c].title);
    fputs(", per slice</h3>\n<div class=\"multiples\">\n", f);
    for (int s = 0; s < r->n_slices; s++) {
        int any = 0;
        for (int i = 0; i < pg->n; i++)
            any |= isfinite(y[i] = slice_value(pg, i, s, c));
        if (!any)
            continue;
        char id[48];
        snprintf(id, sizeof id, "chart-slice-%d-%d", c, s);
        cc_svg_series ser;
        memset(&ser, 0, sizeof ser);
        ser.id = id;
        ser.y_label = cands[c].y_label;
        ser.value_name = cands[c].title;
        ser.n = pg->n;
        ser.y = y;
        ser.y2 = whole;
        ser.y2_name = "whole model";
        ser.x_labels = x_labels;
        ser.x_label = x_label;
        ser.band_lo = ser.band_mid = ser.band_hi = NAN;
        ser.band_text = "";
        ser.base_from = ser.base_to = -1;
        ser.digits = 3;
        ser.width = 400;        /* small multiples: three in a row on a wide page */
        int outside = 0;
        fputs("<figure><figcaption><b>", f);
        cc_html_escape_short(f, cc_slice_name(&r->slices[s]), 40);
        fputs("</b> &middot; thin line: the whole model</figcaption>\n", f);
        cc_svg_series_chart(f, &ser, &outside);
        fputs("</figure>\n", f);
    }
    fputs("</div>\n", f);
}

void cc_html_slices_section(FILE *f, const cc_report_page *pg, const char *const *x_labels,
                            const char *x_label)
{
    if (!cc_html_slices_shown(pg))
        return;
    const cc_report *r = pg->r;
    size_t n = (size_t)pg->n * (size_t)(r->n_slices + 1) + 1;
    double *scratch = malloc(n * sizeof *scratch);
    double *y = malloc((size_t)pg->n * sizeof *y);
    double *whole = malloc((size_t)pg->n * sizeof *whole);
    if (!scratch || !y || !whole) {
        free(scratch);
        free(y);
        free(whole);
        fputs("<section id=\"slices\"><h2>Slices</h2><p>Out of memory: the slice section "
              "was left out.</p></section>\n", f);
        return;
    }
    fputs("<section id=\"slices\"><h2>Slices</h2>\n<p>Each slice is one value of the events' "
          "segment (a line, a camera, a site), set against its own baseline days (as in "
          "'concord report --by-segment'). A fault in one slice is diluted in the "
          "whole model's figures by the healthy slices: look here for a slice that moves "
          "alone.</p>\n", f);
    table(f, pg, x_labels, scratch);
    /* the figures that differ most between slices, largest first */
    double score[N_CANDS];
    int order[N_CANDS];
    for (int c = 0; c < N_CANDS; c++) {
        score[c] = spread_score(pg, c, scratch);
        order[c] = c;
    }
    for (int a = 1; a < N_CANDS; a++)
        for (int b = a; b > 0 && score[order[b]] > score[order[b - 1]]; b--) {
            int t = order[b];
            order[b] = order[b - 1];
            order[b - 1] = t;
        }
    fputs("<p>The figures below differ most between slices on some window (spread between "
          "slices in units of the whole model's baseline day-to-day standard deviation:", f);
    for (int c = 0; c < N_CHARTED; c++) {
        fprintf(f, "%s", c ? "; " : " ");
        cc_html_escape(f, cands[order[c]].title);
        fprintf(f, " %.1f", score[order[c]]);
    }
    fputs(").</p>\n", f);
    for (int c = 0; c < N_CHARTED; c++)
        if (score[order[c]] > 0)
            multiples(f, pg, order[c], x_labels, x_label, y, whole);
    fputs("</section>\n", f);
    free(scratch);
    free(y);
    free(whole);
}
