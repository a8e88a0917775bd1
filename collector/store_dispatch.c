/* store_dispatch.c — the public cc_store_* calls of store.h, each handed to
 * the store's backend (store_backend.h); an op the backend does not have
 * gives a clear error instead of a crash. */
#include <stddef.h>
#include <string.h>

#include "store_backend.h"

/* The op exists in the backend's table (its size covers it) and is set. */
#define HAS(s, op)                                                                             \
    ((s)->be->size >= offsetof(cc_store_backend, op) + sizeof((s)->be->op) && (s)->be->op)

/* A write op that a backend lacks makes its store read-only for that op. */
static int missing(const cc_store *s, const char *what, int writes, cc_error *err)
{
    if (writes)
        return cc_error_set(err, CC_EIO, "%s: this store (%s) is read-only: it cannot %s",
                            s->path ? s->path : "?", s->be->name, what);
    return cc_error_set(err, CC_EIO, "%s: this store (%s) does not support %s",
                        s->path ? s->path : "?", s->be->name, what);
}

#define CALL(s, op, what, writes, ...)                                                         \
    (HAS(s, op) ? (s)->be->op((s), __VA_ARGS__) : missing((s), (what), (writes), err))

void cc_store_close(cc_store *s)
{
    if (s)
        s->be->close(s);
}

int cc_store_readonly(const cc_store *s)
{
    if (HAS(s, readonly))
        return s->be->readonly(s);
    return !HAS(s, work_begin);
}

int cc_store_take_timed_out(cc_store *s)
{
    return HAS(s, take_timed_out) ? s->be->take_timed_out(s) : 0;
}

const char *cc_store_path(const cc_store *s) { return s->path; }
const char *cc_store_backend_name(const cc_store *s) { return s->be->name; }

int cc_store_snapshot_begin(cc_store *s, cc_error *err)
{
    return HAS(s, snapshot_begin) ? s->be->snapshot_begin(s, err) : 0;
}

void cc_store_snapshot_end(cc_store *s)
{
    if (HAS(s, snapshot_end))
        s->be->snapshot_end(s);
}

/* The earlier names of the unit of work. */
int cc_store_begin(cc_store *s, cc_error *err) { return cc_store_work_begin(s, err); }
int cc_store_commit(cc_store *s, cc_error *err) { return cc_store_work_commit(s, err); }
void cc_store_rollback(cc_store *s) { cc_store_work_abort(s); }

int cc_store_model_get(cc_store *s, const char *name, cc_model **out, cc_error *err)
{
    *out = NULL;
    return CALL(s, model_get, "read models", 0, name, out, err);
}

int cc_store_model_create(cc_store *s, const char *name, int m, int k, char *const *classes,
                          char *const *members, cc_model **out, cc_error *err)
{
    *out = NULL;
    return CALL(s, model_create, "create a model", 1, name, m, k, classes, members, out, err);
}

int cc_store_model_list(cc_store *s, char ***out, int *n, cc_error *err)
{
    *out = NULL;
    *n = 0;
    return CALL(s, model_list, "list models", 0, out, n, err);
}

int cc_store_event_insert(cc_store *s, const cc_model *m, const char *id, int id_len,
                          int64_t ts, const char *segment, int segment_len, int pred,
                          int label, const float *probs, int *inserted, cc_error *err)
{
    *inserted = 0;
    return CALL(s, event_insert, "store events", 1, m, id, id_len, ts, segment, segment_len,
                pred, label, probs, inserted, err);
}

int cc_store_event_get(cc_store *s, const cc_model *m, const char *id, int id_len, int *found,
                       cc_stored_event *out, float *probs, cc_error *err)
{
    *found = 0;
    return CALL(s, event_get, "read events", 0, m, id, id_len, found, out, probs, err);
}

int cc_store_event_set_label(cc_store *s, const cc_model *m, const char *id, int id_len,
                             int label, int64_t label_at, cc_error *err)
{
    return CALL(s, event_set_label, "set labels", 1, m, id, id_len, label, label_at, err);
}

int cc_store_summary_add(cc_store *s, const cc_model *m, int64_t day, const cc_summary *delta,
                         cc_error *err)
{
    return CALL(s, summary_add, "add to summaries", 1, m, day, delta, err);
}

