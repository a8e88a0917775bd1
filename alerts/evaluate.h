/* evaluate.h — one rule against one model's day: the window's value for the
 * rule's figure (through the registry, report/figures.h), its baseline mean
 * and spread, the effective bound and whether the window breaches it, or
 * why it could not be evaluated. A rule on each member or class evaluates
 * every one and reports the one furthest past its bound (or closest to
 * it), by name. Builds each needed one-day report once. */
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
    CC_EVAL_SKIPPED,    /* not evaluated: too little data, undefined value, or no
                           baseline spread (reason says which) */
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
    int64_t min_events, min_labels;  /* in effect (scaled to traffic unless set) */
    int subject_index;          /* member or class; -1 for window figures */
    char subject[80];           /* its name; "" for window figures */
} cc_eval_result;

typedef struct cc_evaluator cc_evaluator;

/* An evaluator for one model and one checked day. */
int cc_eval_create(cc_evaluator **out, cc_store *store, const char *model, int64_t day,
                   cc_error *err);
/* Moves ev to another checked day, keeping the reports it built (replay)
 * that a later day may still ask for (see cc_eval_set_horizon). */
void cc_eval_set_day(cc_evaluator *ev, int64_t day);
/* The rules' largest lag_days: once the checked day moves past a window
 * day by more than this, that day's reports are dropped (days only move
 * forward in a check). Without a horizon the last 16 reports stay. */
void cc_eval_set_horizon(cc_evaluator *ev, int max_lag_days);
void cc_eval_free(cc_evaluator *ev);

int cc_eval_rule(cc_evaluator *ev, const cc_rule *rule, cc_eval_result *out, cc_error *err);

/* The one-day report of a window day, built on first use and owned by ev;
 * *out is NULL when that day has no events. Its window is windows[0]; its
 * range summary is not kept (range is NULL). */
int cc_eval_report(cc_evaluator *ev, int64_t day, const cc_report **out, cc_error *err);
/* The same for one slice alone (slice: cc_slice_name; NULL: the model). */
int cc_eval_report_slice(cc_evaluator *ev, int64_t day, const char *slice,
                         const cc_report **out, cc_error *err);

#endif
