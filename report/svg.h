/* svg.h — the charts of the HTML report, drawn as inline SVG into a stream:
 * a daily strip with the baseline band, a heat map with printed values, a
 * stacked share chart, grouped bars, horizontal bars and a reliability
 * diagram. Every chart has axis labels with units and a <title> on each mark
 * (shown on hover). Colours come from one sequential scale whose lightness
 * falls steadily, so it reads in greyscale and without red-green contrast;
 * marks that matter also differ in shape or pattern, not only in colour.
 * Names passed in are escaped here. */
#ifndef CC_REPORT_SVG_H
#define CC_REPORT_SVG_H

#include <stdio.h>

#include "calibration.h"

/* The scale at t in [0, 1] (clamped) as "#rrggbb"; ink says whether text on
 * it should be light (1) or dark (0). */
void cc_svg_scale(double t, char out[8], int *light_text);

/* A series per window with the baseline band lo..hi around mid. */
typedef struct cc_svg_series {
    const char *id;               /* element id prefix, plain ASCII */
    const char *y_label;          /* axis label with its unit */
    const char *value_name;       /* for hover titles */
    int n;
    const double *y;              /* n values, NAN = undefined */
    const double *y2;             /* a second, thinner line, or NULL */
    const char *y2_name;
    const char *const *x_labels;  /* n labels "YYYY-MM-DD", or "YYYY-MM-DD HH:00" for hours */
    const char *x_label;          /* axis label of x */
    double band_lo, band_mid, band_hi;  /* NAN without a baseline */
    const char *band_text;        /* legend of the band */
    int base_from, base_to;       /* window indices of the baseline days; -1 without */
    int digits;                   /* decimals of values */
    int width;                    /* in SVG units; 0: the page's full width (960) */
} cc_svg_series;

/* Draws the chart; *outside gets how many defined points lie outside the band. */
void cc_svg_series_chart(FILE *f, const cc_svg_series *s, int *outside);

typedef struct cc_svg_heatmap {
    const char *id;
    int rows, cols;
    const double *v;              /* rows * cols, NAN = no value */
    const double *shade;          /* rows * cols in [0, 1] for the colour, or NULL: from v */
    char *const *row_names;
    char *const *col_names;
    const char *row_axis, *col_axis;
    const char *value_name;       /* for hover titles */
    double lo, hi;                /* colour domain of v */
    const char *legend;           /* label of the colour legend */
    int digits;                   /* decimals printed in the cells; -1 for counts */
} cc_svg_heatmap;

void cc_svg_heatmap_chart(FILE *f, const cc_svg_heatmap *h);

/* Shares per window stacked to 1 (k classes). The windows base_from..base_to
 * (indices; -1 without a baseline) are hatched over and bracketed "baseline". */
void cc_svg_stacked_chart(FILE *f, const char *id, int n, const char *const *x_labels,
                          const char *x_label, int k, char *const *names, const double *shares,
                          int base_from, int base_to);

/* Grouped vertical bars: groups (classes) x series, values are shares 0..1. */
void cc_svg_grouped_bars(FILE *f, const char *id, int groups, char *const *group_names,
                         int series, const char *const *series_names, const double *v,
                         const char *y_label);

/* Horizontal bars with their labels (escaped) and counts. */
void cc_svg_hbars(FILE *f, const char *id, int n, char *const *labels, const double *counts,
                  const char *x_label);

/* Accuracy against confidence per bin, with the bins' event counts below. */
void cc_svg_reliability(FILE *f, const char *id, const cc_calibration *cal);

#endif
