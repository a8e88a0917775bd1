/* state.c — the rule state machine and the alert tables. */
#include "state.h"

#include <math.h>
#include <sqlite3.h>
#include "store_sqlite.h" /* temporary: step 2 moves this SQL into the store */
#include <string.h>

static const char schema[] =
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
    "CREATE INDEX IF NOT EXISTS outbox_due ON outbox(status, next_at);";

static int db_fail(cc_store *s, cc_error *err, const char *what)
{
    return cc_error_set(err, CC_EIO, "%s: %s: %s", cc_store_path(s), what,
                        sqlite3_errmsg(cc_store_db(s)));
}

/* Alert tables written by versions before the vocabulary change (states
 * ok/pending/firing/resolved, urgency called severity with critical/warning/
 * info, notification kinds fired/resolved, dedupe_key): renamed and mapped
 * in place, in one savepoint, the first time a writer opens them. */
static const char upgrade_vocabulary[] =
    "SAVEPOINT alert_vocabulary;"
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
    "  WHEN 'info' THEN 'low' ELSE urgency END;"
    "RELEASE alert_vocabulary;";

/* 1 when rule_state exists with the old column name "severity". */
static int has_old_vocabulary(cc_store *s)
{
    sqlite3_stmt *st = NULL;
    int old = 0;
    if (sqlite3_prepare_v2(cc_store_db(s), "SELECT 1 FROM pragma_table_info('rule_state') "
                           "WHERE name = 'severity'", -1, &st, NULL) == SQLITE_OK)
        old = sqlite3_step(st) == SQLITE_ROW;
    sqlite3_finalize(st);
    return old;
}

int cc_state_prepare(cc_store *s, cc_error *err)
{
    char *msg = NULL;
    if (cc_store_readonly(s))
        return 0; /* a reader creates nothing; the history reads treat missing tables as empty */
    if (has_old_vocabulary(s) &&
        sqlite3_exec(cc_store_db(s), upgrade_vocabulary, NULL, NULL, &msg) != SQLITE_OK) {
        int rc = cc_error_set(err, CC_EIO, "%s: upgrading the alert tables: %s",
                              cc_store_path(s), msg ? msg : "?");
        sqlite3_free(msg);
        sqlite3_exec(cc_store_db(s), "ROLLBACK TO alert_vocabulary; RELEASE alert_vocabulary;",
                     NULL, NULL, NULL);
        return rc;
    }
    if (sqlite3_exec(cc_store_db(s), schema, NULL, NULL, &msg) != SQLITE_OK) {
        int rc = cc_error_set(err, CC_EIO, "%s: creating the alert tables: %s",
                              cc_store_path(s), msg ? msg : "?");
        sqlite3_free(msg);
        return rc;
    }
    return 0;
}

static const char *const state_names[] = {"quiet", "building", "raised", "cleared",
                                          "not_evaluated"};

const char *cc_state_name(cc_state_kind k) { return state_names[k]; }

int cc_state_parse(const char *name, cc_state_kind *out)
{
    for (int i = 0; i < 5; i++)
        if (strcmp(name, state_names[i]) == 0) {
            *out = (cc_state_kind)i;
            return 0;
        }
    return -1;
}

const char *cc_transition_name(cc_transition t)
{
    return t == CC_TR_RAISED ? "raised" : t == CC_TR_CLEARED ? "cleared"
                                        : t == CC_TR_REMINDER ? "reminder" : "none";
}

