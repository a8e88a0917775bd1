/* findings.c — what the baseline itself says, stated once in the reports
 * rather than raised as an alert on every day. */
#include <math.h>
#include <stdio.h>

#include "control.h"
#include "figures.h"
#include "report.h"
#include "tracked.h"

int cc_report_findings(const cc_report *r, char out[][320], int cap)
{
    int n = 0;
    if (!r->has_baseline || !r->stats)
        return 0;
    if (r->baseline_days < CC_BASELINE_MIN_DAYS && n < cap)
        snprintf(out[n++], 320,
                 "The baseline has %d day(s) with events; day-to-day bands and sigma rules "
                 "need at least %d, so there is no band.",
                 r->baseline_days, (int)CC_BASELINE_MIN_DAYS);
    int t = cc_tracked_slot(cc_figures_find("accuracy.ensemble_gain"), 0, r->model->m,
                            r->model->k);
    const cc_baseline_stat *g = t >= 0 ? &r->stats[t] : NULL;
    if (g && g->n > 0 && isfinite(g->mean) && g->mean <= 0 && n < cap)
        snprintf(out[n++], 320,
                 "On the baseline days the ensemble does not beat its best member (gain %+.4f, "
                 "sd %.4f over %d days): the average buys robustness, not accuracy, here. "
                 "Alerts watch for a change from this level, not the level itself.",
                 g->mean, isfinite(g->sd) ? g->sd : 0.0, g->n);
    return n;
}
