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

/* Opens (creating when create != 0) the database at path in WAL mode and
 * brings its schema up to date. */
int cc_store_open(cc_store **out, const char *path, int create, cc_error *err);
void cc_store_close(cc_store *s);

/* The SQLite connection and the database path, for modules that keep tables
 * of their own in the same file (alerts' rule states and outbox, review
 * queries). They must not write the tables above. */
struct sqlite3 *cc_store_db(cc_store *s);
const char *cc_store_path(const cc_store *s);

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

#endif
