/* ch_schema.h — the tables concord keeps in a ClickHouse database, on each
 * server: a *_local table per kind (MergeTree family) and a Distributed
 * table of the same name without _local over the cluster's shards. */
#ifndef CC_CLUSTER_CH_SCHEMA_H
#define CC_CLUSTER_CH_SCHEMA_H

#include "ch_client.h"

/* Creates the database and every table on the server c talks to, where
 * missing (IF NOT EXISTS: running it again changes nothing). Each server of
 * the cluster needs it once (`concord publish --init`); the Distributed
 * tables name the cluster cc_ch_cluster(c). */
int cc_ch_schema_create(cc_ch *c, cc_error *err);

#endif
