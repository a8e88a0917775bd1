/* ch_schema.h — the tables concord keeps in a ClickHouse database, on each
 * server: a *_local table per kind (MergeTree family) and a Distributed
 * table of the same name without _local over the cluster's shards. */
#ifndef CC_CLUSTER_CH_SCHEMA_H
#define CC_CLUSTER_CH_SCHEMA_H

#include "ch_client.h"
#include "store_slices.h"

/* Creates the database and every table on the server c talks to, where
 * missing (IF NOT EXISTS: running it again changes nothing). Each server of
 * the cluster needs it once (`concord publish --init`); the Distributed
 * tables name the cluster cc_ch_cluster(c). */
int cc_ch_schema_create(cc_ch *c, cc_error *err);

/* The summaries table's slice column: "" for the whole model's vector,
 * "=" followed by the segment for a named segment's slice, and "(none)",
 * "(overflow)", "(pruned, unsliced)" for the special slices (store_slices.h),
 * so no segment value can be taken for another slice or for the model.
 * cc_ch_slice_key: malloc'd, NULL when out of memory. cc_ch_slice_parse: 0
 * with *kind and *segment (malloc'd, "" for a special slice), -1 for a key
 * that names no slice. */
char *cc_ch_slice_key(const cc_slice *sl);
int cc_ch_slice_parse(const char *key, size_t n, int *kind, char **segment);

#endif
