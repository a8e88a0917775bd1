/* store_review.c — the SQLite backend's reads of event rows for reviews:
 * a time range through events_by_time, one event by id through
 * events_by_hash (events_by_id on a file of schema 3 or 4), and the newest
 * labelled day for the label age. */
#include <stdlib.h>
#include <string.h>

#include "date.h"
#include "store_sqlite.h"

/* The range's events, or (every > 1) those whose rowid is a multiple of
 * every: the rowid is in the index entries, so the rows left out are not
 * read. */
static int scan_rows(cc_store *store, const cc_model *m, int64_t from, int64_t to,
                     const char *segment, int64_t every, cc_event_scan_fn fn, void *ctx,
                     cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *q = NULL;
    size_t want = (size_t)m->m * (size_t)m->k * sizeof(float);
    float *probs = malloc(want);
    int rc = 0, step;
    if (!probs)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    if (sqlite3_prepare_v2(s->db,
                           "SELECT id, ts, label, probs FROM events "
                           "WHERE model_id = ?1 AND day BETWEEN ?2 AND ?3 AND ts BETWEEN ?4 "
                           "AND ?5 AND (?6 IS NULL OR segment = ?6) "
                           "AND (?7 <= 1 OR rowid % ?7 = 0)",
                           -1, &q, NULL) != SQLITE_OK) {
        free(probs);
        return cc_sq_error(s, err, "preparing the review query");
    }
    sqlite3_bind_int64(q, 1, m->id);
    sqlite3_bind_int64(q, 2, cc_day_of_unix(from));
    sqlite3_bind_int64(q, 3, cc_day_of_unix(to));
    sqlite3_bind_int64(q, 4, from);
    sqlite3_bind_int64(q, 5, to);
    if (segment)
        sqlite3_bind_text(q, 6, segment, -1, SQLITE_STATIC);
    sqlite3_bind_int64(q, 7, every);
    while (!rc && (step = sqlite3_step(q)) == SQLITE_ROW) {
        const char *id = (const char *)sqlite3_column_text(q, 0);
        int label = sqlite3_column_type(q, 2) == SQLITE_NULL ? -1 : sqlite3_column_int(q, 2);
        if ((size_t)sqlite3_column_bytes(q, 3) != want) {
            rc = cc_error_set(err, CC_EIO, "%s: event '%s' has a damaged probability blob",
                              s->path, id);
            break;
        }
        memcpy(probs, sqlite3_column_blob(q, 3), want);
        rc = fn(ctx, id, sqlite3_column_int64(q, 1), label, probs);
    }
    if (!rc && step != SQLITE_DONE)
        rc = cc_sq_error(s, err, "reading events");
    sqlite3_finalize(q);
    free(probs);
    return rc;
}

int cc_sq_events_scan(cc_store *store, const cc_model *m, int64_t from, int64_t to,
                      const char *segment, cc_event_scan_fn fn, void *ctx, cc_error *err)
{
    return scan_rows(store, m, from, to, segment, 1, fn, ctx, err);
}

int cc_sq_events_sample(cc_store *store, const cc_model *m, int64_t from, int64_t to,
                        const char *segment, int64_t every, cc_event_scan_fn fn, void *ctx,
                        cc_error *err)
{
    return scan_rows(store, m, from, to, segment, every, fn, ctx, err);
}

int cc_sq_event_read(cc_store *store, const cc_model *m, const char *id, int *found,
                     cc_event_rec *out, float *probs, cc_error *err)
{
    sq_store *s = SQ(store);
    size_t want = (size_t)m->m * (size_t)m->k * sizeof(float);
    sqlite3_stmt *st = cc_sq_stmt(s, ST_EVENT_READ);
    sqlite3_bind_int64(st, 1, m->id);
    cc_sq_bind_id(s, st, id, -1);
    int step = sqlite3_step(st), rc = 0;
    *found = 0;
    out->segment = NULL;
    if (step == SQLITE_DONE) {
        sqlite3_reset(st);
        return 0;
    }
    if (step != SQLITE_ROW)
        rc = cc_sq_error(s, err, "reading an event");
    else if ((size_t)sqlite3_column_bytes(st, 3) != want)
        rc = cc_error_set(err, CC_EIO, "%s: event '%s' has a damaged probability blob",
                          s->path, id);
    if (!rc) {
        out->ts = sqlite3_column_int64(st, 0);
        out->label = sqlite3_column_type(st, 2) == SQLITE_NULL ? -1 : sqlite3_column_int(st, 2);
        out->label_at =
            sqlite3_column_type(st, 4) == SQLITE_NULL ? -1 : sqlite3_column_int64(st, 4);
        if (sqlite3_column_type(st, 1) != SQLITE_NULL &&
            !(out->segment = strdup((const char *)sqlite3_column_text(st, 1))))
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    if (!rc) {
        memcpy(probs, sqlite3_column_blob(st, 3), want);
        *found = 1;
    }
    sqlite3_reset(st);
    return rc;
}

int cc_sq_labeled_day_last(cc_store *store, const cc_model *m, int64_t day, int *found,
                           int64_t *out, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    *found = 0;
    if (sqlite3_prepare_v2(s->db,
                           "SELECT max(day) FROM summaries WHERE model_id = ?1 AND "
                           "day <= ?2 AND labeled > 0",
                           -1, &st, NULL) != SQLITE_OK)
        return cc_sq_error(s, err, "label age");
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, day);
    int step = sqlite3_step(st);
    if (step == SQLITE_ROW && sqlite3_column_type(st, 0) != SQLITE_NULL) {
        *found = 1;
        *out = sqlite3_column_int64(st, 0);
    }
    sqlite3_finalize(st);
    return step == SQLITE_ROW ? 0 : cc_sq_error(s, err, "label age");
}
