/* test_deliver.c — the outbox with an injected sender: acceptance only on
 * success, a failing receiver's other rows wait for the next run, backoff
 * grows and stays within its jitter band, dead letters after max_attempts,
 * re-queued dead letters are sent once, sent rows are never sent again, a
 * duplicate notice id queues nothing. */
#include <math.h>
#include <sqlite3.h>
#include <stdlib.h>
#include <unistd.h>

#include "deliver.h"
#include "state.h"
#include "store_sqlite.h" /* cc_store_db: inspects the SQLite file directly */
#include "tcheck.h"

typedef struct fake {
    int fail_a;                 /* receiver "a" answers 500 */
    int calls_a[8], calls_b[8]; /* per notification number */
} fake;

static int fake_send(void *ctx, const cc_webhook_request *req, cc_webhook_response *res)
{
    fake *f = ctx;
    int n = atoi(strrchr(req->notice_id, '-') + 1);
    int is_a = strcmp(req->url, "http://a.invalid/") == 0;
    (is_a ? f->calls_a : f->calls_b)[n]++;
    if (is_a && f->fail_a) {
        res->status = 500;
        snprintf(res->error, sizeof res->error, "HTTP 500");
        return -1;
    }
    res->status = 204;
    return 0;
}

static int64_t one(cc_store *s, const char *sql)
{
    sqlite3_stmt *st = NULL;
    int64_t v = -1;
    if (sqlite3_prepare_v2(cc_store_db(s), sql, -1, &st, NULL) == SQLITE_OK &&
        sqlite3_step(st) == SQLITE_ROW)
        v = sqlite3_column_int64(st, 0);
    sqlite3_finalize(st);
    return v;
}

static void deliver(cc_store *s, fake *f, int64_t now, cc_deliver_stats *st)
{
    cc_deliver_opts o = CC_DELIVER_OPTS_INIT;
    cc_error err = CC_ERROR_INIT;
    o.now = now;
    o.send = fake_send;
    o.send_ctx = f;
    o.seed = 7;
    T_CHECK(cc_deliver_run(s, &o, st, &err) == 0, "deliver: %s", err.msg);
}

int main(void)
{
    /* backoff: base * 2^(attempts-1), capped, times a factor in [1/2, 1] */
    T_CHECK(cc_deliver_backoff(1, 60, 21600, 0.0) == 30 && cc_deliver_backoff(1, 60, 21600,
                                                                              0.999999) < 60,
            "first retry in [30, 60) s");
    T_CHECK(cc_deliver_backoff(4, 60, 21600, 0.0) == 240, "fourth: 480 s, halved");
    T_CHECK(cc_deliver_backoff(30, 60, 21600, 0.0) == 10800 &&
                cc_deliver_backoff(1000, 60, 21600, 0.99) <= 21600,
            "capped at max_backoff");

    char dir[] = "/tmp/cc-deliver-XXXXXX", path[128];
    T_CHECK(mkdtemp(dir) != NULL, "mkdtemp");
    snprintf(path, sizeof path, "%s/t.db", dir);
    cc_store *s = NULL;
    cc_error err = CC_ERROR_INIT;
    T_CHECK(cc_store_open(&s, path, 1, &err) == 0 && cc_state_prepare(s, &err) == 0, "%s",
            err.msg);
    cc_receiver recv[2] = {{"http://a.invalid/", NULL, 1000, 1000, 3},
                           {"http://b.invalid/", NULL, 1000, 1000, 3}};
    for (int i = 1; i <= 2; i++) {
        char key[32];
        snprintf(key, sizeof key, "m/r/fired/key-%d", i);
        cc_notification n = {key, "m", "r", "fired", "warning", 10, 10, 1.0, 0.5, "{}", 1000};
        int queued = 0;
        T_CHECK(cc_state_queue(s, &n, recv, 2, 10, 100, &queued, &err) == 0 && queued,
                "queue %d", i);
        T_CHECK(cc_state_queue(s, &n, recv, 2, 10, 100, &queued, &err) == 0 && !queued,
                "the same notice id again queues nothing");
    }
    T_CHECK(one(s, "SELECT count(*) FROM outbox") == 4, "2 notifications x 2 receivers");

    fake f = {1, {0}, {0}};
    cc_deliver_stats st;
    deliver(s, &f, 1000, &st);
    T_CHECK(st.sent == 2 && st.failed == 1 && st.dead == 0 && st.deferred == 1,
            "run 1: b gets both, a fails once and its second row waits (%d %d %d %d)", st.sent,
            st.failed, st.dead, st.deferred);
    T_CHECK(f.calls_a[1] == 1 && f.calls_a[2] == 0 && f.calls_b[1] == 1 && f.calls_b[2] == 1,
            "run 1 calls");
    int64_t next = one(s, "SELECT next_at FROM outbox WHERE receiver LIKE '%a.invalid%' "
                          "AND attempts = 1");
    T_CHECK(next >= 1005 && next <= 1010, "first backoff within [5, 10] s: %lld",
            (long long)next);
    deliver(s, &f, 1001, &st);
    T_CHECK(f.calls_a[1] == 1 && f.calls_a[2] == 1, "run 2: row 1 not due, row 2 tried");
    deliver(s, &f, 5000, &st);
    T_CHECK(f.calls_a[1] == 2 && f.calls_a[2] == 1, "run 3: a fails again on row 1; row 2 waits");
    next = one(s, "SELECT next_at FROM outbox WHERE receiver LIKE '%a.invalid%' "
                  "AND attempts = 2 ORDER BY outbox_id LIMIT 1");
    T_CHECK(next >= 5010 && next <= 5020, "second backoff within [10, 20] s: %lld",
            (long long)next);
    deliver(s, &f, 9000, &st);
    T_CHECK(f.calls_a[1] == 3 && st.dead == 1, "run 4: third failure of row 1 -> dead letter");
    T_CHECK(one(s, "SELECT count(*) FROM outbox WHERE status = 'dead'") == 1, "one dead letter");
    T_CHECK(one(s, "SELECT count(*) FROM outbox WHERE status = 'sent'") == 2, "b's rows sent");

    f.fail_a = 0;
    deliver(s, &f, 9100, &st);
    T_CHECK(f.calls_a[2] == 2 && st.sent == 1, "a is back: row 2 delivered (calls %d)",
            f.calls_a[2]);
    int n = 0;
    T_CHECK(cc_deliver_requeue_dead(s, 9200, &n, &err) == 0 && n == 1, "requeue the dead letter");
    deliver(s, &f, 9200, &st);
    T_CHECK(f.calls_a[1] == 4 && st.sent == 1 && st.pending == 0 && st.dead_total == 0,
            "the requeued letter is delivered");
    deliver(s, &f, 100000, &st);
    T_CHECK(f.calls_a[1] == 4 && f.calls_a[2] == 2 && f.calls_b[1] == 1 && f.calls_b[2] == 1 &&
                st.sent == 0,
            "sent rows are never sent again");
    cc_store_close(s);
    char wal[160];
    remove(path);
    snprintf(wal, sizeof wal, "%s-wal", path);
    remove(wal);
    snprintf(wal, sizeof wal, "%s-shm", path);
    remove(wal);
    rmdir(dir);
    return t_summary("alerts_deliver");
}
