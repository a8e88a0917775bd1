/* store_slices.h — per-segment summaries ("slices") beside the per-day ones.
 *
 * A slice is one value of the events' `segment` key within a model. Each
 * (model, day, slice) has its own mergeable summary; the model's own
 * (model, day) summary stays stored beside them and equals their sum,
 * counter by counter (verify proves it). Special slices:
 *   - CC_SLICE_NONE: events without a segment;
 *   - CC_SLICE_OVERFLOW: events of segments met after the model already had
 *     its limit of named slices (CC_SLICES_DEFAULT_MAX unless set when the
 *     model was created);
 *   - CC_SLICE_PRUNED: "pruned, unsliced": the part of days pruned before
 *     the database kept slices (schema 3), whose rows are gone; its summary
 *     equals its pruned part.
 * Only named segments count toward the limit. A segment's slice never
 * changes once given, so a label finds its event's slice by the segment.
 *
 * Same contract as store.h: writes inside the caller's transaction; 0 or a
 * negative cc_code with err filled. A reader of a schema-3 file (no slice
 * tables) gets -CC_EIO saying that a writing command upgrades the file. */
#ifndef CC_COLLECTOR_STORE_SLICES_H
#define CC_COLLECTOR_STORE_SLICES_H

#include <stdint.h>

#include "error.h"
#include "store.h"
#include "summary.h"

enum cc_slice_kind {
    CC_SLICE_SEGMENT = 0,
    CC_SLICE_NONE = 1,
    CC_SLICE_OVERFLOW = 2,
    CC_SLICE_PRUNED = 3,
};

#define CC_SLICES_DEFAULT_MAX 64   /* named slices per model (common practice) */
#define CC_SLICES_LIMIT_MAX 4096   /* the most --max-slices accepts */

typedef struct cc_slice {
    int64_t id;         /* unique in the database */
    int kind;           /* enum cc_slice_kind */
    char *segment;      /* the segment value for CC_SLICE_SEGMENT, "" otherwise */
    int64_t events, labeled; /* totals over all days (cc_store_slice_list) */
} cc_slice;

/* The name shown for a slice: its segment, or "(none)", "(overflow)",
 * "(pruned, unsliced)". */
const char *cc_slice_name(const cc_slice *sl);
/* Index in list of the slice named name: a segment value first, then one of
 * the special names above; -1 when none. */
int cc_slice_find(const cc_slice *list, int n, const char *name);

/* 1 when the file keeps slices (schema 4), 0 for an older file opened read-only. */
int cc_store_slices_kept(cc_store *s);

/* The model's slice limit (CC_SLICES_DEFAULT_MAX when never set). */
int cc_store_slice_limit_get(cc_store *s, const cc_model *m, int *limit, cc_error *err);
/* Sets it (when the model is created; 1..CC_SLICES_LIMIT_MAX). */
int cc_store_slice_limit_set(cc_store *s, const cc_model *m, int limit, cc_error *err);

/* The slice of a segment (segment NULL: events without one). create = 1
 * (ingest): a new segment gets a new slice while the model is under its
 * limit, the overflow slice after (*overflow = 1). create = 0 (a label for
 * a stored event): an unknown segment is in the overflow slice. */
int cc_store_slice_resolve(cc_store *s, const cc_model *m, const char *segment, int len,
                           int create, int64_t *slice, int *overflow, cc_error *err);

/* The segment of a stored event: *found = 0 when absent; *segment is
 * malloc'd (caller frees), NULL when the event has none. */
int cc_store_event_segment(cc_store *s, const cc_model *m, const char *id, int id_len,
                           int *found, char **segment, cc_error *err);

/* The model's slices in creation order with their event totals (caller
 * frees with cc_slice_list_free). */
int cc_store_slice_list(cc_store *s, const cc_model *m, cc_slice **out, int *n, cc_error *err);
void cc_slice_list_free(cc_slice *list, int n);

/* How many slices the model has, and the events of its overflow slice
 * (0 without one); both 0 for a schema-3 file. Cheap: for every report. */
int cc_store_slice_overview(cc_store *s, const cc_model *m, int *count, int64_t *overflow_events,
                            cc_error *err);

/* summary(model, day, slice) += delta. */
int cc_store_slice_summary_add(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                               const cc_summary *delta, cc_error *err);
/* The stored summary of (day, slice) into out (zero when absent). */
int cc_store_slice_summary_get(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                               cc_summary *out, cc_error *err);
/* Days where the slice has events, ascending, within [from, to] (caller frees). */
int cc_store_slice_summary_days(cc_store *s, const cc_model *m, int64_t slice, int64_t from,
                                int64_t to, int64_t **days, int *n, cc_error *err);
/* The pruned part of (day, slice) (zero and *found = 0 when none). */
int cc_store_slice_pruned_get(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                              int *found, cc_summary *out, cc_error *err);

/* Rebuilds each slice's part of a day from the event rows, in one pass:
 * out[i] (n summaries of the model's shape, cleared here) for list[i]. An
 * event whose segment has no slice goes to the overflow slice; without one
 * in list it is an error. */
int cc_store_slice_from_rows(cc_store *s, const cc_model *m, int64_t day, const cc_slice *list,
                             int n, cc_summary **out, cc_error *err);

/* Pruning support for cc_store_prune_day: adds each slice's part of the
 * day's rows to its pruned part (before the rows are deleted). */
int cc_store_slice_prune_day(cc_store *s, const cc_model *m, int64_t day, int64_t now,
                             cc_error *err);

/* The schema 3 -> 4 rebuild (run by the store's upgrade, inside its
 * transaction): for every model, slices for its segments in order of first
 * arrival (under the default limit), each row day's slice summaries from
 * the rows, and each pruned day's pruned part in the "pruned, unsliced"
 * slice. progress (may be NULL) is called about every two seconds. */
typedef void (*cc_slice_progress_fn)(void *ctx, const char *path, const char *model,
                                     int64_t done_days, int64_t total_days);
int cc_store_slice_rebuild(cc_store *s, cc_slice_progress_fn progress, void *ctx,
                           cc_error *err);

#endif
