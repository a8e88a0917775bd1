/* store_alerts.c — the SQLite backend's alert tables: rule_state,
 * notifications and outbox (created by the schema in store.c). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "store_sqlite.h"

static const char *text(sqlite3_stmt *st, int i)
{
    return (const char *)sqlite3_column_text(st, i);
}

static double real_or_nan(sqlite3_stmt *st, int i)
{
    return sqlite3_column_type(st, i) == SQLITE_NULL ? NAN : sqlite3_column_double(st, i);
}

static int64_t int_or(sqlite3_stmt *st, int i, int64_t dflt)
{
    return sqlite3_column_type(st, i) == SQLITE_NULL ? dflt : sqlite3_column_int64(st, i);
}

static void bind_opt(sqlite3_stmt *st, int i, const char *v)
{
    if (v)
        sqlite3_bind_text(st, i, v, -1, SQLITE_STATIC);
    else
        sqlite3_bind_null(st, i);
}

static void bind_real(sqlite3_stmt *st, int i, double x)
{
    if (isfinite(x))
        sqlite3_bind_double(st, i, x);
    else
        sqlite3_bind_null(st, i);
}

/* Days and times below 0 mean "none" and are stored as NULL. */
static void bind_day(sqlite3_stmt *st, int i, int64_t d)
{
    if (d >= 0)
        sqlite3_bind_int64(st, i, d);
    else
        sqlite3_bind_null(st, i);
}

static int prepare(sq_store *s, const char *sql, sqlite3_stmt **st, const char *what,
                   cc_error *err)
{
    if (sqlite3_prepare_v2(s->db, sql, -1, st, NULL) != SQLITE_OK)
        return cc_sq_error(s, err, what);
    return 0;
}

int cc_sq_rule_states(cc_store *store, const char *model, const char *rule, const char *state,
                      cc_rule_state_fn fn, void *ctx, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    if (!cc_sq_has_table(s, "rule_state")) /* a reader on a file of schema 3 or older */
        return 0;
    int rc = prepare(s,
                     "SELECT model, rule, state, metric, urgency, since_day, last_day, "
                     "fired_day, breach_run, clear_run, last_value, last_bound, "
                     "last_notified_day, updated_at FROM rule_state "
                     "WHERE (?1 IS NULL OR model = ?1) AND (?2 IS NULL OR rule = ?2) AND "
                     "(?3 IS NULL OR state = ?3) ORDER BY model, rule",
                     &st, "reading rule_state", err);
    if (rc)
        return rc;
    bind_opt(st, 1, model);
    bind_opt(st, 2, rule);
    bind_opt(st, 3, state);
    int step;
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        cc_rule_state_rec r = {text(st, 0),
                               text(st, 1),
                               text(st, 2),
                               text(st, 3),
                               text(st, 4),
                               sqlite3_column_int64(st, 5),
                               sqlite3_column_int64(st, 6),
                               int_or(st, 7, -1),
                               sqlite3_column_int(st, 8),
                               sqlite3_column_int(st, 9),
                               real_or_nan(st, 10),
                               real_or_nan(st, 11),
                               int_or(st, 12, -1),
                               sqlite3_column_int64(st, 13)};
        if (fn(ctx, &r))
            break;
    }
    if (step != SQLITE_ROW && step != SQLITE_DONE)
        rc = cc_sq_error(s, err, "reading rule_state");
    sqlite3_finalize(st);
    return rc;
}

int cc_sq_rule_state_put(cc_store *store, const cc_rule_state_rec *r, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *q = NULL;
    int rc = prepare(s,
                     "INSERT OR REPLACE INTO rule_state(model, rule, state, breach_run, "
                     "clear_run, last_day, since_day, fired_day, last_notified_day, "
                     "metric, urgency, last_value, last_bound, updated_at) VALUES "
                     "(?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14)",
                     &q, "writing rule_state", err);
    if (rc)
        return rc;
    sqlite3_bind_text(q, 1, r->model, -1, SQLITE_STATIC);
    sqlite3_bind_text(q, 2, r->rule, -1, SQLITE_STATIC);
    sqlite3_bind_text(q, 3, r->state, -1, SQLITE_STATIC);
    sqlite3_bind_int(q, 4, r->breach_run);
    sqlite3_bind_int(q, 5, r->clear_run);
    sqlite3_bind_int64(q, 6, r->last_day);
    sqlite3_bind_int64(q, 7, r->since_day);
    bind_day(q, 8, r->fired_day);
    bind_day(q, 9, r->last_notified_day);
    sqlite3_bind_text(q, 10, r->metric, -1, SQLITE_STATIC);
    sqlite3_bind_text(q, 11, r->urgency, -1, SQLITE_STATIC);
    bind_real(q, 12, r->last_value);
    bind_real(q, 13, r->last_bound);
    sqlite3_bind_int64(q, 14, r->updated_at);
    int step = sqlite3_step(q);
    sqlite3_finalize(q);
    return step == SQLITE_DONE ? 0 : cc_sq_error(s, err, "writing rule_state");
}

