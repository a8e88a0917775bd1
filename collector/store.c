/* store.c — SQLite schema and statements behind store.h. */
#include "store.h"

#include <cjson/cJSON.h>
#include <errno.h>
#include <fcntl.h>
#include <sqlite3.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "date.h"
#include "id_hash.h"
#include "names_text.h"
#include "store_slices.h"
#include "store_sqlite.h"
#include "summary_codec.h"

static void sq_close(cc_store *store);
static void sq_work_abort(cc_store *store);
static void sq_snapshot_end(cc_store *store);

/* 1: the first layout; 2: pruned_days; 3: events in arrival order (a rowid
 * table) with a unique index on (model_id, id); 4, in steps called from
 * bring_up_to_date: the alert tables (rule_state, notifications, outbox) and
 * follow_offsets join the versioned schema (earlier, alerts/ and follow
 * created them on their own; upgrade_v4_alert_tables), what changed since
 * the last publish to a cluster (upgrade_publish_marks), and per-segment
 * summaries (slices, store_slices.h; upgrade_to_v4_slices); 5: every stored
 * summary in layout version 2, its fixed-point sums in two words
 * (metrics/summary.h; upgrade_summary_words), and ids found through a
 * 64-bit hash of the id (events.id_hash, index events_by_hash on
 * (model_id, id_hash)) instead of the text index events_by_id
 * (upgrade_id_hashes). */
#define SCHEMA_VERSION 5


/* An event is found by its id through events_by_hash: ?9 is the id's hash
 * (cc_sq_bind_id), and the id itself is compared in the row, so ids whose
 * hashes collide stay apart. */
#define BY_ID "WHERE model_id = ?1 AND id_hash = ?9 AND id = ?2"

static const char *const stmt_sql[ST_COUNT] = {
    [ST_EVENT_EXISTS] = "SELECT 1 FROM events " BY_ID,
    [ST_EVENT_INSERT] = "INSERT INTO events(model_id, id, ts, day, segment, pred, "
                        "label, probs, id_hash) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)",
    [ST_EVENT_GET] = "SELECT day, label, probs, ts, label_at FROM events " BY_ID,
    [ST_EVENT_SET_LABEL] = "UPDATE events SET label = ?3, label_at = ?4 " BY_ID,
    [ST_SUMMARY_GET] = "SELECT version, counters FROM summaries WHERE model_id = ?1 AND day = ?2",
    [ST_SUMMARY_PUT] = "INSERT OR REPLACE INTO summaries(model_id, day, version, events, "
                       "labeled, counters) VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
    [ST_REJECT] = "INSERT INTO rejects(at, kind, source, line, reason, text) "
                  "VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
    [ST_PENDING_ADD] = "INSERT OR REPLACE INTO pending_labels(model_id, id, label, received_at) "
                       "VALUES (?1, ?2, ?3, ?4)",
    [ST_EVENT_READ] = "SELECT ts, segment, label, probs, label_at FROM events " BY_ID,
};

/* The reads a reader prepares on a file of schema 3 or 4 (readers never
 * upgrade): ids through the text index events_by_id. */
static const char *const stmt_sql_v4[ST_COUNT] = {
    [ST_EVENT_GET] = "SELECT day, label, probs, ts, label_at FROM events "
                     "WHERE model_id = ?1 AND id = ?2",
    [ST_EVENT_READ] = "SELECT ts, segment, label, probs, label_at FROM events "
                      "WHERE model_id = ?1 AND id = ?2",
};

/* The fixed SipHash key of the id index. Secrecy buys little: ids chosen
 * to share a key must share all but their last 4 bytes (else about 2^40
 * tries each), and the 2^32 endings of one prefix fall on 2^24 keys, so at
 * most about 256 ids share a key and a lookup reads at most that many rows. */
static const uint8_t id_hash_key[16] = {0x63, 0x6f, 0x6e, 0x63, 0x6f, 0x72, 0x64, 0x2d,
                                        0x69, 0x64, 0x2d, 0x68, 0x61, 0x73, 0x68, 0x31};


#define EVENTS_COLUMNS                                                                         \
    "model_id INTEGER NOT NULL, id TEXT NOT NULL, ts INTEGER NOT NULL, day INTEGER NOT NULL,"   \
    " segment TEXT, pred INTEGER NOT NULL, label INTEGER, label_at INTEGER, probs BLOB NOT NULL,"\
    " id_hash INTEGER NOT NULL DEFAULT 0"

/* Versions 1 and 2 kept events WITHOUT ROWID keyed by (model_id, id). The
 * rows are copied in time order (the order a review reads them), the old
 * table and its index dropped, and both indexes built once after the copy;
 * schema_sql then finds everything in place. Runs inside the upgrade's
 * transaction. */
static const char events_v3_sql[] =
    "CREATE TABLE events_v3(" EVENTS_COLUMNS ");"
    "INSERT INTO events_v3(model_id, id, ts, day, segment, pred, label, label_at, probs) "
    "  SELECT model_id, id, ts, day, segment, pred, label, label_at, probs FROM events "
    "  ORDER BY model_id, day, ts;"
    "DROP TABLE events;"
    "ALTER TABLE events_v3 RENAME TO events;";

static const char schema_sql[] =
    "CREATE TABLE IF NOT EXISTS meta(key TEXT PRIMARY KEY, value TEXT NOT NULL);"
    "CREATE TABLE IF NOT EXISTS models("
    "  model_id INTEGER PRIMARY KEY, name TEXT NOT NULL UNIQUE,"
    "  members INTEGER NOT NULL, classes INTEGER NOT NULL,"
    "  member_names TEXT NOT NULL, class_names TEXT NOT NULL, created_at INTEGER NOT NULL);"
    /* version 3: rows in arrival order; ids in their own index, so ids in
     * random order (UUIDs) touch only that index's pages, not the rows';
     * version 5: that index holds 64-bit hashes of the ids (about 16 bytes
     * an entry instead of about 50 for a UUID), not unique: store.c settles
     * duplicates by comparing the id in the row */
    "CREATE TABLE IF NOT EXISTS events(" EVENTS_COLUMNS ");"
    "CREATE INDEX IF NOT EXISTS events_by_hash ON events(model_id, id_hash);"
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
    "  received_at INTEGER NOT NULL, PRIMARY KEY(model_id, id)) WITHOUT ROWID;"
    /* version 2: the summary part of pruned rows, per day */
    "CREATE TABLE IF NOT EXISTS pruned_days("
    "  model_id INTEGER NOT NULL, day INTEGER NOT NULL, version INTEGER NOT NULL,"
    "  events INTEGER NOT NULL, counters BLOB NOT NULL, pruned_at INTEGER NOT NULL,"
    "  PRIMARY KEY(model_id, day)) WITHOUT ROWID;"
    /* version 4: each (model, rule)'s alert state, one row per notification
     * (with its JSON body), one outbox row per notification and receiver */
    "CREATE TABLE IF NOT EXISTS rule_state("
    "  model TEXT NOT NULL, rule TEXT NOT NULL, state TEXT NOT NULL,"
    "  breach_run INTEGER NOT NULL, clear_run INTEGER NOT NULL,"
    "  last_day INTEGER NOT NULL, since_day INTEGER NOT NULL,"
    "  fired_day INTEGER, last_notified_day INTEGER,"
    "  metric TEXT NOT NULL, urgency TEXT NOT NULL, last_value REAL, last_bound REAL,"
    "  updated_at INTEGER NOT NULL,"
    "  PRIMARY KEY(model, rule)) WITHOUT ROWID;"
    "CREATE TABLE IF NOT EXISTS notifications("
    "  notification_id INTEGER PRIMARY KEY, notice_id TEXT NOT NULL UNIQUE,"
    "  model TEXT NOT NULL, rule TEXT NOT NULL, kind TEXT NOT NULL, urgency TEXT NOT NULL,"
    "  day INTEGER NOT NULL, window_day INTEGER NOT NULL, value REAL, bound REAL,"
    "  body TEXT NOT NULL, created_at INTEGER NOT NULL);"
    "CREATE TABLE IF NOT EXISTS outbox("
    "  outbox_id INTEGER PRIMARY KEY,"
    "  notification_id INTEGER NOT NULL REFERENCES notifications(notification_id),"
    "  receiver TEXT NOT NULL, secret_env TEXT,"
    "  connect_timeout_ms INTEGER NOT NULL, timeout_ms INTEGER NOT NULL,"
    "  max_attempts INTEGER NOT NULL, backoff_s INTEGER NOT NULL, max_backoff_s INTEGER NOT NULL,"
    "  status TEXT NOT NULL CHECK (status IN ('pending', 'sent', 'dead')),"
    "  attempts INTEGER NOT NULL DEFAULT 0, next_at INTEGER NOT NULL,"
    "  last_status INTEGER, last_error TEXT, sent_at INTEGER,"
    "  UNIQUE(notification_id, receiver));"
    "CREATE INDEX IF NOT EXISTS outbox_due ON outbox(status, next_at);"
    /* version 4: where follow mode read each file up to */
    "CREATE TABLE IF NOT EXISTS follow_offsets(path TEXT PRIMARY KEY,"
    "  dev INTEGER NOT NULL, ino INTEGER NOT NULL, offset INTEGER NOT NULL,"
    "  line INTEGER NOT NULL, updated_at INTEGER NOT NULL);";

/* Alert tables written before the vocabulary change (states ok/pending/
 * firing/resolved, urgency called severity with critical/warning/info,
 * notification kinds fired/resolved, dedupe_key): renamed and mapped in
 * place. */
