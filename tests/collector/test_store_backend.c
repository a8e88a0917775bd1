/* test_store_backend.c — the store seam: the SQLite backend through the
 * public calls that dispatch to it (round trips of rule states,
 * notifications and the outbox, follow offsets, the review's scan and read
 * by id, the newest labelled day), a unit of work kept or discarded whole,
 * nested snapshots, the upgrade of a version 3 file whose alert tables were
 * made outside the schema, and a backend without write ops (or built against
 * a shorter table) giving clear errors instead of crashing. */
#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "check.h"
#include "store.h"
#include "store_backend.h"
#include "store_sqlite.h" /* cc_store_db: inspects the SQLite file directly */
#include "summary.h"

static void remove_db(const char *path)
{
    char side[160];
    unlink(path);
    snprintf(side, sizeof side, "%s-wal", path);
    unlink(side);
    snprintf(side, sizeof side, "%s-shm", path);
    unlink(side);
}

static int64_t query_int(cc_store *s, const char *sql)
{
    sqlite3_stmt *st = NULL;
    int64_t v = -999;
    if (sqlite3_prepare_v2(cc_store_db(s), sql, -1, &st, NULL) == SQLITE_OK &&
        sqlite3_step(st) == SQLITE_ROW)
        v = sqlite3_column_int64(st, 0);
    sqlite3_finalize(st);
    return v;
}

/* ---- rule states ---- */

typedef struct states_seen {
    int n;
    char rules[4][32];
    char state[4][32];
    int64_t fired_day[4], last_notified[4], updated_at[4];
    double value[4], bound[4];
} states_seen;

static int on_state(void *ctx, const cc_rule_state_rec *r)
{
    states_seen *s = ctx;
    if (s->n < 4) {
        snprintf(s->rules[s->n], sizeof s->rules[0], "%s/%s", r->model, r->rule);
        snprintf(s->state[s->n], sizeof s->state[0], "%s", r->state);
        s->fired_day[s->n] = r->fired_day;
        s->last_notified[s->n] = r->last_notified_day;
        s->updated_at[s->n] = r->updated_at;
        s->value[s->n] = r->last_value;
        s->bound[s->n] = r->last_bound;
    }
    s->n++;
    return 0;
}

static void rule_states(cc_store *s)
{
    cc_error err = CC_ERROR_INIT;
    cc_rule_state_rec a = {"m1", "split", "raised", "diversity.disagreement.mean", "high",
                           20500, 20510, 20505, 3, 0, 0.75, 0.5, 20505, 1772323200};
    cc_rule_state_rec b = {"m1", "calm", "quiet", "labels.age_days", "low",
                           20500, 20510, -1, 0, 4, NAN, NAN, -1, 1772323201};
    cc_rule_state_rec c = {"m2", "split", "building", "diversity.disagreement.mean", "medium",
                           20509, 20510, -1, 1, 0, 0.6, 0.5, -1, 1772323202};
    CHECK(cc_store_work_begin(s, &err) == 0);
    CHECK(cc_store_rule_state_put(s, &a, &err) == 0);
    CHECK(cc_store_rule_state_put(s, &b, &err) == 0);
    CHECK(cc_store_rule_state_put(s, &c, &err) == 0);
    a.state = "cleared"; /* a second put replaces */
    CHECK(cc_store_rule_state_put(s, &a, &err) == 0);
    CHECK(cc_store_work_commit(s, &err) == 0);

    states_seen all = {0};
    CHECK(cc_store_rule_states(s, NULL, NULL, NULL, on_state, &all, &err) == 0);
    /* ordered by model, then rule */
    CHECK(all.n == 3 && strcmp(all.rules[0], "m1/calm") == 0 &&
          strcmp(all.rules[1], "m1/split") == 0 && strcmp(all.rules[2], "m2/split") == 0);
    CHECK(strcmp(all.state[1], "cleared") == 0 && all.fired_day[1] == 20505 &&
          all.last_notified[1] == 20505 && all.updated_at[1] == 1772323200 &&
          all.value[1] == 0.75 && all.bound[1] == 0.5);
    /* undefined stays undefined: -1 days, NAN values */
    CHECK(all.fired_day[0] == -1 && all.last_notified[0] == -1 && isnan(all.value[0]) &&
          isnan(all.bound[0]));

    states_seen one = {0};
    CHECK(cc_store_rule_states(s, "m2", "split", NULL, on_state, &one, &err) == 0);
    CHECK(one.n == 1 && strcmp(one.state[0], "building") == 0);
    states_seen by_state = {0};
    CHECK(cc_store_rule_states(s, NULL, NULL, "quiet", on_state, &by_state, &err) == 0);
    CHECK(by_state.n == 1 && strcmp(by_state.rules[0], "m1/calm") == 0);
    states_seen none = {0};
    CHECK(cc_store_rule_states(s, "nobody", NULL, NULL, on_state, &none, &err) == 0);
    CHECK(none.n == 0);
}

