/* store.h — the store: models, event rows, per-day summaries, baselines,
 * rejected lines and labels waiting for their event. The only code that
 * talks to a database: each call goes to the store's backend
 * (store_backend.h; SQLite in store.c).
 *
 * Every write happens inside a unit of work the caller opens with
 * cc_store_work_begin and ends with cc_store_work_commit/cc_store_work_abort,
 * so event rows and the summaries derived from them always change together. */
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
 * (cc_store_work_begin); one that finds it taken waits up to wait_ms (< 0: no
 * bound), calling on_wait once per store when it first has to wait. A
 * writer that commits while another is waiting lets that one in before it
 * can begin again. */
typedef struct cc_store_opts {
    int flags;
    int wait_ms;
    void (*on_wait)(void *ctx, const char *path);
    void *ctx;
    /* a long schema upgrade's progress (about every two seconds), or NULL; model
     * NULL: the schema 5 step, counting rows instead of days */
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
 * the reads between begin and end see one snapshot. Calls nest: only the
 * outermost end releases the snapshot. */
int cc_store_snapshot_begin(cc_store *s, cc_error *err);
void cc_store_snapshot_end(cc_store *s);

/* Where the store is (the database path), for messages; and the name of
 * the backend behind it ("sqlite"; see store_backend.h). */
const char *cc_store_path(const cc_store *s);
const char *cc_store_backend_name(const cc_store *s);

/* A unit of work: every write between work_begin and work_commit is kept
 * or lost together. Ingest puts a batch's event rows, label updates, the
 * summary deltas they cause and (follow) the source file's offset in one;
 * check puts a model's rule states and the notifications they cause in
 * one. work_begin takes the write lock, waiting as described above;
 * work_commit then lets a writer that is waiting for the lock go first;
 * work_abort discards the unit (a store with none open is left as it is). */
int cc_store_work_begin(cc_store *s, cc_error *err);
int cc_store_work_commit(cc_store *s, cc_error *err);
void cc_store_work_abort(cc_store *s);
/* The same three under their earlier names. */
int cc_store_begin(cc_store *s, cc_error *err);
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

/* ---- Review: event rows of a range, one event by id ---- */

/* Called for each event of a scan; probs holds m*k floats and is valid
 * during the call only. A nonzero return stops the scan and is returned. */
typedef int (*cc_event_scan_fn)(void *ctx, const char *id, int64_t ts, int label,
                                const float *probs);
/* Every event of m with from <= ts <= to (Unix seconds), and of that
 * segment unless segment is NULL, through the index on (model, day, ts). */
int cc_store_events_scan(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                         const char *segment, cc_event_scan_fn fn, void *ctx, cc_error *err);
/* The same events thinned to about one in `every` (every <= 1: all of
 * them, as cc_store_events_scan): SQLite keeps those whose rowid (arrival
 * order) is a multiple of every, read through the index entries so the rows
 * left out are never read; a backend without this op gives every every-th
 * event of its scan. Deterministic: the same rows give the same sample. */
int cc_store_events_sample(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                           const char *segment, int64_t every, cc_event_scan_fn fn, void *ctx,
                           cc_error *err);

typedef struct cc_event_rec {
    int64_t ts;
    int64_t label_at;   /* Unix time a delayed label arrived; -1 for inline or none */
    int label;          /* -1 when unknown */
    char *segment;      /* NULL when none; the caller frees it */
} cc_event_rec;
/* One event by id, with its segment: *found = 0 when absent; otherwise out
 * and probs (m*k floats) are filled. */
int cc_store_event_read(cc_store *s, const cc_model *m, const char *id, int *found,
                        cc_event_rec *out, float *probs, cc_error *err);

/* Newest day at or before `day` whose summary holds labelled events
 * (*found = 0 when there is none). */
int cc_store_labeled_day_last(cc_store *s, const cc_model *m, int64_t day, int *found,
                              int64_t *out, cc_error *err);

/* ---- Alerts: rule states, notifications, the outbox ---- */

/* One rule's stored state. Strings are valid during the callback only. */
typedef struct cc_rule_state_rec {
    const char *model, *rule, *state, *metric, *urgency;
    int64_t since_day, last_day, fired_day;   /* fired_day -1: never */
    int breach_run, clear_run;
    double last_value, last_bound;            /* NAN when undefined */
    int64_t last_notified_day;                /* -1: never */
    int64_t updated_at;                       /* Unix time */
} cc_rule_state_rec;

/* A nonzero return stops the listing (and is not an error). */
typedef int (*cc_rule_state_fn)(void *ctx, const cc_rule_state_rec *r);
/* Stored rule states ordered by model, then rule; model, rule and state
 * filter when not NULL. A store on which no check ever ran has none. */
int cc_store_rule_states(cc_store *s, const char *model, const char *rule, const char *state,
                         cc_rule_state_fn fn, void *ctx, cc_error *err);
/* Inserts or replaces the state of (r->model, r->rule). */
int cc_store_rule_state_put(cc_store *s, const cc_rule_state_rec *r, cc_error *err);

/* A notification as it is recorded (value and bound NAN when undefined). */
typedef struct cc_notice_rec {
    const char *notice_id;
    const char *model, *rule, *kind, *urgency;
    int64_t day, window_day;
    double value, bound;
    const char *body;
    int64_t created_at;
} cc_notice_rec;

/* A receiver a notification is to be delivered to, with its policy. */
typedef struct cc_outbox_target {
    const char *receiver, *secret_env;   /* secret_env may be NULL */
    int connect_timeout_ms, timeout_ms, max_attempts;
    int backoff_s, max_backoff_s;
} cc_outbox_target;

/* Records the notification and one pending outbox row per target, due at
 * n->created_at. *added = 0 when the notice id was recorded already (then
 * nothing is added). */
int cc_store_notice_add(cc_store *s, const cc_notice_rec *n, const cc_outbox_target *targets,
                        int n_targets, int *added, cc_error *err);

/* A notification joined with one of its outbox rows. */
typedef struct cc_notice_row {
    int64_t id;
    const char *notice_id, *model, *rule, *kind, *urgency, *body;
    int64_t day, window_day, created_at;
    double value, bound;
    const char *receiver;       /* NULL: no receiver was configured */
    const char *status;         /* pending, sent, dead; NULL without receiver */
    int attempts;
    int64_t next_at, sent_at;   /* -1 when unset */
    long last_status;           /* HTTP status of the last attempt, 0 none */
    const char *last_error;
} cc_notice_row;
typedef int (*cc_notice_row_fn)(void *ctx, const cc_notice_row *r);
/* Newest first, at most limit notifications, each with its outbox rows;
 * model filters when not NULL; delivery ("pending", "sent", "dead") keeps
 * the notifications with such a row and only those rows. */
int cc_store_notices(cc_store *s, const char *model, const char *delivery, int limit,
                     cc_notice_row_fn fn, void *ctx, cc_error *err);

/* An outbox row claimed for sending (strings owned by the row). */
typedef struct cc_outbox_row {
    int64_t id;
    char *receiver, *secret_env, *body, *notice_id, *kind;
    int connect_timeout_ms, timeout_ms, max_attempts, backoff_s, max_backoff_s, attempts;
} cc_outbox_row;
/* Frees the strings and zeroes the row. */
void cc_outbox_row_clear(cc_outbox_row *r);

/* 1 to pass a row over (its receiver failed in this run). */
typedef int (*cc_outbox_skip_fn)(void *ctx, const char *receiver);
/* In one unit of work of its own: finds the first pending row after id
 * `after` that is due at `now` (any pending row with ignore_due), passing
 * over rows that skip refuses (counted in *skipped), and leases it: its
 * next attempt moves to now + (connect + send timeout) + lease_margin_s,
 * so that another process does not send it meanwhile. *found = 0 when no
 * row qualifies. */
int cc_store_outbox_claim(cc_store *s, int64_t after, int64_t now, int ignore_due,
                          int lease_margin_s, cc_outbox_skip_fn skip, void *ctx,
                          cc_outbox_row *out, int *found, int *skipped, cc_error *err);
/* Records an attempt on row id: status "sent", "pending" or "dead", the
 * HTTP status (0: none), the error (NULL when sent), the next attempt and
 * the time sent (-1: not sent). */
int cc_store_outbox_mark(cc_store *s, int64_t id, const char *status, long http_status,
                         const char *error, int64_t next_at, int64_t sent_at, cc_error *err);
/* Outbox rows in a status. */
int cc_store_outbox_count(cc_store *s, const char *status, int64_t *out, cc_error *err);
/* Dead rows back to pending, attempts reset, due at now; *n rows. */
int cc_store_outbox_requeue_dead(cc_store *s, int64_t now, int *n, cc_error *err);

/* ---- Follow: where each followed file was read up to ---- */

typedef struct cc_follow_offset {
    uint64_t dev, ino;    /* the file's identity when it was read */
    int64_t offset;       /* bytes consumed */
    int64_t line;         /* lines consumed */
} cc_follow_offset;
/* *found = 0 when the path was never followed. */
int cc_store_follow_offset_get(cc_store *s, const char *path, int *found,
                               cc_follow_offset *out, cc_error *err);
/* Sets the path's offset; write it in the unit of work that holds the rows
 * it covers. now: Unix time, recorded. */
int cc_store_follow_offset_set(cc_store *s, const char *path, const cc_follow_offset *o,
                               int64_t now, cc_error *err);

/* Publishing to a cluster (cluster/publish.c; collector/store_publish.c, the
 * SQLite backend only). The store notes what changed
 * since the last publish: summaries written (per model and day), labels
 * changed, and new event rows (those past the 'event_rowid' state). */

/* A named 64-bit value of the publisher ('seq', 'event_rowid'); 0 when never set. */
int cc_store_publish_state_get(cc_store *s, const char *key, int64_t *value, cc_error *err);
/* Sets it (inside a write transaction). */
int cc_store_publish_state_set(cc_store *s, const char *key, int64_t value, cc_error *err);

/* Calls fn for each (model, day) whose summary was written since it was last
 * cleared; *upto is set to the highest mark seen (pass it to
 * cc_store_publish_clear once those days are published). */
typedef int (*cc_publish_day_fn)(void *ctx, const char *model, int64_t day);
int cc_store_publish_days(cc_store *s, int64_t *upto, cc_publish_day_fn fn, void *ctx,
                          cc_error *err);

/* One stored event row as published; pointers are valid during the call. */
typedef struct cc_published_event {
    const char *model;
    const char *id;
    int id_len;
    int64_t ts, day;
    const char *segment;        /* NULL when the event had none */
    int segment_len;
    int pred, label;            /* label -1 when unknown */
    int64_t label_at;           /* -1 for an inline label or none */
    const float *probs;
    int n_probs;                /* members x classes */
} cc_published_event;
typedef int (*cc_publish_event_fn)(void *ctx, const cc_published_event *e);

/* Calls fn for each event row past after_rowid, then for each row whose
 * label changed since the relabel marks were last cleared. *max_rowid and
 * *relabel_upto are set to what was read (for the next call and
 * cc_store_publish_clear). A row sent again is harmless: the receiver keeps one. */
int cc_store_publish_events(cc_store *s, int64_t after_rowid, int64_t *max_rowid,
                            int64_t *relabel_upto, cc_publish_event_fn fn, void *ctx,
                            cc_error *err);

/* Calls fn with the model and id of each event row past after_rowid, in
 * rowid order; *max_rowid gets the last rowid read (after_rowid if none):
 * the events stored since a publish run last asked (its labels pull). */
typedef int (*cc_publish_id_fn)(void *ctx, const char *model, const char *id, int id_len);
int cc_store_publish_new_ids(cc_store *s, int64_t after_rowid, int64_t *max_rowid,
                             cc_publish_id_fn fn, void *ctx, cc_error *err);

/* Forgets the day marks <= day_mark and relabel marks <= relabel_mark
 * (inside a write transaction). */
int cc_store_publish_clear(cc_store *s, int64_t day_mark, int64_t relabel_mark, cc_error *err);

/* Every label waiting for its event, of every model. */
typedef int (*cc_pending_list_fn)(void *ctx, const char *model, const char *id, int id_len,
                                  int label, int64_t received_at);
int cc_store_pending_label_list(cc_store *s, cc_pending_list_fn fn, void *ctx, cc_error *err);

#endif
