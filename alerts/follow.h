/* follow.h — `concord follow`: tails growing JSON-lines files, ingests new
 * complete lines in small transactions (each chunk's rows, summaries and
 * the file offset it reached commit together), follows rotation (a new
 * inode at the path: the old file is read to its end first) and truncation
 * (the file shrank: read again from the start), runs the check when a UTC
 * day closes, and drains the outbox now and then. It stops between chunks
 * when *stop becomes nonzero, after committing what it has read. */
#ifndef CC_ALERTS_FOLLOW_H
#define CC_ALERTS_FOLLOW_H

#include <signal.h>
#include <stdint.h>

#include "check.h"
#include "deliver.h"
#include "error.h"
#include "ingest.h"
#include "rule.h"
#include "store.h"

typedef struct cc_follow_opts {
    char *const *paths;             /* event files */
    int n_paths;
    const char *labels_path;        /* delayed labels, or NULL */
    const char *model;              /* default model of lines without "model" */
    int64_t ingest_now;             /* arrival time for delayed labels; 0 = the clock */
    int chunk_lines;                /* lines per transaction */
    int poll_ms;
    int grace_s;                    /* a day is checked this long after it closes */
    int deliver_every_s;
    const cc_ruleset *rules;        /* NULL: ingest only */
    const cc_receiver *extra;
    int n_extra;
    const char *check_model;        /* NULL: every model */
    volatile sig_atomic_t *stop;
    int64_t (*now)(void *ctx);      /* Unix time */
    void (*on_reject)(void *ctx, const char *path, int64_t line, const char *reason);
    void (*on_note)(void *ctx, const char *message);
    void (*on_check)(void *ctx, const cc_check_result *r);
    void (*on_deliver)(void *ctx, const cc_deliver_stats *st);
    void *ctx;
} cc_follow_opts;

#define CC_FOLLOW_OPTS_INIT \
    {NULL, 0, NULL, "default", 0, 2000, 1000, 300, 60, NULL, NULL, 0, NULL, NULL, NULL, NULL, \
     NULL, NULL, NULL, NULL}

typedef struct cc_follow_stats {
    int64_t lines, accepted, duplicates, rejected, labels_set;
    int64_t chunks, rotations, truncations, checks;
} cc_follow_stats;

int cc_follow_run(cc_store *s, const cc_follow_opts *o, cc_follow_stats *stats, cc_error *err);

#endif