static const char alert_vocabulary_sql[] =
    "ALTER TABLE rule_state RENAME COLUMN severity TO urgency;"
    "UPDATE rule_state SET state = CASE state WHEN 'ok' THEN 'quiet' WHEN 'pending' THEN"
    "  'building' WHEN 'firing' THEN 'raised' WHEN 'resolved' THEN 'cleared' ELSE state END,"
    "  urgency = CASE urgency WHEN 'critical' THEN 'high' WHEN 'warning' THEN 'medium'"
    "  WHEN 'info' THEN 'low' ELSE urgency END;"
    "ALTER TABLE notifications RENAME COLUMN severity TO urgency;"
    "ALTER TABLE notifications RENAME COLUMN dedupe_key TO notice_id;"
    "UPDATE notifications SET kind = CASE kind WHEN 'fired' THEN 'raised' WHEN 'resolved'"
    "  THEN 'cleared' ELSE kind END,"
    "  urgency = CASE urgency WHEN 'critical' THEN 'high' WHEN 'warning' THEN 'medium'"
    "  WHEN 'info' THEN 'low' ELSE urgency END;";

/* Version 4, publishing (cluster/publish.c): triggers note every summary
 * written and every label changed; INSERT OR REPLACE gives a re-noted row a
 * new, higher rowid (mark), so a publisher that sent everything up to mark R
 * clears exactly that and keeps what changed meanwhile. New events need no
 * trigger: they are the rows past publish_state's 'event_rowid'. */
static const char publish_marks_sql[] =
    "CREATE TABLE IF NOT EXISTS publish_state(key TEXT PRIMARY KEY, value INTEGER NOT NULL);"
    "CREATE TABLE IF NOT EXISTS publish_days(mark INTEGER PRIMARY KEY,"
    "  model_id INTEGER NOT NULL, day INTEGER NOT NULL, UNIQUE(model_id, day));"
    "CREATE TABLE IF NOT EXISTS publish_relabels(mark INTEGER PRIMARY KEY,"
    "  event_rowid INTEGER NOT NULL UNIQUE);"
    "CREATE TRIGGER IF NOT EXISTS publish_note_day AFTER INSERT ON summaries BEGIN"
    "  INSERT OR REPLACE INTO publish_days(model_id, day) VALUES (NEW.model_id, NEW.day);"
    " END;"
    "CREATE TRIGGER IF NOT EXISTS publish_note_relabel AFTER UPDATE OF label, label_at"
    "  ON events BEGIN"
    "  INSERT OR REPLACE INTO publish_relabels(event_rowid) VALUES (NEW.rowid);"
    " END;";

static int exec(sq_store *s, const char *sql, cc_error *err);
static int has_table(sq_store *s, const char *name);

/* The upgrade step to version 4: the publish bookkeeping above. A store
 * upgraded from version 3 has never been published: its days are all marked
 * and its events all lie past event_rowid 0. */
static int upgrade_publish_marks(sq_store *s, int64_t from_version, cc_error *err)
{
    int rc = exec(s, publish_marks_sql, err);
    if (!rc && from_version >= 1 && from_version < 4)
        rc = exec(s, "INSERT OR IGNORE INTO publish_days(model_id, day) "
                     "SELECT model_id, day FROM summaries ORDER BY model_id, day;", err);
    return rc;
}

/* Version 4: slices (store_slices.h). A slice's summary rows sit beside the
 * model's (model, day) rows, which stay as they were and equal their sum. */
static const char slices_schema_sql[] =
    "CREATE TABLE IF NOT EXISTS slices("
    "  slice_id INTEGER PRIMARY KEY, model_id INTEGER NOT NULL, kind INTEGER NOT NULL,"
    "  segment TEXT NOT NULL, created_at INTEGER NOT NULL, UNIQUE(model_id, kind, segment));"
    "CREATE TABLE IF NOT EXISTS slice_limits("
    "  model_id INTEGER PRIMARY KEY, max_slices INTEGER NOT NULL);"
    "CREATE TABLE IF NOT EXISTS slice_summaries("
    "  model_id INTEGER NOT NULL, day INTEGER NOT NULL, slice_id INTEGER NOT NULL,"
    "  version INTEGER NOT NULL, events INTEGER NOT NULL, labeled INTEGER NOT NULL,"
    "  counters BLOB NOT NULL, PRIMARY KEY(model_id, day, slice_id)) WITHOUT ROWID;"
    "CREATE TABLE IF NOT EXISTS slice_pruned("
    "  model_id INTEGER NOT NULL, day INTEGER NOT NULL, slice_id INTEGER NOT NULL,"
    "  version INTEGER NOT NULL, events INTEGER NOT NULL, counters BLOB NOT NULL,"
    "  pruned_at INTEGER NOT NULL, PRIMARY KEY(model_id, day, slice_id)) WITHOUT ROWID;"
    /* one slice's days and totals without walking the other slices' rows */
    "CREATE INDEX IF NOT EXISTS slice_summaries_by_slice ON slice_summaries("
    "  model_id, slice_id, day, events, labeled);";

static int64_t now_ms(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (int64_t)ts.tv_sec * 1000 + ts.tv_nsec / 1000000;
}

static void sleep_ms(int ms)
{
    struct timespec ts = {ms / 1000, (long)(ms % 1000) * 1000000L};
    while (nanosleep(&ts, &ts) != 0 && errno == EINTR)
        ;
}

static int db_error(sq_store *s, cc_error *err, const char *what)
{
    int code = sqlite3_errcode(s->db);
    if (code == SQLITE_BUSY || code == SQLITE_LOCKED)
        return cc_error_set(err, CC_EBUSY,
                            "%s: %s: another writer held the database lock for more than "
                            "%d s; gave up (see --wait)",
                            s->path, what, s->o.wait_ms / 1000);
    return cc_error_set(err, CC_EIO, "%s: %s: %s", s->path, what, sqlite3_errmsg(s->db));
}

static int exec(sq_store *s, const char *sql, cc_error *err)
{
    char *msg = NULL;
    if (sqlite3_exec(s->db, sql, NULL, NULL, &msg) != SQLITE_OK) {
        int code = sqlite3_errcode(s->db), rc;
        if (code == SQLITE_BUSY || code == SQLITE_LOCKED)
            rc = db_error(s, err, "waiting for the write lock");
        else
            rc = cc_error_set(err, CC_EIO, "%s: %s", s->path, msg ? msg : "sqlite error");
        sqlite3_free(msg);
        return rc;
    }
    return 0;
}

static sqlite3_stmt *stmt(sq_store *s, int which)
{
    sqlite3_stmt *st = s->st[which];
    sqlite3_reset(st);
    sqlite3_clear_bindings(st);
    return st;
}

/* Waiting for the lock. SQLite's locks are not fair: a writer that commits
 * and begins again at once would keep a polling waiter out for its whole
 * run. So a writer waiting in cc_store_begin raises a flag (an exclusive
 * flock on the database file, which does not touch SQLite's own fcntl
 * locks), and cc_store_commit, seeing the flag, pauses until the waiter has
 * the lock and lowers it (at most HANDOFF_MS). */
#define HANDOFF_MS 2000

static int busy_handler(void *p, int count)
{
    sq_store *s = p;
    int64_t t = now_ms();
    if (count == 0) {
        s->wait_start_ms = t;
        s->timed_out = 0;
        if (!s->wait_noted) {
            s->wait_noted = 1;
            if (s->o.on_wait)
                s->o.on_wait(s->o.ctx, s->path);
        }
    }
    if (s->in_begin && !s->flagged && s->lock_fd >= 0 &&
        flock(s->lock_fd, LOCK_EX | LOCK_NB) == 0)
        s->flagged = 1;
    int64_t waited = t - s->wait_start_ms;
    if (s->o.wait_ms >= 0 && waited >= s->o.wait_ms) {
        s->timed_out = 1;
        return 0;
    }
    /* back off: poll often at first, then less */
    sleep_ms(waited < 200 ? 1 : waited < 5000 ? 5 : 25);
    return 1;
}

static void lower_flag(sq_store *s)
{
    if (s->flagged) {
        flock(s->lock_fd, LOCK_UN);
        s->flagged = 0;
    }
}

static void hand_off(sq_store *s)
{
    if (s->lock_fd < 0)
        return;
    int64_t until = now_ms() + HANDOFF_MS;
    while (flock(s->lock_fd, LOCK_SH | LOCK_NB) != 0) {
        if (errno != EWOULDBLOCK && errno != EINTR)
            return;
        if (now_ms() >= until)
            return;
        sleep_ms(1);
    }
    flock(s->lock_fd, LOCK_UN);
}

static int sq_take_timed_out(cc_store *store)
{
    sq_store *s = SQ(store);
    int t = s->timed_out;
    s->timed_out = 0;
    return t;
}

static int sq_readonly(const cc_store *store) { return ((const sq_store *)store)->readonly; }

static int begin_write(sq_store *s, cc_error *err)
{
    if (s->readonly)
        return cc_error_set(err, CC_EIO, "%s: opened read-only", s->path);
    s->in_begin = 1;
    int rc = exec(s, "BEGIN IMMEDIATE;", err);
    s->in_begin = 0;
    lower_flag(s);
    return rc;
}

/* schema_version from meta: 0 when there is no meta table or no row. Read
 * as 64 bits, so no version wraps round to an old one. */