/* ---- notifications and the outbox ---- */

typedef struct notices_seen {
    int n;
    int64_t ids[8];
    char receivers[8][64];
    char status[8][16];
    int attempts[8];
    long last_status[8];
    int64_t sent_at[8];
} notices_seen;

static int on_notice(void *ctx, const cc_notice_row *r)
{
    notices_seen *s = ctx;
    if (s->n < 8) {
        s->ids[s->n] = r->id;
        snprintf(s->receivers[s->n], sizeof s->receivers[0], "%s",
                 r->receiver ? r->receiver : "-");
        snprintf(s->status[s->n], sizeof s->status[0], "%s", r->status ? r->status : "-");
        s->attempts[s->n] = r->attempts;
        s->last_status[s->n] = r->last_status;
        s->sent_at[s->n] = r->sent_at;
    }
    s->n++;
    return 0;
}

static int skip_down(void *ctx, const char *receiver)
{
    return strcmp(receiver, (const char *)ctx) == 0;
}

static void outbox(cc_store *s)
{
    cc_error err = CC_ERROR_INIT;
    const int64_t now = 1772400000;
    cc_outbox_target t[2] = {
        {"http://127.0.0.1:9/down", NULL, 2000, 5000, 3, 30, 600},
        {"file:/tmp/sink.jsonl", "SECRET_ENV", 1000, 4000, 5, 10, 300},
    };
    cc_notice_rec n1 = {"m1/split/raised/2026-03-01", "m1", "split", "raised", "high",
                        20513, 20513, 0.9, 0.5, "{\"a\":1}", now};
    cc_notice_rec n2 = {"m1/split/cleared/2026-03-05", "m1", "split", "cleared", "high",
                        20517, 20517, NAN, 0.5, "{\"b\":2}", now};
    int added = -1;
    CHECK(cc_store_work_begin(s, &err) == 0);
    CHECK(cc_store_notice_add(s, &n1, t, 2, &added, &err) == 0 && added == 1);
    CHECK(cc_store_notice_add(s, &n1, t, 2, &added, &err) == 0 && added == 0); /* same id */
    CHECK(cc_store_notice_add(s, &n2, t, 1, &added, &err) == 0 && added == 1);
    CHECK(cc_store_work_commit(s, &err) == 0);

    int64_t pending = -1;
    CHECK(cc_store_outbox_count(s, "pending", &pending, &err) == 0 && pending == 3);

    /* claim: the down receiver is passed over (counted), the file sink is claimed */
    cc_outbox_row r;
    int found = 0, skipped = 0;
    CHECK(cc_store_outbox_claim(s, 0, now, 0, 60, skip_down, (void *)t[0].receiver, &r,
                                &found, &skipped, &err) == 0);
    CHECK(found == 1 && skipped == 1 && strcmp(r.receiver, t[1].receiver) == 0 &&
          strcmp(r.secret_env, "SECRET_ENV") == 0 && strcmp(r.body, "{\"a\":1}") == 0 &&
          strcmp(r.notice_id, n1.notice_id) == 0 && strcmp(r.kind, "raised") == 0 &&
          r.connect_timeout_ms == 1000 && r.timeout_ms == 4000 && r.max_attempts == 5 &&
          r.backoff_s == 10 && r.max_backoff_s == 300 && r.attempts == 0);
    int64_t claimed = r.id;
    /* leased: next_at = now + (1000 + 4000) ms + 60 s */
    char sql[128];
    snprintf(sql, sizeof sql, "SELECT next_at FROM outbox WHERE outbox_id = %lld",
             (long long)claimed);
    CHECK(query_int(s, sql) == now + 5 + 60);
    cc_outbox_row_clear(&r);
    CHECK(r.receiver == NULL && r.body == NULL);
    /* a second claim from the start skips the leased row (not due) */
    found = 0;
    skipped = 0;
    CHECK(cc_store_outbox_claim(s, 0, now, 0, 60, skip_down, (void *)t[0].receiver, &r,
                                &found, &skipped, &err) == 0);
    CHECK(found == 0 && skipped == 2);
    /* ignore_due takes it anyway; after = its id passes it */
    CHECK(cc_store_outbox_claim(s, 0, now, 1, 60, skip_down, (void *)t[0].receiver, &r,
                                &found, &skipped, &err) == 0 && found && r.id == claimed);
    cc_outbox_row_clear(&r);
    CHECK(cc_store_outbox_claim(s, claimed, now, 1, 60, skip_down, (void *)t[0].receiver, &r,
                                &found, &skipped, &err) == 0 && !found);

    /* marks: sent, and a dead letter for the other receiver's first row */
    CHECK(cc_store_outbox_mark(s, claimed, "sent", 204, NULL, now, now, &err) == 0);
    int64_t down_id = query_int(s, "SELECT min(outbox_id) FROM outbox WHERE receiver = "
                                   "'http://127.0.0.1:9/down'");
    CHECK(cc_store_outbox_mark(s, down_id, "dead", 0, "connection refused", now + 30, -1,
                               &err) == 0);
    int64_t sent = -1, dead = -1;
    CHECK(cc_store_outbox_count(s, "sent", &sent, &err) == 0 && sent == 1);
    CHECK(cc_store_outbox_count(s, "dead", &dead, &err) == 0 && dead == 1);

    /* the listing: newest first, each notification with its rows */
    notices_seen all = {0};
    CHECK(cc_store_notices(s, NULL, NULL, 10, on_notice, &all, &err) == 0);
    CHECK(all.n == 3 && all.ids[0] > all.ids[1] && all.ids[1] == all.ids[2]);
    CHECK(strcmp(all.status[1], "dead") == 0 && all.attempts[1] == 1 &&
          all.last_status[1] == 0 && all.sent_at[1] == -1);
    CHECK(strcmp(all.status[2], "sent") == 0 && all.attempts[2] == 1 &&
          all.last_status[2] == 204 && all.sent_at[2] == now);
    notices_seen dead_only = {0};
    CHECK(cc_store_notices(s, "m1", "dead", 10, on_notice, &dead_only, &err) == 0);
    CHECK(dead_only.n == 1 && strcmp(dead_only.receivers[0], "http://127.0.0.1:9/down") == 0);
    notices_seen limited = {0};
    CHECK(cc_store_notices(s, NULL, NULL, 1, on_notice, &limited, &err) == 0);
    CHECK(limited.n == 1 && limited.ids[0] == all.ids[0]);
    notices_seen other = {0};
    CHECK(cc_store_notices(s, "m2", NULL, 10, on_notice, &other, &err) == 0 && other.n == 0);

    /* dead letters back to pending with their attempts reset */
    int requeued = -1;
    CHECK(cc_store_outbox_requeue_dead(s, now + 100, &requeued, &err) == 0 && requeued == 1);
    snprintf(sql, sizeof sql, "SELECT attempts * 1000000000000 + next_at FROM outbox "
                              "WHERE outbox_id = %lld AND status = 'pending'",
             (long long)down_id);
    CHECK(query_int(s, sql) == now + 100);
}

