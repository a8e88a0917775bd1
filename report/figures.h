/* figures.h — the one registry of report figures. Each figure has its path
 * in the JSON window (a number there, or an array of numbers for member- and
 * class-scoped figures), how it is computed from a window's metrics and its
 * comparison with the baseline, whether it needs labels, whether it is
 * tracked against the baseline's days (mean, sd, z-score, EWMA), a few words
 * for sentences and a sentence describing it. The JSON, text and HTML
 * reports and the alert rules read figures through it; none computes a
 * figure of its own. */
#ifndef CC_REPORT_FIGURES_H
#define CC_REPORT_FIGURES_H

#include "compare.h"
#include "window.h"

typedef enum cc_figure_scope {
    CC_SCOPE_WINDOW,   /* one number per window */
    CC_SCOPE_MEMBER,   /* one per member, in the model's member order */
    CC_SCOPE_CLASS,    /* one per class, in the model's class order */
} cc_figure_scope;

typedef double (*cc_figure_fn)(const cc_window_metrics *w, const cc_comparison *c, int index);

typedef struct cc_figure {
    const char *path;        /* in the JSON window */
    cc_figure_scope scope;
    int needs_labels;        /* undefined without labelled events */
    int tracked;             /* has baseline day statistics, z-scores and EWMAs */
    const char *what;        /* a few words for sentences ("mutual information") */
    const char *description; /* one sentence for help texts */
    cc_figure_fn value;      /* index: member or class; ignored for window figures */
} cc_figure;

int cc_figures_count(void);
const cc_figure *cc_figures_get(int i);
/* The figure at path, or NULL. */
const cc_figure *cc_figures_find(const char *path);
/* NAN when undefined for this window (or index out of range). */
double cc_figures_value(const cc_figure *f, const cc_window_metrics *w, const cc_comparison *c,
                        int index);
/* Values a figure has for a model with m members and k classes (1, m or k). */
int cc_figures_width(const cc_figure *f, int m, int k);
const char *cc_figures_scope_name(cc_figure_scope s);
/* The values a figure can take (rates in [0, 1], kappas in [-1, 1], PSI and
 * counts >= 0, ...); an open end is -INFINITY or INFINITY. Bands drawn
 * around a baseline are clipped to it. */
void cc_figures_range(const cc_figure *f, double *lo, double *hi);

/* Tracked slots: every tracked figure times its width, window figures first
 * (so the first cc_tracked_count() slots do not depend on m and k). */
int cc_tracked_slots(int m, int k);
/* The slot of a tracked figure's index, or -1 when it is not tracked. */
int cc_tracked_slot(const cc_figure *f, int index, int m, int k);

#endif
