/* ingest.h — reading prediction events and delayed labels into the store.
 *
 * Events and labels are written in batches; each batch is one transaction
 * holding the event rows, the label updates and the per-day summary deltas
 * they cause, so a crash at any point leaves rows and summaries consistent,
 * and re-reading the same file adds nothing twice (ids are unique per model).
 * Memory does not grow with the days a run touches: summary deltas are held
 * for a bounded number of recently used days (see delta_budget) and the
 * others are added to the store early, inside the same transaction. */
#ifndef CC_COLLECTOR_INGEST_H
#define CC_COLLECTOR_INGEST_H

#include <stdint.h>
#include <stdio.h>

#include "error.h"
#include "store.h"

typedef enum cc_record_kind { CC_RECORD_EVENTS, CC_RECORD_LABELS } cc_record_kind;

/* Called for each rejected line (reason names the field). */
typedef void (*cc_reject_fn)(void *payload, const char *source, int64_t line,
                             const char *reason);

typedef struct cc_ingest_opts {
    const char *model;          /* default model for lines without "model" */
    char *const *classes;       /* names for models this run creates, or NULL */
    int n_classes;
    char *const *members;
    int n_members;
    int strict;                 /* any bad line: store nothing */
    int batch;                  /* lines per transaction */
    cc_reject_fn on_reject;
    void *payload;
    int64_t now;                /* Unix time delayed labels arrive at; 0 = the clock */
    size_t delta_budget;        /* bytes of day-summary deltas held at once; 0 = default */
    int max_slices;             /* slice limit of models this run creates; 0 = default
                                   (CC_SLICES_DEFAULT_MAX, store_slices.h) */
    int threads;                /* cc_ingest_stream/_file: 0 or 1 = all on the calling
                                   thread; N > 1 = N - 1 threads parse ahead of it
                                   (same stored result, see ingest_pipeline.h) */
} cc_ingest_opts;

/* Default bound on the per-day summary deltas an ingest holds in memory:
 * about 140 days at 5 members x 10 classes (224 KiB each), 2 days at the
 * largest shape, 64 x 256 (15.3 MiB each). At least one day is always held. */
#define CC_INGEST_DELTA_BUDGET ((size_t)32 << 20)

#define CC_INGEST_MAX_THREADS 64 /* opts.threads at most */

#define CC_INGEST_OPTS_INIT {"default", NULL, 0, NULL, 0, 0, 20000, NULL, NULL, 0, 0, 0, 0}

typedef struct cc_ingest_stats {
    int64_t lines;              /* non-blank lines read */
    int64_t accepted;           /* new events stored */
    int64_t duplicates;         /* events whose id was already stored */
    int64_t rejected;           /* lines refused (see rejects table) */
    int64_t labels_set;         /* labels applied to stored events */
    int64_t labels_changed;     /* of which replaced a different earlier label */
    int64_t labels_unchanged;   /* same label again */
    int64_t labels_pending;     /* labels whose event is not stored yet */
    int64_t empty_files;
    int committed;              /* 1 when the run's writes are committed */
} cc_ingest_stats;

typedef struct cc_ingest cc_ingest;

/* Starts a run; the first transaction opens here. */
int cc_ingest_create(cc_ingest **out, cc_store *store, const cc_ingest_opts *opts,
                     cc_error *err);

/* Reads one file ("-" = standard input). Bad lines are rejected and
 * recorded; only I/O and database failures return an error. */
int cc_ingest_file(cc_ingest *ing, const char *path, cc_record_kind kind, cc_error *err);

/* One record: text (len bytes, a final newline is dropped) is taken as
 * line number line of source, exactly as cc_ingest_stream takes each line of
 * a file: blank lines are skipped, lines over CC_LINE_MAX and bad lines are
 * rejected and recorded, good ones stored, and the batch committed when it
 * holds opts.batch lines. Only database failures (and out of memory) return
 * an error. Inside, the record is parsed and checked by steps that need no
 * store (the parser only), then stored. For callers that receive records
 * from elsewhere (an HTTP request body). */
int cc_ingest_line(cc_ingest *ing, const char *text, size_t len, const char *source,
                   int64_t line, cc_record_kind kind, cc_error *err);

/* The default model of lines without "model" from now on (the string is
 * borrowed: it must outlive its use). NULL means "default". */
void cc_ingest_set_model(cc_ingest *ing, const char *model);

/* The same for an open stream (not closed here): lines are numbered from
 * first_line and reported, and recorded as rejects, under the name source.
 * For readers that hand over complete lines from elsewhere (follow mode). */
int cc_ingest_stream(cc_ingest *ing, FILE *f, const char *source, int64_t first_line,
                     cc_record_kind kind, cc_error *err);

/* Applies waiting labels, flushes summaries and commits (or, in strict mode
 * with rejected lines, rolls everything back). */
int cc_ingest_finish(cc_ingest *ing, cc_error *err);

/* Records that the source `path` was read up to *o, in the run's open unit
 * of work: cc_ingest_finish commits the offset together with the rows it
 * covers (or neither). For follow mode, whose chunk is one batch. */
int cc_ingest_source_offset(cc_ingest *ing, const char *path, const cc_follow_offset *o,
                            cc_error *err);

const cc_ingest_stats *cc_ingest_get_stats(const cc_ingest *ing);

/* 1 when the last error came from an input file (it could not be opened or
 * read, is a directory, or holds a line longer than CC_LINE_SKIP_MAX): the
 * lines read before it are intact, so the run may go on with other files
 * and cc_ingest_finish still commits them. 0 after a database error. */
int cc_ingest_file_failed(const cc_ingest *ing);

/* Accepted event times, Unix seconds, both ends inclusive (default: the
 * years CC_TS_FIRST_YEAR..CC_TS_LAST_YEAR, see event_parse.h). */
void cc_ingest_ts_range(cc_ingest *ing, int64_t first, int64_t last);

/* Rolls back whatever is not committed and frees. Accepts NULL. */
/* Calls fn once per model whose new events this run went partly to the
 * overflow slice: the model, its slice limit and how many events. */
typedef void (*cc_overflow_fn)(void *ctx, const char *model, int limit, int64_t events);
void cc_ingest_each_overflow(const cc_ingest *ing, cc_overflow_fn fn, void *ctx);

void cc_ingest_free(cc_ingest *ing);

#endif