int cc_store_summary_get(cc_store *s, const cc_model *m, int64_t day, cc_summary *out,
                         cc_error *err)
{
    return CALL(s, summary_get, "read summaries", 0, m, day, out, err);
}

int cc_store_summary_days(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                          int64_t **days, int *n, cc_error *err)
{
    *days = NULL;
    *n = 0;
    return CALL(s, summary_days, "list days", 0, m, from, to, days, n, err);
}

int cc_store_summary_from_rows(cc_store *s, const cc_model *m, int64_t day, cc_summary *out,
                               cc_error *err)
{
    return CALL(s, summary_from_rows, "rebuild summaries from rows", 0, m, day, out, err);
}

int cc_store_baseline_set(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                          cc_error *err)
{
    return CALL(s, baseline_set, "set a baseline", 1, m, from, to, err);
}

int cc_store_baseline_get(cc_store *s, const cc_model *m, int *has, int64_t *from,
                          int64_t *to, cc_error *err)
{
    *has = 0;
    return CALL(s, baseline_get, "read baselines", 0, m, has, from, to, err);
}

int cc_store_reject_add(cc_store *s, const char *kind, const char *source, int64_t line,
                        const char *reason, const char *text, size_t text_len, cc_error *err)
{
    return CALL(s, reject_add, "record rejected lines", 1, kind, source, line, reason, text,
                text_len, err);
}

int cc_store_pending_label_add(cc_store *s, const cc_model *m, const char *id, int id_len,
                               int label, int64_t received_at, cc_error *err)
{
    return CALL(s, pending_label_add, "keep waiting labels", 1, m, id, id_len, label,
                received_at, err);
}

int cc_store_pending_label_drain(cc_store *s, const cc_model *m, cc_pending_fn fn,
                                 void *payload, cc_error *err)
{
    return CALL(s, pending_label_drain, "apply waiting labels", 1, m, fn, payload, err);
}

int64_t cc_store_pending_label_count(cc_store *s, const cc_model *m)
{
    return HAS(s, pending_label_count) ? s->be->pending_label_count(s, m) : 0;
}

int cc_store_prune_day(cc_store *s, const cc_model *m, int64_t day, int64_t now,
                       int64_t *removed, cc_error *err)
{
    *removed = 0;
    return CALL(s, prune_day, "prune", 1, m, day, now, removed, err);
}

int cc_store_pruned_get(cc_store *s, const cc_model *m, int64_t day, int *found,
                        cc_summary *out, cc_error *err)
{
    *found = 0;
    return CALL(s, pruned_get, "read pruned days", 0, m, day, found, out, err);
}

int cc_store_pruned_range(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                          cc_pruned_range *out, cc_error *err)
{
    return CALL(s, pruned_range, "read pruned days", 0, m, from, to, out, err);
}

int cc_store_row_days(cc_store *s, const cc_model *m, int64_t **days, int *n, cc_error *err)
{
    *days = NULL;
    *n = 0;
    return CALL(s, row_days, "list days with events", 0, m, days, n, err);
}

int cc_store_class_faults(cc_store *s, const cc_model *m, cc_fault_fn fn, void *ctx,
                          int64_t *count, cc_error *err)
{
    *count = 0;
    return CALL(s, class_faults, "check class indexes", 0, m, fn, ctx, count, err);
}

int cc_store_integrity(cc_store *s, int (*fn)(void *ctx, const char *line), void *ctx, int *ok,
                       cc_error *err)
{
    *ok = 1;
    return CALL(s, integrity, "check its integrity", 0, fn, ctx, ok, err);
}

int cc_store_backup(cc_store *s, const char *out_path, cc_error *err)
{
    return CALL(s, backup, "make a backup", 0, out_path, err);
}

int cc_store_work_begin(cc_store *s, cc_error *err)
{
    return CALL(s, work_begin, "begin a unit of work", 1, err);
}

int cc_store_work_commit(cc_store *s, cc_error *err)
{
    return CALL(s, work_commit, "commit a unit of work", 1, err);
}

void cc_store_work_abort(cc_store *s)
{
    if (HAS(s, work_abort))
        s->be->work_abort(s);
}