/* ---- follow offsets, and a unit of work kept or lost whole ---- */

static void follow_and_units(cc_store *s, const cc_model *m)
{
    cc_error err = CC_ERROR_INIT;
    cc_follow_offset o = {0}, got = {0};
    int found = -1, inserted = 0;
    CHECK(cc_store_follow_offset_get(s, "/logs/a.jsonl", &found, &got, &err) == 0 && !found);

    /* discarded: the row and the offset go together */
    float p[4] = {0.7f, 0.3f, 0.6f, 0.4f};
    o = (cc_follow_offset){UINT64_C(2049), UINT64_C(1234567), 4096, 17};
    CHECK(cc_store_work_begin(s, &err) == 0);
    CHECK(cc_store_event_insert(s, m, "lost", 4, 1772323200, NULL, 0, 0, -1, p, &inserted,
                                &err) == 0 && inserted);
    CHECK(cc_store_follow_offset_set(s, "/logs/a.jsonl", &o, 1772400000, &err) == 0);
    cc_store_work_abort(s);
    CHECK(cc_store_follow_offset_get(s, "/logs/a.jsonl", &found, &got, &err) == 0 && !found);
    cc_stored_event ev;
    float back[4];
    CHECK(cc_store_event_get(s, m, "lost", 4, &found, &ev, back, &err) == 0 && !found);

    /* committed: both are there */
    CHECK(cc_store_work_begin(s, &err) == 0);
    CHECK(cc_store_event_insert(s, m, "kept", 4, 1772323200, NULL, 0, 0, -1, p, &inserted,
                                &err) == 0 && inserted);
    CHECK(cc_store_follow_offset_set(s, "/logs/a.jsonl", &o, 1772400000, &err) == 0);
    CHECK(cc_store_work_commit(s, &err) == 0);
    CHECK(cc_store_follow_offset_get(s, "/logs/a.jsonl", &found, &got, &err) == 0 && found &&
          got.dev == 2049 && got.ino == 1234567 && got.offset == 4096 && got.line == 17);
    CHECK(cc_store_event_get(s, m, "kept", 4, &found, &ev, back, &err) == 0 && found);
    /* a later offset replaces the earlier one */
    o.offset = 8192;
    o.line = 40;
    CHECK(cc_store_work_begin(s, &err) == 0 &&
          cc_store_follow_offset_set(s, "/logs/a.jsonl", &o, 1772400100, &err) == 0 &&
          cc_store_work_commit(s, &err) == 0);
    CHECK(cc_store_follow_offset_get(s, "/logs/a.jsonl", &found, &got, &err) == 0 && found &&
          got.offset == 8192 && got.line == 40);
    CHECK(query_int(s, "SELECT updated_at FROM follow_offsets") == 1772400100);
}

