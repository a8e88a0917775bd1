/* svg.c — the report's charts as inline SVG (see svg.h). Sizes are in SVG
 * user units; the page scales each chart to its column with viewBox. */
#include "svg.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "html_text.h"

#define INK "#1b2d42"
#define PAPER "#fdfbf6"
#define GRID "#e4e0d4"
#define ALERT "#b35900"
#define CHAR_W 6.4   /* width of one character at the charts' 11-unit font, roughly */

static const struct { double t; int r, g, b; } stops[] = {
    {0.00, 0xf5, 0xf0, 0xe1}, {0.25, 0xcf, 0xdc, 0xc4}, {0.50, 0x86, 0xae, 0x9f},
    {0.75, 0x3f, 0x74, 0x79}, {1.00, 0x1b, 0x2d, 0x42}};

void cc_svg_scale(double t, char out[8], int *light_text)
{
    if (!(t >= 0.0))
        t = 0.0;
    if (t > 1.0)
        t = 1.0;
    int i = 0;
    while (i < 3 && t > stops[i + 1].t)
        i++;
    double u = (t - stops[i].t) / (stops[i + 1].t - stops[i].t);
    int r = (int)lround(stops[i].r + u * (stops[i + 1].r - stops[i].r));
    int g = (int)lround(stops[i].g + u * (stops[i + 1].g - stops[i].g));
    int b = (int)lround(stops[i].b + u * (stops[i + 1].b - stops[i].b));
    snprintf(out, 8, "#%02x%02x%02x", r & 0xff, g & 0xff, b & 0xff);
    if (light_text)
        *light_text = t > 0.62;
}

/* Step of about `target` ticks over range, from 1, 2, 5 x 10^n. */
static double nice_step(double range, int target)
{
    double raw = range / target, mag = pow(10.0, floor(log10(raw))), r = raw / mag;
    return (r < 1.5 ? 1.0 : r < 3.0 ? 2.0 : r < 7.0 ? 5.0 : 10.0) * mag;
}

static int step_digits(double step)
{
    int d = (int)ceil(-log10(step) - 1e-9);
    return d < 0 ? 0 : d > 6 ? 6 : d;
}

static void svg_open(FILE *f, const char *id, int w, int h, const char *label)
{
    fprintf(f, "<svg class=\"chart\" id=\"%s\" viewBox=\"0 0 %d %d\" role=\"img\" "
               "aria-label=\"", id, w, h);
    cc_html_escape(f, label);
    fprintf(f, "\" preserveAspectRatio=\"xMinYMin meet\">\n");
}

static void patterns(FILE *f, const char *id)
{
    fprintf(f, "<defs><pattern id=\"%s-hatch\" width=\"6\" height=\"6\" "
               "patternUnits=\"userSpaceOnUse\" patternTransform=\"rotate(45)\">"
               "<rect width=\"6\" height=\"6\" fill=\"" PAPER "\"/>"
               "<line x1=\"0\" y1=\"0\" x2=\"0\" y2=\"6\" stroke=\"#3f7479\" stroke-width=\"2\"/>"
               "</pattern>"
               "<pattern id=\"%s-dots\" width=\"5\" height=\"5\" patternUnits=\"userSpaceOnUse\">"
               "<rect width=\"5\" height=\"5\" fill=\"" PAPER "\"/>"
               "<circle cx=\"2.5\" cy=\"2.5\" r=\"1.3\" fill=\"" ALERT "\"/></pattern>"
               "<pattern id=\"%s-base\" width=\"8\" height=\"8\" patternUnits=\"userSpaceOnUse\" "
               "patternTransform=\"rotate(-45)\"><rect width=\"8\" height=\"8\" fill=\"#f3efe4\"/>"
               "<line x1=\"0\" y1=\"0\" x2=\"0\" y2=\"8\" stroke=\"#e2dccb\" stroke-width=\"3\"/>"
               "</pattern></defs>\n",
            id, id, id);
}

static void y_axis_label(FILE *f, double x, double y, const char *text)
{
    fprintf(f, "<text class=\"axl\" transform=\"translate(%.1f,%.1f) rotate(-90)\" "
               "text-anchor=\"middle\">", x, y);
    cc_html_escape(f, text);
    fputs("</text>\n", f);
}

