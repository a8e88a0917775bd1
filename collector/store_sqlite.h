/* store_sqlite.h — private to the SQLite backend's files (collector/store*.c):
 * its store struct, the prepared statements kept for the life of a store,
 * and the helpers that wrap SQLite errors with the store's path. Also read
 * by tests and bench that inspect the SQLite file directly. */
#ifndef CC_COLLECTOR_STORE_SQLITE_H
#define CC_COLLECTOR_STORE_SQLITE_H

#include <sqlite3.h>
#include <stdint.h>

#include "store_backend.h"

enum {
    ST_EVENT_INSERT,
    ST_EVENT_GET,
    ST_EVENT_SET_LABEL,
    ST_SUMMARY_GET,
    ST_SUMMARY_PUT,
    ST_REJECT,
    ST_PENDING_ADD,
    ST_EVENT_READ,
    ST_EVENT_EXISTS,
    ST_COUNT
};

typedef struct sq_store {
    cc_store base;       /* first: what the dispatch sees (store_backend.h) */
    sqlite3 *db;
    char *path;
    sqlite3_stmt *st[ST_COUNT];
    cc_summary *scratch; /* reused by the summary adds (cc_sq_scratch) */
    cc_store_opts o;
    int readonly;
    int64_t version;     /* schema version of the file */
    int lock_fd;         /* the database file, for the waiting-writer flag (flock) */
    int in_begin;        /* inside cc_store_begin: a wait raises the flag */
    int flagged;         /* this store holds the flag */
    int wait_noted, timed_out;
    int own_snapshot;    /* depth of the read transactions cc_store_snapshot_begin opened */
    int64_t wait_start_ms;
    uint64_t id_mask;    /* bits of the id hash kept: all but in tests (meta 'id_hash_bits') */
} sq_store;

#define SQ(store) ((sq_store *)(store))

/* The SQLite backend's table of ops (store.c). */
extern const cc_store_backend cc_sq_backend;

/* The error of the last SQLite call on s as a cc_error: CC_EBUSY with the
 * wait bound when the lock was not had in time, else CC_EIO naming what. */
int cc_sq_error(sq_store *s, cc_error *err, const char *what);
/* Runs SQL text (no results) with errors wrapped as above. */
int cc_sq_exec(sq_store *s, const char *sql, cc_error *err);
/* A kept statement, reset and with its bindings cleared. */
sqlite3_stmt *cc_sq_stmt(sq_store *s, int which);
/* The id index's hash of the len bytes of id (len < 0: up to its NUL). */
int64_t cc_sq_id_hash(const sq_store *s, const char *id, int len);
/* Binds an event id to a statement that finds it: the text as ?2 and, on a
 * file of schema 5, its hash as ?9 (the statements' BY_ID condition). */
void cc_sq_bind_id(sq_store *s, sqlite3_stmt *st, const char *id, int len);
/* 1 when the table exists (a reader may open an older schema). */
int cc_sq_has_table(sq_store *s, const char *name);
/* Decodes a stored (version, counters) row of `what` into out (summary.h's
 * conversion of older layouts); a damaged or unknown row is an error naming
 * the model, day and slice (0 = the model's own row). */
int cc_sq_decode_summary(cc_store *s, const cc_model *m, const void *blob, int bytes,
                         int64_t version, int64_t day, int64_t slice, const char *what,
                         cc_summary *out, cc_error *err);
/* dst += src, or an error "summary counter overflow" naming the model, day
 * and slice; never writes a wrapped counter. */
/* The store's scratch summary of m's shape (store.c); NULL when out of memory. */
cc_summary *cc_sq_scratch(sq_store *s, const cc_model *m, cc_error *err);

int cc_sq_merge(cc_store *s, const cc_model *m, int64_t day, int64_t slice, cc_summary *dst,
                const cc_summary *src, cc_error *err);
/* Steps st (bound, not yet stepped) and appends its first column to
 * the array *days of *n days (caller frees it); finalizes st. Errors name what. */
int cc_sq_collect_days(sq_store *s, sqlite3_stmt *st, const char *what, int64_t **days, int *n,
                       cc_error *err);

/* The ops kept in store_alerts.c, store_review.c and store_follow.c, with
 * the contracts of the store.h functions of the same names. */
int cc_sq_events_scan(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                      const char *segment, cc_event_scan_fn fn, void *ctx, cc_error *err);
int cc_sq_events_sample(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                        const char *segment, int64_t every, cc_event_scan_fn fn, void *ctx,
                        cc_error *err);
