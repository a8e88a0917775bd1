/* store.c — SQLite schema and statements behind store.h. */
#include "store.h"

#include <cjson/cJSON.h>
#include <sqlite3.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "date.h"
#include "summary_codec.h"

#define SCHEMA_VERSION 1

enum {
    ST_EVENT_INSERT,
    ST_EVENT_GET,
    ST_EVENT_SET_LABEL,
    ST_SUMMARY_GET,
    ST_SUMMARY_PUT,
    ST_REJECT,
    ST_PENDING_ADD,
    ST_COUNT
};

static const char *const stmt_sql[ST_COUNT] = {
    [ST_EVENT_INSERT] = "INSERT OR IGNORE INTO events(model_id, id, ts, day, segment, pred, "
                        "label, probs) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)",
    [ST_EVENT_GET] = "SELECT day, label, probs, ts, label_at FROM events "
                     "WHERE model_id = ?1 AND id = ?2",
    [ST_EVENT_SET_LABEL] = "UPDATE events SET label = ?3, label_at = ?4 "
                           "WHERE model_id = ?1 AND id = ?2",
    [ST_SUMMARY_GET] = "SELECT version, counters FROM summaries WHERE model_id = ?1 AND day = ?2",
    [ST_SUMMARY_PUT] = "INSERT OR REPLACE INTO summaries(model_id, day, version, events, "
                       "labeled, counters) VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
    [ST_REJECT] = "INSERT INTO rejects(at, kind, source, line, reason, text) "
                  "VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
    [ST_PENDING_ADD] = "INSERT OR REPLACE INTO pending_labels(model_id, id, label, received_at) "
                       "VALUES (?1, ?2, ?3, ?4)",
};

struct cc_store {
    sqlite3 *db;
    char *path;
    sqlite3_stmt *st[ST_COUNT];
    cc_summary *scratch; /* reused by cc_store_summary_add */
};

static const char schema_sql[] =
    "CREATE TABLE IF NOT EXISTS meta(key TEXT PRIMARY KEY, value TEXT NOT NULL);"
    "CREATE TABLE IF NOT EXISTS models("
    "  model_id INTEGER PRIMARY KEY, name TEXT NOT NULL UNIQUE,"
    "  members INTEGER NOT NULL, classes INTEGER NOT NULL,"
    "  member_names TEXT NOT NULL, class_names TEXT NOT NULL, created_at INTEGER NOT NULL);"
    "CREATE TABLE IF NOT EXISTS events("
    "  model_id INTEGER NOT NULL, id TEXT NOT NULL, ts INTEGER NOT NULL, day INTEGER NOT NULL,"
    "  segment TEXT, pred INTEGER NOT NULL, label INTEGER, label_at INTEGER,"
    "  probs BLOB NOT NULL,"
    "  PRIMARY KEY(model_id, id)) WITHOUT ROWID;"
    "CREATE INDEX IF NOT EXISTS events_by_time ON events(model_id, day, ts);"
    "CREATE TABLE IF NOT EXISTS summaries("
    "  model_id INTEGER NOT NULL, day INTEGER NOT NULL, version INTEGER NOT NULL,"
    "  events INTEGER NOT NULL, labeled INTEGER NOT NULL, counters BLOB NOT NULL,"
    "  PRIMARY KEY(model_id, day)) WITHOUT ROWID;"
    "CREATE TABLE IF NOT EXISTS baselines("
    "  model_id INTEGER PRIMARY KEY, from_day INTEGER NOT NULL, to_day INTEGER NOT NULL,"
    "  set_at INTEGER NOT NULL);"
    "CREATE TABLE IF NOT EXISTS rejects("
    "  reject_id INTEGER PRIMARY KEY, at INTEGER NOT NULL, kind TEXT NOT NULL,"
    "  source TEXT NOT NULL, line INTEGER NOT NULL, reason TEXT NOT NULL, text TEXT);"
    "CREATE TABLE IF NOT EXISTS pending_labels("
    "  model_id INTEGER NOT NULL, id TEXT NOT NULL, label INTEGER NOT NULL,"
    "  received_at INTEGER NOT NULL, PRIMARY KEY(model_id, id)) WITHOUT ROWID;";