static void x_axis_label(FILE *f, double x, double y, const char *text)
{
    fprintf(f, "<text class=\"axl\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\">", x, y);
    cc_html_escape(f, text);
    fputs("</text>\n", f);
}

/* Date tick labels under a plot of n windows ("MM-DD", every few). */
static void date_ticks(FILE *f, int n, const char *const *labels, double left, double pw,
                       double y)
{
    /* as many five-character labels as the plot's width holds (at most 16) */
    int cap = (int)(pw / 42.0), every;
    if (cap >= 16) {
        every = n <= 16 ? 1 : (n + 13) / 14;
    } else {
        cap = cap < 2 ? 2 : cap;
        every = (n + cap - 1) / cap;
    }
    for (int i = 0; i < n; i += every) {
        double x = left + (i + 0.5) * pw / n;
        /* "MM-DD" of a date, "HH:MM" of an hour ("YYYY-MM-DD HH:MM") */
        size_t len = strlen(labels[i]);
        fprintf(f, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"" INK "\"/>",
                x, y - 4, x, y);
        fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\">%.5s</text>\n",
                x, y + 12, len >= 16 ? labels[i] + 11 : len >= 10 ? labels[i] + 5 : labels[i]);
    }
}

static void polyline(FILE *f, int n, const double *y, double left, double pw, double top,
                     double ph, double lo, double hi, const char *style)
{
    int open = 0;
    for (int i = 0; i < n; i++) {
        if (!isfinite(y[i])) {
            if (open)
                fputs("\"/>\n", f);
            open = 0;
            continue;
        }
        double x = left + (i + 0.5) * pw / n, yy = top + ph * (hi - y[i]) / (hi - lo);
        if (!open)
            fprintf(f, "<polyline fill=\"none\" %s points=\"", style);
        fprintf(f, "%.1f,%.1f ", x, yy);
        open = 1;
    }
    if (open)
        fputs("\"/>\n", f);
}

