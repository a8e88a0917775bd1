/* store.h — the SQLite store: models, event rows, per-day summaries,
 * baselines, rejected lines and labels waiting for their event.
 *
 * Every write happens inside a transaction the caller opens with
 * cc_store_begin and ends with cc_store_commit/cc_store_rollback, so event
 * rows and the summaries derived from them always change together. */
#ifndef CC_COLLECTOR_STORE_H
#define CC_COLLECTOR_STORE_H

#include <stdint.h>

#include "error.h"
#include "summary.h"

typedef struct cc_store cc_store;

typedef struct cc_model {
    int64_t id;
    char *name;
    int m, k;
    char **classes;   /* k names */
    char **members;   /* m names */
} cc_model;

void cc_model_free(cc_model *m);
/* Index of a class name, or -1. */
int cc_model_class_index(const cc_model *m, const char *name, int len);

/* How a store is opened (flags of cc_store_opts and cc_store_open). */
enum {
    CC_STORE_CREATE = 1,   /* create the file (owner-only, 0600) when missing */
    CC_STORE_READONLY = 2, /* read only: no schema change, no write, one WAL snapshot */
};

/* Concurrency: readers open with CC_STORE_READONLY; they write nothing and
 * read one consistent snapshot (a read transaction from open to close), so
 * writers never block them. Writers take the write lock per transaction
 * (cc_store_begin); one that finds it taken waits up to wait_ms (< 0: no
 * bound), calling on_wait once per store when it first has to wait. A
 * writer that commits while another is waiting lets that one in before it
 * can begin again. */
typedef struct cc_store_opts {
    int flags;
    int wait_ms;
    void (*on_wait)(void *ctx, const char *path);
    void *ctx;
    /* a long schema upgrade's progress (about every two seconds), or NULL */
    void (*on_progress)(void *ctx, const char *path, const char *model, int64_t done_days,
                        int64_t total_days);
    void *progress_ctx;
} cc_store_opts;

#define CC_STORE_WAIT_DEFAULT_MS 60000
#define CC_STORE_OPTS_INIT {0, CC_STORE_WAIT_DEFAULT_MS, NULL, NULL, NULL, NULL}

/* Opens the database at path. A writer (no CC_STORE_READONLY) creates or
 * upgrades the schema when needed, in WAL mode; a newer schema version is
 * refused and left untouched. A missing file is an error unless
 * CC_STORE_CREATE. A reader on a read-only mount or a full disk, where the
 * WAL index cannot be created, reads the file as immutable when no WAL is
 * pending. */
int cc_store_open_with(cc_store **out, const char *path, const cc_store_opts *o,
                       cc_error *err);
/* The same with the default wait (CC_STORE_WAIT_DEFAULT_MS); flags as above
 * (1 = CC_STORE_CREATE, 0 = an existing database for writing). */
int cc_store_open(cc_store **out, const char *path, int flags, cc_error *err);
/* Ends the snapshot of a reader and closes. Accepts NULL. */
void cc_store_close(cc_store *s);
int cc_store_readonly(const cc_store *s);
/* 1 once a wait for the lock ran past the bound (the failing call returned
 * CC_EBUSY or an SQLite "database is locked"); reading it clears it. */
int cc_store_take_timed_out(cc_store *s);

/* A read transaction for a writer's connection (a reader has one already):
 * the reads between begin and end see one snapshot. Nested calls are no-ops. */
int cc_store_snapshot_begin(cc_store *s, cc_error *err);
void cc_store_snapshot_end(cc_store *s);

/* The SQLite connection and the database path, for modules that keep tables
 * of their own in the same file (alerts' rule states and outbox, review
 * queries). They must not write the tables above. */
struct sqlite3 *cc_store_db(cc_store *s);
const char *cc_store_path(const cc_store *s);

/* A write transaction (BEGIN IMMEDIATE, waiting as described above). */
int cc_store_begin(cc_store *s, cc_error *err);
/* Commits, then lets a writer that is waiting for the lock go first. */
int cc_store_commit(cc_store *s, cc_error *err);
void cc_store_rollback(cc_store *s);

/* Model by name: 0 and *out (caller frees), or -CC_ENOTFOUND. */
int cc_store_model_get(cc_store *s, const char *name, cc_model **out, cc_error *err);
/* Creates a model; names may be NULL for the defaults "0".."k-1", "m0"... */
int cc_store_model_create(cc_store *s, const char *name, int m, int k,
                          char *const *classes, char *const *members, cc_model **out,
                          cc_error *err);
/* All model names (caller frees each and the array). */
int cc_store_model_list(cc_store *s, char ***out, int *n, cc_error *err);

/* Inserts an event row unless (model, id) exists; *inserted says which.
 * probs: m*k float32, label -1 when unknown. */
int cc_store_event_insert(cc_store *s, const cc_model *m, const char *id, int id_len,
                          int64_t ts, const char *segment, int segment_len, int pred,
                          int label, const float *probs, int *inserted, cc_error *err);

typedef struct cc_stored_event {
    int64_t day, ts;
    int label;          /* -1 when unknown */
    int64_t label_at;   /* Unix time a delayed label arrived; -1 for inline or none */
} cc_stored_event;