static int read_version(sq_store *s, int64_t *version, cc_error *err)
{
    sqlite3_stmt *st = NULL;
    *version = 0;
    int rc = sqlite3_prepare_v2(s->db,
                                "SELECT 1 FROM sqlite_master WHERE type = 'table' "
                                "AND name = 'meta'", -1, &st, NULL);
    int step = rc == SQLITE_OK ? sqlite3_step(st) : rc;
    sqlite3_finalize(st);
    if (step == SQLITE_DONE)
        return 0;
    if (step != SQLITE_ROW)
        return db_error(s, err, "reading the schema");
    if (sqlite3_prepare_v2(s->db, "SELECT value FROM meta WHERE key = 'schema_version'", -1,
                           &st, NULL) != SQLITE_OK)
        return db_error(s, err, "reading the schema version");
    step = sqlite3_step(st);
    if (step == SQLITE_ROW)
        *version = sqlite3_column_int64(st, 0);
    sqlite3_finalize(st);
    if (step != SQLITE_ROW && step != SQLITE_DONE)
        return db_error(s, err, "reading the schema version");
    return 0;
}

static int check_version(sq_store *s, int64_t version, cc_error *err)
{
    if (version < 0)
        return cc_error_set(err, CC_EIO, "%s: schema version %lld is not valid; the database "
                                         "was left untouched", s->path, (long long)version);
    if (version > SCHEMA_VERSION)
        return cc_error_set(err, CC_EIO,
                            "%s: schema version %lld is newer than this concord (%d); the "
                            "database was left untouched",
                            s->path, (long long)version, SCHEMA_VERSION);
    return 0;
}

/* Step 3 -> 4, inside the upgrade's transaction. A version 3 file may hold
 * alert tables and follow_offsets made outside the schema by earlier
 * releases: they are kept with their rows (schema_sql then creates only
 * what is missing), and alert tables of the older vocabulary are converted
 * in place. */
static int upgrade_v4_alert_tables(sq_store *s, cc_error *err)
{
    sqlite3_stmt *st = NULL;
    int old = 0;
    if (sqlite3_prepare_v2(s->db, "SELECT 1 FROM pragma_table_info('rule_state') "
                                  "WHERE name = 'severity'",
                           -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "reading the alert tables");
    old = sqlite3_step(st) == SQLITE_ROW;
    sqlite3_finalize(st);
    if (!old)
        return 0;
    return exec(s, alert_vocabulary_sql, err);
}

/* The step from schema 3 (and older, already brought to 3's tables) to 4:
 * the slice tables, filled from the stored rows and pruned parts. Runs
 * inside the upgrade's transaction, so a failure leaves the file at 3. */
static int upgrade_to_v4_slices(sq_store *s, cc_error *err)
{
    int rc = exec(s, slices_schema_sql, err);
    if (!rc)
        rc = cc_sq_slice_rebuild(&s->base, s->o.on_progress, s->o.progress_ctx, err);
    return rc;
}

/* The tables holding summary vectors, and the key of their rows beyond
 * (model_id, day). */
static const char *const summary_tables[][2] = {
    {"summaries", NULL},
    {"pruned_days", NULL},
    {"slice_summaries", "slice_id"},
    {"slice_pruned", "slice_id"},
};

typedef struct old_row {
    int64_t model, day, slice;
} old_row;

/* Rewrites the rows of one table whose layout version is older than
 * CC_SUMMARY_VERSION; *done counts rows for the progress note. */
static int upgrade_table_words(sq_store *s, const char *table, const char *slice_col,
                               int64_t *done, int64_t total, int64_t *next_ms, cc_error *err)
{
    char sql[512];
    sqlite3_stmt *st = NULL, *get = NULL, *put = NULL, *mark = NULL;
    old_row *rows = NULL;
    size_t n = 0, cap = 0;
    int rc = 0, step;
    cc_summary *sum = NULL;
    /* the keys first: the rows are rewritten while no statement reads the table */
    snprintf(sql, sizeof sql,
             "SELECT model_id, day, %s FROM %s WHERE version != %d ORDER BY model_id, day",
             slice_col ? slice_col : "0", table, CC_SUMMARY_VERSION);
    if (sqlite3_prepare_v2(s->db, sql, -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "reading summaries to upgrade");
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        if (n == cap) {
            size_t grown_cap = cap ? 2 * cap : 64;
            old_row *grown = realloc(rows, grown_cap * sizeof *grown);
            if (!grown) {
                rc = cc_error_set(err, CC_ENOMEM, "out of memory");
                goto done;
            }
            rows = grown;
            cap = grown_cap;
        }
        rows[n++] = (old_row){sqlite3_column_int64(st, 0), sqlite3_column_int64(st, 1),
                              sqlite3_column_int64(st, 2)};
    }
    if (step != SQLITE_DONE) {
        rc = db_error(s, err, "reading summaries to upgrade");
        goto done;
    }
    snprintf(sql, sizeof sql,
             "SELECT t.version, t.counters, m.name, m.members, m.classes FROM %s t "
             "JOIN models m USING (model_id) WHERE t.model_id = ?1 AND t.day = ?2%s%s",
             table, slice_col ? " AND t." : "", slice_col ? "slice_id = ?3" : "");
    if (sqlite3_prepare_v2(s->db, sql, -1, &get, NULL) != SQLITE_OK) {
        rc = db_error(s, err, "reading summaries to upgrade");
        goto done;
    }
    /* the day is marked for the next publish too: a cluster reads only
     * vectors of the current layout version (its table key holds it), and
     * an UPDATE does not fire the publish trigger */
    snprintf(sql, sizeof sql,
             "UPDATE %s SET version = ?4, counters = ?5 WHERE model_id = ?1 AND day = ?2%s;",
             table, slice_col ? " AND slice_id = ?3" : "");
    if (sqlite3_prepare_v2(s->db, sql, -1, &put, NULL) != SQLITE_OK ||
        sqlite3_prepare_v2(s->db, "INSERT OR REPLACE INTO publish_days(model_id, day) "
                                  "VALUES (?1, ?2)", -1, &mark, NULL) != SQLITE_OK) {
        rc = db_error(s, err, "upgrading summaries");
        goto done;
    }
    for (size_t i = 0; i < n && !rc; i++) {
        sqlite3_bind_int64(get, 1, rows[i].model);
        sqlite3_bind_int64(get, 2, rows[i].day);
        if (slice_col)
            sqlite3_bind_int64(get, 3, rows[i].slice);
        if (sqlite3_step(get) != SQLITE_ROW) {
            rc = db_error(s, err, "reading a summary to upgrade");
            break;
        }
        cc_model m = {rows[i].model, (char *)sqlite3_column_text(get, 2),
                      sqlite3_column_int(get, 3), sqlite3_column_int(get, 4), NULL, NULL};
        const cc_layout *have = sum ? cc_summary_layout(sum) : NULL;
        if (!have || have->m != m.m || have->k != m.k) {
            cc_summary_free(sum);
            if (!(sum = cc_summary_create(m.m, m.k))) {
                rc = cc_error_set(err, CC_ENOMEM, "%s: model '%s' of %d members and %d "
                                                  "classes cannot be read (out of memory, "
                                                  "or a shape out of range)",
                                  s->path, m.name ? m.name : "?", m.m, m.k);
                break;
            }
        }
        char name[128];
        snprintf(name, sizeof name, "%s", m.name ? m.name : "?");
        rc = cc_sq_decode_summary(&s->base, &m, sqlite3_column_blob(get, 1),
                                  sqlite3_column_bytes(get, 1), sqlite3_column_int64(get, 0),
                                  rows[i].day, rows[i].slice, table, sum, err);
        sqlite3_reset(get);
        if (rc)
            break;
        size_t len;
        unsigned char *blob = cc_codec_encode(cc_summary_data(sum), cc_summary_layout(sum)->len,
                                              &len);
        if (!blob) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            break;
        }
        sqlite3_bind_int64(put, 1, rows[i].model);
        sqlite3_bind_int64(put, 2, rows[i].day);
        if (slice_col)
            sqlite3_bind_int64(put, 3, rows[i].slice);
        sqlite3_bind_int(put, 4, CC_SUMMARY_VERSION);
        sqlite3_bind_blob(put, 5, blob, (int)len, SQLITE_STATIC);
        step = sqlite3_step(put);
        sqlite3_reset(put);
        free(blob);
        if (step == SQLITE_DONE) {
            sqlite3_bind_int64(mark, 1, rows[i].model);
            sqlite3_bind_int64(mark, 2, rows[i].day);
            step = sqlite3_step(mark);
            sqlite3_reset(mark);
        }
        if (step != SQLITE_DONE) {
            rc = db_error(s, err, "upgrading summaries");
            break;
        }
        ++*done;
        if (s->o.on_progress && now_ms() >= *next_ms) {
            s->o.on_progress(s->o.progress_ctx, s->path, name, *done, total);
            *next_ms = now_ms() + 2000;
        }
    }
done:
    sqlite3_finalize(st);
    sqlite3_finalize(get);
    sqlite3_finalize(put);
    sqlite3_finalize(mark);
    free(rows);
    cc_summary_free(sum);
    return rc;
}

/* The step to version 5: every stored summary vector (days, pruned days,
 * slices and their pruned parts) rewritten in layout version 2, where
 * each fixed-point sum takes two words (metrics/summary.h), and its day
 * marked for the next publish. Idempotent:
 * only rows of an older version are touched, so it may run on a file
 * that another step already brought to 5. Baselines and publish marks hold
 * no vectors. Runs inside the upgrade's transaction. */