int cc_sq_notice_add(cc_store *store, const cc_notice_rec *n, const cc_outbox_target *targets,
                     int n_targets, int *added, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *q = NULL;
    *added = 0;
    int rc = prepare(s,
                     "INSERT OR IGNORE INTO notifications(notice_id, model, rule, kind, "
                     "urgency, day, window_day, value, bound, body, created_at) VALUES "
                     "(?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11)",
                     &q, "writing notifications", err);
    if (rc)
        return rc;
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
    int step = sqlite3_step(q);
    sqlite3_finalize(q);
    if (step != SQLITE_DONE)
        return cc_sq_error(s, err, "writing notifications");
    if (sqlite3_changes(s->db) == 0)
        return 0;
    int64_t id = sqlite3_last_insert_rowid(s->db);
    *added = 1;
    if ((rc = prepare(s,
                      "INSERT OR IGNORE INTO outbox(notification_id, receiver, secret_env, "
                      "connect_timeout_ms, timeout_ms, max_attempts, backoff_s, "
                      "max_backoff_s, status, attempts, next_at) VALUES "
                      "(?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, 'pending', 0, ?9)",
                      &q, "writing outbox", err)))
        return rc;
    for (int i = 0; i < n_targets; i++) {
        const cc_outbox_target *t = &targets[i];
        sqlite3_reset(q);
        sqlite3_bind_int64(q, 1, id);
        sqlite3_bind_text(q, 2, t->receiver, -1, SQLITE_STATIC);
        bind_opt(q, 3, t->secret_env);
        sqlite3_bind_int(q, 4, t->connect_timeout_ms);
        sqlite3_bind_int(q, 5, t->timeout_ms);
        sqlite3_bind_int(q, 6, t->max_attempts);
        sqlite3_bind_int(q, 7, t->backoff_s);
        sqlite3_bind_int(q, 8, t->max_backoff_s);
        sqlite3_bind_int64(q, 9, n->created_at);
        if (sqlite3_step(q) != SQLITE_DONE) {
            rc = cc_sq_error(s, err, "writing outbox");
            sqlite3_finalize(q);
            return rc;
        }
    }
    sqlite3_finalize(q);
    return 0;
}

int cc_sq_notices(cc_store *store, const char *model, const char *delivery, int limit,
                  cc_notice_row_fn fn, void *ctx, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    if (!cc_sq_has_table(s, "notifications") || !cc_sq_has_table(s, "outbox"))
        return 0;
    int rc = prepare(
        s,
        "SELECT n.notification_id, n.notice_id, n.model, n.rule, n.kind, n.urgency, "
        "n.body, n.day, n.window_day, n.created_at, n.value, n.bound, o.receiver, o.status, "
        "o.attempts, o.next_at, o.sent_at, o.last_status, o.last_error "
        "FROM (SELECT * FROM notifications WHERE (?1 IS NULL OR model = ?1) AND "
        "      (?2 IS NULL OR notification_id IN "
        "       (SELECT notification_id FROM outbox WHERE status = ?2)) "
        "      ORDER BY notification_id DESC LIMIT ?3) n "
        "LEFT JOIN outbox o ON o.notification_id = n.notification_id "
        "     AND (?2 IS NULL OR o.status = ?2) "
        "ORDER BY n.notification_id DESC, o.outbox_id",
        &st, "reading the alert tables", err);
    if (rc)
        return rc;
    bind_opt(st, 1, model);
    bind_opt(st, 2, delivery);
    sqlite3_bind_int(st, 3, limit);
    int step;
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        cc_notice_row r = {sqlite3_column_int64(st, 0),
                           text(st, 1),
                           text(st, 2),
                           text(st, 3),
                           text(st, 4),
                           text(st, 5),
                           text(st, 6),
                           sqlite3_column_int64(st, 7),
                           sqlite3_column_int64(st, 8),
                           sqlite3_column_int64(st, 9),
                           real_or_nan(st, 10),
                           real_or_nan(st, 11),
                           text(st, 12),
                           text(st, 13),
                           sqlite3_column_int(st, 14),
                           int_or(st, 15, -1),
                           int_or(st, 16, -1),
                           (long)int_or(st, 17, 0),
                           text(st, 18)};
        if (fn(ctx, &r))
            break;
    }
    if (step != SQLITE_ROW && step != SQLITE_DONE)
        rc = cc_sq_error(s, err, "reading the alert tables");
    sqlite3_finalize(st);
    return rc;
}

void cc_outbox_row_clear(cc_outbox_row *r)
{
    free(r->receiver);
    free(r->secret_env);
    free(r->body);
    free(r->notice_id);
    free(r->kind);
    memset(r, 0, sizeof *r);
}

static char *col_dup(sqlite3_stmt *st, int i)
{
    const unsigned char *t = sqlite3_column_text(st, i);
    return t ? strdup((const char *)t) : NULL;
}

/* The read and the lease happen in one unit of work, so two processes never
 * claim the same row. */
