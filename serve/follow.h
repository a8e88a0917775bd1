/* follow.h — `concord follow`: tails growing JSON-lines files, ingests new
 * complete lines in small transactions (each chunk's rows, summaries and
 * the file offset it reached commit together), follows rotation (a new
 * inode at the path: the old file is read to its end first) and truncation
 * (the file shrank: read again from the start), runs the check when a UTC
 * day closes, and drains the outbox now and then. It stops between chunks
 * when *stop becomes nonzero, after committing what it has read. */
#ifndef CC_SERVE_FOLLOW_H
#define CC_SERVE_FOLLOW_H

#include <signal.h>
#include <stdint.h>

#include "check.h"
#include "deliver.h"
#include "error.h"
#include "ingest.h"
#include "publisher.h"
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
    cc_publisher *publisher;        /* poked once at start and after each poll that
                                       committed something; NULL: no publishing */
} cc_follow_opts;

#define CC_FOLLOW_OPTS_INIT \
    {NULL, 0, NULL, "default", 0, 2000, 1000, 300, 60, NULL, NULL, 0, NULL, NULL, NULL, NULL, \
     NULL, NULL, NULL, NULL, NULL}

typedef struct cc_follow_stats {
    int64_t lines, accepted, duplicates, rejected, labels_set;
    int64_t chunks, rotations, truncations, checks;
} cc_follow_stats;

/* Where the day-close step stands: the last day checked, the last delivery. */
typedef struct cc_follow_clock {
    int64_t last_checked, last_deliver;
    int deliver_now;
} cc_follow_clock;
#define CC_FOLLOW_CLOCK_INIT {INT64_MIN, 0, 1}

/* The day-close step of follow mode, for any driver that owns a store
 * connection (follow's loop, and serve's rules thread): with o->rules,
 * checks each UTC day once it has been closed for o->grace_s, and drains
 * the outbox after a check and every o->deliver_every_s. Uses o->rules,
 * extra, check_model, grace_s, deliver_every_s, now, on_check, on_deliver
 * and ctx. */
int cc_follow_day_close(cc_store *s, const cc_follow_opts *o, cc_follow_clock *clock,
                        cc_follow_stats *stats, cc_error *err);

int cc_follow_run(cc_store *s, const cc_follow_opts *o, cc_follow_stats *stats, cc_error *err);

#endif