void cc_svg_series_chart(FILE *f, const cc_svg_series *s, int *outside)
{
    const int W = s->width > 0 ? s->width : 960, H = 210;
    const double L = 74, R = 16, T = 22, B = 44, pw = W - L - R, ph = H - T - B;
    double lo = INFINITY, hi = -INFINITY;
    const int band = isfinite(s->band_lo) && isfinite(s->band_hi);
    for (int i = 0; i < s->n; i++) {
        if (isfinite(s->y[i]))
            lo = fmin(lo, s->y[i]), hi = fmax(hi, s->y[i]);
        if (s->y2 && isfinite(s->y2[i]))
            lo = fmin(lo, s->y2[i]), hi = fmax(hi, s->y2[i]);
    }
    if (band)
        lo = fmin(lo, s->band_lo), hi = fmax(hi, s->band_hi);
    if (!isfinite(lo))
        lo = 0.0, hi = 1.0;
    if (hi - lo < 1e-9)
        lo -= fabs(lo) * 0.1 + 0.01, hi += fabs(hi) * 0.1 + 0.01;
    double pad = (hi - lo) * 0.08;
    lo -= pad;
    hi += pad;
    double step = nice_step(hi - lo, 4);
    int td = step_digits(step);

    svg_open(f, s->id, W, H, s->y_label);
    patterns(f, s->id);
    fprintf(f, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" fill=\"" PAPER "\" "
               "stroke=\"" GRID "\"/>\n", L, T, pw, ph);
    if (s->base_from >= 0 && s->base_to >= s->base_from) {
        double x0 = L + s->base_from * pw / s->n, x1 = L + (s->base_to + 1) * pw / s->n;
        fprintf(f, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" "
                   "fill=\"url(#%s-base)\"><title>baseline days</title></rect>"
                   "<text class=\"tick halo\" x=\"%.1f\" y=\"%.1f\">baseline</text>\n",
                x0, T, x1 - x0, ph, s->id, x0 + 2, T - 5);
    }
    for (double t = ceil(lo / step) * step; t <= hi + 1e-12; t += step) {
        double y = T + ph * (hi - t) / (hi - lo);
        fprintf(f, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"" GRID "\"/>"
                   "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\">%.*f</text>\n",
                L, y, L + pw, y, L - 6, y + 4, td, fabs(t) < step * 1e-6 ? 0.0 : t);
    }
    if (band) {
        double y0 = T + ph * (hi - s->band_hi) / (hi - lo), y1 = T + ph * (hi - s->band_lo) / (hi - lo);
        double ym = T + ph * (hi - s->band_mid) / (hi - lo);
        fprintf(f, "<rect class=\"band\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" "
                   "fill=\"#d6e2e0\" fill-opacity=\"0.85\"><title>", L, y0, pw, fmax(y1 - y0, 1.0));
        cc_html_escape(f, s->band_text);
        fprintf(f, ": %.*f to %.*f</title></rect>\n", s->digits, s->band_lo, s->digits, s->band_hi);
        fprintf(f, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"#3f7479\" "
                   "stroke-dasharray=\"6 4\"/>\n", L, ym, L + pw, ym);
    }
    if (s->y2)
        polyline(f, s->n, s->y2, L, pw, T, ph, lo, hi,
                 "stroke=\"#3f7479\" stroke-width=\"1.5\" stroke-dasharray=\"2 3\"");
    polyline(f, s->n, s->y, L, pw, T, ph, lo, hi, "stroke=\"" INK "\" stroke-width=\"1.8\"");
    int out = 0;
    for (int i = 0; i < s->n; i++) {
        if (!isfinite(s->y[i]))
            continue;
        double x = L + (i + 0.5) * pw / s->n, y = T + ph * (hi - s->y[i]) / (hi - lo);
        int off = band && (s->y[i] < s->band_lo || s->y[i] > s->band_hi);
        out += off;
        if (off)
            fprintf(f, "<rect class=\"off\" x=\"%.1f\" y=\"%.1f\" width=\"9\" height=\"9\" "
                       "fill=\"" PAPER "\" stroke=\"" ALERT "\" stroke-width=\"2.4\">",
                    x - 4.5, y - 4.5);
        else
            fprintf(f, "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"3\" fill=\"" INK "\">", x, y);
        fputs("<title>", f);
        cc_html_escape(f, s->x_labels[i]);
        fputs(": ", f);
        cc_html_escape(f, s->value_name);
        fprintf(f, " %.*f", s->digits, s->y[i]);
        if (s->y2 && isfinite(s->y2[i])) {
            fputs("; ", f);
            cc_html_escape(f, s->y2_name);
            fprintf(f, " %.*f", s->digits, s->y2[i]);
        }
        if (off)
            fputs(" (outside the band)", f);
        fputs(off ? "</title></rect>\n" : "</title></circle>\n", f);
    }
    fprintf(f, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"" INK "\"/>\n",
            L, T + ph, L + pw, T + ph);
    date_ticks(f, s->n, s->x_labels, L, pw, T + ph + 4);
    y_axis_label(f, 14, T + ph / 2, s->y_label);
    x_axis_label(f, L + pw / 2, H - 4, s->x_label);
    /* legend, top right */
    double lx = L + pw - 8;
    fprintf(f, "<g class=\"legend\" text-anchor=\"end\">");
    if (band) {
        fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"13\">", lx);
        cc_html_escape(f, s->band_text);
        fputs("</text>", f);
        lx -= CHAR_W * (cc_html_chars(s->band_text) + 1) + 14;
        fprintf(f, "<rect x=\"%.1f\" y=\"4\" width=\"12\" height=\"10\" fill=\"#d6e2e0\" "
                   "stroke=\"#3f7479\" stroke-dasharray=\"3 2\"/>", lx + 1);
        lx -= 18;
        fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"13\">outside the band</text>"
                   "<rect x=\"%.1f\" y=\"5\" width=\"8\" height=\"8\" fill=\"" PAPER "\" "
                   "stroke=\"" ALERT "\" stroke-width=\"2\"/>",
                lx, lx - CHAR_W * 16 - 13);
        lx -= CHAR_W * 16 + 26;
    }
    if (s->y2) {
        fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"13\">", lx);
        cc_html_escape(f, s->y2_name);
        fprintf(f, "</text><line x1=\"%.1f\" y1=\"9\" x2=\"%.1f\" y2=\"9\" stroke=\"#3f7479\" "
                   "stroke-width=\"1.5\" stroke-dasharray=\"2 3\"/>",
                lx - CHAR_W * cc_html_chars(s->y2_name) - 22, lx - CHAR_W * cc_html_chars(s->y2_name) - 4);
    }
    fputs("</g>\n</svg>\n", f);
    if (outside)
        *outside = out;
}

