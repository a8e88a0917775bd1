/* deliver.c — the outbox drain: claim, send, mark; backoff and dead letters. */
#include "deliver.h"

#include <math.h>
#include <sqlite3.h>
#include "store_sqlite.h" /* temporary: step 2 moves this SQL into the store */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "testpoint.h"

#define MAX_FAILED_RECEIVERS 64
#define LEASE_MARGIN_S 60

double cc_deliver_backoff(int attempts, int base_s, int cap_s, double u)
{
    double d = base_s * ldexp(1.0, attempts > 1 ? (attempts > 40 ? 40 : attempts - 1) : 0);
    if (d > cap_s)
        d = cap_s;
    return d * (0.5 + 0.5 * u);
}

static int db_fail(cc_store *s, cc_error *err, const char *what)
{
    return cc_error_set(err, CC_EIO, "%s: %s: %s", cc_store_path(s), what,
                        sqlite3_errmsg(cc_store_db(s)));
}

/* xorshift64*, for jitter only */
static double next_unit(uint64_t *x)
{
    *x ^= *x >> 12;
    *x ^= *x << 25;
    *x ^= *x >> 27;
    return (double)((*x * UINT64_C(2685821657736338717)) >> 11) / 9007199254740992.0;
}

typedef struct row {
    int64_t id;
    char *receiver, *secret_env, *body, *key, *kind;
    int connect_ms, timeout_ms, max_attempts, backoff_s, max_backoff_s, attempts;
} row;

static void row_clear(row *r)
{
    free(r->receiver);
    free(r->secret_env);
    free(r->body);
    free(r->key);
    free(r->kind);
    memset(r, 0, sizeof *r);
}

static char *col_text(sqlite3_stmt *st, int i)
{
    const unsigned char *t = sqlite3_column_text(st, i);
    return t ? strdup((const char *)t) : NULL;
}

static int failed_before(char **failed, int n, const char *receiver)
{
    for (int i = 0; i < n; i++)
        if (strcmp(failed[i], receiver) == 0)
            return 1;
    return 0;
}

/* Claims the next due row after `after` whose receiver has not failed in
 * this run: *found = 0 when there is none. */
static int claim(cc_store *s, const cc_deliver_opts *o, int64_t now, int64_t after,
                 char **failed, int n_failed, row *r, int *found, int *deferred, cc_error *err)
{
    sqlite3 *db = cc_store_db(s);
    sqlite3_stmt *st = NULL;
    int rc = cc_store_begin(s, err);
    *found = 0;
    if (rc)
        return rc;
    if (sqlite3_prepare_v2(db,
                           "SELECT o.outbox_id, o.receiver, o.secret_env, n.body, n.notice_id, "
                           "n.kind, o.connect_timeout_ms, o.timeout_ms, o.max_attempts, "
                           "o.backoff_s, o.max_backoff_s, o.attempts FROM outbox o JOIN "
                           "notifications n USING (notification_id) WHERE o.status = 'pending' "
                           "AND o.outbox_id > ?1 AND (?2 OR o.next_at <= ?3) "
                           "ORDER BY o.outbox_id",
                           -1, &st, NULL) != SQLITE_OK) {
        rc = db_fail(s, err, "reading outbox");
        cc_store_rollback(s);
        return rc;
    }
    sqlite3_bind_int64(st, 1, after);
    sqlite3_bind_int(st, 2, o->ignore_backoff);
    sqlite3_bind_int64(st, 3, now);
    int step;
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        const char *recv = (const char *)sqlite3_column_text(st, 1);
        if (failed_before(failed, n_failed, recv)) {
            (*deferred)++;
            continue;
        }
        r->id = sqlite3_column_int64(st, 0);
        r->receiver = col_text(st, 1);
        r->secret_env = col_text(st, 2);
        r->body = col_text(st, 3);
        r->key = col_text(st, 4);
        r->kind = col_text(st, 5);
        r->connect_ms = sqlite3_column_int(st, 6);
        r->timeout_ms = sqlite3_column_int(st, 7);
        r->max_attempts = sqlite3_column_int(st, 8);
        r->backoff_s = sqlite3_column_int(st, 9);
        r->max_backoff_s = sqlite3_column_int(st, 10);
        r->attempts = sqlite3_column_int(st, 11);
        *found = 1;
        break;
    }
    sqlite3_finalize(st);
    if (step != SQLITE_ROW && step != SQLITE_DONE) {
        cc_store_rollback(s);
        return db_fail(s, err, "reading outbox");
    }
    if (*found) {
        if (!r->receiver || !r->body || !r->key) {
            cc_store_rollback(s);
            return cc_error_set(err, CC_ENOMEM, "out of memory");
        }
        int64_t lease = now + (r->connect_ms + r->timeout_ms) / 1000 + LEASE_MARGIN_S;
        char sql[128];
        snprintf(sql, sizeof sql, "UPDATE outbox SET next_at = %lld WHERE outbox_id = %lld",
                 (long long)lease, (long long)r->id);
        if (sqlite3_exec(db, sql, NULL, NULL, NULL) != SQLITE_OK) {
            rc = db_fail(s, err, "claiming an outbox row");
            cc_store_rollback(s);
            return rc;
        }
    }
    return cc_store_commit(s, err);
}

