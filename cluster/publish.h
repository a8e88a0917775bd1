/* publish.h — sending a host's local store to the cluster.
 *
 * One run: (1) labels waiting here for an event this host never saw go to
 * the cluster's labels table, and labels other hosts sent for events stored
 * here are applied here, oldest arrival first (see README, "Delayed
 * labels"); only rows that may be new here are read: other sources' runs
 * since the last one read, and the labels of events stored since the last
 * run (marks in publish_state); (2) the full summary vector of every (model, day) written since
 * the last run goes to the summaries table under this source's name and a
 * new sequence number, slice "" (the whole model), and beside it the vector
 * of each of the model's slices with events that day (cc_ch_slice_key), after each model's
 * shape, baseline, slice limit and slice order; (3) event rows stored or
 * relabelled since then go to the events table; (4) only then the local
 * marks are cleared. Every insert is idempotent, so a run that fails at any
 * point is simply run again. A failed insert (a shard down, a timeout) is
 * retried with a growing pause until retry_for_s has passed. */
#ifndef CC_CLUSTER_PUBLISH_H
#define CC_CLUSTER_PUBLISH_H

#include <stdint.h>

#include "ch_client.h"
#include "store.h"

typedef struct cc_publish_opts {
    const char *source;         /* this host's name in the cluster (required) */
    int retry_for_s;            /* keep retrying a failed insert this long */
    size_t chunk_bytes;         /* RowBinary bytes per insert */
    /* told before each pause: what failed, attempt number, pause in ms */
    void (*on_retry)(void *ctx, const char *what, int attempt, int pause_ms,
                     const cc_error *why);
    void *ctx;
    int64_t now;                /* unused by publish itself; labels applied here keep
                                   the arrival time their sender recorded */
} cc_publish_opts;
#define CC_PUBLISH_RETRY_DEFAULT_S 600
#define CC_PUBLISH_OPTS_INIT {NULL, CC_PUBLISH_RETRY_DEFAULT_S, (size_t)8 << 20, NULL, NULL, 0}

typedef struct cc_publish_stats {
    int64_t seq;                /* the sequence number of this run */
    int64_t days;               /* the models' summary vectors sent */
    int64_t slice_days;         /* the slices' summary vectors sent */
    int64_t events;             /* event rows sent (new or relabelled) */
    int64_t labels_sent;        /* waiting labels sent for other hosts */
    int64_t labels_applied;     /* other hosts' labels applied here */
    int64_t labels_read;        /* label rows read from the cluster (only what may be new) */
    int64_t bytes;              /* request bytes sent */
    int retries;
} cc_publish_stats;

/* Publishes store (opened for writing) through c. */
int cc_publish_run(cc_store *store, cc_ch *c, const cc_publish_opts *o, cc_publish_stats *st,
                   cc_error *err);

/* A source name is 1..64 letters, digits, '_', '-' or '.'. */
int cc_publish_source_ok(const char *name);

#endif