static void legend_bar(FILE *f, const char *id, double x, double y, double w, double lo,
                       double hi, int digits, const char *label)
{
    fprintf(f, "<defs><linearGradient id=\"%s-grad\">", id);
    for (int i = 0; i <= 8; i++) {
        char c[8];
        cc_svg_scale(i / 8.0, c, NULL);
        fprintf(f, "<stop offset=\"%.3f\" stop-color=\"%s\"/>", i / 8.0, c);
    }
    fprintf(f, "</linearGradient></defs><rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
               "height=\"10\" fill=\"url(#%s-grad)\" stroke=\"" INK "\" stroke-width=\"0.5\"/>\n",
            x, y, w, id);
    /* enough decimals for the middle tick: 0 to 1 reads 0.0, 0.5, 1.0 */
    int dg = digits < 0 ? 0 : digits, need = hi > lo ? step_digits((hi - lo) / 2.0) : 0;
    dg = dg > need ? dg : need;
    for (int i = 0; i <= 2; i++) {
        double v = lo + (hi - lo) * i / 2.0, xx = x + w * i / 2.0;
        fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"%s\">%.*f</text>",
                xx, y + 22, i == 0 ? "start" : i == 2 ? "end" : "middle", dg, v);
    }
    fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\">", x, y - 4);
    cc_html_escape(f, label);
    fputs("</text>\n", f);
}

void cc_svg_heatmap_chart(FILE *f, const cc_svg_heatmap *h)
{
    int rmax = 4, cmax = 4;
    for (int i = 0; i < h->rows; i++)
        rmax = rmax > cc_html_chars(h->row_names[i]) ? rmax : cc_html_chars(h->row_names[i]);
    for (int j = 0; j < h->cols; j++)
        cmax = cmax > cc_html_chars(h->col_names[j]) ? cmax : cc_html_chars(h->col_names[j]);
    rmax = rmax > 14 ? 14 : rmax;
    cmax = cmax > 14 ? 14 : cmax;
    const double cell = 50, L = 34 + CHAR_W * rmax, T = 26 + CHAR_W * cmax * 0.72;
    /* the last column's label, rotated 45 degrees, reaches past its cell to the right */
    const double reach = fmax(20.0, CHAR_W * cmax * 0.8 - cell / 2 + 12);
    const int W = (int)(L + cell * h->cols + reach), H = (int)(T + cell * h->rows + 62);
    svg_open(f, h->id, W < 260 ? 260 : W, H, h->value_name);
    for (int j = 0; j < h->cols; j++) {
        double x = L + (j + 0.5) * cell;
        fprintf(f, "<text class=\"tick\" transform=\"translate(%.1f,%.1f) rotate(-45)\"><title>",
                x, T - 6);
        cc_html_escape(f, h->col_names[j]);
        fputs("</title>", f);
        cc_html_escape_middle(f, h->col_names[j], 14);
        fputs("</text>\n", f);
    }
    for (int i = 0; i < h->rows; i++) {
        fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\"><title>",
                L - 6, T + (i + 0.5) * cell + 4);
        cc_html_escape(f, h->row_names[i]);
        fputs("</title>", f);
        cc_html_escape_middle(f, h->row_names[i], 14);
        fputs("</text>\n", f);
        for (int j = 0; j < h->cols; j++) {
            double v = h->v[i * h->cols + j], x = L + j * cell, y = T + i * cell;
            if (!isfinite(v)) {
                fprintf(f, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" "
                           "fill=\"" PAPER "\" stroke=\"" GRID "\"><title>", x, y, cell, cell);
                cc_html_escape(f, h->row_names[i]);
                fputs(" / ", f);
                cc_html_escape(f, h->col_names[j]);
                fputs(": no value</title></rect>\n", f);
                continue;
            }
            double t = h->shade ? h->shade[i * h->cols + j] : (v - h->lo) / (h->hi - h->lo);
            char c[8];
            int light;
            cc_svg_scale(t, c, &light);
            fputs("<g><title>", f);
            cc_html_escape(f, h->row_axis);
            fputc(' ', f);
            cc_html_escape(f, h->row_names[i]);
            fputs(", ", f);
            cc_html_escape(f, h->col_axis);
            fputc(' ', f);
            cc_html_escape(f, h->col_names[j]);
            fputs(": ", f);
            cc_html_escape(f, h->value_name);
            if (h->digits < 0)
                fprintf(f, " %.0f", v);
            else
                fprintf(f, " %.*f", h->digits + 1, v);
            fprintf(f, "</title><rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" "
                       "fill=\"%s\" stroke=\"" PAPER "\"/>"
                       "<text class=\"cell\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\" "
                       "fill=\"%s\">",
                    x, y, cell, cell, c, x + cell / 2, y + cell / 2 + 4,
                    light ? "#ffffff" : INK);
            if (h->digits < 0)
                fprintf(f, "%.0f", v);
            else
                fprintf(f, "%.*f", h->digits, v);
            fputs("</text></g>\n", f);
        }
    }
    if (h->row_axis)
        y_axis_label(f, 14, T + cell * h->rows / 2, h->row_axis);
    if (h->col_axis) {
        fprintf(f, "<text class=\"axl\" x=\"%.1f\" y=\"12\" text-anchor=\"middle\">",
                L + cell * h->cols / 2);
        cc_html_escape(f, h->col_axis);
        fputs("</text>\n", f);
    }
    legend_bar(f, h->id, L, T + cell * h->rows + 26, fmax(cell * h->cols, 150.0), h->lo, h->hi,
               h->digits < 0 ? 0 : h->digits, h->legend);
    fputs("</svg>\n", f);
}

