/* ch_schema.c — DDL of the cluster tables (ClickHouse 18.16 syntax).
 *
 * summaries: one row per (model, day, layout version, slice, source), the
 *   full counter vector of that host's store and a commit sequence number;
 *   ReplacingMergeTree(seq) keeps the newest, so a republished vector
 *   replaces the old one and a retried insert never counts twice. Readers
 *   add the sources with sumForEach over FINAL. index_granularity = 1: with
 *   the default 8192 a single row of large arrays is slow to read.
 * events: event rows, ReplacingMergeTree(seq) keyed by (model, day, ts, id),
 *   so a re-sent batch or a label change (a newer seq) leaves one row under
 *   FINAL without ZooKeeper; partitioned by month.
 * labels: labels whose event the sending host does not hold, by (model, id,
 *   source); the host holding the event pulls and applies them.
 * models: each source's model shapes and baseline.
 * slice_lists: each source's slice limit of a model and its slices' keys in
 *   the order the host made them (its slice ids), so the cluster lists the
 *   slices as a host does and reports the hosts' limit (a table of its own:
 *   CREATE ... IF NOT EXISTS adds it to a cluster made by an earlier release).
 * Every Distributed table shards by a hash of its key, so a row always lands
 * on the same shard and FINAL (which works per shard) sees all its versions. */
#include "ch_schema.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* name, columns, engine of each *_local table */
static const char *const local_ddl[][3] = {
    {"summaries", "model String, day Int64, layout_version UInt32, slice String, "
                  "source String, seq UInt64, events Int64, counters Array(Int64)",
     "ReplacingMergeTree(seq) ORDER BY (model, day, layout_version, slice, source) "
     "SETTINGS index_granularity = 1"},
    {"events", "model String, id String, day Int64, ts Int64, has_segment UInt8, "
               "segment String, pred Int32, label Int32, label_at Int64, "
               "probs Array(Float32), source String, seq UInt64",
     "ReplacingMergeTree(seq) PARTITION BY toYYYYMM(toDate(toUInt16(day))) "
     "ORDER BY (model, day, ts, id)"},
    {"labels", "model String, id String, label Int32, received_at Int64, source String, "
               "seq UInt64",
     "ReplacingMergeTree(seq) ORDER BY (model, id, source)"},
    {"models", "name String, source String, seq UInt64, members Array(String), "
               "classes Array(String), has_baseline UInt8, baseline_from Int64, "
               "baseline_to Int64",
     "ReplacingMergeTree(seq) ORDER BY (name, source)"},
    {"slice_lists", "name String, source String, seq UInt64, slice_limit Int32, "
                    "slice_keys Array(String)",
     "ReplacingMergeTree(seq) ORDER BY (name, source)"},
};

static const char *const dist[][2] = {
    {"summaries", "cityHash64(model, day, slice, source)"},
    {"events", "cityHash64(model, id)"},
    {"labels", "cityHash64(model, id)"},
    {"models", "cityHash64(name, source)"},
    {"slice_lists", "cityHash64(name, source)"},
};

int cc_ch_schema_create(cc_ch *c, cc_error *err)
{
    char sql[1024];
    const char *db = cc_ch_database(c);
    snprintf(sql, sizeof sql, "CREATE DATABASE IF NOT EXISTS %s", db);
    int rc = cc_ch_query(c, sql, NULL, NULL, err);
    for (size_t i = 0; !rc && i < sizeof local_ddl / sizeof *local_ddl; i++) {
        snprintf(sql, sizeof sql, "CREATE TABLE IF NOT EXISTS %s.%s_local (%s) ENGINE = %s", db,
                 local_ddl[i][0], local_ddl[i][1], local_ddl[i][2]);
        rc = cc_ch_query(c, sql, NULL, NULL, err);
    }
    for (size_t i = 0; !rc && i < sizeof dist / sizeof *dist; i++) {
        snprintf(sql, sizeof sql,
                 "CREATE TABLE IF NOT EXISTS %s.%s AS %s.%s_local "
                 "ENGINE = Distributed(%s, %s, %s_local, %s)",
                 db, dist[i][0], db, dist[i][0], cc_ch_cluster(c), db, dist[i][0], dist[i][1]);
        rc = cc_ch_query(c, sql, NULL, NULL, err);
    }
    return rc;
}

char *cc_ch_slice_key(const cc_slice *sl)
{
    if (sl->kind != CC_SLICE_SEGMENT)
        return strdup(cc_slice_name(sl));
    size_t n = strlen(sl->segment);
    char *k = malloc(n + 2);
    if (k) {
        k[0] = '=';
        memcpy(k + 1, sl->segment, n + 1);
    }
    return k;
}

int cc_ch_slice_parse(const char *key, size_t n, int *kind, char **segment)
{
    static const int special[] = {CC_SLICE_NONE, CC_SLICE_OVERFLOW, CC_SLICE_PRUNED};
    *segment = NULL;
    if (n >= 1 && key[0] == '=') {
        *kind = CC_SLICE_SEGMENT;
        *segment = strndup(key + 1, n - 1);
        return *segment ? 0 : -1;
    }
    for (size_t i = 0; i < sizeof special / sizeof *special; i++) {
        cc_slice probe = {0, special[i], "", 0, 0};
        const char *name = cc_slice_name(&probe);
        if (strlen(name) == n && memcmp(name, key, n) == 0) {
            *kind = special[i];
            *segment = strdup("");
            return *segment ? 0 : -1;
        }
    }
    return -1;
}