/* ---- the review's reads ---- */

typedef struct scan_seen {
    int n;
    char ids[8][16];
    int labels[8];
    float p0[8];
    int stop_after;
} scan_seen;

static int on_event(void *ctx, const char *id, int64_t ts, int label, const float *probs)
{
    scan_seen *s = ctx;
    (void)ts;
    if (s->n < 8) {
        snprintf(s->ids[s->n], sizeof s->ids[0], "%s", id);
        s->labels[s->n] = label;
        s->p0[s->n] = probs[0];
    }
    s->n++;
    return s->stop_after && s->n >= s->stop_after ? 7 : 0;
}

static void review_reads(cc_store *s, const cc_model *m)
{
    cc_error err = CC_ERROR_INIT;
    /* 2026-03-01 = day 20513 = 1772323200 */
    const int64_t d0 = 1772323200;
    float p[4];
    int inserted;
    CHECK(cc_store_work_begin(s, &err) == 0);
    for (int i = 0; i < 6; i++) {
        char id[8];
        snprintf(id, sizeof id, "r%d", i);
        p[0] = 0.1f * (float)(i + 1);
        p[1] = 1.0f - p[0];
        p[2] = 0.5f;
        p[3] = 0.5f;
        /* r0..r3 on the first day (r1, r3 in segment "north"), r4, r5 a day later */
        CHECK(cc_store_event_insert(s, m, id, (int)strlen(id), d0 + 3600 * i + (i >= 4) * 86400,
                                    i % 2 ? "north" : NULL, i % 2 ? 5 : 0, p[0] < 0.5f,
                                    i == 2 ? 1 : -1, p, &inserted, &err) == 0 && inserted);
    }
    cc_summary *day = cc_summary_create(m->m, m->k);
    CHECK(day != NULL);
    if (day) {
        cc_summary_add_labeled(day, p, 1, 1);
        CHECK(cc_store_summary_add(s, m, 20513, day, &err) == 0);
        cc_summary_free(day);
    }
    CHECK(cc_store_work_commit(s, &err) == 0);

    scan_seen all = {0};
    CHECK(cc_store_events_scan(s, m, d0, d0 + 2 * 86400, NULL, on_event, &all, &err) == 0);
    /* "kept" from the unit-of-work test is on d0 too */
    CHECK(all.n == 7);
    scan_seen first_day = {0};
    CHECK(cc_store_events_scan(s, m, d0 + 1, d0 + 86399, NULL, on_event, &first_day, &err) ==
          0);
    CHECK(first_day.n == 3 && strcmp(first_day.ids[0], "r1") == 0);
    scan_seen north = {0};
    CHECK(cc_store_events_scan(s, m, d0, d0 + 2 * 86400, "north", on_event, &north, &err) == 0);
    CHECK(north.n == 3 && strcmp(north.ids[0], "r1") == 0 && strcmp(north.ids[1], "r3") == 0 &&
          strcmp(north.ids[2], "r5") == 0 && fabsf(north.p0[0] - 0.2f) < 1e-7f);
    scan_seen stopped = {.stop_after = 2};
    CHECK(cc_store_events_scan(s, m, d0, d0 + 2 * 86400, NULL, on_event, &stopped, &err) == 7);
    CHECK(stopped.n == 2);

    /* the review's bounded sample (cc_store_events_sample): every 1 is the
     * whole scan; every 2 is exactly the rows whose rowid is even, as the
     * file itself says (SQLite's rowid, arrival order) */
    scan_seen whole = {0};
    CHECK(cc_store_events_sample(s, m, d0, d0 + 2 * 86400, NULL, 1, on_event, &whole, &err) ==
              0 &&
          whole.n == 7);
    scan_seen half = {0};
    CHECK(cc_store_events_sample(s, m, d0, d0 + 2 * 86400, NULL, 2, on_event, &half, &err) ==
          0);
    char sql[256];
    snprintf(sql, sizeof sql,
             "SELECT count(*) FROM events WHERE model_id = %lld AND ts BETWEEN %lld AND %lld "
             "AND rowid %% 2 = 0",
             (long long)m->id, (long long)d0, (long long)(d0 + 2 * 86400));
    CHECK(half.n == query_int(s, sql) && half.n > 0 && half.n < 7);
    for (int i = 0; i < half.n && i < 8; i++) {
        snprintf(sql, sizeof sql,
                 "SELECT rowid %% 2 FROM events WHERE model_id = %lld AND id = '%s'",
                 (long long)m->id, half.ids[i]);
        CHECK(query_int(s, sql) == 0);
    }

    cc_event_rec rec;
    float back[4];
    int found = 0;
    CHECK(cc_store_event_read(s, m, "r3", &found, &rec, back, &err) == 0 && found);
    CHECK(rec.ts == d0 + 3 * 3600 && rec.label == -1 && rec.label_at == -1 && rec.segment &&
          strcmp(rec.segment, "north") == 0 && fabsf(back[0] - 0.4f) < 1e-7f);
    free(rec.segment);
    CHECK(cc_store_event_read(s, m, "r2", &found, &rec, back, &err) == 0 && found &&
          rec.label == 1 && rec.segment == NULL);
    CHECK(cc_store_work_begin(s, &err) == 0 &&
          cc_store_event_set_label(s, m, "r3", 2, 0, d0 + 99999, &err) == 0 &&
          cc_store_work_commit(s, &err) == 0);
    CHECK(cc_store_event_read(s, m, "r3", &found, &rec, back, &err) == 0 && found &&
          rec.label == 0 && rec.label_at == d0 + 99999);
    free(rec.segment);
    CHECK(cc_store_event_read(s, m, "absent", &found, &rec, back, &err) == 0 && !found &&
          rec.segment == NULL);

    int64_t last = 0;
    CHECK(cc_store_labeled_day_last(s, m, 20520, &found, &last, &err) == 0 && found &&
          last == 20513);
    CHECK(cc_store_labeled_day_last(s, m, 20512, &found, &last, &err) == 0 && !found);
}

