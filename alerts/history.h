/* history.h — reading the alert tables back for `concord alerts`: each
 * rule's state, and the notifications with their delivery per receiver
 * (sent, pending with its next attempt, or dead letter), through the store.
 * Read-only. */
#ifndef CC_ALERTS_HISTORY_H
#define CC_ALERTS_HISTORY_H

#include <stdint.h>

#include "error.h"
#include "store.h"

typedef struct cc_state_row {
    const char *model, *rule, *state, *metric, *urgency;
    int64_t since_day, last_day, fired_day;   /* fired_day -1: never */
    int breach_run, clear_run;
    double last_value, last_bound;            /* NAN when undefined */
} cc_state_row;

/* A notification with one of its outbox rows (see store.h). */
typedef cc_notice_row cc_history_row;

/* Rows are valid during the callback only; a nonzero return stops. */
typedef int (*cc_state_row_fn)(void *ctx, const cc_state_row *r);
typedef cc_notice_row_fn cc_history_row_fn;

/* 1 when alert rules have been checked for the model (the alert tables
 * exist and hold its rules), else 0. Writes nothing. */
int cc_history_evaluated(cc_store *s, const char *model);

/* model, state: NULL for all. */
int cc_history_states(cc_store *s, const char *model, const char *state, cc_state_row_fn fn,
                      void *ctx, cc_error *err);
/* Newest first, at most limit notifications (each with its outbox rows);
 * delivery: NULL, "pending", "sent" or "dead" filters the outbox rows. */
int cc_history_notifications(cc_store *s, const char *model, const char *delivery, int limit,
                             cc_history_row_fn fn, void *ctx, cc_error *err);

#endif
