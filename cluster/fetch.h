/* fetch.h — the models a cluster knows, read from its models table and
 * merged over the sources that published them (each host publishes its
 * models' shapes and baseline); the store backend (ch_store.h) reads
 * everything else through its ops. A shard that is down fails the read
 * (ClickHouse answers with an error, never with half the rows). */
#ifndef CC_CLUSTER_FETCH_H
#define CC_CLUSTER_FETCH_H

#include <stdint.h>

#include "ch_client.h"
#include "store.h"

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