static int mark(cc_store *s, const row *r, int ok, long status, const char *error, int dead,
                int64_t now, int64_t next_at, cc_error *err)
{
    sqlite3_stmt *st = NULL;
    if (sqlite3_prepare_v2(cc_store_db(s),
                           "UPDATE outbox SET status = ?2, attempts = attempts + 1, "
                           "last_status = ?3, last_error = ?4, next_at = ?5, sent_at = ?6 "
                           "WHERE outbox_id = ?1", -1, &st, NULL) != SQLITE_OK)
        return db_fail(s, err, "updating outbox");
    sqlite3_bind_int64(st, 1, r->id);
    sqlite3_bind_text(st, 2, ok ? "sent" : dead ? "dead" : "pending", -1, SQLITE_STATIC);
    if (status > 0)
        sqlite3_bind_int64(st, 3, status);
    else
        sqlite3_bind_null(st, 3);
    if (ok)
        sqlite3_bind_null(st, 4);
    else
        sqlite3_bind_text(st, 4, error, -1, SQLITE_TRANSIENT);
    sqlite3_bind_int64(st, 5, next_at);
    if (ok)
        sqlite3_bind_int64(st, 6, now);
    else
        sqlite3_bind_null(st, 6);
    int rc = sqlite3_step(st);
    sqlite3_finalize(st);
    return rc == SQLITE_DONE ? 0 : db_fail(s, err, "updating outbox");
}

static int count(cc_store *s, const char *status, int64_t *out, cc_error *err)
{
    sqlite3_stmt *st = NULL;
    if (sqlite3_prepare_v2(cc_store_db(s), "SELECT count(*) FROM outbox WHERE status = ?1", -1,
                           &st, NULL) != SQLITE_OK)
        return db_fail(s, err, "reading outbox");
    sqlite3_bind_text(st, 1, status, -1, SQLITE_STATIC);
    int rc = sqlite3_step(st);
    *out = rc == SQLITE_ROW ? sqlite3_column_int64(st, 0) : 0;
    sqlite3_finalize(st);
    return rc == SQLITE_ROW ? 0 : db_fail(s, err, "reading outbox");
}

int cc_deliver_run(cc_store *s, const cc_deliver_opts *o, cc_deliver_stats *stats,
                   cc_error *err)
{
    memset(stats, 0, sizeof *stats);
    int64_t now = o->now > 0 ? o->now : (int64_t)time(NULL);
    uint64_t seed = o->seed ? o->seed
                            : ((uint64_t)time(NULL) << 20) ^ (uint64_t)getpid() ^ UINT64_C(0x9e37);
    cc_webhook_sender send = o->send ? o->send : cc_webhook_post;
    char *failed[MAX_FAILED_RECEIVERS];
    int n_failed = 0, rc = 0;
    int64_t after = 0;
    for (int sends = 0; sends < o->max_sends; sends++) {
        row r = {0};
        int found = 0;
        if ((rc = claim(s, o, now, after, failed, n_failed, &r, &found, &stats->deferred, err)))
            break;
        if (!found)
            break;
        after = r.id;
        cc_webhook_response res = {0, ""};
        const char *secret = NULL;
        int is_file = strncmp(r.receiver, "file:", 5) == 0;
        int ok;
        if (r.secret_env && !is_file && !(secret = getenv(r.secret_env))) {
            snprintf(res.error, sizeof res.error,
                     "environment variable %s (the signing secret) is not set", r.secret_env);
            ok = 0;
        } else {
            cc_webhook_request req = {r.receiver, r.body,      strlen(r.body), secret,
                                      now,        r.key,       r.connect_ms,   r.timeout_ms};
            ok = send(o->send_ctx, &req, &res) == 0;
        }
        cc_testpoint("deliver-sent");
        int attempts = r.attempts + 1;
        int dead = !ok && attempts >= r.max_attempts;
        int64_t next_at = now;
        if (!ok && !dead)
            next_at = now + (int64_t)ceil(cc_deliver_backoff(attempts, r.backoff_s,
                                                             r.max_backoff_s, next_unit(&seed)));
        rc = mark(s, &r, ok, res.status, res.error, dead, now, next_at, err);
        if (ok)
            stats->sent++;
        else if (dead)
            stats->dead++;
        else
            stats->failed++;
        if (o->on_event) {
            cc_deliver_event e = {r.receiver, r.key, ok, dead, attempts, res.status,
                                  res.error, next_at};
            o->on_event(o->event_ctx, &e);
        }
        if (!ok && n_failed < MAX_FAILED_RECEIVERS)
            failed[n_failed++] = r.receiver;
        else
            free(r.receiver);
        r.receiver = NULL;
        row_clear(&r);
        if (rc)
            break;
    }
    for (int i = 0; i < n_failed; i++)
        free(failed[i]);
    if (!rc)
        rc = count(s, "pending", &stats->pending, err);
    if (!rc)
        rc = count(s, "dead", &stats->dead_total, err);
    return rc;
}

int cc_deliver_requeue_dead(cc_store *s, int64_t now, int *n, cc_error *err)
{
    sqlite3_stmt *st = NULL;
    *n = 0;
    if (sqlite3_prepare_v2(cc_store_db(s),
                           "UPDATE outbox SET status = 'pending', attempts = 0, next_at = ?1 "
                           "WHERE status = 'dead'", -1, &st, NULL) != SQLITE_OK)
        return db_fail(s, err, "updating outbox");
    sqlite3_bind_int64(st, 1, now);
    int rc = sqlite3_step(st);
    sqlite3_finalize(st);
    if (rc != SQLITE_DONE)
        return db_fail(s, err, "updating outbox");
    *n = sqlite3_changes(cc_store_db(s));
    return 0;
}
