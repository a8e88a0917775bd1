/* store_publish.c — the SQLite backend's bookkeeping for publishing to a
 * cluster (cluster/publish.c): what changed since the last publish. The
 * marks are kept by triggers (store.c, upgrade_publish_marks); these calls
 * read and clear them. A store of another backend has nothing to publish. */
#include <sqlite3.h>
#include <string.h>

#include "store.h"
#include "store_sqlite.h"

static sq_store *sqlite_of(cc_store *s) { return s && s->be == &cc_sq_backend ? SQ(s) : NULL; }

static int not_sqlite(cc_store *s, cc_error *err)
{
    return cc_error_set(err, CC_EIO, "%s: only a local SQLite store can be published",
                        s && s->path ? s->path : "store");
}

int cc_store_publish_state_get(cc_store *store, const char *key, int64_t *value, cc_error *err)
{
    sq_store *s = sqlite_of(store);
    if (!s)
        return not_sqlite(store, err);
    sqlite3_stmt *st;
    *value = 0;
    if (sqlite3_prepare_v2(s->db, "SELECT value FROM publish_state WHERE key = ?1", -1, &st,
                           NULL) != SQLITE_OK)
        return cc_sq_error(s, err, "reading the publish state");
    sqlite3_bind_text(st, 1, key, -1, SQLITE_STATIC);
    int step = sqlite3_step(st);
    if (step == SQLITE_ROW)
        *value = sqlite3_column_int64(st, 0);
    sqlite3_finalize(st);
    return step == SQLITE_ROW || step == SQLITE_DONE ? 0
                                                    : cc_sq_error(s, err, "reading the publish state");
}

int cc_store_publish_state_set(cc_store *store, const char *key, int64_t value, cc_error *err)
{
    sq_store *s = sqlite_of(store);
    if (!s)
        return not_sqlite(store, err);
    sqlite3_stmt *st;
    if (sqlite3_prepare_v2(s->db, "INSERT OR REPLACE INTO publish_state(key, value) "
                                  "VALUES (?1, ?2)", -1, &st, NULL) != SQLITE_OK)
        return cc_sq_error(s, err, "writing the publish state");
    sqlite3_bind_text(st, 1, key, -1, SQLITE_STATIC);
    sqlite3_bind_int64(st, 2, value);
    int step = sqlite3_step(st);
    sqlite3_finalize(st);
    return step == SQLITE_DONE ? 0 : cc_sq_error(s, err, "writing the publish state");
}

int cc_store_publish_days(cc_store *store, int64_t *upto, cc_publish_day_fn fn, void *ctx,
                          cc_error *err)
{
    sq_store *s = sqlite_of(store);
    if (!s)
        return not_sqlite(store, err);
    sqlite3_stmt *st;
    int rc = 0, step;
    *upto = 0;
    if (sqlite3_prepare_v2(s->db, "SELECT p.mark, m.name, p.day FROM publish_days p "
                                  "JOIN models m ON m.model_id = p.model_id ORDER BY p.mark",
                           -1, &st, NULL) != SQLITE_OK)
        return cc_sq_error(s, err, "reading the days to publish");
    while (!rc && (step = sqlite3_step(st)) == SQLITE_ROW) {
        *upto = sqlite3_column_int64(st, 0);
        rc = fn(ctx, (const char *)sqlite3_column_text(st, 1), sqlite3_column_int64(st, 2));
    }
    if (!rc && step != SQLITE_DONE)
        rc = cc_sq_error(s, err, "reading the days to publish");
    sqlite3_finalize(st);
    return rc;
}

/* Runs one event query (rowid bound as ?1) and hands each row to fn; *last
 * gets the first column of the last row. */
static int publish_event_rows(sq_store *s, const char *sql, int64_t bound, int64_t bound2,
                              int64_t *last, cc_publish_event_fn fn, void *ctx, cc_error *err)
{
    sqlite3_stmt *st;
    int rc = 0, step;
    if (sqlite3_prepare_v2(s->db, sql, -1, &st, NULL) != SQLITE_OK)
        return cc_sq_error(s, err, "reading the events to publish");
    sqlite3_bind_int64(st, 1, bound);
    if (sqlite3_bind_parameter_count(st) >= 2)
        sqlite3_bind_int64(st, 2, bound2);
    while (!rc && (step = sqlite3_step(st)) == SQLITE_ROW) {
        cc_published_event e;
        int members = sqlite3_column_int(st, 10), classes = sqlite3_column_int(st, 11);
        *last = sqlite3_column_int64(st, 0);
        e.model = (const char *)sqlite3_column_text(st, 1);
        e.id = (const char *)sqlite3_column_text(st, 2);
        e.id_len = sqlite3_column_bytes(st, 2);
        e.ts = sqlite3_column_int64(st, 3);
        e.day = sqlite3_column_int64(st, 4);
        e.segment = (const char *)sqlite3_column_text(st, 5);
        e.segment_len = sqlite3_column_bytes(st, 5);
        e.pred = sqlite3_column_int(st, 6);
        e.label = sqlite3_column_type(st, 7) == SQLITE_NULL ? -1 : sqlite3_column_int(st, 7);
        e.label_at = sqlite3_column_type(st, 8) == SQLITE_NULL ? -1
                                                               : sqlite3_column_int64(st, 8);
        e.probs = sqlite3_column_blob(st, 9);
        e.n_probs = members * classes;
        if ((size_t)sqlite3_column_bytes(st, 9) != (size_t)e.n_probs * sizeof(float)) {
            rc = cc_error_set(err, CC_EIO, "%s: event '%.*s' has a damaged probability blob",
                              s->path, e.id_len, e.id);
            break;
        }
        rc = fn(ctx, &e);
    }
    if (!rc && step != SQLITE_DONE)
        rc = cc_sq_error(s, err, "reading the events to publish");
    sqlite3_finalize(st);
    return rc;
}