int cc_state_load(cc_store *s, const char *model, const char *rule, cc_rule_state *out,
                  cc_error *err)
{
    memset(out, 0, sizeof *out);
    out->last_day = out->fired_day = out->last_notified_day = -1;
    sqlite3_stmt *st = NULL;
    if (sqlite3_prepare_v2(cc_store_db(s),
                           "SELECT state, breach_run, clear_run, last_day, since_day, "
                           "fired_day, last_notified_day FROM rule_state "
                           "WHERE model = ?1 AND rule = ?2", -1, &st, NULL) != SQLITE_OK)
        return db_fail(s, err, "reading rule_state");
    sqlite3_bind_text(st, 1, model, -1, SQLITE_STATIC);
    sqlite3_bind_text(st, 2, rule, -1, SQLITE_STATIC);
    int rc = sqlite3_step(st);
    if (rc == SQLITE_ROW) {
        cc_state_kind k = CC_STATE_NOT_EVALUATED;
        cc_state_parse((const char *)sqlite3_column_text(st, 0), &k);
        out->found = 1;
        out->state = k;
        out->breach_run = sqlite3_column_int(st, 1);
        out->clear_run = sqlite3_column_int(st, 2);
        out->last_day = sqlite3_column_int64(st, 3);
        out->since_day = sqlite3_column_int64(st, 4);
        out->fired_day = sqlite3_column_type(st, 5) == SQLITE_NULL ? -1
                                                                  : sqlite3_column_int64(st, 5);
        out->last_notified_day =
            sqlite3_column_type(st, 6) == SQLITE_NULL ? -1 : sqlite3_column_int64(st, 6);
    }
    sqlite3_finalize(st);
    if (rc != SQLITE_ROW && rc != SQLITE_DONE)
        return db_fail(s, err, "reading rule_state");
    return 0;
}

static void enter(cc_rule_state *st, cc_state_kind k, int64_t day)
{
    if (st->state != k)
        st->since_day = day;
    st->state = k;
}

cc_transition cc_state_step(cc_rule_state *st, const cc_rule *rule, int64_t day,
                            cc_eval_status status)
{
    cc_transition tr = CC_TR_NONE;
    if (!st->found)
        st->since_day = day;
    st->last_day = day;
    if (status == CC_EVAL_SKIPPED) {
        if (st->state != CC_STATE_RAISED)
            enter(st, CC_STATE_NOT_EVALUATED, day);
        return tr;
    }
    if (status == CC_EVAL_BREACH) {
        st->breach_run++;
        st->clear_run = 0;
        if (st->state == CC_STATE_RAISED) {
            if (rule->remind_after_days > 0 &&
                day - st->last_notified_day >= rule->remind_after_days) {
                st->last_notified_day = day;
                tr = CC_TR_REMINDER;
            }
        } else if (st->breach_run >= rule->raise_after) {
            enter(st, CC_STATE_RAISED, day);
            st->fired_day = st->last_notified_day = day;
            tr = CC_TR_RAISED;
        } else {
            enter(st, CC_STATE_BUILDING, day);
        }
    } else {
        st->clear_run++;
        st->breach_run = 0;
        if (st->state == CC_STATE_RAISED) {
            if (st->clear_run >= rule->clear_after) {
                enter(st, CC_STATE_CLEARED, day);
                tr = CC_TR_CLEARED;
            }
        } else {
            enter(st, CC_STATE_QUIET, day);
        }
    }
    return tr;
}

static void bind_real(sqlite3_stmt *st, int i, double x)
{
    if (isfinite(x))
        sqlite3_bind_double(st, i, x);
    else
        sqlite3_bind_null(st, i);
}

static void bind_day(sqlite3_stmt *st, int i, int64_t d)
{
    if (d >= 0)
        sqlite3_bind_int64(st, i, d);
    else
        sqlite3_bind_null(st, i);
}

int cc_state_save(cc_store *s, const char *model, const cc_rule *rule, const cc_rule_state *st,
                  const cc_eval_result *ev, int64_t now, cc_error *err)
{
    sqlite3_stmt *q = NULL;
    if (sqlite3_prepare_v2(cc_store_db(s),
                           "INSERT OR REPLACE INTO rule_state(model, rule, state, breach_run, "
                           "clear_run, last_day, since_day, fired_day, last_notified_day, "
                           "metric, urgency, last_value, last_bound, updated_at) VALUES "
                           "(?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14)",
                           -1, &q, NULL) != SQLITE_OK)
        return db_fail(s, err, "writing rule_state");
    sqlite3_bind_text(q, 1, model, -1, SQLITE_STATIC);
    sqlite3_bind_text(q, 2, rule->name, -1, SQLITE_STATIC);
    sqlite3_bind_text(q, 3, cc_state_name(st->state), -1, SQLITE_STATIC);
    sqlite3_bind_int(q, 4, st->breach_run);
    sqlite3_bind_int(q, 5, st->clear_run);
    sqlite3_bind_int64(q, 6, st->last_day);
    sqlite3_bind_int64(q, 7, st->since_day);
    bind_day(q, 8, st->fired_day);
    bind_day(q, 9, st->last_notified_day);
    sqlite3_bind_text(q, 10, rule->metric, -1, SQLITE_STATIC);
    sqlite3_bind_text(q, 11, cc_rules_urgency_name(rule->urgency), -1, SQLITE_STATIC);
    bind_real(q, 12, ev ? ev->value : NAN);
    bind_real(q, 13, ev ? ev->bound : NAN);
    sqlite3_bind_int64(q, 14, now);
    int rc = sqlite3_step(q);
    sqlite3_finalize(q);
    return rc == SQLITE_DONE ? 0 : db_fail(s, err, "writing rule_state");
}