int cc_store_events_scan(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                         const char *segment, cc_event_scan_fn fn, void *ctx, cc_error *err)
{
    return CALL(s, events_scan, "scan events", 0, m, from, to, segment, fn, ctx, err);
}

/* events_sample's stand-in for a backend without it: every every-th event
 * of the full scan. */
typedef struct thin_ctx {
    cc_event_scan_fn fn;
    void *ctx;
    int64_t every, seen;
} thin_ctx;

static int thin_one(void *ctx, const char *id, int64_t ts, int label, const float *probs)
{
    thin_ctx *t = ctx;
    if (++t->seen % t->every)
        return 0;
    return t->fn(t->ctx, id, ts, label, probs);
}

int cc_store_events_sample(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                           const char *segment, int64_t every, cc_event_scan_fn fn, void *ctx,
                           cc_error *err)
{
    if (every <= 1)
        return cc_store_events_scan(s, m, from, to, segment, fn, ctx, err);
    if (HAS(s, events_sample))
        return s->be->events_sample(s, m, from, to, segment, every, fn, ctx, err);
    thin_ctx t = {fn, ctx, every, 0};
    return cc_store_events_scan(s, m, from, to, segment, thin_one, &t, err);
}

int cc_store_event_read(cc_store *s, const cc_model *m, const char *id, int *found,
                        cc_event_rec *out, float *probs, cc_error *err)
{
    *found = 0;
    out->segment = NULL;
    return CALL(s, event_read, "read events", 0, m, id, found, out, probs, err);
}

int cc_store_labeled_day_last(cc_store *s, const cc_model *m, int64_t day, int *found,
                              int64_t *out, cc_error *err)
{
    *found = 0;
    return CALL(s, labeled_day_last, "find labelled days", 0, m, day, found, out, err);
}

int cc_store_rule_states(cc_store *s, const char *model, const char *rule, const char *state,
                         cc_rule_state_fn fn, void *ctx, cc_error *err)
{
    return CALL(s, rule_states, "read rule states", 0, model, rule, state, fn, ctx, err);
}

int cc_store_rule_state_put(cc_store *s, const cc_rule_state_rec *r, cc_error *err)
{
    return CALL(s, rule_state_put, "write rule states", 1, r, err);
}

int cc_store_notice_add(cc_store *s, const cc_notice_rec *n, const cc_outbox_target *targets,
                        int n_targets, int *added, cc_error *err)
{
    *added = 0;
    return CALL(s, notice_add, "record notifications", 1, n, targets, n_targets, added, err);
}

int cc_store_notices(cc_store *s, const char *model, const char *delivery, int limit,
                     cc_notice_row_fn fn, void *ctx, cc_error *err)
{
    return CALL(s, notices, "read notifications", 0, model, delivery, limit, fn, ctx, err);
}

int cc_store_outbox_claim(cc_store *s, int64_t after, int64_t now, int ignore_due,
                          int lease_margin_s, cc_outbox_skip_fn skip, void *ctx,
                          cc_outbox_row *out, int *found, int *skipped, cc_error *err)
{
    *found = 0;
    return CALL(s, outbox_claim, "claim outbox rows", 1, after, now, ignore_due,
                lease_margin_s, skip, ctx, out, found, skipped, err);
}

int cc_store_outbox_mark(cc_store *s, int64_t id, const char *status, long http_status,
                         const char *error, int64_t next_at, int64_t sent_at, cc_error *err)
{
    return CALL(s, outbox_mark, "update the outbox", 1, id, status, http_status, error,
                next_at, sent_at, err);
}

int cc_store_outbox_count(cc_store *s, const char *status, int64_t *out, cc_error *err)
{
    *out = 0;
    return CALL(s, outbox_count, "read the outbox", 0, status, out, err);
}

int cc_store_outbox_requeue_dead(cc_store *s, int64_t now, int *n, cc_error *err)
{
    *n = 0;
    return CALL(s, outbox_requeue_dead, "update the outbox", 1, now, n, err);
}

int cc_store_follow_offset_get(cc_store *s, const char *path, int *found,
                               cc_follow_offset *out, cc_error *err)
{
    *found = 0;
    return CALL(s, follow_offset_get, "read follow offsets", 0, path, found, out, err);
}

