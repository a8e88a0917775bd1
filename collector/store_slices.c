/* store_slices.c — the SQLite backend's slice tables behind store_slices.h
 * (its ops in cc_sq_backend; the public calls dispatch through
 * store_dispatch.c): which segment is which slice, per-(model, day, slice)
 * summaries, their pruned parts, and the rebuild that fills them for a
 * database of the previous schema. */
#include "store_slices.h"

#include <sqlite3.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "date.h"
#include "store_sqlite.h"
#include "summary_codec.h"

static int sl_error(cc_store *s, cc_error *err, const char *what)
{
    return cc_sq_error(SQ(s), err, what);
}

static int prepare(cc_store *s, const char *sql, sqlite3_stmt **st, const char *what,
                   cc_error *err)
{
    if (sqlite3_prepare_v2(cc_store_db(s), sql, -1, st, NULL) != SQLITE_OK) {
        *st = NULL;
        return sl_error(s, err, what);
    }
    return 0;
}

int cc_sq_slices_kept(cc_store *s)
{
    sqlite3_stmt *st = NULL;
    int yes = 0;
    if (sqlite3_prepare_v2(cc_store_db(s),
                           "SELECT 1 FROM sqlite_master WHERE type = 'table' AND "
                           "name = 'slice_summaries'", -1, &st, NULL) == SQLITE_OK)
        yes = sqlite3_step(st) == SQLITE_ROW;
    sqlite3_finalize(st);
    return yes;
}

static int need_slices(cc_store *s, cc_error *err)
{
    if (cc_sq_slices_kept(s))
        return 0;
    return cc_error_set(err, CC_EIO,
                        "%s: this database was written by an older concord (schema 3) and "
                        "keeps no slices yet; any writing command (e.g. 'concord ingest --db "
                        "FILE /dev/null') upgrades it in place", cc_store_path(s));
}

int cc_sq_slice_limit_get(cc_store *s, const cc_model *m, int *limit, cc_error *err)
{
    sqlite3_stmt *st;
    int rc;
    *limit = CC_SLICES_DEFAULT_MAX;
    if (!cc_sq_slices_kept(s))
        return 0;
    if ((rc = prepare(s, "SELECT max_slices FROM slice_limits WHERE model_id = ?1", &st,
                      "reading the slice limit", err)))
        return rc;
    sqlite3_bind_int64(st, 1, m->id);
    int step = sqlite3_step(st);
    if (step == SQLITE_ROW)
        *limit = sqlite3_column_int(st, 0);
    sqlite3_finalize(st);
    return step == SQLITE_ROW || step == SQLITE_DONE ? 0 : sl_error(s, err, "reading the slice limit");
}

int cc_sq_slice_limit_set(cc_store *s, const cc_model *m, int limit, cc_error *err)
{
    sqlite3_stmt *st;
    int rc;
    if (limit < 1 || limit > CC_SLICES_LIMIT_MAX)
        return cc_error_set(err, CC_EUSAGE, "slice limit %d is outside 1..%d", limit,
                            CC_SLICES_LIMIT_MAX);
    if ((rc = prepare(s, "INSERT OR REPLACE INTO slice_limits(model_id, max_slices) "
                         "VALUES (?1, ?2)", &st, "setting the slice limit", err)))
        return rc;
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int(st, 2, limit);
    int step = sqlite3_step(st);
    sqlite3_finalize(st);
    return step == SQLITE_DONE ? 0 : sl_error(s, err, "setting the slice limit");
}

/* The slice of (kind, segment), or *id = -1. */
static int slice_lookup(cc_store *s, const cc_model *m, int kind, const char *segment, int len,
                        int64_t *id, cc_error *err)
{
    sqlite3_stmt *st;
    int rc;
    *id = -1;
    if ((rc = prepare(s, "SELECT slice_id FROM slices WHERE model_id = ?1 AND kind = ?2 "
                         "AND segment = ?3", &st, "reading slices", err)))
        return rc;
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int(st, 2, kind);
    sqlite3_bind_text(st, 3, segment ? segment : "", segment ? len : 0, SQLITE_STATIC);
    int step = sqlite3_step(st);
    if (step == SQLITE_ROW)
        *id = sqlite3_column_int64(st, 0);
    sqlite3_finalize(st);
    return step == SQLITE_ROW || step == SQLITE_DONE ? 0 : sl_error(s, err, "reading slices");
}

