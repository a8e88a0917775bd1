/* writer.h — the one writer of a served store: a bounded queue of request
 * bodies and a thread that owns the store's write connection, ingests
 * queued bodies in group transactions (several requests in one commit) and
 * answers each request only after the transaction holding it committed.
 * A strict request (all or nothing) gets a transaction of its own. */
#ifndef CC_SERVE_WRITER_H
#define CC_SERVE_WRITER_H

#include <stddef.h>
#include <stdint.h>

#include "error.h"
#include "ingest.h"

#define CC_WRITER_REJECTS_MAX 100 /* rejects listed in one answer */

typedef struct cc_write_reject {
    int64_t line;
    char *reason;
} cc_write_reject;

typedef struct cc_write_job cc_write_job;
struct cc_write_job {
    /* set by the submitter; borrowed by the writer until done is called */
    const char *model;          /* default model of lines without "model" */
    cc_record_kind kind;
    int strict;
    const char *body;
    size_t len;
    const char *source;         /* names the request in the rejects table */
    void (*done)(void *ctx, cc_write_job *job); /* called by the writer thread */
    void *ctx;
    /* filled by the writer before done */
    int status;                 /* 200, or 503 when the transaction failed */
    int committed;              /* the batch's rows are committed */
    int64_t lines, accepted, duplicates, rejected, labels_set, labels_pending;
    cc_write_reject *rejects;   /* the first CC_WRITER_REJECTS_MAX, owned by the job */
    int n_rejects, rejects_truncated;
    char message[512];          /* why, when status is not 200 */
    cc_write_job *next;         /* queue link (the writer's) */
};

/* Frees what the writer put in a job (its rejects). */
void cc_write_job_clear(cc_write_job *job);

typedef struct cc_writer_opts {
    const char *db_path;
    int queue_cap;              /* requests waiting at most */
    size_t group_bytes;         /* body bytes combined into one transaction at most */
    int group_jobs;             /* requests combined into one transaction at most */
    int64_t ingest_now;         /* arrival time of delayed labels; 0 = the clock */
    int wait_ms;                /* wait for another process's write lock */
} cc_writer_opts;

#define CC_WRITER_OPTS_INIT {NULL, 64, (size_t)32 << 20, 64, 0, 60000}

typedef struct cc_writer cc_writer;

/* Opens the store (created when missing) and starts the thread. */
int cc_writer_start(cc_writer **out, const cc_writer_opts *o, cc_error *err);

/* Queues a job: 0, or -1 when the queue is full (answer 429), -2 when the
 * writer is stopping or its store failed (answer 503). */
int cc_writer_submit(cc_writer *w, cc_write_job *job);

/* 1 when the store is open, the last transaction did not fail and the queue
 * has room. */
int cc_writer_ready(cc_writer *w);
int cc_writer_queued(cc_writer *w);
int64_t cc_writer_commits(cc_writer *w);

/* Per-model totals since the start, for the metrics endpoint: fn is called
 * under the writer's lock once per model seen. */
typedef struct cc_writer_totals {
    const char *model;
    int64_t accepted, duplicates, rejected, labels_set, requests;
} cc_writer_totals;
void cc_writer_totals_each(cc_writer *w, void (*fn)(void *ctx, const cc_writer_totals *t),
                           void *ctx);

/* Stops taking jobs (submit then returns -2), ingests and answers every
 * queued one, joins the thread and closes the store; the counters stay
 * readable until cc_writer_free. */
void cc_writer_stop(cc_writer *w);
/* Stops when still running, and frees. Accepts NULL. */
void cc_writer_free(cc_writer *w);

#endif