static int db_error(cc_store *s, cc_error *err, const char *what)
{
    return cc_error_set(err, CC_EIO, "%s: %s: %s", s->path, what, sqlite3_errmsg(s->db));
}

static int exec(cc_store *s, const char *sql, cc_error *err)
{
    char *msg = NULL;
    if (sqlite3_exec(s->db, sql, NULL, NULL, &msg) != SQLITE_OK) {
        int rc = cc_error_set(err, CC_EIO, "%s: %s", s->path, msg ? msg : "sqlite error");
        sqlite3_free(msg);
        return rc;
    }
    return 0;
}

static sqlite3_stmt *stmt(cc_store *s, int which)
{
    sqlite3_stmt *st = s->st[which];
    sqlite3_reset(st);
    sqlite3_clear_bindings(st);
    return st;
}

int cc_store_open(cc_store **out, const char *path, int create, cc_error *err)
{
    cc_store *s = calloc(1, sizeof *s);
    int rc;
    *out = NULL;
    if (!s || !(s->path = strdup(path))) {
        free(s);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    /* one connection per thread: SQLite's own mutexes are not needed */
    int flags = SQLITE_OPEN_READWRITE | SQLITE_OPEN_NOMUTEX | (create ? SQLITE_OPEN_CREATE : 0);
    if (sqlite3_open_v2(path, &s->db, flags, NULL) != SQLITE_OK) {
        rc = cc_error_set(err, CC_EIO, "%s: cannot open database: %s", path,
                          s->db ? sqlite3_errmsg(s->db) : "out of memory");
        goto fail;
    }
    sqlite3_busy_timeout(s->db, 10000);
    if ((rc = exec(s, "PRAGMA page_size=16384; PRAGMA journal_mode=WAL; PRAGMA synchronous=NORMAL;"
                      "PRAGMA foreign_keys=ON; PRAGMA cache_size=-65536;"
                      "PRAGMA wal_autocheckpoint=8192; PRAGMA journal_size_limit=67108864;", err)))
        goto fail;
    if ((rc = exec(s, "BEGIN IMMEDIATE;", err)))
        goto fail;
    if ((rc = exec(s, schema_sql, err))) {
        exec(s, "ROLLBACK;", NULL);
        goto fail;
    }
    {
        sqlite3_stmt *st;
        int version = 0;
        sqlite3_prepare_v2(s->db, "SELECT value FROM meta WHERE key = 'schema_version'", -1,
                           &st, NULL);
        if (st && sqlite3_step(st) == SQLITE_ROW)
            version = sqlite3_column_int(st, 0);
        sqlite3_finalize(st);
        if (version > SCHEMA_VERSION) {
            exec(s, "ROLLBACK;", NULL);
            rc = cc_error_set(err, CC_EIO,
                              "%s: schema version %d is newer than this concord (%d)", path,
                              version, SCHEMA_VERSION);
            goto fail;
        }
        char sql[128];
        snprintf(sql, sizeof sql,
                 "INSERT OR REPLACE INTO meta(key, value) VALUES ('schema_version', '%d');",
                 SCHEMA_VERSION);
        if ((rc = exec(s, sql, err)) || (rc = exec(s, "COMMIT;", err))) {
            exec(s, "ROLLBACK;", NULL);
            goto fail;
        }
    }
    for (int i = 0; i < ST_COUNT; i++)
        if (sqlite3_prepare_v3(s->db, stmt_sql[i], -1, SQLITE_PREPARE_PERSISTENT, &s->st[i],
                               NULL) != SQLITE_OK) {
            rc = db_error(s, err, "preparing statements");
            goto fail;
        }
    *out = s;
    return 0;
fail:
    cc_store_close(s);
    return rc;
}

void cc_store_close(cc_store *s)
{
    if (!s)
        return;
    for (int i = 0; i < ST_COUNT; i++)
        sqlite3_finalize(s->st[i]);
    cc_summary_free(s->scratch);
    sqlite3_close(s->db);
    free(s->path);
    free(s);
}

sqlite3 *cc_store_db(cc_store *s) { return s->db; }
const char *cc_store_path(const cc_store *s) { return s->path; }

int cc_store_begin(cc_store *s, cc_error *err) { return exec(s, "BEGIN IMMEDIATE;", err); }
int cc_store_commit(cc_store *s, cc_error *err) { return exec(s, "COMMIT;", err); }
void cc_store_rollback(cc_store *s)
{
    if (!sqlite3_get_autocommit(s->db))
        exec(s, "ROLLBACK;", NULL);
}

void cc_model_free(cc_model *m)
{
    if (!m)
        return;
    for (int i = 0; m->classes && i < m->k; i++)
        free(m->classes[i]);
    for (int i = 0; m->members && i < m->m; i++)
        free(m->members[i]);
    free(m->classes);
    free(m->members);
    free(m->name);
    free(m);
}

int cc_model_class_index(const cc_model *m, const char *name, int len)
{
    for (int i = 0; i < m->k; i++)
        if ((int)strlen(m->classes[i]) == len && memcmp(m->classes[i], name, (size_t)len) == 0)
            return i;
    return -1;
}

static char **names_from_json(const char *text, int n)
{
    cJSON *arr = cJSON_Parse(text);
    char **out = calloc((size_t)n, sizeof *out);
    int ok = out && cJSON_IsArray(arr) && cJSON_GetArraySize(arr) == n;
    for (int i = 0; ok && i < n; i++) {
        cJSON *it = cJSON_GetArrayItem(arr, i);
        ok = cJSON_IsString(it) && (out[i] = strdup(it->valuestring)) != NULL;
    }
    cJSON_Delete(arr);
    if (!ok && out) {
        for (int i = 0; i < n; i++)
            free(out[i]);
        free(out);
        out = NULL;
    }
    return out;
}

static char *names_to_json(char *const *names, int n, const char *fallback_prefix)
{
    cJSON *arr = cJSON_CreateArray();
    char buf[32];
    for (int i = 0; arr && i < n; i++) {
        const char *name = names ? names[i] : buf;
        if (!names)
            snprintf(buf, sizeof buf, "%s%d", fallback_prefix, i);
        cJSON_AddItemToArray(arr, cJSON_CreateString(name));
    }
    char *text = arr ? cJSON_PrintUnformatted(arr) : NULL;
    cJSON_Delete(arr);
    return text;
}

int cc_store_model_get(cc_store *s, const char *name, cc_model **out, cc_error *err)
{
    sqlite3_stmt *st;
    int rc = 0;
    *out = NULL;
    if (sqlite3_prepare_v2(s->db,
                           "SELECT model_id, members, classes, member_names, class_names "
                           "FROM models WHERE name = ?1",
                           -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "reading models");
    sqlite3_bind_text(st, 1, name, -1, SQLITE_TRANSIENT);
    int step = sqlite3_step(st);
    if (step == SQLITE_DONE) {
        rc = cc_error_set(err, CC_ENOTFOUND, "%s: no model named '%s'", s->path, name);
    } else if (step != SQLITE_ROW) {
        rc = db_error(s, err, "reading models");
    } else {
        cc_model *m = calloc(1, sizeof *m);
        if (m) {
            m->id = sqlite3_column_int64(st, 0);
            m->m = sqlite3_column_int(st, 1);
            m->k = sqlite3_column_int(st, 2);
            m->name = strdup(name);
            m->members = names_from_json((const char *)sqlite3_column_text(st, 3), m->m);
            m->classes = names_from_json((const char *)sqlite3_column_text(st, 4), m->k);
        }
        if (!m || !m->name || !m->members || !m->classes) {
            cc_model_free(m);
            rc = cc_error_set(err, CC_EIO, "%s: model '%s' has unreadable names", s->path, name);
        } else {
            *out = m;
        }
    }
    sqlite3_finalize(st);
    return rc;
}

int cc_store_model_create(cc_store *s, const char *name, int m, int k, char *const *classes,
                          char *const *members, cc_model **out, cc_error *err)
{
    sqlite3_stmt *st;
    char *cj = names_to_json(classes, k, ""), *mj = names_to_json(members, m, "m");
    int rc = 0;
    if (!cj || !mj) {
        free(cj);
        free(mj);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    if (sqlite3_prepare_v2(s->db,
                           "INSERT INTO models(name, members, classes, member_names, "
                           "class_names, created_at) VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
                           -1, &st, NULL) != SQLITE_OK) {
        rc = db_error(s, err, "creating model");
    } else {
        sqlite3_bind_text(st, 1, name, -1, SQLITE_TRANSIENT);
        sqlite3_bind_int(st, 2, m);
        sqlite3_bind_int(st, 3, k);
        sqlite3_bind_text(st, 4, mj, -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(st, 5, cj, -1, SQLITE_TRANSIENT);
        sqlite3_bind_int64(st, 6, (sqlite3_int64)time(NULL));
        if (sqlite3_step(st) != SQLITE_DONE)
            rc = db_error(s, err, "creating model");
        sqlite3_finalize(st);
    }
    free(cj);
    free(mj);
    return rc ? rc : cc_store_model_get(s, name, out, err);
}

int cc_store_model_list(cc_store *s, char ***out, int *n, cc_error *err)
{
    sqlite3_stmt *st;
    *out = NULL;
    *n = 0;
    if (sqlite3_prepare_v2(s->db, "SELECT name FROM models ORDER BY name", -1, &st, NULL) !=
        SQLITE_OK)
        return db_error(s, err, "listing models");
    while (sqlite3_step(st) == SQLITE_ROW) {
        char **grown = realloc(*out, (size_t)(*n + 1) * sizeof **out);
        if (!grown)
            break;
        *out = grown;
        (*out)[(*n)++] = strdup((const char *)sqlite3_column_text(st, 0));
    }
    sqlite3_finalize(st);
    return 0;
}

int cc_store_event_insert(cc_store *s, const cc_model *m, const char *id, int id_len,
                          int64_t ts, const char *segment, int segment_len, int pred,
                          int label, const float *probs, int *inserted, cc_error *err)
{
    sqlite3_stmt *st = stmt(s, ST_EVENT_INSERT);
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_text(st, 2, id, id_len, SQLITE_STATIC);
    sqlite3_bind_int64(st, 3, ts);
    sqlite3_bind_int64(st, 4, cc_day_of_unix(ts));
    if (segment)
        sqlite3_bind_text(st, 5, segment, segment_len, SQLITE_STATIC);
    sqlite3_bind_int(st, 6, pred);
    if (label >= 0)
        sqlite3_bind_int(st, 7, label);
    sqlite3_bind_blob(st, 8, probs, (int)((size_t)m->m * (size_t)m->k * sizeof(float)),
                      SQLITE_STATIC);
    if (sqlite3_step(st) != SQLITE_DONE)
        return db_error(s, err, "inserting event");
    *inserted = sqlite3_changes(s->db) > 0;
    return 0;
}

int cc_store_event_get(cc_store *s, const cc_model *m, const char *id, int id_len, int *found,
                       cc_stored_event *out, float *probs, cc_error *err)
{
    sqlite3_stmt *st = stmt(s, ST_EVENT_GET);
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_text(st, 2, id, id_len, SQLITE_STATIC);
    int step = sqlite3_step(st);
    *found = 0;
    if (step == SQLITE_DONE)
        return 0;
    if (step != SQLITE_ROW)
        return db_error(s, err, "reading event");
    size_t want = (size_t)m->m * (size_t)m->k * sizeof(float);
    if ((size_t)sqlite3_column_bytes(st, 2) != want)
        return cc_error_set(err, CC_EIO, "%s: event '%.*s' has a damaged probability blob",
                            s->path, id_len, id);
    *found = 1;
    out->day = sqlite3_column_int64(st, 0);
    out->label = sqlite3_column_type(st, 1) == SQLITE_NULL ? -1 : sqlite3_column_int(st, 1);
    out->ts = sqlite3_column_int64(st, 3);
    out->label_at = sqlite3_column_type(st, 4) == SQLITE_NULL ? -1 : sqlite3_column_int64(st, 4);
    memcpy(probs, sqlite3_column_blob(st, 2), want);
    sqlite3_reset(st);
    return 0;
}

int cc_store_event_set_label(cc_store *s, const cc_model *m, const char *id, int id_len,
                             int label, int64_t label_at, cc_error *err)
{
    sqlite3_stmt *st = stmt(s, ST_EVENT_SET_LABEL);
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_text(st, 2, id, id_len, SQLITE_STATIC);
    sqlite3_bind_int(st, 3, label);
    sqlite3_bind_int64(st, 4, label_at);
    if (sqlite3_step(st) != SQLITE_DONE)
        return db_error(s, err, "updating label");
    return 0;
}

int cc_store_summary_get(cc_store *s, const cc_model *m, int64_t day, cc_summary *out,
                         cc_error *err)
{
    sqlite3_stmt *st = stmt(s, ST_SUMMARY_GET);
    const cc_layout *lay = cc_summary_layout(out);
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, day);
    int step = sqlite3_step(st);
    cc_summary_clear(out);
    if (step == SQLITE_DONE)
        return 0;
    if (step != SQLITE_ROW)
        return db_error(s, err, "reading summary");
    char date[11];
    cc_format_date(day, date);
    sqlite3_int64 version = sqlite3_column_int64(st, 0); /* read before the reset */
    if (version != CC_SUMMARY_VERSION) {
        sqlite3_reset(st);
        return cc_error_set(err, CC_EIO,
                            "%s: summary of %s for model '%s' has layout version %lld, "
                            "expected %d",
                            s->path, date, m->name, (long long)version, CC_SUMMARY_VERSION);
    }
    int rc = cc_codec_decode(sqlite3_column_blob(st, 1), (size_t)sqlite3_column_bytes(st, 1),
                             cc_summary_data_mut(out), lay->len);
    sqlite3_reset(st);
    if (rc)
        return cc_error_set(err, CC_EIO, "%s: summary of %s for model '%s' is damaged",
                            s->path, date, m->name);
    return 0;
}

static int summary_put(cc_store *s, const cc_model *m, int64_t day, const cc_summary *sum,
                       cc_error *err)
{
    const cc_layout *lay = cc_summary_layout(sum);
    const int64_t *v = cc_summary_data(sum);
    size_t len;
    unsigned char *blob = cc_codec_encode(v, lay->len, &len);
    if (!blob)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    sqlite3_stmt *st = stmt(s, ST_SUMMARY_PUT);
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, day);
    sqlite3_bind_int(st, 3, CC_SUMMARY_VERSION);
    sqlite3_bind_int64(st, 4, v[lay->n_events]);
    sqlite3_bind_int64(st, 5, v[lay->n_labeled]);
    sqlite3_bind_blob(st, 6, blob, (int)len, SQLITE_STATIC);
    int step = sqlite3_step(st);
    sqlite3_reset(st);
    free(blob);
    return step == SQLITE_DONE ? 0 : db_error(s, err, "writing summary");
}

int cc_store_summary_add(cc_store *s, const cc_model *m, int64_t day, const cc_summary *delta,
                         cc_error *err)
{
    const cc_layout *have = s->scratch ? cc_summary_layout(s->scratch) : NULL;
    if (!have || have->m != m->m || have->k != m->k) {
        cc_summary_free(s->scratch);
        if (!(s->scratch = cc_summary_create(m->m, m->k)))
            return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    int rc = cc_store_summary_get(s, m, day, s->scratch, err);
    if (!rc) {
        cc_summary_merge(s->scratch, delta);
        rc = summary_put(s, m, day, s->scratch, err);
    }
    return rc;
}

int cc_store_summary_days(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                          int64_t **days, int *n, cc_error *err)
{
    sqlite3_stmt *st;
    *days = NULL;
    *n = 0;
    if (sqlite3_prepare_v2(s->db,
                           "SELECT day FROM summaries WHERE model_id = ?1 AND day BETWEEN ?2 "
                           "AND ?3 AND events > 0 ORDER BY day",
                           -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "listing days");
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, from);
    sqlite3_bind_int64(st, 3, to);
    int rc = 0;
    while (sqlite3_step(st) == SQLITE_ROW) {
        int64_t *grown = realloc(*days, (size_t)(*n + 1) * sizeof **days);
        if (!grown) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            break;
        }
        *days = grown;
        (*days)[(*n)++] = sqlite3_column_int64(st, 0);
    }
    sqlite3_finalize(st);
    return rc;
}

int cc_store_summary_from_rows(cc_store *s, const cc_model *m, int64_t day, cc_summary *out,
                               cc_error *err)
{
    sqlite3_stmt *st;
    size_t want = (size_t)m->m * (size_t)m->k * sizeof(float);
    float *probs = malloc(want);
    int rc = 0;
    cc_summary_clear(out);
    if (!probs)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    if (sqlite3_prepare_v2(s->db,
                           "SELECT label, probs, ts, label_at FROM events "
                           "WHERE model_id = ?1 AND day = ?2",
                           -1, &st, NULL) != SQLITE_OK) {
        free(probs);
        return db_error(s, err, "reading events");
    }
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, day);
    while (sqlite3_step(st) == SQLITE_ROW) {
        if ((size_t)sqlite3_column_bytes(st, 1) != want) {
            rc = cc_error_set(err, CC_EIO, "%s: damaged probability blob", s->path);
            break;
        }
        memcpy(probs, sqlite3_column_blob(st, 1), want);
        cc_summary_add_unlabeled(out, probs, 1);
        if (sqlite3_column_type(st, 0) != SQLITE_NULL)
            cc_summary_add_labeled(out, probs, sqlite3_column_int(st, 0), 1);
        if (sqlite3_column_type(st, 3) != SQLITE_NULL)
            cc_summary_add_label_delay(out, sqlite3_column_int64(st, 3) - sqlite3_column_int64(st, 2),
                                       1);
    }
    sqlite3_finalize(st);
    free(probs);
    return rc;
}

int cc_store_baseline_set(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                          cc_error *err)
{
    sqlite3_stmt *st;
    if (sqlite3_prepare_v2(s->db,
                           "INSERT OR REPLACE INTO baselines(model_id, from_day, to_day, set_at) "
                           "VALUES (?1, ?2, ?3, ?4)",
                           -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "setting baseline");
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, from);
    sqlite3_bind_int64(st, 3, to);
    sqlite3_bind_int64(st, 4, (sqlite3_int64)time(NULL));
    int step = sqlite3_step(st);
    sqlite3_finalize(st);
    return step == SQLITE_DONE ? 0 : db_error(s, err, "setting baseline");
}

int cc_store_baseline_get(cc_store *s, const cc_model *m, int *has, int64_t *from,
                          int64_t *to, cc_error *err)
{
    sqlite3_stmt *st;
    *has = 0;
    if (sqlite3_prepare_v2(s->db,
                           "SELECT from_day, to_day FROM baselines WHERE model_id = ?1", -1,
                           &st, NULL) != SQLITE_OK)
        return db_error(s, err, "reading baseline");
    sqlite3_bind_int64(st, 1, m->id);
    if (sqlite3_step(st) == SQLITE_ROW) {
        *has = 1;
        *from = sqlite3_column_int64(st, 0);
        *to = sqlite3_column_int64(st, 1);
    }
    sqlite3_finalize(st);
    return 0;
}

int cc_store_reject_add(cc_store *s, const char *kind, const char *source, int64_t line,
                        const char *reason, const char *text, size_t text_len, cc_error *err)
{
    sqlite3_stmt *st = stmt(s, ST_REJECT);
    if (text_len > 4096)
        text_len = 4096;
    sqlite3_bind_int64(st, 1, (sqlite3_int64)time(NULL));
    sqlite3_bind_text(st, 2, kind, -1, SQLITE_STATIC);
    sqlite3_bind_text(st, 3, source, -1, SQLITE_STATIC);
    sqlite3_bind_int64(st, 4, line);
    sqlite3_bind_text(st, 5, reason, -1, SQLITE_STATIC);
    /* stored as a blob: a rejected line need not be valid UTF-8 */
    sqlite3_bind_blob(st, 6, text ? text : "", (int)text_len, SQLITE_STATIC);
    if (sqlite3_step(st) != SQLITE_DONE)
        return db_error(s, err, "recording rejected line");
    return 0;
}

int cc_store_pending_label_add(cc_store *s, const cc_model *m, const char *id, int id_len,
                               int label, int64_t received_at, cc_error *err)
{
    sqlite3_stmt *st = stmt(s, ST_PENDING_ADD);
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_text(st, 2, id, id_len, SQLITE_STATIC);
    sqlite3_bind_int(st, 3, label);
    sqlite3_bind_int64(st, 4, received_at);
    if (sqlite3_step(st) != SQLITE_DONE)
        return db_error(s, err, "storing pending label");
    return 0;
}

int cc_store_pending_label_drain(cc_store *s, const cc_model *m, cc_pending_fn fn,
                                 void *payload, cc_error *err)
{
    sqlite3_stmt *st;
    int rc = 0;
    if (sqlite3_prepare_v2(s->db,
                           "SELECT p.id, p.label, p.received_at FROM pending_labels p JOIN events e "
                           "ON e.model_id = p.model_id AND e.id = p.id WHERE p.model_id = ?1",
                           -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "reading pending labels");
    sqlite3_bind_int64(st, 1, m->id);
    int found = 0;
    while (!rc && sqlite3_step(st) == SQLITE_ROW) {
        found = 1;
        rc = fn(payload, (const char *)sqlite3_column_text(st, 0), sqlite3_column_bytes(st, 0),
                sqlite3_column_int(st, 1), sqlite3_column_int64(st, 2));
    }
    sqlite3_finalize(st);
    if (rc || !found)
        return rc;
    if (sqlite3_prepare_v2(s->db,
                           "DELETE FROM pending_labels WHERE model_id = ?1 AND EXISTS "
                           "(SELECT 1 FROM events e WHERE e.model_id = ?1 "
                           "AND e.id = pending_labels.id)",
                           -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "clearing pending labels");
    sqlite3_bind_int64(st, 1, m->id);
    int step = sqlite3_step(st);
    sqlite3_finalize(st);
    return step == SQLITE_DONE ? 0 : db_error(s, err, "clearing pending labels");
}

int64_t cc_store_pending_label_count(cc_store *s, const cc_model *m)
{
    sqlite3_stmt *st;
    int64_t n = 0;
    if (sqlite3_prepare_v2(s->db, "SELECT count(*) FROM pending_labels WHERE model_id = ?1",
                           -1, &st, NULL) != SQLITE_OK)
        return 0;
    sqlite3_bind_int64(st, 1, m->id);
    if (sqlite3_step(st) == SQLITE_ROW)
        n = sqlite3_column_int64(st, 0);
    sqlite3_finalize(st);
    return n;
}
