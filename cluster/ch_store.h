/* ch_store.h — a ClickHouse cluster as a read-only store behind the store
 * interface (collector/store_backend.h): models, baselines, the merged
 * per-day summaries (sumForEach over FINAL through the Distributed table)
 * and event rows, so report, review and show run unchanged on the cluster.
 * There is no read snapshot: each op is one query. Every write op is absent:
 * hosts write their local SQLite store and publish it (publish.h). */
#ifndef CC_CLUSTER_CH_STORE_H
#define CC_CLUSTER_CH_STORE_H

#include "error.h"
#include "store.h"

/* Opens "clickhouse://HOST:PORT/DATABASE" (see cc_ch_open). The models are
 * read at once: a server that does not answer, or a shard that is down,
 * fails the open. */
int cc_ch_store_open(cc_store **out, const char *url, cc_error *err);

#endif