static int slice_insert(cc_store *s, const cc_model *m, int kind, const char *segment, int len,
                        int64_t *id, cc_error *err)
{
    sqlite3_stmt *st;
    int rc;
    if ((rc = prepare(s, "INSERT INTO slices(model_id, kind, segment, created_at) "
                         "VALUES (?1, ?2, ?3, ?4)", &st, "adding a slice", err)))
        return rc;
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int(st, 2, kind);
    sqlite3_bind_text(st, 3, segment ? segment : "", segment ? len : 0, SQLITE_STATIC);
    sqlite3_bind_int64(st, 4, (sqlite3_int64)time(NULL));
    int step = sqlite3_step(st);
    sqlite3_finalize(st);
    if (step != SQLITE_DONE)
        return sl_error(s, err, "adding a slice");
    *id = sqlite3_last_insert_rowid(cc_store_db(s));
    return 0;
}

static int slice_get_or_add(cc_store *s, const cc_model *m, int kind, const char *segment,
                            int len, int64_t *id, cc_error *err)
{
    int rc = slice_lookup(s, m, kind, segment, len, id, err);
    if (!rc && *id < 0)
        rc = slice_insert(s, m, kind, segment, len, id, err);
    return rc;
}

int cc_sq_slice_add(cc_store *s, const cc_model *m, int kind, const char *segment, int len,
                    int64_t *slice, cc_error *err)
{
    int rc = need_slices(s, err);
    if (!rc && (kind < CC_SLICE_SEGMENT || kind > CC_SLICE_PRUNED))
        rc = cc_error_set(err, CC_EUSAGE, "slice kind %d is unknown", kind);
    return rc ? rc : slice_get_or_add(s, m, kind, kind == CC_SLICE_SEGMENT ? segment : NULL,
                                      kind == CC_SLICE_SEGMENT ? len : 0, slice, err);
}

int cc_sq_slice_resolve(cc_store *s, const cc_model *m, const char *segment, int len,
                           int create, int64_t *slice, int *overflow, cc_error *err)
{
    int rc;
    *overflow = 0;
    if ((rc = need_slices(s, err)))
        return rc;
    if (!segment)
        return slice_get_or_add(s, m, CC_SLICE_NONE, NULL, 0, slice, err);
    if ((rc = slice_lookup(s, m, CC_SLICE_SEGMENT, segment, len, slice, err)) || *slice >= 0)
        return rc;
    if (create) {
        sqlite3_stmt *st;
        int limit;
        int64_t have = 0;
        if ((rc = cc_sq_slice_limit_get(s, m, &limit, err)) ||
            (rc = prepare(s, "SELECT count(*) FROM slices WHERE model_id = ?1 AND kind = 0",
                          &st, "counting slices", err)))
            return rc;
        sqlite3_bind_int64(st, 1, m->id);
        if (sqlite3_step(st) == SQLITE_ROW)
            have = sqlite3_column_int64(st, 0);
        sqlite3_finalize(st);
        if (have < limit)
            return slice_insert(s, m, CC_SLICE_SEGMENT, segment, len, slice, err);
    }
    *overflow = 1;
    return slice_get_or_add(s, m, CC_SLICE_OVERFLOW, NULL, 0, slice, err);
}

int cc_sq_event_segment(cc_store *s, const cc_model *m, const char *id, int id_len,
                           int *found, char **segment, cc_error *err)
{
    sqlite3_stmt *st;
    int rc;
    *found = 0;
    *segment = NULL;
    if ((rc = prepare(s, SQ(s)->version >= 5 ? "SELECT segment FROM events WHERE model_id = ?1 "
                                           "AND id_hash = ?9 AND id = ?2"
                                         : "SELECT segment FROM events WHERE model_id = ?1 "
                                           "AND id = ?2",
                      &st, "reading an event's segment", err)))
        return rc;
    sqlite3_bind_int64(st, 1, m->id);
    cc_sq_bind_id(SQ(s), st, id, id_len);
    int step = sqlite3_step(st);
    if (step == SQLITE_ROW) {
        *found = 1;
        if (sqlite3_column_type(st, 0) != SQLITE_NULL) {
            const char *t = (const char *)sqlite3_column_text(st, 0);
            if (!(*segment = strdup(t ? t : "")))
                rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        }
    } else if (step != SQLITE_DONE) {
        rc = sl_error(s, err, "reading an event's segment");
    }
    sqlite3_finalize(st);
    return rc;
}

