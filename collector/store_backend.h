/* store_backend.h — the seam between the store's public calls (store.h) and
 * the database behind them: a table of function pointers, one per
 * operation, that a backend fills in. SQLite's is in store.c; a backend for
 * another database (a column store read by reports, review and show) fills
 * the ops it can and leaves the others NULL.
 *
 * Versioning. The table only grows at its end: a new operation is appended
 * after the last one, and CC_STORE_BACKEND_VERSION goes up by one. A
 * backend sets `version` and `size` (sizeof the table it was compiled
 * against), so the dispatch in store_dispatch.c knows that ops past `size`
 * are absent, and a backend built against an older table keeps working. No
 * member is ever removed, moved or retyped.
 *
 * Every op receives the store it was opened for (the backend's own struct
 * starts with a cc_store, see below) and follows the contract written over
 * the public function of the same name in store.h: 0 or a negative cc_code
 * with err filled (err may be NULL), ownership as stated there. A NULL op
 * makes the public function fail with CC_EIO and a message that names the
 * store, the backend and the operation ("read-only" for a write op), so a
 * reader-only backend leaves every write op NULL. Ops are called from one
 * thread at a time per store. */
#ifndef CC_COLLECTOR_STORE_BACKEND_H
#define CC_COLLECTOR_STORE_BACKEND_H

#include <stddef.h>
#include <stdint.h>

#include "store.h"
#include "store_catalog.h"
#include "store_slices.h"

#define CC_STORE_BACKEND_VERSION 2

