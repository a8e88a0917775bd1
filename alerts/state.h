/* state.h — each (model, rule)'s alert state, quiet -> building -> raised ->
 * cleared, and not-evaluated while days cannot be judged, as a pure step
 * function, and what it records through the store: rule states,
 * notifications (one per transition, with the JSON body) and outbox rows (one
 * per notification and receiver, drained by deliver.c). The caller wraps a
 * model's state changes and the notifications they cause in one unit of work
 * (cc_store_work_begin / cc_store_work_commit), so a transition is never
 * recorded without its notification, nor the reverse. */
#ifndef CC_ALERTS_STATE_H
#define CC_ALERTS_STATE_H

#include <stdint.h>

#include "error.h"
#include "evaluate.h"
#include "rule.h"
#include "store.h"

typedef enum cc_state_kind {
    CC_STATE_QUIET,       /* evaluated and within its bound */
    CC_STATE_BUILDING,    /* breaching, fewer than "days" days in a row */
    CC_STATE_RAISED,
    CC_STATE_CLEARED,     /* the day it cleared on; the next clear day makes it quiet */
    CC_STATE_NOT_EVALUATED, /* the last checked day could not be judged (too few events or
                               labels, undefined value, no baseline spread); never healthy */
} cc_state_kind;

typedef enum cc_transition {
    CC_TR_NONE,
    CC_TR_RAISED,
    CC_TR_CLEARED,
    CC_TR_REMINDER,
} cc_transition;

typedef struct cc_rule_state {
    int found;                  /* 0: never evaluated (the fields hold the initial state) */
    cc_state_kind state;
    int breach_run, clear_run;  /* consecutive breaching / clear windows */
    int64_t last_day;           /* last checked day */
    int64_t since_day;          /* day the current state began */
    int64_t fired_day;          /* day the current or last episode was raised; -1 none */
    int64_t last_notified_day;  /* fired or last reminder; -1 none */
} cc_rule_state;

/* Kept for callers: the store's schema (version 4) holds the tables, so
 * this does nothing and returns 0. */
int cc_state_prepare(cc_store *s, cc_error *err);

int cc_state_load(cc_store *s, const char *model, const char *rule, cc_rule_state *out,
                  cc_error *err);
/* Advances st by one checked day. A day at or before st->last_day must not
 * be passed (the caller reports it as already evaluated). A day that is not
 * evaluated neither breaches nor clears (the runs carry over it); a raised
 * rule stays raised, any other becomes not-evaluated. */
cc_transition cc_state_step(cc_rule_state *st, const cc_rule *rule, int64_t day,
                            cc_eval_status status);
int cc_state_save(cc_store *s, const char *model, const cc_rule *rule, const cc_rule_state *st,
                  const cc_eval_result *ev, int64_t now, cc_error *err);

/* A notification as the store records it (notice_id, model, rule, kind,
 * urgency, day, window_day, value, bound, body, created_at). */
typedef cc_notice_rec cc_notification;

/* Records the notification and an outbox row per receiver. *queued = 0 when
 * the notice id was already recorded (nothing is added). */
int cc_state_queue(cc_store *s, const cc_notification *n, const cc_receiver *receivers,
                   int n_receivers, int backoff_s, int max_backoff_s, int *queued,
                   cc_error *err);

const char *cc_state_name(cc_state_kind k);
int cc_state_parse(const char *name, cc_state_kind *out);
const char *cc_transition_name(cc_transition t);

#endif