int cc_sq_slice_overview(cc_store *s, const cc_model *m, int *count, int64_t *overflow_events,
                            cc_error *err)
{
    sqlite3_stmt *st;
    int rc, step;
    *count = 0;
    *overflow_events = 0;
    if (!cc_sq_slices_kept(s))
        return 0;
    if ((rc = prepare(s, "SELECT (SELECT count(*) FROM slices WHERE model_id = ?1), "
                         "(SELECT total(u.events) FROM slices x JOIN slice_summaries u "
                         "  ON u.model_id = x.model_id AND u.slice_id = x.slice_id "
                         "  WHERE x.model_id = ?1 AND x.kind = 2)",
                      &st, "reading slices", err)))
        return rc;
    sqlite3_bind_int64(st, 1, m->id);
    if ((step = sqlite3_step(st)) == SQLITE_ROW) {
        *count = sqlite3_column_int(st, 0);
        *overflow_events = (int64_t)sqlite3_column_double(st, 1);
    }
    sqlite3_finalize(st);
    return step == SQLITE_ROW ? 0 : sl_error(s, err, "reading slices");
}

int cc_sq_slice_list(cc_store *s, const cc_model *m, cc_slice **out, int *n, cc_error *err)
{
    sqlite3_stmt *st;
    int rc, step;
    *out = NULL;
    *n = 0;
    if ((rc = need_slices(s, err)) ||
        (rc = prepare(s, "SELECT s.slice_id, s.kind, s.segment, "
                         "(SELECT total(events) FROM slice_summaries u "
                         "  WHERE u.model_id = s.model_id AND u.slice_id = s.slice_id), "
                         "(SELECT total(labeled) FROM slice_summaries u "
                         "  WHERE u.model_id = s.model_id AND u.slice_id = s.slice_id) "
                         "FROM slices s WHERE s.model_id = ?1 ORDER BY s.slice_id",
                      &st, "listing slices", err)))
        return rc;
    sqlite3_bind_int64(st, 1, m->id);
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        cc_slice *grown = realloc(*out, (size_t)(*n + 1) * sizeof *grown);
        const char *seg = (const char *)sqlite3_column_text(st, 2);
        if (!grown) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            break;
        }
        *out = grown;
        cc_slice *sl = &grown[*n];
        sl->id = sqlite3_column_int64(st, 0);
        sl->kind = sqlite3_column_int(st, 1);
        sl->events = (int64_t)sqlite3_column_double(st, 3);
        sl->labeled = (int64_t)sqlite3_column_double(st, 4);
        if (!(sl->segment = strdup(seg ? seg : ""))) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            break;
        }
        ++*n;
    }
    if (!rc && step != SQLITE_DONE)
        rc = sl_error(s, err, "listing slices");
    sqlite3_finalize(st);
    if (rc) {
        cc_slice_list_free(*out, *n);
        *out = NULL;
        *n = 0;
    }
    return rc;
}

/* Decodes a (version, counters) row into out; names what is damaged. */
static int decode_row(cc_store *s, const cc_model *m, sqlite3_stmt *st, int64_t day,
                      int64_t slice, const char *what, cc_summary *out, cc_error *err)
{
    return cc_sq_decode_summary(s, m, sqlite3_column_blob(st, 1), sqlite3_column_bytes(st, 1),
                                sqlite3_column_int64(st, 0), day, slice, what, out, err);
}

static int get_row(cc_store *s, const cc_model *m, const char *sql, const char *what,
                   int64_t day, int64_t slice, int *found, cc_summary *out, cc_error *err)
{
    sqlite3_stmt *st;
    int rc;
    *found = 0;
    cc_summary_clear(out);
    if ((rc = need_slices(s, err)) || (rc = prepare(s, sql, &st, what, err)))
        return rc;
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, day);
    sqlite3_bind_int64(st, 3, slice);
    int step = sqlite3_step(st);
    if (step == SQLITE_ROW) {
        *found = 1;
        rc = decode_row(s, m, st, day, slice, what, out, err);
    } else if (step != SQLITE_DONE) {
        rc = sl_error(s, err, what);
    }
    sqlite3_finalize(st);
    return rc;
}

int cc_sq_slice_summary_get(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                               cc_summary *out, cc_error *err)
{
    int found;
    return get_row(s, m, "SELECT version, counters FROM slice_summaries WHERE model_id = ?1 "
                         "AND day = ?2 AND slice_id = ?3",
                   "slice summary", day, slice, &found, out, err);
}