int cc_state_queue(cc_store *s, const cc_notification *n, const cc_receiver *receivers,
                   int n_receivers, int backoff_s, int max_backoff_s, int *queued,
                   cc_error *err)
{
    sqlite3 *db = cc_store_db(s);
    sqlite3_stmt *q = NULL;
    *queued = 0;
    if (sqlite3_prepare_v2(db,
                           "INSERT OR IGNORE INTO notifications(notice_id, model, rule, kind, "
                           "urgency, day, window_day, value, bound, body, created_at) VALUES "
                           "(?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11)",
                           -1, &q, NULL) != SQLITE_OK)
        return db_fail(s, err, "writing notifications");
    sqlite3_bind_text(q, 1, n->notice_id, -1, SQLITE_STATIC);
    sqlite3_bind_text(q, 2, n->model, -1, SQLITE_STATIC);
    sqlite3_bind_text(q, 3, n->rule, -1, SQLITE_STATIC);
    sqlite3_bind_text(q, 4, n->kind, -1, SQLITE_STATIC);
    sqlite3_bind_text(q, 5, n->urgency, -1, SQLITE_STATIC);
    sqlite3_bind_int64(q, 6, n->day);
    sqlite3_bind_int64(q, 7, n->window_day);
    bind_real(q, 8, n->value);
    bind_real(q, 9, n->bound);
    sqlite3_bind_text(q, 10, n->body, -1, SQLITE_STATIC);
    sqlite3_bind_int64(q, 11, n->created_at);
    int rc = sqlite3_step(q);
    sqlite3_finalize(q);
    if (rc != SQLITE_DONE)
        return db_fail(s, err, "writing notifications");
    if (sqlite3_changes(db) == 0)
        return 0;
    int64_t id = sqlite3_last_insert_rowid(db);
    *queued = 1;
    if (sqlite3_prepare_v2(db,
                           "INSERT OR IGNORE INTO outbox(notification_id, receiver, secret_env, "
                           "connect_timeout_ms, timeout_ms, max_attempts, backoff_s, "
                           "max_backoff_s, status, attempts, next_at) VALUES "
                           "(?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, 'pending', 0, ?9)",
                           -1, &q, NULL) != SQLITE_OK)
        return db_fail(s, err, "writing outbox");
    for (int i = 0; i < n_receivers; i++) {
        const cc_receiver *r = &receivers[i];
        sqlite3_reset(q);
        sqlite3_bind_int64(q, 1, id);
        sqlite3_bind_text(q, 2, r->url, -1, SQLITE_STATIC);
        if (r->secret_env)
            sqlite3_bind_text(q, 3, r->secret_env, -1, SQLITE_STATIC);
        else
            sqlite3_bind_null(q, 3);
        sqlite3_bind_int(q, 4, r->connect_timeout_ms);
        sqlite3_bind_int(q, 5, r->timeout_ms);
        sqlite3_bind_int(q, 6, r->max_attempts);
        sqlite3_bind_int(q, 7, backoff_s);
        sqlite3_bind_int(q, 8, max_backoff_s);
        sqlite3_bind_int64(q, 9, n->created_at);
        if (sqlite3_step(q) != SQLITE_DONE) {
            sqlite3_finalize(q);
            return db_fail(s, err, "writing outbox");
        }
    }
    sqlite3_finalize(q);
    return 0;
}