int cc_sq_outbox_claim(cc_store *store, int64_t after, int64_t now, int ignore_due,
                       int lease_margin_s, cc_outbox_skip_fn skip, void *ctx,
                       cc_outbox_row *r, int *found, int *skipped, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    *found = 0;
    memset(r, 0, sizeof *r);
    int rc = cc_store_work_begin(store, err);
    if (rc)
        return rc;
    if ((rc = prepare(s,
                      "SELECT o.outbox_id, o.receiver, o.secret_env, n.body, n.notice_id, "
                      "n.kind, o.connect_timeout_ms, o.timeout_ms, o.max_attempts, "
                      "o.backoff_s, o.max_backoff_s, o.attempts FROM outbox o JOIN "
                      "notifications n USING (notification_id) WHERE o.status = 'pending' "
                      "AND o.outbox_id > ?1 AND (?2 OR o.next_at <= ?3) "
                      "ORDER BY o.outbox_id",
                      &st, "reading outbox", err))) {
        cc_store_work_abort(store);
        return rc;
    }
    sqlite3_bind_int64(st, 1, after);
    sqlite3_bind_int(st, 2, ignore_due);
    sqlite3_bind_int64(st, 3, now);
    int step;
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        if (skip && skip(ctx, text(st, 1))) {
            (*skipped)++;
            continue;
        }
        r->id = sqlite3_column_int64(st, 0);
        r->receiver = col_dup(st, 1);
        r->secret_env = col_dup(st, 2);
        r->body = col_dup(st, 3);
        r->notice_id = col_dup(st, 4);
        r->kind = col_dup(st, 5);
        r->connect_timeout_ms = sqlite3_column_int(st, 6);
        r->timeout_ms = sqlite3_column_int(st, 7);
        r->max_attempts = sqlite3_column_int(st, 8);
        r->backoff_s = sqlite3_column_int(st, 9);
        r->max_backoff_s = sqlite3_column_int(st, 10);
        r->attempts = sqlite3_column_int(st, 11);
        *found = 1;
        break;
    }
    if (step != SQLITE_ROW && step != SQLITE_DONE)
        rc = cc_sq_error(s, err, "reading outbox");
    sqlite3_finalize(st);
    if (!rc && *found && (!r->receiver || !r->body || !r->notice_id))
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
    if (!rc && *found) {
        int64_t lease = now + (r->connect_timeout_ms + r->timeout_ms) / 1000 + lease_margin_s;
        char sql[128];
        snprintf(sql, sizeof sql, "UPDATE outbox SET next_at = %lld WHERE outbox_id = %lld",
                 (long long)lease, (long long)r->id);
        rc = cc_sq_exec(s, sql, err);
    }
    if (rc) {
        cc_store_work_abort(store);
        cc_outbox_row_clear(r);
        *found = 0;
        return rc;
    }
    return cc_store_work_commit(store, err);
}

int cc_sq_outbox_mark(cc_store *store, int64_t id, const char *status, long http_status,
                      const char *error, int64_t next_at, int64_t sent_at, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    int rc = prepare(s,
                     "UPDATE outbox SET status = ?2, attempts = attempts + 1, "
                     "last_status = ?3, last_error = ?4, next_at = ?5, sent_at = ?6 "
                     "WHERE outbox_id = ?1",
                     &st, "updating outbox", err);
    if (rc)
        return rc;
    sqlite3_bind_int64(st, 1, id);
    sqlite3_bind_text(st, 2, status, -1, SQLITE_STATIC);
    if (http_status > 0)
        sqlite3_bind_int64(st, 3, http_status);
    else
        sqlite3_bind_null(st, 3);
    if (error)
        sqlite3_bind_text(st, 4, error, -1, SQLITE_TRANSIENT);
    else
        sqlite3_bind_null(st, 4);
    sqlite3_bind_int64(st, 5, next_at);
    bind_day(st, 6, sent_at);
    int step = sqlite3_step(st);
    sqlite3_finalize(st);
    return step == SQLITE_DONE ? 0 : cc_sq_error(s, err, "updating outbox");
}

int cc_sq_outbox_count(cc_store *store, const char *status, int64_t *out, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    *out = 0;
    if (!cc_sq_has_table(s, "outbox"))
        return 0;
    int rc = prepare(s, "SELECT count(*) FROM outbox WHERE status = ?1", &st, "reading outbox",
                     err);
    if (rc)
        return rc;
    sqlite3_bind_text(st, 1, status, -1, SQLITE_STATIC);
    int step = sqlite3_step(st);
    if (step == SQLITE_ROW)
        *out = sqlite3_column_int64(st, 0);
    sqlite3_finalize(st);
    return step == SQLITE_ROW ? 0 : cc_sq_error(s, err, "reading outbox");
}

int cc_sq_outbox_requeue_dead(cc_store *store, int64_t now, int *n, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    *n = 0;
    int rc = prepare(s,
                     "UPDATE outbox SET status = 'pending', attempts = 0, next_at = ?1 "
                     "WHERE status = 'dead'",
                     &st, "updating outbox", err);
    if (rc)
        return rc;
    sqlite3_bind_int64(st, 1, now);
    int step = sqlite3_step(st);
    sqlite3_finalize(st);
    if (step != SQLITE_DONE)
        return cc_sq_error(s, err, "updating outbox");
    *n = sqlite3_changes(s->db);
    return 0;
}