/* ---- a v3 file whose alert tables earlier releases made outside the schema ---- */

static void upgrade_from_v3(const char *path)
{
    cc_error err = CC_ERROR_INIT;
    cc_store *s = NULL;
    remove_db(path);
    CHECK(cc_store_open(&s, path, CC_STORE_CREATE, &err) == 0);
    if (!s)
        return;
    /* make it look like a version 3 file after an earlier follow and check */
    CHECK(sqlite3_exec(cc_store_db(s),
                       "DROP TABLE outbox; DROP TABLE notifications; DROP TABLE rule_state;"
                       "DROP TABLE follow_offsets;"
                       "CREATE TABLE follow_offsets(path TEXT PRIMARY KEY, dev INTEGER NOT NULL,"
                       " ino INTEGER NOT NULL, offset INTEGER NOT NULL, line INTEGER NOT NULL,"
                       " updated_at INTEGER NOT NULL);"
                       "INSERT INTO follow_offsets VALUES('/logs/b.jsonl', 1, 2, 300, 4, 5);"
                       "CREATE TABLE rule_state(model TEXT NOT NULL, rule TEXT NOT NULL,"
                       " state TEXT NOT NULL, breach_run INTEGER NOT NULL,"
                       " clear_run INTEGER NOT NULL, last_day INTEGER NOT NULL,"
                       " since_day INTEGER NOT NULL, fired_day INTEGER, last_notified_day INTEGER,"
                       " metric TEXT NOT NULL, urgency TEXT NOT NULL, last_value REAL,"
                       " last_bound REAL, updated_at INTEGER NOT NULL,"
                       " PRIMARY KEY(model, rule)) WITHOUT ROWID;"
                       "INSERT INTO rule_state VALUES('m', 'r', 'raised', 2, 0, 10, 9, 9, 9,"
                       " 'x', 'high', 1.5, 1.0, 77);"
                       "UPDATE meta SET value = '3' WHERE key = 'schema_version';",
                       NULL, NULL, NULL) == SQLITE_OK);
    cc_store_close(s);
    s = NULL;
    /* a reader reads it as it is: no rows invented, none lost */
    CHECK(cc_store_open_with(&s, path, &(cc_store_opts){CC_STORE_READONLY, 1000, NULL, NULL, NULL, NULL},
                             &err) == 0);
    if (s) {
        states_seen st = {0};
        notices_seen no = {0};
        int64_t pending = -1;
        CHECK(cc_store_rule_states(s, NULL, NULL, NULL, on_state, &st, &err) == 0 && st.n == 1);
        CHECK(cc_store_notices(s, NULL, NULL, 10, on_notice, &no, &err) == 0 && no.n == 0);
        CHECK(cc_store_outbox_count(s, "pending", &pending, &err) == 0 && pending == 0);
        CHECK(query_int(s, "SELECT value FROM meta WHERE key = 'schema_version'") == 3);
        cc_store_close(s);
        s = NULL;
    }
    /* the first writer upgrades to the current version (5) and keeps the rows */
    CHECK(cc_store_open(&s, path, 0, &err) == 0);
    if (!s)
        return;
    CHECK(query_int(s, "SELECT value FROM meta WHERE key = 'schema_version'") == 5);
    CHECK(query_int(s, "SELECT count(*) FROM sqlite_master WHERE name IN ('notifications', "
                       "'outbox', 'outbox_due')") == 3);
    cc_follow_offset o;
    int found = 0;
    CHECK(cc_store_follow_offset_get(s, "/logs/b.jsonl", &found, &o, &err) == 0 && found &&
          o.offset == 300 && o.line == 4);
    states_seen st = {0};
    CHECK(cc_store_rule_states(s, "m", "r", NULL, on_state, &st, &err) == 0 && st.n == 1 &&
          strcmp(st.state[0], "raised") == 0 && st.value[0] == 1.5 && st.updated_at[0] == 77);
    cc_store_close(s);
    remove_db(path);
}