int cc_sq_event_read(cc_store *s, const cc_model *m, const char *id, int *found,
                     cc_event_rec *out, float *probs, cc_error *err);
int cc_sq_labeled_day_last(cc_store *s, const cc_model *m, int64_t day, int *found,
                           int64_t *out, cc_error *err);
int cc_sq_rule_states(cc_store *s, const char *model, const char *rule, const char *state,
                      cc_rule_state_fn fn, void *ctx, cc_error *err);
int cc_sq_rule_state_put(cc_store *s, const cc_rule_state_rec *r, cc_error *err);
int cc_sq_notice_add(cc_store *s, const cc_notice_rec *n, const cc_outbox_target *targets,
                     int n_targets, int *added, cc_error *err);
int cc_sq_notices(cc_store *s, const char *model, const char *delivery, int limit,
                  cc_notice_row_fn fn, void *ctx, cc_error *err);
int cc_sq_outbox_claim(cc_store *s, int64_t after, int64_t now, int ignore_due,
                       int lease_margin_s, cc_outbox_skip_fn skip, void *ctx,
                       cc_outbox_row *out, int *found, int *skipped, cc_error *err);
int cc_sq_outbox_mark(cc_store *s, int64_t id, const char *status, long http_status,
                      const char *error, int64_t next_at, int64_t sent_at, cc_error *err);
int cc_sq_outbox_count(cc_store *s, const char *status, int64_t *out, cc_error *err);
int cc_sq_outbox_requeue_dead(cc_store *s, int64_t now, int *n, cc_error *err);
int cc_sq_follow_offset_get(cc_store *s, const char *path, int *found, cc_follow_offset *out,
                            cc_error *err);
int cc_sq_follow_offset_set(cc_store *s, const char *path, const cc_follow_offset *o,
                            int64_t now, cc_error *err);

/* The slice ops (store_slices.c) and a model's totals (store_catalog.c),
 * with the contracts of the public calls of store_slices.h and
 * store_catalog.h. */
int cc_sq_slices_kept(cc_store *s);
int cc_sq_slice_limit_get(cc_store *s, const cc_model *m, int *limit, cc_error *err);
int cc_sq_slice_limit_set(cc_store *s, const cc_model *m, int limit, cc_error *err);
int cc_sq_slice_resolve(cc_store *s, const cc_model *m, const char *segment, int len,
                        int create, int64_t *slice, int *overflow, cc_error *err);
int cc_sq_slice_add(cc_store *s, const cc_model *m, int kind, const char *segment, int len,
                    int64_t *slice, cc_error *err);
int cc_sq_event_segment(cc_store *s, const cc_model *m, const char *id, int id_len,
                        int *found, char **segment, cc_error *err);
int cc_sq_slice_list(cc_store *s, const cc_model *m, cc_slice **out, int *n, cc_error *err);
int cc_sq_slice_overview(cc_store *s, const cc_model *m, int *count, int64_t *overflow_events,
                         cc_error *err);
int cc_sq_slice_summary_add(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                            const cc_summary *delta, cc_error *err);
int cc_sq_slice_summary_get(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                            cc_summary *out, cc_error *err);
int cc_sq_slice_summary_days(cc_store *s, const cc_model *m, int64_t slice, int64_t from,
                             int64_t to, int64_t **days, int *n, cc_error *err);
int cc_sq_slice_pruned_get(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                           int *found, cc_summary *out, cc_error *err);
int cc_sq_slice_from_rows(cc_store *s, const cc_model *m, int64_t day, const cc_slice *list,
                          int n, cc_summary **out, cc_error *err);
int cc_sq_model_totals(cc_store *s, const cc_model *m, cc_model_totals *out, cc_error *err);
/* Inside prune_day, before the day's rows are deleted: adds each slice's
 * part of the rows to its pruned part. */
int cc_sq_slice_prune_day(cc_store *s, const cc_model *m, int64_t day, int64_t now,
                          cc_error *err);
/* The schema 3 -> 4 step (inside the upgrade's transaction): for every
 * model, slices for its segments in order of first arrival (under the
 * default limit), each row day's slice summaries from the rows, and each
 * pruned day's pruned part in the "pruned, unsliced" slice. */
int cc_sq_slice_rebuild(cc_store *s, cc_slice_progress_fn progress, void *ctx, cc_error *err);

/* The SQLite connection of a store of this backend, or NULL for another
 * backend: for tests and bench that inspect the file. */
sqlite3 *cc_store_db(cc_store *s);

#endif
