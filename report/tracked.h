/* tracked.h — the tracked figures of the registry (figures.h) by slot: each
 * gets a baseline mean and spread, a z-score and an EWMA. Window figures
 * come first; member and class figures follow, one slot per member or
 * class. */
#ifndef CC_REPORT_TRACKED_H
#define CC_REPORT_TRACKED_H

#include "figures.h"

/* Tracked window figures (the first slots). */
int cc_tracked_count(void);
/* The figure's path of a window slot (t < cc_tracked_count()). */
const char *cc_tracked_path(int t);
/* The registry's figure and index of slot t, for a window with w->m, w->k. */
const cc_figure *cc_tracked_figure(int t, int m, int k, int *index);
/* NAN when the figure is undefined for this window. */
double cc_tracked_value(int t, const cc_window_metrics *w, const cc_comparison *c);

#endif