int cc_sq_slice_pruned_get(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                              int *found, cc_summary *out, cc_error *err)
{
    return get_row(s, m, "SELECT version, counters FROM slice_pruned WHERE model_id = ?1 "
                         "AND day = ?2 AND slice_id = ?3",
                   "pruned part of a slice", day, slice, found, out, err);
}

/* Writes sum as the stored row of (day, slice) in table summaries
 * ("slice_summaries") or pruned ("slice_pruned"). */
static int put_row(cc_store *s, const cc_model *m, int pruned, int64_t day, int64_t slice,
                   const cc_summary *sum, int64_t now, cc_error *err)
{
    const cc_layout *lay = cc_summary_layout(sum);
    const int64_t *v = cc_summary_data(sum);
    size_t len;
    sqlite3_stmt *st;
    int rc;
    if (cc_summary_overflowed(sum)) {
        char date[11];
        cc_format_date(day, date);
        return cc_error_set(err, CC_EIO,
                            "%s: summary counter overflow at model '%s', %s, slice %lld; "
                            "nothing was written", cc_store_path(s), m->name, date,
                            (long long)slice);
    }
    unsigned char *blob = cc_codec_encode(v, lay->len, &len);
    if (!blob)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    const char *sql = pruned ? "INSERT OR REPLACE INTO slice_pruned(model_id, day, slice_id, "
                               "version, events, counters, pruned_at) "
                               "VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7)"
                             : "INSERT OR REPLACE INTO slice_summaries(model_id, day, slice_id, "
                               "version, events, labeled, counters) "
                               "VALUES (?1, ?2, ?3, ?4, ?5, ?7, ?6)";
    if ((rc = prepare(s, sql, &st, "writing a slice summary", err))) {
        free(blob);
        return rc;
    }
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, day);
    sqlite3_bind_int64(st, 3, slice);
    sqlite3_bind_int(st, 4, CC_SUMMARY_VERSION);
    sqlite3_bind_int64(st, 5, v[lay->n_events]);
    sqlite3_bind_blob(st, 6, blob, (int)len, SQLITE_STATIC);
    sqlite3_bind_int64(st, 7, pruned ? now : v[lay->n_labeled]);
    int step = sqlite3_step(st);
    sqlite3_finalize(st);
    free(blob);
    return step == SQLITE_DONE ? 0 : sl_error(s, err, "writing a slice summary");
}

int cc_sq_slice_summary_add(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                               const cc_summary *delta, cc_error *err)
{
    cc_summary *sum = cc_sq_scratch(SQ(s), m, err);
    if (!sum)
        return -CC_ENOMEM;
    int rc = cc_sq_slice_summary_get(s, m, day, slice, sum, err);
    if (!rc)
        rc = cc_sq_merge(s, m, day, slice, sum, delta, err);
    if (!rc)
        rc = put_row(s, m, 0, day, slice, sum, 0, err);
    return rc;
}

int cc_sq_slice_summary_days(cc_store *s, const cc_model *m, int64_t slice, int64_t from,
                                int64_t to, int64_t **days, int *n, cc_error *err)
{
    sqlite3_stmt *st;
    int rc;
    *days = NULL;
    *n = 0;
    if ((rc = need_slices(s, err)) ||
        (rc = prepare(s, "SELECT day FROM slice_summaries WHERE model_id = ?1 AND slice_id = ?2 "
                         "AND day BETWEEN ?3 AND ?4 AND events > 0 ORDER BY day",
                      &st, "listing a slice's days", err)))
        return rc;
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, slice);
    sqlite3_bind_int64(st, 3, from);
    sqlite3_bind_int64(st, 4, to);
    return cc_sq_collect_days(SQ(s), st, "listing a slice's days", days, n, err);
}

/* Index in list of the slice an event with this segment belongs to, or -1. */
static int slice_of_row(const cc_slice *list, int n, const char *segment, int overflow_at)
{
    for (int i = 0; i < n; i++) {
        if (!segment ? list[i].kind == CC_SLICE_NONE
                     : list[i].kind == CC_SLICE_SEGMENT && strcmp(list[i].segment, segment) == 0)
            return i;
    }
    return segment ? overflow_at : -1;
}

/* cc_sq_slice_from_rows; lenient = 1 skips events that belong to no
 * slice (written through the row API alone) instead of failing. */
