/* evaluate.h — one rule against one model's day: the window's value for the
 * rule's metric path, its baseline mean and spread, the effective bound and
 * whether the window breaches it, or why it was skipped. Reads the report
 * structures (report/report.h); builds each needed one-day report once. */
#ifndef CC_ALERTS_EVALUATE_H
#define CC_ALERTS_EVALUATE_H

#include <stdint.h>

#include "error.h"
#include "report.h"
#include "rule.h"
#include "store.h"

typedef enum cc_eval_status {
    CC_EVAL_CLEAR,      /* the window is within the bound */
    CC_EVAL_BREACH,     /* the window is beyond the bound */
    CC_EVAL_SKIPPED,    /* too little data, undefined value, or no baseline spread */
} cc_eval_status;

typedef struct cc_eval_result {
    cc_eval_status status;
    char reason[160];           /* why skipped */
    int64_t window_day;         /* checked day - lag_days */
    double value;               /* NAN when undefined */
    double bound;               /* effective bound; NAN when it cannot be set */
    int has_baseline;           /* mean, sd, days and z are meaningful */
    double mean, sd, z;
    int baseline_days;
    int64_t events, labeled;
} cc_eval_result;

typedef struct cc_evaluator cc_evaluator;

/* An evaluator for one model and one checked day. */
int cc_eval_create(cc_evaluator **out, cc_store *store, const char *model, int64_t day,
                   cc_error *err);
void cc_eval_free(cc_evaluator *ev);

int cc_eval_rule(cc_evaluator *ev, const cc_rule *rule, cc_eval_result *out, cc_error *err);

/* The one-day report of a window day, built on first use and owned by ev;
 * *out is NULL when that day has no events. Its window is windows[0]. */
int cc_eval_report(cc_evaluator *ev, int64_t day, const cc_report **out, cc_error *err);

#endif
