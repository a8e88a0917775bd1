/* history.c — queries behind `concord alerts`. */
#include "history.h"

#include <math.h>
#include <sqlite3.h>
#include "store_sqlite.h" /* temporary: step 2 moves this SQL into the store */

#include "state.h"

static int db_fail(cc_store *s, cc_error *err)
{
    return cc_error_set(err, CC_EIO, "%s: reading the alert tables: %s", cc_store_path(s),
                        sqlite3_errmsg(cc_store_db(s)));
}

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

int cc_history_evaluated(cc_store *s, const char *model)
{
    sqlite3_stmt *st = NULL;
    int yes = 0;
    if (sqlite3_prepare_v2(cc_store_db(s), "SELECT 1 FROM sqlite_master WHERE type = 'table' "
                                           "AND name = 'rule_state'",
                           -1, &st, NULL) == SQLITE_OK)
        yes = sqlite3_step(st) == SQLITE_ROW;
    sqlite3_finalize(st);
    if (!yes)
        return 0;
    yes = 0;
    if (sqlite3_prepare_v2(cc_store_db(s), "SELECT 1 FROM rule_state WHERE model = ?1 LIMIT 1",
                           -1, &st, NULL) == SQLITE_OK) {
        sqlite3_bind_text(st, 1, model, -1, SQLITE_STATIC);
        yes = sqlite3_step(st) == SQLITE_ROW;
    }
    sqlite3_finalize(st);
    return yes;
}

/* A reader opened a database on which no check ever ran: nothing to list. */
static int has_table(cc_store *s, const char *name)
{
    sqlite3_stmt *st = NULL;
    int yes = 0;
    if (sqlite3_prepare_v2(cc_store_db(s), "SELECT 1 FROM sqlite_master WHERE type = 'table' "
                                           "AND name = ?1",
                           -1, &st, NULL) == SQLITE_OK) {
        sqlite3_bind_text(st, 1, name, -1, SQLITE_STATIC);
        yes = sqlite3_step(st) == SQLITE_ROW;
    }
    sqlite3_finalize(st);
    return yes;
}

int cc_history_states(cc_store *s, const char *model, const char *state, cc_state_row_fn fn,
                      void *ctx, cc_error *err)
{
    int rc = cc_state_prepare(s, err);
    if (rc)
        return rc;
    if (!has_table(s, "rule_state"))
        return 0;
    sqlite3_stmt *st = NULL;
    if (sqlite3_prepare_v2(cc_store_db(s),
                           "SELECT model, rule, state, metric, urgency, since_day, last_day, "
                           "fired_day, breach_run, clear_run, last_value, last_bound "
                           "FROM rule_state WHERE (?1 IS NULL OR model = ?1) AND "
                           "(?2 IS NULL OR state = ?2) ORDER BY model, rule",
                           -1, &st, NULL) != SQLITE_OK)
        return db_fail(s, err);
    bind_opt(st, 1, model);
    bind_opt(st, 2, state);
    int step;
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        cc_state_row r = {text(st, 0),          text(st, 1),          text(st, 2),
                          text(st, 3),          text(st, 4),          sqlite3_column_int64(st, 5),
                          sqlite3_column_int64(st, 6), int_or(st, 7, -1),
                          sqlite3_column_int(st, 8), sqlite3_column_int(st, 9),
                          real_or_nan(st, 10),  real_or_nan(st, 11)};
        if (fn(ctx, &r))
            break;
    }
    rc = step == SQLITE_ROW || step == SQLITE_DONE ? 0 : db_fail(s, err);
    sqlite3_finalize(st);
    return rc;
}

int cc_history_notifications(cc_store *s, const char *model, const char *delivery, int limit,
                             cc_history_row_fn fn, void *ctx, cc_error *err)
{
    int rc = cc_state_prepare(s, err);
    if (rc)
        return rc;
    if (!has_table(s, "notifications") || !has_table(s, "outbox"))
        return 0;
    sqlite3_stmt *st = NULL;
    if (sqlite3_prepare_v2(
            cc_store_db(s),
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
            -1, &st, NULL) != SQLITE_OK)
        return db_fail(s, err);
    bind_opt(st, 1, model);
    bind_opt(st, 2, delivery);
    sqlite3_bind_int(st, 3, limit);
    int step;
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        cc_history_row r = {sqlite3_column_int64(st, 0),
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
    rc = step == SQLITE_ROW || step == SQLITE_DONE ? 0 : db_fail(s, err);
    sqlite3_finalize(st);
    return rc;
}
