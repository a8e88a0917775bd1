/* publisher.h — publishing a store to a cluster from the long-running
 * ingest drivers (follow, serve) without holding up their ingest: a thread
 * with a store connection of its own runs the publish hook after something
 * was committed (cc_publisher_poke), and again after a failure with a
 * growing pause, so a cluster that is down only delays publishing. The
 * hook itself (cluster/publish.h, given by cli/) sends what changed since
 * the last successful run; a run is idempotent, so a failed one is simply
 * run again and nothing is lost or sent twice. */
#ifndef CC_SERVE_PUBLISHER_H
#define CC_SERVE_PUBLISHER_H

#include <stdint.h>

#include "error.h"
#include "store.h"

typedef struct cc_publisher_opts {
    const char *db_path;        /* the store; opened for writing by the thread */
    int wait_ms;                /* its wait for another writer's lock */
    /* one publish run of s: 0, or a negative cc_code with err filled */
    int (*publish)(void *publish_ctx, cc_store *s, cc_error *err);
    void *publish_ctx;
    void (*on_note)(void *ctx, const char *message);
    void *ctx;
    int pause_min_ms, pause_max_ms; /* after a failure: min, doubling up to max */
} cc_publisher_opts;
/* the pauses of concord publish's retries (cluster/publish.c) */
#define CC_PUBLISHER_OPTS_INIT {NULL, 60000, NULL, NULL, NULL, NULL, 500, 30000}

/* Where publishing stands (for /v1/readyz and the notes). */
typedef struct cc_publisher_state {
    int64_t runs, failures;     /* publish runs done and failed since the start */
    int64_t consecutive_failures;
    int64_t last_ok_unix;       /* the last successful run's end, 0 for none */
    int64_t pending;            /* commits not yet covered by a successful run */
} cc_publisher_state;

typedef struct cc_publisher cc_publisher;

/* Starts the thread (the store is opened there, on the first run). */
int cc_publisher_start(cc_publisher **out, const cc_publisher_opts *o, cc_error *err);
/* Something was committed: publish it soon. Cheap; any thread; p may be
 * NULL. _to: the commits told so far are at least n (a counter the caller
 * keeps, such as a writer's commit count plus one, so telling it again is
 * harmless). */
void cc_publisher_poke(cc_publisher *p);
void cc_publisher_poke_to(cc_publisher *p, int64_t n);
void cc_publisher_state_get(cc_publisher *p, cc_publisher_state *out);
/* Makes one last run when something is pending (telling when it fails:
 * the next start publishes it), joins the thread, closes its store.
 * Returns the state at the end. */
void cc_publisher_stop(cc_publisher *p, cc_publisher_state *final);
/* Stops when still running, and frees. Accepts NULL. */
void cc_publisher_free(cc_publisher *p);

#endif