int cc_store_follow_offset_set(cc_store *s, const char *path, const cc_follow_offset *o,
                               int64_t now, cc_error *err)
{
    return CALL(s, follow_offset_set, "write follow offsets", 1, path, o, now, err);
}

/* --- version 2: slices, rows by time, model totals --- */

int cc_store_slices_kept(cc_store *s)
{
    return HAS(s, slices_kept) ? s->be->slices_kept(s) : 0;
}

int cc_store_slice_limit_get(cc_store *s, const cc_model *m, int *limit, cc_error *err)
{
    *limit = CC_SLICES_DEFAULT_MAX;
    return CALL(s, slice_limit_get, "read slice limits", 0, m, limit, err);
}

int cc_store_slice_limit_set(cc_store *s, const cc_model *m, int limit, cc_error *err)
{
    return CALL(s, slice_limit_set, "set slice limits", 1, m, limit, err);
}

int cc_store_slice_resolve(cc_store *s, const cc_model *m, const char *segment, int len,
                           int create, int64_t *slice, int *overflow, cc_error *err)
{
    *overflow = 0;
    return CALL(s, slice_resolve, create ? "add slices" : "read slices", create, m, segment,
                len, create, slice, overflow, err);
}

int cc_store_event_segment(cc_store *s, const cc_model *m, const char *id, int id_len,
                           int *found, char **segment, cc_error *err)
{
    *found = 0;
    *segment = NULL;
    return CALL(s, event_segment, "read events' segments", 0, m, id, id_len, found, segment,
                err);
}

int cc_store_slice_list(cc_store *s, const cc_model *m, cc_slice **out, int *n, cc_error *err)
{
    *out = NULL;
    *n = 0;
    return CALL(s, slice_list, "read slices (report --segment, --by-segment)", 0, m, out, n,
                err);
}

int cc_store_slice_overview(cc_store *s, const cc_model *m, int *count, int64_t *overflow_events,
                            cc_error *err)
{
    *count = 0;
    *overflow_events = 0;
    return CALL(s, slice_overview, "read slices", 0, m, count, overflow_events, err);
}

int cc_store_slice_summary_add(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                               const cc_summary *delta, cc_error *err)
{
    return CALL(s, slice_summary_add, "add to slice summaries", 1, m, day, slice, delta, err);
}

int cc_store_slice_summary_get(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                               cc_summary *out, cc_error *err)
{
    return CALL(s, slice_summary_get, "read slice summaries", 0, m, day, slice, out, err);
}

int cc_store_slice_summary_days(cc_store *s, const cc_model *m, int64_t slice, int64_t from,
                                int64_t to, int64_t **days, int *n, cc_error *err)
{
    *days = NULL;
    *n = 0;
    return CALL(s, slice_summary_days, "list a slice's days", 0, m, slice, from, to, days, n,
                err);
}

int cc_store_slice_pruned_get(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                              int *found, cc_summary *out, cc_error *err)
{
    *found = 0;
    return CALL(s, slice_pruned_get, "read slices' pruned parts", 0, m, day, slice, found, out,
                err);
}

int cc_store_slice_from_rows(cc_store *s, const cc_model *m, int64_t day, const cc_slice *list,
                             int n, cc_summary **out, cc_error *err)
{
    return CALL(s, slice_from_rows, "rebuild slice summaries from rows", 0, m, day, list, n,
                out, err);
}

int cc_store_events_between(cc_store *s, const cc_model *m, int64_t ts_from, int64_t ts_to,
                            cc_event_row_fn fn, void *payload, cc_error *err)
{
    return CALL(s, events_between, "read event rows by time (report --by hour)", 0, m, ts_from,
                ts_to, fn, payload, err);
}

int cc_store_model_totals(cc_store *s, const cc_model *m, cc_model_totals *out, cc_error *err)
{
    memset(out, 0, sizeof *out);
    int rc = CALL(s, model_totals, "read model totals", 0, m, out, err);
    if (!rc)
        out->pending_labels = cc_store_pending_label_count(s, m);
    return rc;
}

int cc_store_slice_add(cc_store *s, const cc_model *m, int kind, const char *segment, int len,
                       int64_t *slice, cc_error *err)
{
    *slice = -1;
    return CALL(s, slice_add, "add slices", 1, m, kind, segment, len, slice, err);
}