/* Legend swatches in rows that wrap at width w; returns the height used. */
static double swatches(FILE *f, double x0, double y0, double w, int n, char *const *names,
                       const char *const *fills)
{
    double x = x0, y = y0;
    for (int i = 0; i < n; i++) {
        double need = 18 + CHAR_W * (cc_html_chars(names[i]) > 20 ? 20 : cc_html_chars(names[i])) + 16;
        if (x + need > x0 + w && x > x0)
            x = x0, y += 16;
        fprintf(f, "<rect x=\"%.1f\" y=\"%.1f\" width=\"12\" height=\"10\" fill=\"%s\" "
                   "stroke=\"" INK "\" stroke-width=\"0.7\"/><text class=\"tick\" x=\"%.1f\" "
                   "y=\"%.1f\">",
                x, y - 9, fills[i], x + 16, y);
        cc_html_escape_short(f, names[i], 20);
        fputs("</text>\n", f);
        x += need;
    }
    return y - y0 + 16;
}

void cc_svg_stacked_chart(FILE *f, const char *id, int n, const char *const *x_labels,
                          const char *x_label, int k, char *const *names, const double *shares,
                          int base_from, int base_to)
{
    const int W = 960;
    const double L = 74, R = 16, ph = 150, pw = W - L - R;
    const int has_base = base_from >= 0 && base_to >= base_from && base_to < n;
    int rows = 1;
    double x = 0;
    for (int c = 0; c < k; c++) {
        double need = 18 + CHAR_W * (cc_html_chars(names[c]) > 20 ? 20 : cc_html_chars(names[c])) + 16;
        if (x + need > pw && x > 0)
            rows++, x = 0;
        x += need;
    }
    /* legend rows, then a line for the baseline bracket, then the bars */
    const double T = 34 + 16 * (rows - 1) + (has_base ? 16 : 0);
    const int H = (int)(T + ph + 48);
    svg_open(f, id, W, H, "class mix per window");
    char (*fills)[8] = k > 0 ? calloc((size_t)k, sizeof *fills) : NULL;
    const char **fp = k > 0 ? calloc((size_t)k, sizeof *fp) : NULL;
    if (!fills || !fp) {
        free(fills);
        free(fp);
        fputs("</svg>\n", f);
        return;
    }
    for (int c = 0; c < k; c++) {
        cc_svg_scale(k > 1 ? (double)c / (k - 1) : 0.5, fills[c], NULL);
        fp[c] = fills[c];
    }
    swatches(f, L, 16, pw, k, names, fp);
    double bw = pw / n;
    if (has_base) {
        double x0 = L + base_from * bw + bw * 0.1, x1 = L + (base_to + 1) * bw - bw * 0.1;
        fprintf(f, "<defs><pattern id=\"%s-over\" width=\"6\" height=\"6\" "
                   "patternUnits=\"userSpaceOnUse\" patternTransform=\"rotate(-45)\">"
                   "<line x1=\"0\" y1=\"0\" x2=\"0\" y2=\"6\" stroke=\"" PAPER "\" "
                   "stroke-width=\"1.6\" stroke-opacity=\"0.8\"/></pattern></defs>\n"
                   "<polyline points=\"%.1f,%.1f %.1f,%.1f %.1f,%.1f %.1f,%.1f\" fill=\"none\" "
                   "stroke=\"" INK "\"/>"
                   "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\">baseline</text>\n",
                id, x0, T - 4, x0, T - 9, x1, T - 9, x1, T - 4, x0 + 4, T - 12);
    }
    for (int i = 0; i < n; i++) {
        double y = T + ph;
        for (int c = k - 1; c >= 0; c--) {
            double s = shares[(size_t)i * k + c];
            if (!(s > 0))
                continue;
            double hgt = s * ph;
            y -= hgt;
            fprintf(f, "<rect x=\"%.1f\" y=\"%.2f\" width=\"%.1f\" height=\"%.2f\" fill=\"%s\" "
                       "stroke=\"" PAPER "\" stroke-width=\"0.6\"><title>",
                    L + i * bw + bw * 0.1, y, bw * 0.8, hgt, fills[c]);
            cc_html_escape(f, x_labels[i]);
            fputs(": ", f);
            cc_html_escape(f, names[c]);
            fprintf(f, " %.1f %%%s</title></rect>\n", 100.0 * s,
                    has_base && i >= base_from && i <= base_to ? " (a baseline day)" : "");
        }
        if (has_base && i >= base_from && i <= base_to && y < T + ph) {
            /* on top of the bars, but lets the pointer through to their titles */
            fprintf(f, "<rect class=\"base-day\" x=\"%.1f\" y=\"%.2f\" width=\"%.1f\" "
                       "height=\"%.2f\" fill=\"url(#%s-over)\" pointer-events=\"none\"/>\n",
                    L + i * bw + bw * 0.1, y, bw * 0.8, T + ph - y, id);
        }
    }
    for (int t = 0; t <= 4; t++) {
        double y = T + ph * (1 - t / 4.0);
        fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\">%d</text>", L - 6,
                y + 4, 25 * t);
    }
    fprintf(f, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"" INK "\"/>\n", L,
            T + ph, L + pw, T + ph);
    date_ticks(f, n, x_labels, L, pw, T + ph + 4);
    y_axis_label(f, 14, T + ph / 2, "% of events");
    x_axis_label(f, L + pw / 2, T + ph + 40, x_label);
    fputs("</svg>\n", f);
    (void)rows;
    free(fills);
    free(fp);
}