static int upgrade_summary_words(sq_store *s, cc_error *err)
{
    int64_t total = 0, done = 0, next_ms = now_ms() + 2000;
    char sql[256];
    int rc = 0;
    for (size_t t = 0; t < sizeof summary_tables / sizeof *summary_tables; t++) {
        sqlite3_stmt *st;
        if (!has_table(s, summary_tables[t][0]))
            continue;
        snprintf(sql, sizeof sql, "SELECT count(*) FROM %s WHERE version != %d",
                 summary_tables[t][0], CC_SUMMARY_VERSION);
        if (sqlite3_prepare_v2(s->db, sql, -1, &st, NULL) != SQLITE_OK)
            return db_error(s, err, "counting summaries to upgrade");
        if (sqlite3_step(st) == SQLITE_ROW)
            total += sqlite3_column_int64(st, 0);
        sqlite3_finalize(st);
    }
    for (size_t t = 0; !rc && total && t < sizeof summary_tables / sizeof *summary_tables; t++)
        if (has_table(s, summary_tables[t][0]))
            rc = upgrade_table_words(s, summary_tables[t][0], summary_tables[t][1], &done, total,
                                     &next_ms, err);
    return rc;
}

/* The key of an id in events_by_hash: the top 40 bits are the SipHash of
 * the id without its last 4 bytes, the low 24 bits the SipHash of the whole
 * id (ids of up to 4 bytes: the whole id's hash). Ids that differ only in
 * their last 4 bytes (ascending ids, e0000001, e0000002, ...) share the top
 * bits, so a batch of them lands on a few neighbouring index pages as the
 * text index's appends did, while random ids (UUIDs) spread as with any
 * hash. Two ids share a key with probability 2^-64, or 2^-24 when they
 * differ only in their last 4 bytes: the id in the row settles it. */
int64_t cc_sq_id_hash(const sq_store *s, const char *id, int len)
{
    size_t n = len < 0 ? strlen(id) : (size_t)len;
    uint64_t h = cc_siphash24(id_hash_key, id, n);
    if (n > 4)
        h = (cc_siphash24(id_hash_key, id, n - 4) & ~(uint64_t)0xffffff) | (h & 0xffffff);
    return (int64_t)(h & s->id_mask);
}

void cc_sq_bind_id(sq_store *s, sqlite3_stmt *st, const char *id, int len)
{
    sqlite3_bind_text(st, 2, id, len, SQLITE_STATIC);
    if (s->version >= 5)
        sqlite3_bind_int64(st, 9, cc_sq_id_hash(s, id, len));
}

/* concord_id_hash(id): the same key in SQL, for the upgrade, the
 * pending-label drain's join and verify's check (every connection of a
 * schema 5 store has it; a file never needs it to be read). */
static void sql_id_hash(sqlite3_context *ctx, int argc, sqlite3_value **argv)
{
    (void)argc;
    const sq_store *s = sqlite3_user_data(ctx);
    const char *id = (const char *)sqlite3_value_text(argv[0]);
    if (!id) {
        sqlite3_result_null(ctx);
        return;
    }
    sqlite3_result_int64(ctx, cc_sq_id_hash(s, id, sqlite3_value_bytes(argv[0])));
}

static int add_id_hash_fn(sq_store *s, cc_error *err)
{
    if (sqlite3_create_function(s->db, "concord_id_hash", 1, SQLITE_UTF8 | SQLITE_DETERMINISTIC,
                                s, sql_id_hash, NULL, NULL) != SQLITE_OK)
        return db_error(s, err, "registering the id hash");
    return 0;
}

/* The width of the id hash: 64 bits, or what meta 'id_hash_bits' says.
 * Tests make files with a narrow hash (CONCORD_TEST_ID_HASH_BITS at
 * creation, 1..63) so that ids collide; the width stays with the file. */
static int load_id_hash_bits(sq_store *s, cc_error *err)
{
    sqlite3_stmt *st = NULL;
    int64_t bits = 64;
    if (sqlite3_prepare_v2(s->db, "SELECT value FROM meta WHERE key = 'id_hash_bits'", -1, &st,
                           NULL) == SQLITE_OK) {
        if (sqlite3_step(st) == SQLITE_ROW)
            bits = sqlite3_column_int64(st, 0);
    } else {
        /* no meta table: a new file */
        const char *env = getenv("CONCORD_TEST_ID_HASH_BITS");
        if (env && *env)
            bits = strtol(env, NULL, 10);
    }
    sqlite3_finalize(st);
    if (bits < 1 || bits > 64)
        return cc_error_set(err, CC_EIO, "%s: id hash width %lld is not valid (1..64)", s->path,
                            (long long)bits);
    s->id_mask = bits == 64 ? UINT64_MAX : ((uint64_t)1 << bits) - 1;
    return 0;
}

static int has_column(sq_store *s, const char *table, const char *column)
{
    sqlite3_stmt *st = NULL;
    int yes = 0;
    if (sqlite3_prepare_v2(s->db, "SELECT 1 FROM pragma_table_info(?1) WHERE name = ?2", -1, &st,
                           NULL) == SQLITE_OK) {
        sqlite3_bind_text(st, 1, table, -1, SQLITE_STATIC);
        sqlite3_bind_text(st, 2, column, -1, SQLITE_STATIC);
        yes = sqlite3_step(st) == SQLITE_ROW;
    }
    sqlite3_finalize(st);
    return yes;
}

/* The step to version 5, inside the upgrade's transaction and before
 * schema_sql (which builds events_by_hash once, over the filled column):
 * the id_hash column is added where missing (a file of version 3 or 4; the
 * copy of versions 1 and 2 already has it, filled with 0), every row's
 * hash is written in rowid chunks with progress about every two seconds,
 * and the text index events_by_id is dropped. Each part checks what is
 * there, so the step can run again on a file where it already ran. */
