/* test_pending_drain.c — draining labels that waited for their events:
 * only labels whose event is stored come out (and are cleared), the others
 * keep waiting, and the query starts from pending_labels and looks each
 * event up by events_by_hash (schema 5: the id's hash, then the id in the
 * row), never scanning the model's events (its plan is
 * read with SQLite's EXPLAIN QUERY PLAN while the drain runs, so the check
 * follows the statement store.c really uses). */
#include <sqlite3.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "check.h"
#include "store.h"
#include "store_sqlite.h" /* cc_store_db: inspects the SQLite file directly */

typedef struct drained {
    sqlite3 *db;
    int n, label;
    char id[16];
    int plan_rows, searches_by_id, walks_events, outer_is_pending;
} drained;

/* The drain's own SELECT is the busy statement that reads pending_labels. */
static void read_plan(drained *d)
{
    sqlite3_stmt *run = NULL;
    for (sqlite3_stmt *st = sqlite3_next_stmt(d->db, NULL); st; st = sqlite3_next_stmt(d->db, st))
        if (sqlite3_stmt_busy(st) && strstr(sqlite3_sql(st), "pending_labels"))
            run = st;
    CHECK(run != NULL);
    if (!run)
        return;
    char q[1024];
    snprintf(q, sizeof q, "EXPLAIN QUERY PLAN %s", sqlite3_sql(run));
    sqlite3_stmt *plan = NULL;
    CHECK(sqlite3_prepare_v2(d->db, q, -1, &plan, NULL) == SQLITE_OK);
    while (plan && sqlite3_step(plan) == SQLITE_ROW) {
        const char *row = (const char *)sqlite3_column_text(plan, 3);
        d->plan_rows++;
        if (strncmp(row, "SEARCH e ", 9) == 0 && strstr(row, "events_by_hash (model_id=? AND id_hash=?)"))
            d->searches_by_id++;
        /* a walk over events: a scan, or a search by model_id alone */
        if (strncmp(row, "SCAN e", 6) == 0 ||
            (strncmp(row, "SEARCH e ", 9) == 0 && !strstr(row, "AND id_hash=?)")))
            d->walks_events++;
        if (d->plan_rows == 1)
            d->outer_is_pending = strncmp(row, "SEARCH p ", 9) == 0;
    }
    sqlite3_finalize(plan);
}

static int on_label(void *payload, const char *id, int id_len, int label, int64_t received_at)
{
    drained *d = payload;
    if (d->n++ == 0)
        read_plan(d);
    CHECK(received_at == 500);
    if (id_len < (int)sizeof d->id) {
        memcpy(d->id, id, (size_t)id_len);
        d->id[id_len] = '\0';
    }
    d->label = label;
    return 0;
}

int main(void)
{
    char dir[] = "/tmp/cc_test_drain_XXXXXX";
    CHECK(mkdtemp(dir) != NULL);
    char path[96];
    snprintf(path, sizeof path, "%s/d.db", dir);
    cc_error err = CC_ERROR_INIT;
    cc_store *s = NULL;
    cc_model *model = NULL;
    CHECK(cc_store_open(&s, path, CC_STORE_CREATE, &err) == 0);
    CHECK(cc_store_model_create(s, "t", 2, 3, NULL, NULL, &model, &err) == 0);

    /* 300 events over three days; labels wait for e0150 (stored) and x1 (not) */
    float probs[6] = {0.7f, 0.2f, 0.1f, 0.1f, 0.8f, 0.1f};
    int ins = 0, all_in = 1;
    CHECK(cc_store_begin(s, &err) == 0);
    for (int i = 0; i < 300; i++) {
        char id[16];
        int n = snprintf(id, sizeof id, "e%04d", i);
        all_in &= cc_store_event_insert(s, model, id, n, 86400 * 10 + 864 * i, NULL, 0, 0, -1,
                                        probs, &ins, &err) == 0 && ins;
    }
    CHECK(all_in);
    CHECK(cc_store_pending_label_add(s, model, "e0150", 5, 2, 500, &err) == 0);
    CHECK(cc_store_pending_label_add(s, model, "x1", 2, 1, 500, &err) == 0);
    CHECK(cc_store_commit(s, &err) == 0);

    drained d = {.db = cc_store_db(s)};
    CHECK(cc_store_begin(s, &err) == 0);
    CHECK(cc_store_pending_label_drain(s, model, on_label, &d, &err) == 0);
    CHECK(cc_store_commit(s, &err) == 0);
    CHECK(d.n == 1 && strcmp(d.id, "e0150") == 0 && d.label == 2);
    CHECK(cc_store_pending_label_count(s, model) == 1); /* x1 still waits */

    /* the plan (SQLite's EXPLAIN QUERY PLAN): the outer loop reads the
     * model's pending labels, events are only searched by (model_id,
     * id_hash) */
    CHECK(d.plan_rows >= 2);
    CHECK(d.searches_by_id == 1);
    CHECK(d.walks_events == 0);
    CHECK(d.outer_is_pending);

    /* nothing more to drain: the callback is not called again */
    d.n = 0;
    CHECK(cc_store_begin(s, &err) == 0);
    CHECK(cc_store_pending_label_drain(s, model, on_label, &d, &err) == 0 && d.n == 0);
    cc_store_rollback(s);

    cc_model_free(model);
    cc_store_close(s);
    char side[128];
    unlink(path);
    snprintf(side, sizeof side, "%s-wal", path);
    unlink(side);
    snprintf(side, sizeof side, "%s-shm", path);
    unlink(side);
    rmdir(dir);
    return CHECK_DONE("test_pending_drain");
}