void cc_svg_grouped_bars(FILE *f, const char *id, int groups, char *const *group_names,
                         int series, const char *const *series_names, const double *v,
                         const char *y_label)
{
    const int W = 960, H = 290;
    const double L = 74, R = 16, T = 40, B = 52, pw = W - L - R, ph = H - T - B;
    double hi = 0.0;
    for (int i = 0; i < groups * series; i++)
        if (isfinite(v[i]) && v[i] > hi)
            hi = v[i];
    hi = hi <= 0 ? 1.0 : hi * 1.1;
    double step = nice_step(hi, 4);
    svg_open(f, id, W, H, y_label);
    patterns(f, id);
    char fills[5][40];
    snprintf(fills[0], sizeof fills[0], INK);
    snprintf(fills[1], sizeof fills[1], "#86ae9f");
    snprintf(fills[2], sizeof fills[2], "url(#%.20s-hatch)", id);
    snprintf(fills[3], sizeof fills[3], "url(#%.20s-dots)", id);
    snprintf(fills[4], sizeof fills[4], PAPER);
    const char *fp[5] = {fills[0], fills[1], fills[2], fills[3], fills[4]};
    swatches(f, L, 16, pw, series > 5 ? 5 : series, (char *const *)series_names, fp);
    for (double t = 0; t <= hi + 1e-12; t += step) {
        double y = T + ph * (1 - t / hi);
        fprintf(f, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"" GRID "\"/>"
                   "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\">%.0f</text>\n",
                L, y, L + pw, y, L - 6, y + 4, 100 * t);
    }
    double gw = pw / groups, bw = gw * 0.8 / series;
    for (int g = 0; g < groups; g++) {
        for (int s = 0; s < series && s < 5; s++) {
            double val = v[s * groups + g];
            if (!isfinite(val))
                continue;
            double hgt = ph * val / hi, x = L + g * gw + gw * 0.1 + s * bw;
            fprintf(f, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" fill=\"%s\" "
                       "stroke=\"" INK "\" stroke-width=\"0.8\"><title>",
                    x, T + ph - hgt, bw * 0.92, hgt, fp[s]);
            cc_html_escape(f, group_names[g]);
            fputs(", ", f);
            cc_html_escape(f, series_names[s]);
            fprintf(f, ": %.1f %%</title></rect>\n", 100 * val);
        }
        fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\"><title>",
                L + (g + 0.5) * gw, T + ph + 16);
        cc_html_escape(f, group_names[g]);
        fputs("</title>", f);
        cc_html_escape_short(f, group_names[g], (int)(gw / CHAR_W) > 3 ? (int)(gw / CHAR_W) : 3);
        fputs("</text>\n", f);
    }
    fprintf(f, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"" INK "\"/>\n", L,
            T + ph, L + pw, T + ph);
    y_axis_label(f, 14, T + ph / 2, y_label);
    x_axis_label(f, L + pw / 2, H - 8, "class");
    fputs("</svg>\n", f);
}