static int upgrade_id_hashes(sq_store *s, int64_t from_version, cc_error *err)
{
    sqlite3_stmt *st = NULL;
    int rc = 0;
    if (from_version < 1 || from_version >= 5)
        return 0;
    if (!has_column(s, "events", "id_hash") &&
        (rc = exec(s, "ALTER TABLE events ADD COLUMN id_hash INTEGER NOT NULL DEFAULT 0;", err)))
        return rc;
    if ((rc = exec(s, "DROP INDEX IF EXISTS events_by_id;", err)))
        return rc;
    int64_t lo = 0, hi = -1, total = 0;
    if (sqlite3_prepare_v2(s->db, "SELECT min(rowid), max(rowid), count(*) FROM events", -1, &st,
                           NULL) != SQLITE_OK || sqlite3_step(st) != SQLITE_ROW) {
        sqlite3_finalize(st);
        return db_error(s, err, "counting events for the id index");
    }
    if (sqlite3_column_type(st, 0) != SQLITE_NULL) {
        lo = sqlite3_column_int64(st, 0);
        hi = sqlite3_column_int64(st, 1);
        total = sqlite3_column_int64(st, 2);
    }
    sqlite3_finalize(st);
    if (sqlite3_prepare_v2(s->db, "UPDATE events SET id_hash = concord_id_hash(id) "
                                  "WHERE rowid BETWEEN ?1 AND ?2",
                           -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "hashing event ids");
    const int64_t chunk = 100000;
    int64_t done = 0, last = now_ms();
    if (s->o.on_progress && total > 0)
        s->o.on_progress(s->o.progress_ctx, s->path, NULL, 0, total);
    for (int64_t a = lo; a <= hi && !rc; a += chunk) {
        sqlite3_bind_int64(st, 1, a);
        sqlite3_bind_int64(st, 2, a + chunk - 1);
        if (sqlite3_step(st) != SQLITE_DONE)
            rc = db_error(s, err, "hashing event ids");
        done += sqlite3_changes(s->db);
        sqlite3_reset(st);
        if (s->o.on_progress && now_ms() - last >= 2000) {
            last = now_ms();
            s->o.on_progress(s->o.progress_ctx, s->path, NULL, done, total);
        }
    }
    sqlite3_finalize(st);
    return rc;
}

/* Creates or upgrades the schema in one write transaction, unless it is
 * current already (then nothing is written). */
static int bring_up_to_date(sq_store *s, cc_error *err)
{
    int64_t version;
    int rc = read_version(s, &version, err);
    if (rc || (rc = check_version(s, version, err)))
        return rc;
    if (version == SCHEMA_VERSION) {
        s->version = version;
        return 0;
    }
    if ((rc = begin_write(s, err)))
        return rc;
    /* another writer may have done it meanwhile */
    if ((rc = read_version(s, &version, err)) || (rc = check_version(s, version, err)) ||
        (version >= 1 && version < 3 && (rc = exec(s, events_v3_sql, err))) ||
        (version >= 1 && version < 4 && (rc = upgrade_v4_alert_tables(s, err))) ||
        (rc = upgrade_id_hashes(s, version, err)) || (rc = exec(s, schema_sql, err)) || (rc = upgrade_publish_marks(s, version, err)) ||
        (rc = exec(s, slices_schema_sql, err)) ||
        (version >= 1 && version < 4 && (rc = upgrade_to_v4_slices(s, err))) ||
        (version >= 1 && version < 5 && (rc = upgrade_summary_words(s, err)))) {
        sq_work_abort(&s->base);
        return rc;
    }
    char sql[256];
    int n = snprintf(sql, sizeof sql,
                     "INSERT OR REPLACE INTO meta(key, value) VALUES ('schema_version', '%d');",
                     SCHEMA_VERSION);
    if (version == 0 && s->id_mask != UINT64_MAX)
        snprintf(sql + n, sizeof sql - (size_t)n,
                 "INSERT OR REPLACE INTO meta(key, value) VALUES ('id_hash_bits', '%d');",
                 __builtin_popcountll(s->id_mask));
    if ((rc = exec(s, sql, err)) || (rc = exec(s, "COMMIT;", err))) {
        sq_work_abort(&s->base);
        return rc;
    }
    s->version = SCHEMA_VERSION;
    return 0;
}

static int open_errno(sq_store *s, const char *what, cc_error *err)
{
    if (errno == ENOENT)
        return cc_error_set(err, CC_EIO, "%s: no such database (a reading command never "
                                         "creates one; run 'concord ingest' first)", s->path);
    return cc_error_set(err, CC_EIO, "%s: %s: %s", s->path, what, strerror(errno));
}

/* "file:" URI of a path for SQLite's immutable mode. */
static char *immutable_uri(const char *path)
{
    size_t n = strlen(path);
    char *u = malloc(3 * n + 32);
    if (!u)
        return NULL;
    char *p = u + sprintf(u, path[0] == '/' ? "file://" : "file:");
    for (const unsigned char *c = (const unsigned char *)path; *c; c++)
        p += (*c == '%' || *c == '?' || *c == '#') ? sprintf(p, "%%%02X", *c)
                                                   : (*p = (char)*c, 1);
    strcpy(p, "?immutable=1");
    return u;
}

/* A WAL with content means committed data that only the WAL index can find. */
static int wal_pending(const char *path)
{
    char wal[4200];
    struct stat st;
    if (snprintf(wal, sizeof wal, "%s-wal", path) >= (int)sizeof wal)
        return 1;
    return stat(wal, &st) == 0 && st.st_size > 0;
}

static int start_snapshot(sq_store *s)
{
    return sqlite3_exec(s->db, "BEGIN; SELECT count(*) FROM sqlite_master;", NULL, NULL,
                        NULL);
}

static int open_reader(sq_store *s, cc_error *err)
{
    int flags = SQLITE_OPEN_READONLY | SQLITE_OPEN_NOMUTEX;
    int rc = sqlite3_open_v2(s->path, &s->db, flags, NULL);
    if (rc == SQLITE_OK) {
        sqlite3_busy_handler(s->db, busy_handler, s);
        rc = start_snapshot(s);
    }
    if (rc == SQLITE_OK)
        return 0;
    int ext = s->db ? sqlite3_extended_errcode(s->db) : rc;
    int prim = ext & 0xff;
    if ((prim == SQLITE_CANTOPEN || prim == SQLITE_IOERR || prim == SQLITE_READONLY) &&
        !wal_pending(s->path)) {
        /* the WAL index could not be made (read-only mount, full disk) and no
         * WAL is pending: the file alone is the database */
        char *uri = immutable_uri(s->path);
        sqlite3_close(s->db);
        s->db = NULL;
        if (!uri)
            return cc_error_set(err, CC_ENOMEM, "out of memory");
        rc = sqlite3_open_v2(uri, &s->db, flags | SQLITE_OPEN_URI, NULL);
        free(uri);
        if (rc == SQLITE_OK)
            rc = start_snapshot(s);
        if (rc == SQLITE_OK)
            return 0;
    }
    if (prim == SQLITE_BUSY)
        return db_error(s, err, "reading");
    return cc_error_set(err, CC_EIO, "%s: cannot read the database: %s", s->path,
                        s->db ? sqlite3_errmsg(s->db) : sqlite3_errstr(rc));
}

/* SQLite's page cache of a writer, in MiB: CONCORD_WRITER_CACHE_MIB (1..4096)
 * or WRITER_CACHE_MIB. Readers keep 64 MiB. 32 MiB holds the id index of
 * about 1.5 million events (about 19 MiB at 1 million), so ingest up to there
 * runs as with 64 MiB and its peak RSS stays under 64 MiB (bench/RESULTS.md,
 * "Random ids"). */
#define WRITER_CACHE_MIB 32

static int open_writer(sq_store *s, cc_error *err)
{
    int flags = SQLITE_OPEN_READWRITE | SQLITE_OPEN_NOMUTEX;
    if (sqlite3_open_v2(s->path, &s->db, flags, NULL) != SQLITE_OK)
        return cc_error_set(err, CC_EIO, "%s: cannot open database: %s", s->path,
                            s->db ? sqlite3_errmsg(s->db) : "out of memory");
    sqlite3_busy_handler(s->db, busy_handler, s);
    long mib = WRITER_CACHE_MIB;
    const char *env = getenv("CONCORD_WRITER_CACHE_MIB");
    if (env && *env) {
        char *end;
        long v = strtol(env, &end, 10);
        if (*end || v < 1 || v > 4096)
            return cc_error_set(err, CC_EUSAGE, "CONCORD_WRITER_CACHE_MIB: '%s' is not a "
                                                "number of MiB from 1 to 4096", env);
        mib = v;
    }
    char sql[320];
    snprintf(sql, sizeof sql,
             "PRAGMA page_size=16384; PRAGMA journal_mode=WAL; PRAGMA synchronous=NORMAL;"
             "PRAGMA foreign_keys=ON; PRAGMA cache_size=-%ld;"
             "PRAGMA wal_autocheckpoint=8192; PRAGMA journal_size_limit=67108864;",
             mib * 1024);
    return exec(s, sql, err);
}

int cc_store_open_with(cc_store **out, const char *path, const cc_store_opts *o,
                       cc_error *err)
{
    sq_store *s = calloc(1, sizeof *s);
    int rc;
    *out = NULL;
    if (!s || !(s->path = strdup(path))) {
        free(s);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    s->base.be = &cc_sq_backend;
    s->base.path = s->path;
    s->o = *o;
    s->lock_fd = -1;
    s->id_mask = UINT64_MAX;
    s->readonly = (o->flags & CC_STORE_READONLY) != 0;
    if (s->readonly) {
        struct stat st;
        if (stat(path, &st) != 0) {
            rc = open_errno(s, "cannot open database", err);
            goto fail;
        }
        if ((rc = open_reader(s, err)) || (rc = read_version(s, &s->version, err)) ||
            (rc = check_version(s, s->version, err)))
            goto fail;
        if (s->version == 0) {
            rc = cc_error_set(err, CC_EIO, "%s: not a concord database (no schema)", path);
            goto fail;
        }
        exec(s, "PRAGMA cache_size=-65536;", NULL);
        if (s->version >= 5 && ((rc = load_id_hash_bits(s, err)) || (rc = add_id_hash_fn(s, err))))
            goto fail;
    } else {
        /* created owner-only: it will hold webhook receivers; SQLite gives
         * the WAL and its index the database file's mode */
        int oflags = O_RDONLY | O_CLOEXEC;
        if (o->flags & CC_STORE_CREATE)
            oflags = O_RDWR | O_CREAT | O_CLOEXEC;
        if ((s->lock_fd = open(path, oflags, 0600)) < 0) {
            rc = open_errno(s, "cannot open database", err);
            goto fail;
        }
        if ((rc = open_writer(s, err)) || (rc = load_id_hash_bits(s, err)))
            goto fail;
        if ((rc = add_id_hash_fn(s, err)) || (rc = bring_up_to_date(s, err)))
            goto fail;
    }
    for (int i = 0; i < ST_COUNT; i++) {
        if (s->readonly && i != ST_EVENT_GET && i != ST_SUMMARY_GET && i != ST_EVENT_READ)
            continue;
        const char *sql = s->version < 5 && stmt_sql_v4[i] ? stmt_sql_v4[i] : stmt_sql[i];
        if (sqlite3_prepare_v3(s->db, sql, -1, SQLITE_PREPARE_PERSISTENT, &s->st[i],
                               NULL) != SQLITE_OK) {
            rc = db_error(s, err, "preparing statements");
            goto fail;
        }
    }
    *out = &s->base;
    return 0;
fail:
    sq_close(&s->base);
    return rc;
}

int cc_store_open(cc_store **out, const char *path, int flags, cc_error *err)
{
    cc_store_opts o = CC_STORE_OPTS_INIT;
    o.flags = flags;
    return cc_store_open_with(out, path, &o, err);
}

static void sq_close(cc_store *store)
{
    sq_store *s = SQ(store);
    if (!s)
        return;
    for (int i = 0; i < ST_COUNT; i++)
        sqlite3_finalize(s->st[i]);
    cc_summary_free(s->scratch);
    if (s->db && !sqlite3_get_autocommit(s->db))
        sqlite3_exec(s->db, "ROLLBACK;", NULL, NULL, NULL);
    sqlite3_close(s->db);
    /* only now: closing another descriptor of the file would drop SQLite's
     * fcntl locks */
    if (s->lock_fd >= 0)
        close(s->lock_fd);
    free(s->path);
    free(s);
}

sqlite3 *cc_store_db(cc_store *s) { return s->be == &cc_sq_backend ? SQ(s)->db : NULL; }

static int sq_snapshot_begin(cc_store *store, cc_error *err)
{
    sq_store *s = SQ(store);
    if (s->own_snapshot) { /* nested inside one of ours */
        s->own_snapshot++;
        return 0;
    }
    if (!sqlite3_get_autocommit(s->db))
        return 0;
    s->own_snapshot = 1;
    if (start_snapshot(s) != SQLITE_OK) {
        int rc = db_error(s, err, "starting a read transaction");
        sq_snapshot_end(&s->base);
        return rc;
    }
    return 0;
}

static void sq_snapshot_end(cc_store *store)
{
    sq_store *s = SQ(store);
    if (s->own_snapshot == 0 || --s->own_snapshot > 0)
        return;
    if (!sqlite3_get_autocommit(s->db))
        sqlite3_exec(s->db, "COMMIT;", NULL, NULL, NULL);
}

static int sq_work_begin(cc_store *store, cc_error *err) { return begin_write(SQ(store), err); }
static int sq_work_commit(cc_store *store, cc_error *err)
{
    sq_store *s = SQ(store);
    int rc = exec(s, "COMMIT;", err);
    if (!rc)
        hand_off(s);
    return rc;
}
static void sq_work_abort(cc_store *store)
{
    sq_store *s = SQ(store);
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

static int sq_model_get(cc_store *store, const char *name, cc_model **out, cc_error *err)
{
    sq_store *s = SQ(store);
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
        char **names = NULL, list[320];
        int n = 0;
        cc_store_model_list(store, &names, &n, NULL);
        cc_names_text(list, sizeof list, (const char *const *)names, n);
        rc = cc_error_set(err, CC_ENOTFOUND, "%s: no model named '%s'; models: %s", s->path,
                          name, list);
        for (int i = 0; i < n; i++)
            free(names[i]);
        free(names);
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

static int sq_model_create(cc_store *store, const char *name, int m, int k, char *const *classes,
                          char *const *members, cc_model **out, cc_error *err)
{
    sq_store *s = SQ(store);
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
    return rc ? rc : sq_model_get(&s->base, name, out, err);
}

static int sq_model_list(cc_store *store, char ***out, int *n, cc_error *err)
{
    sq_store *s = SQ(store);
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

static int sq_event_insert(cc_store *store, const cc_model *m, const char *id, int id_len,
                          int64_t ts, const char *segment, int segment_len, int pred,
                          int label, const float *probs, int *inserted, cc_error *err)
{
    sq_store *s = SQ(store);
    int64_t hash = cc_sq_id_hash(s, id, id_len);
    /* a duplicate: an index entry of the same hash whose row has the same id */
    sqlite3_stmt *st = stmt(s, ST_EVENT_EXISTS);
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_text(st, 2, id, id_len, SQLITE_STATIC);
    sqlite3_bind_int64(st, 9, hash);
    int step = sqlite3_step(st);
    sqlite3_reset(st);
    if (step == SQLITE_ROW) {
        *inserted = 0;
        return 0;
    }
    if (step != SQLITE_DONE)
        return db_error(s, err, "looking up event id");
    st = stmt(s, ST_EVENT_INSERT);
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_text(st, 2, id, id_len, SQLITE_STATIC);
    sqlite3_bind_int64(st, 9, hash);
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
    *inserted = 1;
    return 0;
}

static int sq_event_get(cc_store *store, const cc_model *m, const char *id, int id_len, int *found,
                       cc_stored_event *out, float *probs, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = stmt(s, ST_EVENT_GET);
    sqlite3_bind_int64(st, 1, m->id);
    cc_sq_bind_id(s, st, id, id_len);
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

static int sq_event_set_label(cc_store *store, const cc_model *m, const char *id, int id_len,
                             int label, int64_t label_at, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = stmt(s, ST_EVENT_SET_LABEL);
    sqlite3_bind_int64(st, 1, m->id);
    cc_sq_bind_id(s, st, id, id_len);
    sqlite3_bind_int(st, 3, label);
    sqlite3_bind_int64(st, 4, label_at);
    if (sqlite3_step(st) != SQLITE_DONE)
        return db_error(s, err, "updating label");
    return 0;
}

/* "model 'x' on 2026-01-02 (slice 3)" into buf, for error messages. */
static const char *where_of(char *buf, size_t n, const cc_model *m, int64_t day, int64_t slice)
{
    char date[11];
    cc_format_date(day, date);
    if (slice)
        snprintf(buf, n, "model '%s', %s, slice %lld", m->name, date, (long long)slice);
    else
        snprintf(buf, n, "model '%s', %s", m->name, date);
    return buf;
}

int cc_sq_decode_summary(cc_store *s, const cc_model *m, const void *blob, int bytes,
                         int64_t version, int64_t day, int64_t slice, const char *what,
                         cc_summary *out, cc_error *err)
{
    char where[400];
    int rc = cc_codec_decode_summary(blob, bytes > 0 ? (size_t)bytes : 0, version, out);
    if (rc == -3)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    if (rc == -2)
        return cc_error_set(err, CC_EIO,
                            "%s: %s of %s has layout version %lld, this concord reads 1 to %d",
                            cc_store_path(s), what, where_of(where, sizeof where, m, day, slice),
                            (long long)version, CC_SUMMARY_VERSION);
    if (rc)
        return cc_error_set(err, CC_EIO, "%s: %s of %s is damaged", cc_store_path(s), what,
                            where_of(where, sizeof where, m, day, slice));
    return 0;
}

int cc_sq_merge(cc_store *s, const cc_model *m, int64_t day, int64_t slice, cc_summary *dst,
                const cc_summary *src, cc_error *err)
{
    char where[400];
    int rc = cc_summary_merge(dst, src);
    if (rc == CC_SUMMARY_OVERFLOW)
        return cc_error_set(err, CC_EIO,
                            "%s: summary counter overflow at %s; nothing was written",
                            cc_store_path(s), where_of(where, sizeof where, m, day, slice));
    if (rc)
        return cc_error_set(err, CC_EIO, "%s: summary of %s has another shape",
                            cc_store_path(s), where_of(where, sizeof where, m, day, slice));
    return 0;
}

static int sq_summary_get(cc_store *store, const cc_model *m, int64_t day, cc_summary *out,
                         cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = stmt(s, ST_SUMMARY_GET);
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, day);
    int step = sqlite3_step(st);
    cc_summary_clear(out);
    if (step == SQLITE_DONE)
        return 0;
    if (step != SQLITE_ROW)
        return db_error(s, err, "reading summary");
    int rc = cc_sq_decode_summary(store, m, sqlite3_column_blob(st, 1),
                                  sqlite3_column_bytes(st, 1), sqlite3_column_int64(st, 0), day,
                                  0, "summary", out, err);
    sqlite3_reset(st);
    return rc;
}

static int summary_put(sq_store *s, const cc_model *m, int64_t day, const cc_summary *sum,
                       cc_error *err)
{
    const cc_layout *lay = cc_summary_layout(sum);
    const int64_t *v = cc_summary_data(sum);
    size_t len;
    if (cc_summary_overflowed(sum)) {
        char where[400];
        return cc_error_set(err, CC_EIO,
                            "%s: summary counter overflow at %s; nothing was written", s->path,
                            where_of(where, sizeof where, m, day, 0));
    }
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

/* The store's one scratch summary, of m's shape: read, merged and rewritten
 * by the summary adds of days and of slices, one at a time (at 64 x 256 a
 * summary is 20 MiB, so each add does not make its own). NULL, with err
 * set, when out of memory. */
cc_summary *cc_sq_scratch(sq_store *s, const cc_model *m, cc_error *err)
{
    const cc_layout *have = s->scratch ? cc_summary_layout(s->scratch) : NULL;
    if (!have || have->m != m->m || have->k != m->k) {
        cc_summary_free(s->scratch);
        if (!(s->scratch = cc_summary_create(m->m, m->k))) {
            cc_error_set(err, CC_ENOMEM, "out of memory");
            return NULL;
        }
    }
    return s->scratch;
}

static int sq_summary_add(cc_store *store, const cc_model *m, int64_t day, const cc_summary *delta,
                         cc_error *err)
{
    sq_store *s = SQ(store);
    if (!cc_sq_scratch(s, m, err))
        return -CC_ENOMEM;
    int rc = sq_summary_get(&s->base, m, day, s->scratch, err);
    if (!rc)
        rc = cc_sq_merge(store, m, day, 0, s->scratch, delta, err);
    if (!rc)
        rc = summary_put(s, m, day, s->scratch, err);
    return rc;
}

static int sq_summary_days(cc_store *store, const cc_model *m, int64_t from, int64_t to,
                          int64_t **days, int *n, cc_error *err)
{
    sq_store *s = SQ(store);
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
    return cc_sq_collect_days(s, st, "listing days", days, n, err);
}

static int sq_summary_from_rows(cc_store *store, const cc_model *m, int64_t day, cc_summary *out,
                               cc_error *err)
{
    sq_store *s = SQ(store);
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

static int sq_baseline_set(cc_store *store, const cc_model *m, int64_t from, int64_t to,
                          cc_error *err)
{
    sq_store *s = SQ(store);
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

static int sq_baseline_get(cc_store *store, const cc_model *m, int *has, int64_t *from,
                          int64_t *to, cc_error *err)
{
    sq_store *s = SQ(store);
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

static int sq_reject_add(cc_store *store, const char *kind, const char *source, int64_t line,
                        const char *reason, const char *text, size_t text_len, cc_error *err)
{
    sq_store *s = SQ(store);
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

static int sq_pending_label_add(cc_store *store, const cc_model *m, const char *id, int id_len,
                               int label, int64_t received_at, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = stmt(s, ST_PENDING_ADD);
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_text(st, 2, id, id_len, SQLITE_STATIC);
    sqlite3_bind_int(st, 3, label);
    sqlite3_bind_int64(st, 4, received_at);
    if (sqlite3_step(st) != SQLITE_DONE)
        return db_error(s, err, "storing pending label");
    return 0;
}

static int sq_pending_label_drain(cc_store *store, const cc_model *m, cc_pending_fn fn,
                                 void *payload, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st;
    int rc = 0;
    /* CROSS JOIN keeps pending_labels the outer table: one events_by_hash
     * lookup per waiting label, never a walk over the model's events */
    if (sqlite3_prepare_v2(s->db,
                           "SELECT p.id, p.label, p.received_at FROM pending_labels p "
                           "CROSS JOIN events e ON e.model_id = p.model_id "
                           "AND e.id_hash = concord_id_hash(p.id) AND e.id = p.id "
                           "WHERE p.model_id = ?1",
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
                           "AND e.id_hash = concord_id_hash(pending_labels.id) "
                           "AND e.id = pending_labels.id)",
                           -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "clearing pending labels");
    sqlite3_bind_int64(st, 1, m->id);
    int step = sqlite3_step(st);
    sqlite3_finalize(st);
    return step == SQLITE_DONE ? 0 : db_error(s, err, "clearing pending labels");
}

static int64_t sq_pending_label_count(cc_store *store, const cc_model *m)
{
    sq_store *s = SQ(store);
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

/* Whether a table exists: a reader may open a database of an older schema
 * version that lacks the newer tables. */
static int has_table(sq_store *s, const char *name)
{
    sqlite3_stmt *st = NULL;
    int yes = 0;
    if (sqlite3_prepare_v2(s->db, "SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = ?1",
                           -1, &st, NULL) == SQLITE_OK) {
        sqlite3_bind_text(st, 1, name, -1, SQLITE_STATIC);
        yes = sqlite3_step(st) == SQLITE_ROW;
    }
    sqlite3_finalize(st);
    return yes;
}

static int sq_pruned_get(cc_store *store, const cc_model *m, int64_t day, int *found,
                        cc_summary *out, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    *found = 0;
    cc_summary_clear(out);
    if (!has_table(s, "pruned_days"))
        return 0;
    if (sqlite3_prepare_v2(s->db, "SELECT version, counters FROM pruned_days "
                                  "WHERE model_id = ?1 AND day = ?2",
                           -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "reading pruned days");
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, day);
    int step = sqlite3_step(st), rc = 0;
    if (step == SQLITE_ROW) {
        *found = 1;
        rc = cc_sq_decode_summary(store, m, sqlite3_column_blob(st, 1),
                                  sqlite3_column_bytes(st, 1), sqlite3_column_int64(st, 0), day, 0,
                                  "pruned part", out, err);
    } else if (step != SQLITE_DONE) {
        rc = db_error(s, err, "reading pruned days");
    }
    sqlite3_finalize(st);
    return rc;
}

static int sq_prune_day(cc_store *store, const cc_model *m, int64_t day, int64_t now,
                       int64_t *removed, cc_error *err)
{
    sq_store *s = SQ(store);
    cc_summary *rows = cc_summary_create(m->m, m->k), *kept = cc_summary_create(m->m, m->k);
    unsigned char *blob = NULL;
    sqlite3_stmt *st = NULL;
    int found, rc = 0;
    *removed = 0;
    if (!rows || !kept) {
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    if ((rc = sq_summary_from_rows(&s->base, m, day, rows, err)))
        goto done;
    const cc_layout *lay = cc_summary_layout(rows);
    int64_t n = cc_summary_data(rows)[lay->n_events];
    if (n == 0)
        goto done;
    if ((rc = sq_pruned_get(&s->base, m, day, &found, kept, err)))
        goto done;
    if ((rc = cc_sq_merge(store, m, day, 0, kept, rows, err)))
        goto done;
    size_t len;
    if (!(blob = cc_codec_encode(cc_summary_data(kept), lay->len, &len))) {
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    if (sqlite3_prepare_v2(s->db, "INSERT OR REPLACE INTO pruned_days(model_id, day, version, "
                                  "events, counters, pruned_at) VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
                           -1, &st, NULL) != SQLITE_OK) {
        rc = db_error(s, err, "recording a pruned day");
        goto done;
    }
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, day);
    sqlite3_bind_int(st, 3, CC_SUMMARY_VERSION);
    sqlite3_bind_int64(st, 4, cc_summary_data(kept)[lay->n_events]);
    sqlite3_bind_blob(st, 5, blob, (int)len, SQLITE_STATIC);
    sqlite3_bind_int64(st, 6, now);
    if (sqlite3_step(st) != SQLITE_DONE) {
        rc = db_error(s, err, "recording a pruned day");
        goto done;
    }
    sqlite3_finalize(st);
    st = NULL;
    if ((rc = cc_sq_slice_prune_day(store, m, day, now, err)))
        goto done;
    if (sqlite3_prepare_v2(s->db, "DELETE FROM events WHERE model_id = ?1 AND day = ?2", -1,
                           &st, NULL) != SQLITE_OK) {
        rc = db_error(s, err, "deleting event rows");
        goto done;
    }
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, day);
    if (sqlite3_step(st) != SQLITE_DONE) {
        rc = db_error(s, err, "deleting event rows");
        goto done;
    }
    *removed = sqlite3_changes(s->db);
done:
    sqlite3_finalize(st);
    free(blob);
    cc_summary_free(rows);
    cc_summary_free(kept);
    return rc;
}

static int sq_pruned_range(cc_store *store, const cc_model *m, int64_t from, int64_t to,
                          cc_pruned_range *out, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    memset(out, 0, sizeof *out);
    if (!has_table(s, "pruned_days"))
        return 0;
    if (sqlite3_prepare_v2(s->db, "SELECT count(*), min(day), max(day), total(events) FROM "
                                  "pruned_days WHERE model_id = ?1 AND day BETWEEN ?2 AND ?3",
                           -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "reading pruned days");
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, from);
    sqlite3_bind_int64(st, 3, to);
    int step = sqlite3_step(st);
    if (step == SQLITE_ROW) {
        out->days = sqlite3_column_int(st, 0);
        out->first = sqlite3_column_int64(st, 1);
        out->last = sqlite3_column_int64(st, 2);
        out->events = (int64_t)sqlite3_column_double(st, 3);
    }
    sqlite3_finalize(st);
    return step == SQLITE_ROW ? 0 : db_error(s, err, "reading pruned days");
}

static int sq_row_days(cc_store *store, const cc_model *m, int64_t **days, int *n, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    *days = NULL;
    *n = 0;
    if (sqlite3_prepare_v2(s->db, "SELECT DISTINCT day FROM events WHERE model_id = ?1 "
                                  "ORDER BY day",
                           -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "listing days with events");
    sqlite3_bind_int64(st, 1, m->id);
    return cc_sq_collect_days(s, st, "listing days with events", days, n, err);
}

static int sq_class_faults(cc_store *store, const cc_model *m, cc_fault_fn fn, void *ctx,
                          int64_t *count, cc_error *err)
{
    sq_store *s = SQ(store);
    static const char *const what[] = {"label", "pred", "pending label"};
    static const char *const sql[] = {
        "SELECT id, label FROM events WHERE model_id = ?1 AND label IS NOT NULL "
        "AND (typeof(label) != 'integer' OR label < 0 OR label >= ?2)",
        "SELECT id, pred FROM events WHERE model_id = ?1 "
        "AND (typeof(pred) != 'integer' OR pred < 0 OR pred >= ?2)",
        "SELECT id, label FROM pending_labels WHERE model_id = ?1 "
        "AND (typeof(label) != 'integer' OR label < 0 OR label >= ?2)",
    };
    *count = 0;
    for (int q = 0; q < 3; q++) {
        sqlite3_stmt *st = NULL;
        int step, stop = 0;
        if (sqlite3_prepare_v2(s->db, sql[q], -1, &st, NULL) != SQLITE_OK)
            return db_error(s, err, "checking class indexes");
        sqlite3_bind_int64(st, 1, m->id);
        sqlite3_bind_int(st, 2, m->k);
        while ((step = sqlite3_step(st)) == SQLITE_ROW) {
            ++*count;
            if (!stop && fn)
                stop = fn(ctx, what[q], (const char *)sqlite3_column_text(st, 0),
                          sqlite3_column_int64(st, 1));
        }
        sqlite3_finalize(st);
        if (step != SQLITE_DONE)
            return db_error(s, err, "checking class indexes");
    }
    return 0;
}

static int sq_integrity(cc_store *store, int (*fn)(void *ctx, const char *line), void *ctx, int *ok,
                       cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    int step;
    *ok = 1;
    if (sqlite3_prepare_v2(s->db, "PRAGMA integrity_check", -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "integrity_check");
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        const char *line = (const char *)sqlite3_column_text(st, 0);
        if (line && strcmp(line, "ok") == 0)
            continue;
        *ok = 0;
        if (fn && fn(ctx, line ? line : "?"))
            break;
    }
    sqlite3_finalize(st);
    if (step != SQLITE_ROW && step != SQLITE_DONE)
        return db_error(s, err, "integrity_check");
    if (s->version < 5)
        return 0;
    /* a row whose key is not its id's could not be found by id: its
     * duplicates would be stored again */
    int64_t bad = 0;
    if (sqlite3_prepare_v2(s->db, "SELECT count(*) FROM events WHERE id_hash <> concord_id_hash(id)",
                           -1, &st, NULL) != SQLITE_OK)
        return db_error(s, err, "checking the id keys");
    step = sqlite3_step(st);
    if (step == SQLITE_ROW)
        bad = sqlite3_column_int64(st, 0);
    sqlite3_finalize(st);
    if (step != SQLITE_ROW)
        return db_error(s, err, "checking the id keys");
    if (bad > 0) {
        char line[160];
        snprintf(line, sizeof line, "events: %lld rows whose id_hash is not their id's key "
                                    "(events_by_hash cannot find them by id)", (long long)bad);
        *ok = 0;
        if (fn)
            fn(ctx, line);
    }
    return 0;
}

static int sq_backup(cc_store *store, const char *out_path, cc_error *err)
{
    sq_store *s = SQ(store);
    struct stat sb;
    if (lstat(out_path, &sb) == 0)
        return cc_error_set(err, CC_EIO, "%s: exists already; the backup does not overwrite",
                            out_path);
    size_t n = strlen(out_path);
    char *tmp = malloc(n + 16);
    if (!tmp)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    snprintf(tmp, n + 16, "%s.tmp-XXXXXX", out_path);
    int fd = mkstemp(tmp); /* owner-only */
    if (fd < 0) {
        int rc = cc_error_set(err, CC_EIO, "%s: cannot create: %s", out_path, strerror(errno));
        free(tmp);
        return rc;
    }
    close(fd);
    sqlite3 *dst = NULL;
    int rc = 0;
    if (sqlite3_open_v2(tmp, &dst, SQLITE_OPEN_READWRITE | SQLITE_OPEN_NOMUTEX, NULL) !=
        SQLITE_OK) {
        rc = cc_error_set(err, CC_EIO, "%s: cannot open: %s", tmp,
                          dst ? sqlite3_errmsg(dst) : "out of memory");
    } else {
        sqlite3_backup *b = sqlite3_backup_init(dst, "main", s->db, "main");
        if (!b) {
            rc = cc_error_set(err, CC_EIO, "%s: backup: %s", out_path, sqlite3_errmsg(dst));
        } else {
            /* one step: the whole copy comes from one read transaction */
            int step = sqlite3_backup_step(b, -1);
            int fin = sqlite3_backup_finish(b);
            if (step != SQLITE_DONE || fin != SQLITE_OK)
                rc = cc_error_set(err, CC_EIO, "%s: backup: %s", out_path,
                                  sqlite3_errstr(step != SQLITE_DONE ? step : fin));
        }
    }
    if (sqlite3_close(dst) != SQLITE_OK && !rc)
        rc = cc_error_set(err, CC_EIO, "%s: closing the copy failed", out_path);
    if (!rc && (fd = open(tmp, O_RDONLY | O_CLOEXEC)) >= 0) {
        if (fsync(fd) != 0)
            rc = cc_error_set(err, CC_EIO, "%s: %s", out_path, strerror(errno));
        close(fd);
    }
    /* link() rather than rename(): an out_path made meanwhile is not replaced */
    if (!rc && link(tmp, out_path) != 0 &&
        !((errno == EPERM || errno == ENOTSUP || errno == ENOSYS) && lstat(out_path, &sb) != 0 &&
          rename(tmp, out_path) == 0))
        rc = cc_error_set(err, CC_EIO, "%s: cannot create: %s", out_path, strerror(errno));
    unlink(tmp);
    char side[4200];
    snprintf(side, sizeof side, "%s-journal", tmp);
    unlink(side);
    free(tmp);
    return rc;
}

static int sq_events_between(cc_store *store, const cc_model *m, int64_t ts_from,
                             int64_t ts_to, cc_event_row_fn fn, void *payload, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    size_t want = (size_t)m->m * (size_t)m->k * sizeof(float);
    float *probs = malloc(want);
    int rc = 0, step;
    if (!probs)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    if (ts_to <= ts_from)
        goto done;
    /* the day bounds let SQLite walk events_by_time (model_id, day, ts) */
    if (sqlite3_prepare_v2(s->db,
                           "SELECT ts, label, label_at, probs FROM events "
                           "WHERE model_id = ?1 AND day BETWEEN ?2 AND ?3 "
                           "AND ts >= ?4 AND ts < ?5 ORDER BY day, ts",
                           -1, &st, NULL) != SQLITE_OK) {
        rc = db_error(s, err, "reading events by time");
        goto done;
    }
    sqlite3_bind_int64(st, 1, m->id);
    sqlite3_bind_int64(st, 2, cc_day_of_unix(ts_from));
    sqlite3_bind_int64(st, 3, cc_day_of_unix(ts_to - 1));
    sqlite3_bind_int64(st, 4, ts_from);
    sqlite3_bind_int64(st, 5, ts_to);
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        if ((size_t)sqlite3_column_bytes(st, 3) != want) {
            rc = cc_error_set(err, CC_EIO, "%s: damaged probability blob", s->path);
            break;
        }
        memcpy(probs, sqlite3_column_blob(st, 3), want);
        int label = sqlite3_column_type(st, 1) == SQLITE_NULL ? -1 : sqlite3_column_int(st, 1);
        int64_t label_at =
            sqlite3_column_type(st, 2) == SQLITE_NULL ? -1 : sqlite3_column_int64(st, 2);
        if ((rc = fn(payload, sqlite3_column_int64(st, 0), label, label_at, probs)) != 0)
            break;
    }
    if (!rc && step != SQLITE_DONE)
        rc = db_error(s, err, "reading events by time");
done:
    sqlite3_finalize(st);
    free(probs);
    return rc;
}

/* The helpers above, for the backend's other files (store_sqlite.h). */
int cc_sq_collect_days(sq_store *s, sqlite3_stmt *st, const char *what, int64_t **days, int *n,
                       cc_error *err)
{
    int rc = 0, step, cap = 0;
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        if (*n == cap) {
            int64_t *grown = realloc(*days, (size_t)(cap ? 2 * cap : 32) * sizeof **days);
            if (!grown) {
                rc = cc_error_set(err, CC_ENOMEM, "out of memory");
                break;
            }
            *days = grown;
            cap = cap ? 2 * cap : 32;
        }
        (*days)[(*n)++] = sqlite3_column_int64(st, 0);
    }
    if (!rc && step != SQLITE_DONE)
        rc = db_error(s, err, what);
    sqlite3_finalize(st);
    return rc;
}
int cc_sq_error(sq_store *s, cc_error *err, const char *what) { return db_error(s, err, what); }
int cc_sq_exec(sq_store *s, const char *sql, cc_error *err) { return exec(s, sql, err); }
sqlite3_stmt *cc_sq_stmt(sq_store *s, int which) { return stmt(s, which); }
int cc_sq_has_table(sq_store *s, const char *name) { return has_table(s, name); }

const cc_store_backend cc_sq_backend = {
    .version = CC_STORE_BACKEND_VERSION,
    .size = sizeof(cc_store_backend),
    .name = "sqlite",
    .close = sq_close,
    .readonly = sq_readonly,
    .take_timed_out = sq_take_timed_out,
    .snapshot_begin = sq_snapshot_begin,
    .snapshot_end = sq_snapshot_end,
    .work_begin = sq_work_begin,
    .work_commit = sq_work_commit,
    .work_abort = sq_work_abort,
    .model_get = sq_model_get,
    .model_create = sq_model_create,
    .model_list = sq_model_list,
    .event_insert = sq_event_insert,
    .event_get = sq_event_get,
    .event_set_label = sq_event_set_label,
    .summary_add = sq_summary_add,
    .summary_get = sq_summary_get,
    .summary_days = sq_summary_days,
    .summary_from_rows = sq_summary_from_rows,
    .baseline_set = sq_baseline_set,
    .baseline_get = sq_baseline_get,
    .reject_add = sq_reject_add,
    .pending_label_add = sq_pending_label_add,
    .pending_label_drain = sq_pending_label_drain,
    .pending_label_count = sq_pending_label_count,
    .prune_day = sq_prune_day,
    .pruned_get = sq_pruned_get,
    .pruned_range = sq_pruned_range,
    .row_days = sq_row_days,
    .class_faults = sq_class_faults,
    .integrity = sq_integrity,
    .backup = sq_backup,
    .events_scan = cc_sq_events_scan,
    .event_read = cc_sq_event_read,
    .labeled_day_last = cc_sq_labeled_day_last,
    .rule_states = cc_sq_rule_states,
    .rule_state_put = cc_sq_rule_state_put,
    .notice_add = cc_sq_notice_add,
    .notices = cc_sq_notices,
    .outbox_claim = cc_sq_outbox_claim,
    .outbox_mark = cc_sq_outbox_mark,
    .outbox_count = cc_sq_outbox_count,
    .outbox_requeue_dead = cc_sq_outbox_requeue_dead,
    .follow_offset_get = cc_sq_follow_offset_get,
    .follow_offset_set = cc_sq_follow_offset_set,
    .slices_kept = cc_sq_slices_kept,
    .slice_limit_get = cc_sq_slice_limit_get,
    .slice_limit_set = cc_sq_slice_limit_set,
    .slice_resolve = cc_sq_slice_resolve,
    .event_segment = cc_sq_event_segment,
    .slice_list = cc_sq_slice_list,
    .slice_overview = cc_sq_slice_overview,
    .slice_summary_add = cc_sq_slice_summary_add,
    .slice_summary_get = cc_sq_slice_summary_get,
    .slice_summary_days = cc_sq_slice_summary_days,
    .slice_pruned_get = cc_sq_slice_pruned_get,
    .slice_from_rows = cc_sq_slice_from_rows,
    .events_between = sq_events_between,
    .model_totals = cc_sq_model_totals,
    .slice_add = cc_sq_slice_add,
    .events_sample = cc_sq_events_sample,
};