/* ---- a backend that only reads, and one built against a shorter table ---- */

typedef struct reader_store {
    cc_store base;
    int closed;
} reader_store;

static void reader_close(cc_store *s) { ((reader_store *)s)->closed = 1; }

static int reader_model_get(cc_store *s, const char *name, cc_model **out, cc_error *err)
{
    *out = NULL;
    return cc_error_set(err, CC_ENOTFOUND, "%s: no model named '%s'", s->path, name);
}

static int called_past_end;
static int past_end_scan(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                         const char *segment, cc_event_scan_fn fn, void *ctx, cc_error *err)
{
    (void)s, (void)m, (void)from, (void)to, (void)segment, (void)fn, (void)ctx, (void)err;
    called_past_end = 1;
    return 0;
}

/* A scan of seven events e1..e7, for the dispatch's thinning. */
static int seven_scan(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                      const char *segment, cc_event_scan_fn fn, void *ctx, cc_error *err)
{
    (void)s, (void)m, (void)from, (void)to, (void)segment, (void)err;
    const float p[4] = {0.5f, 0.5f, 0.5f, 0.5f};
    for (int i = 1; i <= 7; i++) {
        char id[4];
        snprintf(id, sizeof id, "e%d", i);
        int rc = fn(ctx, id, i, -1, p);
        if (rc)
            return rc;
    }
    return 0;
}

