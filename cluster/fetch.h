/* fetch.h — the cluster's merged view copied into a local store, so that
 * report, review and show run their usual code on it (metrics/ and report/
 * never know where the numbers came from).
 *
 * Summaries: for each (model, day), sumForEach(counters) over FINAL through
 * the Distributed table, over every source's newest vector of the current
 * layout version. Events: the rows under FINAL (one per id, newest label).
 * A shard that is down fails the copy (ClickHouse answers with an error,
 * never with half the rows). */
#ifndef CC_CLUSTER_FETCH_H
#define CC_CLUSTER_FETCH_H

#include <stdint.h>

#include "ch_client.h"
#include "store.h"

typedef struct cc_fetch_opts {
    const char *model;          /* only this model; NULL for all */
    int events;                 /* copy event rows too (review, show, HTML report) */
    const char *event_id;       /* only this event's row (show); NULL for all */
} cc_fetch_opts;
#define CC_FETCH_OPTS_INIT {NULL, 0, NULL}

/* Copies into dst, an empty store opened for writing, in one transaction.
 * Sources that disagree about a model's members, classes or baseline are
 * an error naming them. */
int cc_fetch_into(cc_ch *c, cc_store *dst, const cc_fetch_opts *o, cc_error *err);

/* The models the cluster knows (only that one when not NULL), merged over
 * the sources, with their baseline; free with cc_ch_models_free. */
typedef struct cc_ch_model {
    cc_model *model;
    int has_baseline;
    int64_t from, to;
} cc_ch_model;
int cc_ch_models_load(cc_ch *c, const char *only, cc_ch_model **out, int *n, cc_error *err);
void cc_ch_models_free(cc_ch_model *list, int n);

#endif