static int rows_by_slice(cc_store *s, const cc_model *m, int64_t day, const cc_slice *list,
                         int n, cc_summary **out, int lenient, cc_error *err)
{
    sqlite3_stmt *st;
    size_t want = (size_t)m->m * (size_t)m->k * sizeof(float);
    int overflow_at = -1, rc, step;
    for (int i = 0; i < n; i++) {
        cc_summary_clear(out[i]);
        if (list[i].kind == CC_SLICE_OVERFLOW)
            overflow_at = i;
    }
    float *probs = malloc(want);
    if (!probs)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    if ((rc = prepare(s, "SELECT segment, label, probs, ts, label_at, id FROM events "
                         "WHERE model_id = ?1 AND day = ?2", &st, "reading events", err))) {
        free(probs);
        return rc;
    }
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, day);
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        const char *seg = sqlite3_column_type(st, 0) == SQLITE_NULL
                              ? NULL : (const char *)sqlite3_column_text(st, 0);
        int at = slice_of_row(list, n, seg, overflow_at);
        if (at < 0 && lenient)
            continue;
        if (at < 0) {
            rc = cc_error_set(err, CC_EIO, "%s: event '%.128s' of model '%s' belongs to no "
                                           "slice", cc_store_path(s),
                              (const char *)sqlite3_column_text(st, 5), m->name);
            break;
        }
        if ((size_t)sqlite3_column_bytes(st, 2) != want) {
            rc = cc_error_set(err, CC_EIO, "%s: damaged probability blob", cc_store_path(s));
            break;
        }
        memcpy(probs, sqlite3_column_blob(st, 2), want);
        cc_summary_add_unlabeled(out[at], probs, 1);
        if (sqlite3_column_type(st, 1) != SQLITE_NULL)
            cc_summary_add_labeled(out[at], probs, sqlite3_column_int(st, 1), 1);
        if (sqlite3_column_type(st, 4) != SQLITE_NULL)
            cc_summary_add_label_delay(out[at], sqlite3_column_int64(st, 4) -
                                                    sqlite3_column_int64(st, 3), 1);
    }
    if (!rc && step != SQLITE_DONE)
        rc = sl_error(s, err, "reading events");
    sqlite3_finalize(st);
    free(probs);
    return rc;
}

int cc_sq_slice_from_rows(cc_store *s, const cc_model *m, int64_t day, const cc_slice *list,
                             int n, cc_summary **out, cc_error *err)
{
    return rows_by_slice(s, m, day, list, n, out, 0, err);
}

/* n summaries of the model's shape, or NULL. */
static cc_summary **summaries_create(const cc_model *m, int n)
{
    cc_summary **v = calloc((size_t)(n ? n : 1), sizeof *v);
    for (int i = 0; v && i < n; i++)
        if (!(v[i] = cc_summary_create(m->m, m->k))) {
            for (int j = 0; j < i; j++)
                cc_summary_free(v[j]);
            free(v);
            return NULL;
        }
    return v;
}

static void summaries_free(cc_summary **v, int n)
{
    for (int i = 0; v && i < n; i++)
        cc_summary_free(v[i]);
    free(v);
}