static void missing_ops(void)
{
    cc_store_backend be;
    memset(&be, 0, sizeof be);
    be.version = CC_STORE_BACKEND_VERSION;
    be.size = sizeof be;
    be.name = "test-reader";
    be.close = reader_close;
    be.model_get = reader_model_get;
    reader_store rs = {{&be, "test://cluster/db"}, 0};
    cc_store *s = &rs.base;
    cc_error err = CC_ERROR_INIT;
    cc_model m = {.id = 1, .name = "m", .m = 2, .k = 2};
    float p[4] = {0.5f, 0.5f, 0.5f, 0.5f};
    int inserted = -1, found = -1, added = -1;

    CHECK(cc_store_readonly(s) == 1); /* no work_begin: read-only */
    CHECK(strcmp(cc_store_backend_name(s), "test-reader") == 0);
    CHECK(strcmp(cc_store_path(s), "test://cluster/db") == 0);
    cc_model *got = NULL;
    CHECK(cc_store_model_get(s, "m", &got, &err) == -CC_ENOTFOUND && got == NULL);

    /* write ops: CC_EIO, naming the store, the backend, "read-only" and the op */
    CHECK(cc_store_event_insert(s, &m, "e", 1, 0, NULL, 0, 0, -1, p, &inserted, &err) ==
              -CC_EIO && inserted == 0);
    CHECK(err.code == CC_EIO && strstr(err.msg, "test://cluster/db") &&
          strstr(err.msg, "test-reader") && strstr(err.msg, "read-only") &&
          strstr(err.msg, "store events"));
    CHECK(cc_store_work_begin(s, &err) == -CC_EIO && strstr(err.msg, "read-only"));
    cc_notice_rec n = {"id", "m", "r", "raised", "high", 1, 1, NAN, NAN, "{}", 1};
    CHECK(cc_store_notice_add(s, &n, NULL, 0, &added, &err) == -CC_EIO && added == 0 &&
          strstr(err.msg, "read-only"));
    cc_follow_offset o = {0};
    CHECK(cc_store_follow_offset_set(s, "/x", &o, 0, &err) == -CC_EIO &&
          strstr(err.msg, "read-only"));
    cc_store_work_abort(s); /* absent: a no-op, no crash */
    cc_store_rollback(s);

    /* read ops it lacks: "does not support" */
    CHECK(cc_store_events_scan(s, &m, 0, 1, NULL, on_event, NULL, &err) == -CC_EIO &&
          strstr(err.msg, "does not support") && strstr(err.msg, "scan events"));
    cc_event_rec rec;
    CHECK(cc_store_event_read(s, &m, "e", &found, &rec, p, &err) == -CC_EIO && found == 0 &&
          rec.segment == NULL);
    CHECK(cc_store_snapshot_begin(s, &err) == 0); /* no snapshots needed: fine */
    cc_store_snapshot_end(s);
    CHECK(cc_store_pending_label_count(s, &m) == 0);
    CHECK(cc_store_take_timed_out(s) == 0);

    /* a table built against an older, shorter version: ops past its size are
     * absent even when the memory behind them holds a pointer */
    be.events_scan = past_end_scan;
    be.size = offsetof(cc_store_backend, events_scan);
    called_past_end = 0;
    CHECK(cc_store_events_scan(s, &m, 0, 1, NULL, on_event, NULL, &err) == -CC_EIO &&
          !called_past_end && strstr(err.msg, "does not support"));
    be.size = sizeof be;
    CHECK(cc_store_events_scan(s, &m, 0, 1, NULL, on_event, NULL, &err) == 0 &&
          called_past_end);

    /* a backend without events_sample: the dispatch keeps every every-th
     * event of its scan (here e3 and e6 of e1..e7 for every 3) */
    be.events_scan = seven_scan;
    be.events_sample = NULL;
    scan_seen thinned = {0};
    CHECK(cc_store_events_sample(s, &m, 0, 10, NULL, 3, on_event, &thinned, &err) == 0 &&
          thinned.n == 2 && strcmp(thinned.ids[0], "e3") == 0 &&
          strcmp(thinned.ids[1], "e6") == 0);
    scan_seen all7 = {0};
    CHECK(cc_store_events_sample(s, &m, 0, 10, NULL, 1, on_event, &all7, &err) == 0 &&
          all7.n == 7);
    be.events_scan = past_end_scan;

    /* a version 1 table (before the slice ops): keeps no slices, slice reads
     * name what is missing, a slice write is refused as read-only */
    be.size = offsetof(cc_store_backend, slices_kept);
    cc_slice *list = (cc_slice *)&be; /* must be reset to NULL */
    int n_list = -1, count = -1, limit = -1;
    int64_t overflow = -1;
    CHECK(cc_store_slices_kept(s) == 0);
    CHECK(cc_store_slice_list(s, &m, &list, &n_list, &err) == -CC_EIO && list == NULL &&
          n_list == 0 && strstr(err.msg, "does not support") && strstr(err.msg, "slices"));
    CHECK(cc_store_slice_overview(s, &m, &count, &overflow, &err) == -CC_EIO && count == 0 &&
          overflow == 0);
    CHECK(cc_store_slice_limit_get(s, &m, &limit, &err) == -CC_EIO &&
          limit == CC_SLICES_DEFAULT_MAX);
    CHECK(cc_store_slice_summary_add(s, &m, 1, 1, NULL, &err) == -CC_EIO &&
          strstr(err.msg, "read-only"));
    CHECK(cc_store_events_between(s, &m, 0, 3600, NULL, NULL, &err) == -CC_EIO &&
          strstr(err.msg, "by time"));
    be.size = sizeof be;

    cc_store_close(s);
    CHECK(rs.closed == 1);
    cc_store_close(NULL);
}

