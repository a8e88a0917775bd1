/* deliver.h — draining the outbox. Each due row is claimed (its next_at is
 * pushed past the send's timeout, so a second process skips it), sent, and
 * then marked sent on acceptance only; a failure schedules the next attempt
 * after an exponential backoff with jitter, and the row becomes a dead
 * letter after its receiver's max_attempts. A crash between send and mark
 * repeats the send later: delivery is at least once, never lost; receivers
 * deduplicate by notice_id. After a receiver fails, its other rows wait
 * for the next run, so a dead receiver costs one timeout per run. */
#ifndef CC_ALERTS_DELIVER_H
#define CC_ALERTS_DELIVER_H

#include <stdint.h>

#include "error.h"
#include "store.h"
#include "webhook.h"

typedef struct cc_deliver_event {
    const char *receiver, *notice_id;
    int ok, dead;
    int attempts;
    long status;
    const char *error;
    int64_t next_at;            /* when failed and not dead */
} cc_deliver_event;

typedef struct cc_deliver_opts {
    int64_t now;                /* Unix time; 0 = the clock */
    int ignore_backoff;         /* try every pending row now */
    int max_sends;              /* per run */
    cc_webhook_sender send;     /* NULL = cc_webhook_post */
    void *send_ctx;
    uint64_t seed;              /* jitter; 0 = from the clock */
    void (*on_event)(void *ctx, const cc_deliver_event *e);
    void *event_ctx;
} cc_deliver_opts;

#define CC_DELIVER_OPTS_INIT {0, 0, 10000, NULL, NULL, 0, NULL, NULL}

typedef struct cc_deliver_stats {
    int sent, failed, dead;     /* this run; dead = rows that became dead letters */
    int deferred;               /* due rows left for a receiver that failed in this run */
    int64_t pending, dead_total; /* in the outbox after the run */
} cc_deliver_stats;

int cc_deliver_run(cc_store *s, const cc_deliver_opts *o, cc_deliver_stats *stats,
                   cc_error *err);

/* Dead letters back to pending, attempts reset. */
int cc_deliver_requeue_dead(cc_store *s, int64_t now, int *n, cc_error *err);

/* Seconds before attempt number attempts+1, after `attempts` failures:
 * min(cap, base * 2^(attempts-1)) scaled into [1/2, 1] by u in [0, 1). */
double cc_deliver_backoff(int attempts, int base_s, int cap_s, double u);

#endif