#define PUBLISH_EVENT_COLUMNS                                                                  \
    "m.name, e.id, e.ts, e.day, e.segment, e.pred, e.label, e.label_at, e.probs, m.members, "  \
    "m.classes FROM events e JOIN models m ON m.model_id = e.model_id "

int cc_store_publish_events(cc_store *store, int64_t after_rowid, int64_t *max_rowid,
                            int64_t *relabel_upto, cc_publish_event_fn fn, void *ctx,
                            cc_error *err)
{
    sq_store *s = sqlite_of(store);
    if (!s)
        return not_sqlite(store, err);
    sqlite3_stmt *st;
    *max_rowid = after_rowid;
    *relabel_upto = 0;
    if (sqlite3_prepare_v2(s->db, "SELECT coalesce(max(mark), 0) FROM publish_relabels", -1,
                           &st, NULL) != SQLITE_OK)
        return cc_sq_error(s, err, "reading the labels to publish");
    if (sqlite3_step(st) == SQLITE_ROW)
        *relabel_upto = sqlite3_column_int64(st, 0);
    sqlite3_finalize(st);
    int64_t unused;
    int rc = publish_event_rows(s, "SELECT e.rowid, " PUBLISH_EVENT_COLUMNS
                                   "WHERE e.rowid > ?1 ORDER BY e.rowid",
                                after_rowid, 0, max_rowid, fn, ctx, err);
    /* relabelled rows that were not new (those went out just above) */
    if (!rc)
        rc = publish_event_rows(s, "SELECT r.mark, " PUBLISH_EVENT_COLUMNS
                                   "JOIN publish_relabels r ON r.event_rowid = e.rowid "
                                   "WHERE e.rowid <= ?1 AND r.mark <= ?2 ORDER BY r.mark",
                                after_rowid, *relabel_upto, &unused, fn, ctx, err);
    return rc;
}

int cc_store_publish_new_ids(cc_store *store, int64_t after_rowid, int64_t *max_rowid,
                             cc_publish_id_fn fn, void *ctx, cc_error *err)
{
    sq_store *s = sqlite_of(store);
    *max_rowid = after_rowid;
    if (!s)
        return not_sqlite(store, err);
    sqlite3_stmt *st;
    int rc = 0, step;
    if (sqlite3_prepare_v2(s->db, "SELECT e.rowid, m.name, e.id FROM events e JOIN models m "
                                  "ON m.model_id = e.model_id WHERE e.rowid > ?1 "
                                  "ORDER BY e.rowid",
                           -1, &st, NULL) != SQLITE_OK)
        return cc_sq_error(s, err, "reading the events stored since the last publish");
    sqlite3_bind_int64(st, 1, after_rowid);
    while (!rc && (step = sqlite3_step(st)) == SQLITE_ROW) {
        *max_rowid = sqlite3_column_int64(st, 0);
        rc = fn(ctx, (const char *)sqlite3_column_text(st, 1),
                (const char *)sqlite3_column_text(st, 2), sqlite3_column_bytes(st, 2));
    }
    if (!rc && step != SQLITE_DONE)
        rc = cc_sq_error(s, err, "reading the events stored since the last publish");
    sqlite3_finalize(st);
    return rc;
}

int cc_store_publish_clear(cc_store *store, int64_t day_mark, int64_t relabel_mark, cc_error *err)
{
    sq_store *s = sqlite_of(store);
    if (!s)
        return not_sqlite(store, err);
    sqlite3_stmt *st;
    static const char *const sql[2] = {"DELETE FROM publish_days WHERE mark <= ?1",
                                       "DELETE FROM publish_relabels WHERE mark <= ?1"};
    for (int i = 0; i < 2; i++) {
        if (sqlite3_prepare_v2(s->db, sql[i], -1, &st, NULL) != SQLITE_OK)
            return cc_sq_error(s, err, "clearing publish marks");
        sqlite3_bind_int64(st, 1, i == 0 ? day_mark : relabel_mark);
        int step = sqlite3_step(st);
        sqlite3_finalize(st);
        if (step != SQLITE_DONE)
            return cc_sq_error(s, err, "clearing publish marks");
    }
    return 0;
}

int cc_store_pending_label_list(cc_store *store, cc_pending_list_fn fn, void *ctx, cc_error *err)
{
    sq_store *s = sqlite_of(store);
    if (!s)
        return not_sqlite(store, err);
    sqlite3_stmt *st;
    int rc = 0, step;
    if (sqlite3_prepare_v2(s->db, "SELECT m.name, p.id, p.label, p.received_at "
                                  "FROM pending_labels p JOIN models m "
                                  "ON m.model_id = p.model_id ORDER BY m.name, p.id",
                           -1, &st, NULL) != SQLITE_OK)
        return cc_sq_error(s, err, "reading pending labels");
    while (!rc && (step = sqlite3_step(st)) == SQLITE_ROW)
        rc = fn(ctx, (const char *)sqlite3_column_text(st, 0),
                (const char *)sqlite3_column_text(st, 1), sqlite3_column_bytes(st, 1),
                sqlite3_column_int(st, 2), sqlite3_column_int64(st, 3));
    if (!rc && step != SQLITE_DONE)
        rc = cc_sq_error(s, err, "reading pending labels");
    sqlite3_finalize(st);
    return rc;
}
