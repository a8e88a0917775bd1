/* tracked.h — the window figures that get a baseline mean and spread, a
 * z-score and an EWMA, named by their path in the JSON report (so rules can
 * name them the same way). */
#ifndef CC_REPORT_TRACKED_H
#define CC_REPORT_TRACKED_H

#include "compare.h"
#include "window.h"

int cc_tracked_count(void);
const char *cc_tracked_path(int i);
/* NAN when the figure is undefined for this window. */
double cc_tracked_value(int i, const cc_window_metrics *w, const cc_comparison *c);

#endif