void cc_svg_hbars(FILE *f, const char *id, int n, char *const *labels, const double *counts,
                  const char *x_label)
{
    int lmax = 6;
    for (int i = 0; i < n; i++)
        lmax = cc_html_chars(labels[i]) > lmax ? cc_html_chars(labels[i]) : lmax;
    lmax = lmax > 36 ? 36 : lmax;
    const int W = 960, H = 40 + 22 * (n > 0 ? n : 1) + 24;
    const double L = 16 + CHAR_W * lmax, pw = W - L - 80, T = 14;
    double hi = 0;
    for (int i = 0; i < n; i++)
        hi = counts[i] > hi ? counts[i] : hi;
    svg_open(f, id, W, H, x_label);
    if (n == 0)
        fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"30\">none in this range</text>\n", L);
    for (int i = 0; i < n; i++) {
        double y = T + 22 * i, w = hi > 0 ? pw * counts[i] / hi : 0;
        fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\">", L - 6,
                y + 14);
        cc_html_escape_short(f, labels[i], 36);
        fprintf(f, "</text><rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"16\" "
                   "fill=\"#3f7479\"><title>", L, y + 2, w > 1 ? w : 1);
        cc_html_escape(f, labels[i]);
        fprintf(f, ": %.0f</title></rect><text class=\"tick\" x=\"%.1f\" y=\"%.1f\">%.0f</text>\n",
                counts[i], L + (w > 1 ? w : 1) + 6, y + 14, counts[i]);
    }
    double ya = T + 22 * (n > 0 ? n : 1) + 4;
    fprintf(f, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"" INK "\"/>\n", L,
            ya, L + pw, ya);
    x_axis_label(f, L + pw / 2, ya + 22, x_label);
    fputs("</svg>\n", f);
}