typedef struct cc_store_backend {
    int version;          /* CC_STORE_BACKEND_VERSION the table was written for */
    size_t size;          /* sizeof(cc_store_backend) at that version */
    const char *name;     /* "sqlite", ...: for messages */

    /* --- version 1 --- */
    /* Lifecycle. close frees everything (the cc_store included); required.
     * readonly: 1 when no write op may be used on this store. */
    void (*close)(cc_store *s);
    int (*readonly)(const cc_store *s);
    int (*take_timed_out)(cc_store *s);
    /* One consistent view for the reads between begin and end (nested calls
     * count; only the outermost end releases it). */
    int (*snapshot_begin)(cc_store *s, cc_error *err);
    void (*snapshot_end)(cc_store *s);
    /* A unit of work: every write between work_begin and work_commit is
     * kept or lost together (rows, summary deltas, labels, the source
     * offset, alert state). work_begin waits for the write lock as
     * described at cc_store_opts; work_commit hands it to a waiting writer.
     * work_abort discards and accepts a store with no unit open. */
    int (*work_begin)(cc_store *s, cc_error *err);
    int (*work_commit)(cc_store *s, cc_error *err);
    void (*work_abort)(cc_store *s);

    /* Models. */
    int (*model_get)(cc_store *s, const char *name, cc_model **out, cc_error *err);
    int (*model_create)(cc_store *s, const char *name, int m, int k, char *const *classes,
                        char *const *members, cc_model **out, cc_error *err);
    int (*model_list)(cc_store *s, char ***out, int *n, cc_error *err);

    /* Event rows. */
    int (*event_insert)(cc_store *s, const cc_model *m, const char *id, int id_len, int64_t ts,
                        const char *segment, int segment_len, int pred, int label,
                        const float *probs, int *inserted, cc_error *err);
    int (*event_get)(cc_store *s, const cc_model *m, const char *id, int id_len, int *found,
                     cc_stored_event *out, float *probs, cc_error *err);
    int (*event_set_label)(cc_store *s, const cc_model *m, const char *id, int id_len,
                           int label, int64_t label_at, cc_error *err);

    /* Per-day summaries and the baseline. */
    int (*summary_add)(cc_store *s, const cc_model *m, int64_t day, const cc_summary *delta,
                       cc_error *err);
    int (*summary_get)(cc_store *s, const cc_model *m, int64_t day, cc_summary *out,
                       cc_error *err);
    int (*summary_days)(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                        int64_t **days, int *n, cc_error *err);
    int (*summary_from_rows)(cc_store *s, const cc_model *m, int64_t day, cc_summary *out,
                             cc_error *err);
    int (*baseline_set)(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                        cc_error *err);
    int (*baseline_get)(cc_store *s, const cc_model *m, int *has, int64_t *from, int64_t *to,
                        cc_error *err);

    /* Rejected lines and waiting labels. */
    int (*reject_add)(cc_store *s, const char *kind, const char *source, int64_t line,
                      const char *reason, const char *text, size_t text_len, cc_error *err);
    int (*pending_label_add)(cc_store *s, const cc_model *m, const char *id, int id_len,
                             int label, int64_t received_at, cc_error *err);
    int (*pending_label_drain)(cc_store *s, const cc_model *m, cc_pending_fn fn,
                               void *payload, cc_error *err);
    int64_t (*pending_label_count)(cc_store *s, const cc_model *m);

    /* Data lifecycle and the checks behind verify. */
    int (*prune_day)(cc_store *s, const cc_model *m, int64_t day, int64_t now,
                     int64_t *removed, cc_error *err);
    int (*pruned_get)(cc_store *s, const cc_model *m, int64_t day, int *found,
                      cc_summary *out, cc_error *err);
    int (*pruned_range)(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                        cc_pruned_range *out, cc_error *err);
    int (*row_days)(cc_store *s, const cc_model *m, int64_t **days, int *n, cc_error *err);
    int (*class_faults)(cc_store *s, const cc_model *m, cc_fault_fn fn, void *ctx,
                        int64_t *count, cc_error *err);
    int (*integrity)(cc_store *s, int (*fn)(void *ctx, const char *line), void *ctx, int *ok,
                     cc_error *err);
    int (*backup)(cc_store *s, const char *out_path, cc_error *err);

    /* Review: a range of event rows, one event with its segment. */
    int (*events_scan)(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                       const char *segment, cc_event_scan_fn fn, void *ctx, cc_error *err);
    int (*event_read)(cc_store *s, const cc_model *m, const char *id, int *found,
                      cc_event_rec *out, float *probs, cc_error *err);
    int (*labeled_day_last)(cc_store *s, const cc_model *m, int64_t day, int *found,
                            int64_t *out, cc_error *err);

    /* Alerts: rule states, notifications, the outbox. */
    int (*rule_states)(cc_store *s, const char *model, const char *rule, const char *state,
                       cc_rule_state_fn fn, void *ctx, cc_error *err);
    int (*rule_state_put)(cc_store *s, const cc_rule_state_rec *r, cc_error *err);
    int (*notice_add)(cc_store *s, const cc_notice_rec *n, const cc_outbox_target *targets,
                      int n_targets, int *added, cc_error *err);
    int (*notices)(cc_store *s, const char *model, const char *delivery, int limit,
                   cc_notice_row_fn fn, void *ctx, cc_error *err);
    int (*outbox_claim)(cc_store *s, int64_t after, int64_t now, int ignore_due,
                        int lease_margin_s, cc_outbox_skip_fn skip, void *ctx,
                        cc_outbox_row *out, int *found, int *skipped, cc_error *err);
    int (*outbox_mark)(cc_store *s, int64_t id, const char *status, long http_status,
                       const char *error, int64_t next_at, int64_t sent_at, cc_error *err);
    int (*outbox_count)(cc_store *s, const char *status, int64_t *out, cc_error *err);
    int (*outbox_requeue_dead)(cc_store *s, int64_t now, int *n, cc_error *err);

    /* Follow offsets. */
    int (*follow_offset_get)(cc_store *s, const char *path, int *found, cc_follow_offset *out,
                             cc_error *err);
    int (*follow_offset_set)(cc_store *s, const char *path, const cc_follow_offset *o,
                             int64_t now, cc_error *err);

    /* --- version 2 --- */
    /* Slices: per-(model, day, segment) summaries (store_slices.h); each op
     * has the contract of the cc_store_slice_* / cc_store_event_segment call
     * of the same name. slices_kept: 1 when the store keeps slices. */
    int (*slices_kept)(cc_store *s);
    int (*slice_limit_get)(cc_store *s, const cc_model *m, int *limit, cc_error *err);
    int (*slice_limit_set)(cc_store *s, const cc_model *m, int limit, cc_error *err);
    int (*slice_resolve)(cc_store *s, const cc_model *m, const char *segment, int len,
                         int create, int64_t *slice, int *overflow, cc_error *err);
    int (*event_segment)(cc_store *s, const cc_model *m, const char *id, int id_len,
                         int *found, char **segment, cc_error *err);
    int (*slice_list)(cc_store *s, const cc_model *m, cc_slice **out, int *n, cc_error *err);
    int (*slice_overview)(cc_store *s, const cc_model *m, int *count, int64_t *overflow_events,
                          cc_error *err);
    int (*slice_summary_add)(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                             const cc_summary *delta, cc_error *err);
    int (*slice_summary_get)(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                             cc_summary *out, cc_error *err);
    int (*slice_summary_days)(cc_store *s, const cc_model *m, int64_t slice, int64_t from,
                              int64_t to, int64_t **days, int *n, cc_error *err);
    int (*slice_pruned_get)(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                            int *found, cc_summary *out, cc_error *err);
    int (*slice_from_rows)(cc_store *s, const cc_model *m, int64_t day, const cc_slice *list,
                           int n, cc_summary **out, cc_error *err);
    /* Event rows of a time range in time order (report --by hour). */
    int (*events_between)(cc_store *s, const cc_model *m, int64_t ts_from, int64_t ts_to,
                          cc_event_row_fn fn, void *payload, cc_error *err);
    /* A model's totals (store_catalog.h; pending_labels is filled by the
     * dispatch through pending_label_count). */
    int (*model_totals)(cc_store *s, const cc_model *m, cc_model_totals *out, cc_error *err);
    int (*slice_add)(cc_store *s, const cc_model *m, int kind, const char *segment, int len,
                     int64_t *slice, cc_error *err);
    /* Review's bounded sample (cc_store_events_sample; NULL: the dispatch
     * thins events_scan). */
    int (*events_sample)(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                         const char *segment, int64_t every, cc_event_scan_fn fn, void *ctx,
                         cc_error *err);
    /* (new ops go here, at the end) */
} cc_store_backend;

/* The part of every store that the dispatch reads. A backend's own struct
 * has it as its first member; the backend's open function allocates that
 * struct, sets be and path, and hands out a pointer to this member (as
 * cc_store_open_with does for SQLite); its ops cast back. path names the
 * store in messages (owned by the backend, valid until close). */
struct cc_store {
    const cc_store_backend *be;
    const char *path;
};

#endif