int main(void)
{
    char path[64];
    snprintf(path, sizeof path, "/tmp/cc_store_backend_%d.db", (int)getpid());
    remove_db(path);
    cc_error err = CC_ERROR_INIT;
    cc_store *s = NULL;
    cc_model *m = NULL;
    CHECK(cc_store_open(&s, path, CC_STORE_CREATE, &err) == 0);
    if (!s) {
        fprintf(stderr, "open: %s\n", err.msg);
        return 1;
    }
    CHECK(strcmp(cc_store_backend_name(s), "sqlite") == 0 && cc_store_readonly(s) == 0);
    CHECK(strcmp(cc_store_path(s), path) == 0);
    CHECK(query_int(s, "SELECT value FROM meta WHERE key = 'schema_version'") == 5);
    /* every table in the versioned schema, made by the store */
    CHECK(query_int(s, "SELECT count(*) FROM sqlite_master WHERE type = 'table' AND name IN "
                       "('rule_state', 'notifications', 'outbox', 'follow_offsets')") == 4);
    CHECK(cc_store_work_begin(s, &err) == 0 &&
          cc_store_model_create(s, "m1", 2, 2, NULL, NULL, &m, &err) == 0 &&
          cc_store_work_commit(s, &err) == 0);

    /* snapshots nest: only the outermost end releases the read transaction */
    CHECK(cc_store_snapshot_begin(s, &err) == 0 && !sqlite3_get_autocommit(cc_store_db(s)));
    CHECK(cc_store_snapshot_begin(s, &err) == 0);
    cc_store_snapshot_end(s);
    CHECK(!sqlite3_get_autocommit(cc_store_db(s)));
    cc_store_snapshot_end(s);
    CHECK(sqlite3_get_autocommit(cc_store_db(s)));
    cc_store_snapshot_end(s); /* one too many: harmless */

    rule_states(s);
    outbox(s);
    if (m) {
        follow_and_units(s, m);
        review_reads(s, m);
    }
    cc_model_free(m);
    cc_store_close(s);
    remove_db(path);

    char path2[80];
    snprintf(path2, sizeof path2, "/tmp/cc_store_backend_v3_%d.db", (int)getpid());
    upgrade_from_v3(path2);
    missing_ops();
    return CHECK_DONE("store_backend");
}