int cc_sq_slice_prune_day(cc_store *s, const cc_model *m, int64_t day, int64_t now,
                             cc_error *err)
{
    cc_slice *list = NULL;
    cc_summary **parts = NULL, *kept = NULL;
    int n = 0, rc;
    if ((rc = cc_sq_slice_list(s, m, &list, &n, err)))
        return rc;
    if (!(parts = summaries_create(m, n)) || !(kept = cc_summary_create(m->m, m->k))) {
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    /* rows outside every slice were never in a slice's summary either */
    if ((rc = rows_by_slice(s, m, day, list, n, parts, 1, err)))
        goto done;
    for (int i = 0; i < n && !rc; i++) {
        const cc_layout *lay = cc_summary_layout(parts[i]);
        int found;
        if (cc_summary_data(parts[i])[lay->n_events] == 0)
            continue;
        if (!(rc = cc_sq_slice_pruned_get(s, m, day, list[i].id, &found, kept, err)) &&
            !(rc = cc_sq_merge(s, m, day, list[i].id, kept, parts[i], err)))
            rc = put_row(s, m, 1, day, list[i].id, kept, now, err);
    }
done:
    summaries_free(parts, n);
    cc_summary_free(kept);
    cc_slice_list_free(list, n);
    return rc;
}

static int64_t now_ms(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (int64_t)ts.tv_sec * 1000 + ts.tv_nsec / 1000000;
}

#define PROGRESS_MS 2000

/* One model's slices from its rows and pruned days; *done counts days. */
static int rebuild_model(cc_store *s, const cc_model *m, cc_slice_progress_fn progress,
                         void *ctx, int64_t *next_ms, cc_error *err)
{
    sqlite3_stmt *st = NULL;
    cc_slice *list = NULL;
    cc_summary **parts = NULL, *pruned = NULL;
    int64_t *days = NULL, *pdays = NULL;
    int n = 0, n_days = 0, n_pdays = 0, rc, step, overflow;
    int64_t id;
    /* slices in the order their segments first arrived */
    if ((rc = prepare(s, "SELECT segment, min(rowid) AS first FROM events WHERE model_id = ?1 "
                         "GROUP BY segment ORDER BY first", &st, "reading segments", err)))
        return rc;
    sqlite3_bind_int64(st, 1, m->id);
    while (!rc && (step = sqlite3_step(st)) == SQLITE_ROW)
        rc = cc_sq_slice_resolve(s, m,
                                    sqlite3_column_type(st, 0) == SQLITE_NULL
                                        ? NULL : (const char *)sqlite3_column_text(st, 0),
                                    sqlite3_column_bytes(st, 0), 1, &id, &overflow, err);
    if (!rc && step != SQLITE_DONE)
        rc = sl_error(s, err, "reading segments");
    sqlite3_finalize(st);
    st = NULL;
    if (rc || (rc = cc_store_row_days(s, m, &days, &n_days, err)))
        goto done;
    if ((rc = prepare(s, "SELECT day FROM pruned_days WHERE model_id = ?1 ORDER BY day", &st,
                      "reading pruned days", err)))
        goto done;
    sqlite3_bind_int64(st, 1, m->id);
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        int64_t *grown = realloc(pdays, (size_t)(n_pdays + 1) * sizeof *grown);
        if (!grown) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            goto done;
        }
        pdays = grown;
        pdays[n_pdays++] = sqlite3_column_int64(st, 0);
    }
    sqlite3_finalize(st);
    st = NULL;
    if (n_pdays > 0 &&
        (rc = slice_get_or_add(s, m, CC_SLICE_PRUNED, NULL, 0, &id, err)))
        goto done;
    if ((rc = cc_sq_slice_list(s, m, &list, &n, err)))
        goto done;
    if (!(parts = summaries_create(m, n)) || !(pruned = cc_summary_create(m->m, m->k))) {
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    int64_t total = n_days + n_pdays;
    for (int d = 0; d < n_days && !rc; d++) {
        if ((rc = cc_sq_slice_from_rows(s, m, days[d], list, n, parts, err)))
            break;
        for (int i = 0; i < n && !rc; i++)
            if (cc_summary_data(parts[i])[cc_summary_layout(parts[i])->n_events] > 0)
                rc = put_row(s, m, 0, days[d], list[i].id, parts[i], 0, err);
        if (progress && now_ms() >= *next_ms) {
            progress(ctx, cc_store_path(s), m->name, d + 1, total);
            *next_ms = now_ms() + PROGRESS_MS;
        }
    }
    for (int d = 0; d < n_pdays && !rc; d++) {
        int found;
        if ((rc = cc_store_pruned_get(s, m, pdays[d], &found, pruned, err)) ||
            (rc = cc_sq_slice_summary_add(s, m, pdays[d], id, pruned, err)) ||
            (rc = put_row(s, m, 1, pdays[d], id, pruned, (int64_t)time(NULL), err)))
            break;
        if (progress && now_ms() >= *next_ms) {
            progress(ctx, cc_store_path(s), m->name, n_days + d + 1, total);
            *next_ms = now_ms() + PROGRESS_MS;
        }
    }
done:
    sqlite3_finalize(st);
    free(days);
    free(pdays);
    summaries_free(parts, n);
    cc_summary_free(pruned);
    cc_slice_list_free(list, n);
    return rc;
}

int cc_sq_slice_rebuild(cc_store *s, cc_slice_progress_fn progress, void *ctx, cc_error *err)
{
    char **names = NULL;
    int n = 0, rc;
    int64_t next_ms = now_ms() + PROGRESS_MS;
    if ((rc = cc_store_model_list(s, &names, &n, err)))
        return rc;
    for (int i = 0; i < n && !rc; i++) {
        cc_model *m = NULL;
        if (!names[i])
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        else if (!(rc = cc_store_model_get(s, names[i], &m, err)))
            rc = rebuild_model(s, m, progress, ctx, &next_ms, err);
        cc_model_free(m);
    }
    for (int i = 0; i < n; i++)
        free(names[i]);
    free(names);
    return rc;
}