/* Looks an event up. *found = 0 when absent; otherwise out and probs (m*k
 * floats) are filled. */
int cc_store_event_get(cc_store *s, const cc_model *m, const char *id, int id_len, int *found,
                       cc_stored_event *out, float *probs, cc_error *err);
/* Sets a delayed label and the time it arrived. */
int cc_store_event_set_label(cc_store *s, const cc_model *m, const char *id, int id_len,
                             int label, int64_t label_at, cc_error *err);

/* summary(model, day) += delta. */
int cc_store_summary_add(cc_store *s, const cc_model *m, int64_t day, const cc_summary *delta,
                         cc_error *err);
/* Loads the stored summary of a day into out (zero when absent). */
int cc_store_summary_get(cc_store *s, const cc_model *m, int64_t day, cc_summary *out,
                         cc_error *err);
/* Days that have a summary with events, ascending, within [from, to]. */
int cc_store_summary_days(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                          int64_t **days, int *n, cc_error *err);
/* Rebuilds a day's summary from its event rows (for verification). */
int cc_store_summary_from_rows(cc_store *s, const cc_model *m, int64_t day, cc_summary *out,
                               cc_error *err);

/* Baseline period of a model; *has = 0 when none is set. */
int cc_store_baseline_set(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                          cc_error *err);
int cc_store_baseline_get(cc_store *s, const cc_model *m, int *has, int64_t *from,
                          int64_t *to, cc_error *err);

/* Records a rejected line (text is truncated to 4 KiB). */
int cc_store_reject_add(cc_store *s, const char *kind, const char *source, int64_t line,
                        const char *reason, const char *text, size_t text_len, cc_error *err);

/* A label for an id not (yet) ingested. Replaces an earlier pending one. */
int cc_store_pending_label_add(cc_store *s, const cc_model *m, const char *id, int id_len,
                               int label, int64_t received_at, cc_error *err);

/* Calls fn for each pending label of m whose event now exists, then removes
 * those pending rows. fn returns 0 to go on. */
typedef int (*cc_pending_fn)(void *payload, const char *id, int id_len, int label,
                             int64_t received_at);
int cc_store_pending_label_drain(cc_store *s, const cc_model *m, cc_pending_fn fn,
                                 void *payload, cc_error *err);
int64_t cc_store_pending_label_count(cc_store *s, const cc_model *m);

/* Data lifecycle. Pruning a day deletes its event rows and keeps its
 * summary; the summary of the deleted rows is kept in pruned_days, so that
 * verify can still prove stored summary = rows + pruned part. Call inside a
 * write transaction; *removed = rows deleted (0: nothing to prune). */
int cc_store_prune_day(cc_store *s, const cc_model *m, int64_t day, int64_t now,
                       int64_t *removed, cc_error *err);
/* The pruned part of a day's summary into out (zero, *found = 0, when the
 * day was never pruned). */
int cc_store_pruned_get(cc_store *s, const cc_model *m, int64_t day, int *found,
                        cc_summary *out, cc_error *err);
/* Pruned days within [from, to]: how many, the first and last, and the
 * events they held. */
typedef struct cc_pruned_range {
    int days;
    int64_t first, last, events;
} cc_pruned_range;
int cc_store_pruned_range(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                          cc_pruned_range *out, cc_error *err);
/* Calls fn for each stored event row of m with ts_from <= ts < ts_to, in
 * ts order (ties in storage order): its time, label (-1 when unknown), the
 * Unix time a delayed label arrived (-1 when none) and its m*k float32
 * probabilities (valid during the call only). fn returns 0 to go on, or a
 * non-zero value that stops the walk and is returned. Rows of pruned days
 * are gone: check cc_store_pruned_range first. */
typedef int (*cc_event_row_fn)(void *payload, int64_t ts, int label, int64_t label_at,
                               const float *probs);
int cc_store_events_between(cc_store *s, const cc_model *m, int64_t ts_from, int64_t ts_to,
                            cc_event_row_fn fn, void *payload, cc_error *err);
/* Days that have event rows, ascending (caller frees). */
int cc_store_row_days(cc_store *s, const cc_model *m, int64_t **days, int *n, cc_error *err);
/* Calls fn for each stored class index outside [0, k): event labels and
 * predicted classes, and waiting labels. what names the column. */
typedef int (*cc_fault_fn)(void *ctx, const char *what, const char *id, int64_t value);
int cc_store_class_faults(cc_store *s, const cc_model *m, cc_fault_fn fn, void *ctx,
                          int64_t *count, cc_error *err);
/* PRAGMA integrity_check: fn gets each problem line; *ok = 1 when none. */
int cc_store_integrity(cc_store *s, int (*fn)(void *ctx, const char *line), void *ctx,
                       int *ok, cc_error *err);
/* A consistent copy of the whole database at out_path, taken with SQLite's
 * online backup API from this store's snapshot (a reader's) while writers
 * go on; written to a temporary name in the same folder, owner-only, and
 * renamed into place. Refuses an existing out_path. */
int cc_store_backup(cc_store *s, const char *out_path, cc_error *err);

#endif