void cc_svg_reliability(FILE *f, const char *id, const cc_calibration *cal)
{
    const int W = 460, H = 490;
    const double L = 64, T = 36, P = 320, S = 62, gap = 34;
    svg_open(f, id, W, H, "reliability diagram");
    patterns(f, id);
    /* legend above the plot, so that no label sits on the bins */
    fprintf(f, "<g class=\"legend\"><line x1=\"%.1f\" y1=\"11\" x2=\"%.1f\" y2=\"11\" "
               "stroke=\"" ALERT "\" stroke-dasharray=\"5 4\"/>"
               "<text class=\"tick\" x=\"%.1f\" y=\"15\">accuracy = confidence</text>"
               "<rect x=\"%.1f\" y=\"5\" width=\"12\" height=\"12\" fill=\"url(#%s-hatch)\" "
               "stroke=\"#3f7479\" stroke-width=\"0.6\"/>"
               "<text class=\"tick\" x=\"%.1f\" y=\"15\">gap</text>"
               "<circle cx=\"%.1f\" cy=\"11\" r=\"4\" fill=\"" INK "\"/>"
               "<text class=\"tick\" x=\"%.1f\" y=\"15\">a bin's accuracy</text></g>\n",
            L, L + 24, L + 30, L + 30 + CHAR_W * 21 + 14, id, L + 30 + CHAR_W * 21 + 32,
            L + 30 + CHAR_W * 24 + 48, L + 30 + CHAR_W * 24 + 58);
    fprintf(f, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" fill=\"" PAPER "\" "
               "stroke=\"" GRID "\"/>\n", L, T, P, P);
    for (int t = 0; t <= 5; t++) {
        double v = t / 5.0, x = L + P * v, y = T + P * (1 - v);
        fprintf(f, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"" GRID "\"/>"
                   "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\">%.1f</text>"
                   "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\">%.1f</text>\n",
                L, y, L + P, y, L - 6, y + 4, v, x, T + P + S + gap + 16, v);
    }
    int64_t most = 0;
    for (int b = 0; b < CC_CALIB_BINS; b++)
        most = cal->bins[b].count > most ? cal->bins[b].count : most;
    for (int b = 0; b < CC_CALIB_BINS; b++) {
        const cc_calib_bin *bin = &cal->bins[b];
        double x0 = L + P * b / CC_CALIB_BINS, bw = P / CC_CALIB_BINS;
        if (bin->count > 0) {
            double ys = T + S * 0 + P + gap + S * (1 - (double)bin->count / (double)most);
            fprintf(f, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" "
                       "fill=\"#86ae9f\" stroke=\"" INK "\" stroke-width=\"0.5\"><title>"
                       "confidence %.3f to %.3f: %lld events</title></rect>\n",
                    x0 + 1, ys, bw - 2, T + P + gap + S - ys, (double)b / CC_CALIB_BINS,
                    (double)(b + 1) / CC_CALIB_BINS, (long long)bin->count);
        }
        if (bin->count == 0 || !isfinite(bin->accuracy))
            continue;
        double ya = T + P * (1 - bin->accuracy), yc = T + P * (1 - bin->confidence);
        fprintf(f, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" "
                   "fill=\"url(#%s-hatch)\" stroke=\"#3f7479\" stroke-width=\"0.6\"><title>"
                   "gap between mean confidence %.3f and accuracy %.3f</title></rect>\n",
                x0 + 2, fmin(ya, yc), bw - 4, fabs(yc - ya) > 0.5 ? fabs(yc - ya) : 0.5, id,
                bin->confidence, bin->accuracy);
        fprintf(f, "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"4\" fill=\"" INK "\"><title>confidence "
                   "%.3f to %.3f: %lld events, mean confidence %.3f, accuracy %.3f</title>"
                   "</circle>\n",
                L + P * bin->confidence, ya, (double)b / CC_CALIB_BINS,
                (double)(b + 1) / CC_CALIB_BINS, (long long)bin->count, bin->confidence,
                bin->accuracy);
    }
    fprintf(f, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"" ALERT "\" "
               "stroke-dasharray=\"5 4\"><title>accuracy = confidence</title></line>\n",
            L, T + P, L + P, T);
    y_axis_label(f, 14, T + P / 2, "accuracy (share right)");
    y_axis_label(f, 14, T + P + gap + S / 2, "events");
    fprintf(f, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\">%lld</text>\n",
            L - 6, T + P + gap + 4, (long long)most);
    x_axis_label(f, L + P / 2, H - 8, "confidence: the averaged output's top probability");
    fputs("</svg>\n", f);
}
