/* check.h — one `concord check`: for every model (or one), evaluate every
 * rule on the checked day, or on each day of a range in order (replay),
 * advance each rule's state from day to day, and queue a notification for
 * each transition (raised, cleared, reminder) to every receiver, a model's
 * state changes and notifications in one transaction. A day at or before a
 * rule's last checked day is not evaluated again, so re-running a check is
 * harmless. A dry run carries the state from day to day in memory and
 * records nothing. */
#ifndef CC_ALERTS_CHECK_H
#define CC_ALERTS_CHECK_H

#include <stdint.h>

#include "evaluate.h"
#include "rule.h"
#include "state.h"
#include "store.h"

typedef enum cc_outcome {
    CC_OUT_QUIET,       /* within its bound, not raised */
    CC_OUT_BUILDING,    /* breaching, not yet for enough days */
    CC_OUT_RAISED,      /* raised on this day */
    CC_OUT_STILL_RAISED, /* still raised, no new notification */
    CC_OUT_REMINDER,    /* still raised, reminder sent */
    CC_OUT_CLEARED,     /* cleared on this day */
    CC_OUT_NOT_EVALUATED, /* too little data or undefined (reason in ev.reason) */
    CC_OUT_ALREADY,     /* this day was already checked; state unchanged */
} cc_outcome;

typedef struct cc_check_item {
    int64_t day;                /* the checked day */
    char *model;
    const cc_rule *rule;
    cc_eval_result ev;
    cc_state_kind before, after;
    cc_outcome outcome;
    int64_t since_day, fired_day;
    int64_t last_day;           /* the rule's last checked day (for CC_OUT_ALREADY) */
    char *notice_id;           /* for transitions */
    char *sentence;             /* for transitions */
} cc_check_item;

typedef struct cc_check_opts {
    const char *model;          /* NULL: every model */
    int has_day;
    int64_t day;                /* default: the latest complete UTC day */
    int has_to;
    int64_t to;                 /* replay: every day from day to this one, in order */
    int dry_run;                /* evaluate and report, change nothing */
    int fresh;                  /* start every rule from a new state, ignoring the stored
                                   ones (with dry_run: rules validate, report --rules) */
    int64_t now;                /* Unix time; 0 = the clock */
    const cc_receiver *extra;   /* receivers added for this run */
    int n_extra;
    cc_store *figures;          /* where the models and their figures are read (a cluster
                                   store); NULL: the store itself. Rule states,
                                   notifications and the outbox always live in the store */
} cc_check_opts;

typedef struct cc_check_result {
    int64_t day, last_day;      /* the first and last checked day */
    cc_check_item *items;       /* by model, then day, then rule */
    int n_items;
    int raised, cleared, reminders, not_evaluated, already;   /* over all days */
    int raised_now, building;   /* states after the last day */
    int queued;                 /* outbox rows added */
    int receivers;
    int cap_items;
    /* the rules as evaluated, one block per model: the model-scope rules,
     * then the per-slice copies of each-slice rules (items point here) */
    cc_rule **blocks;
    int *block_len;
    int n_blocks;
} cc_check_result;

int cc_check_run(cc_store *s, const cc_ruleset *rs, const cc_check_opts *o,
                 cc_check_result **out, cc_error *err);
void cc_check_result_free(cc_check_result *r);

const char *cc_check_outcome_name(cc_outcome o);

#endif
