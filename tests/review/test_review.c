/* test_review.c — the review queries (collector/review.h) on a small
 * database written here: eight events of three members and three classes
 * whose categories, counts and orderings were worked out by hand (the
 * comments give each event's averaged output). Also checks that the scan
 * uses the (model, day, ts) index and the event lookup events_by_hash. */
#include <math.h>
#include <sqlite3.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "checks.h"
#include "date.h"
#include "review.h"
#include "store_sqlite.h" /* cc_store_db: inspects the SQLite file directly */

static const char *SRC = "hand-computed (comments in test_review.c)";

/* member i puts p[i] on class c[i] and splits the rest evenly */
static void row3(float *probs, const int c[3], const float p[3])
{
    for (int i = 0; i < 3; i++)
        for (int k = 0; k < 3; k++)
            probs[i * 3 + k] = k == c[i] ? p[i] : (1.0f - p[i]) / 2.0f;
}

static int insert(cc_store *s, const cc_model *m, const char *id, int64_t ts, const char *seg,
                  int label, int c0, float p0, int c1, float p1, int c2, float p2)
{
    const int c[3] = {c0, c1, c2};
    const float p[3] = {p0, p1, p2};
    float probs[9];
    double avg[3] = {0, 0, 0};
    int inserted;
    row3(probs, c, p);
    for (int i = 0; i < 3; i++)
        for (int k = 0; k < 3; k++)
            avg[k] += probs[i * 3 + k] / 3.0;
    return cc_store_event_insert(s, m, id, (int)strlen(id), ts, seg, seg ? (int)strlen(seg) : 0,
                                 cc_argmax_d(avg, 3), label, probs, &inserted, NULL);
}

static void check_list(check_log *log, const cc_review *rv, cc_review_where w,
                       const char *const *want, int n_want, int64_t matched_want)
{
    int n;
    int64_t matched;
    char what[128];
    const cc_review_event *ev = cc_review_get_list(rv, w, &n, &matched);
    snprintf(what, sizeof what, "%s: events kept", cc_review_where_name(w));
    check_int(log, what, n, n_want, SRC);
    snprintf(what, sizeof what, "%s: events matched", cc_review_where_name(w));
    check_int(log, what, matched, matched_want, SRC);
    for (int i = 0; i < n && i < n_want; i++) {
        snprintf(what, sizeof what, "%s: #%d is %s (got %s)", cc_review_where_name(w), i + 1,
                 want[i], ev[i].id);
        check_int(log, what, strcmp(ev[i].id, want[i]) == 0, 1, SRC);
    }
}

/* What cc_review_each handed over: ids in order, and the first event's
 * mutual information (the events themselves are gone after each call). */
typedef struct seen {
    int n;
    char ids[8][8];
    double first_mi;
} seen;

static int collect(void *payload, int rank, const cc_review_event *e)
{
    seen *s = payload;
    if (rank != s->n + 1 || s->n >= 8)
        return 1;
    if (s->n == 0)
        s->first_mi = e->view.mutual_information;
    snprintf(s->ids[s->n++], sizeof s->ids[0], "%s", e->id);
    return 0;
}

static int plan_uses(sqlite3 *db, const char *sql, const char *needle)
{
    sqlite3_stmt *st;
    char q[1024];
    int found = 0;
    snprintf(q, sizeof q, "EXPLAIN QUERY PLAN %s", sql);
    if (sqlite3_prepare_v2(db, q, -1, &st, NULL) != SQLITE_OK)
        return 0;
    while (sqlite3_step(st) == SQLITE_ROW)
        found |= strstr((const char *)sqlite3_column_text(st, 3), needle) != NULL;
    sqlite3_finalize(st);
    return found;
}

int main(void)
{
    check_log log = {"test_review", 0, 0};
    char path[] = "/tmp/concord-test-review-XXXXXX";
    int fd = mkstemp(path);
    if (fd < 0)
        return 1;
    close(fd);
    unlink(path);
    cc_error err = CC_ERROR_INIT;
    cc_store *s = NULL;
    cc_model *m = NULL;
    char *classes[] = {"a", "b", "c"}, *members[] = {"x", "y", "z"};
    if (cc_store_open(&s, path, 1, &err) ||
        cc_store_model_create(s, "t", 3, 3, classes, members, &m, &err) ||
        cc_store_begin(s, &err)) {
        fprintf(stderr, "setup: %s\n", err.msg);
        return 1;
    }
    const int64_t base = cc_days_from_civil(2026, 6, 1) * 86400;
    enum { A, B, C };
    /* e1 unanimous a, avg [.9 .05 .05], label a: all right */
    insert(s, m, "e1", base + 100, "s1", A, A, 0.9f, A, 0.9f, A, 0.9f);
    /* e2 avg [.467 .333 .2], label b: ensemble a wrong, y alone right (hurt for y) */
    insert(s, m, "e2", base + 200, "s1", B, A, 0.6f, B, 0.6f, A, 0.6f);
    /* e3 avg [.15 .517 .333], label b: ensemble right, z alone wrong (helped for z) */
    insert(s, m, "e3", base + 300, "s1", B, B, 0.7f, B, 0.7f, C, 0.7f);
    /* e4 avg [.583 .167 .25], label a: ensemble right, x alone wrong (helped for x) */
    insert(s, m, "e4", base + 400, "s1", A, C, 0.5f, A, 0.9f, A, 0.6f);
    /* e5 unanimous b, unlabelled, margin .85 */
    insert(s, m, "e5", base + 500, "s2", -1, B, 0.9f, B, 0.9f, B, 0.9f);
    /* e6 all differ, avg [1/3 1/3 1/3], unlabelled: margin 0, runner-up b */
    insert(s, m, "e6", base + 600, NULL, -1, A, 0.5f, B, 0.5f, C, 0.5f);
    /* e7 avg [.333 .567 .1], label a: ensemble b wrong, x alone right (hurt for x) */
    insert(s, m, "e7", base + 700, "s2", A, A, 0.8f, B, 0.8f, B, 0.8f);
    /* e8 the next day: outside every range below */
    insert(s, m, "e8", base + 86400 + 5, "s1", A, B, 0.9f, B, 0.9f, B, 0.9f);
    if (cc_store_commit(s, &err)) {
        fprintf(stderr, "commit: %s\n", err.msg);
        return 1;
    }

    cc_review_opts o = CC_REVIEW_OPTS_INIT;
    o.from = base;
    o.to = base + 86399;
    o.lists = (1u << CC_REVIEW_KINDS) - 1;
    o.pair_a = A;
    o.pair_b = B;
    cc_review *rv = NULL;
    if (cc_review_run(&rv, s, m, &o, &err)) {
        fprintf(stderr, "review: %s\n", err.msg);
        return 1;
    }
    const cc_review_summary *su = cc_review_get_summary(rv);
    check_int(&log, "events in the day", su->events, 7, SRC);
    check_int(&log, "labelled", su->labeled, 5, SRC);
    check_int(&log, "wrong", su->wrong, 2, SRC);
    check_int(&log, "best member: y, 4 of 5", su->best_member, 1, SRC);
    check_close(&log, "ensemble accuracy", su->ensemble_accuracy, 0.6, 1e-12, 0, SRC);
    check_int(&log, "helped against y", su->helped, 0, SRC);
    check_int(&log, "hurt against y", su->hurt, 1, SRC);
    const int64_t correct[3] = {3, 4, 2}, helped[3] = {1, 0, 1}, hurt[3] = {1, 1, 0};
    const int64_t lone_r[3] = {1, 1, 0}, lone_w[3] = {1, 0, 1};
    for (int i = 0; i < 3; i++) {
        char what[64];
        snprintf(what, sizeof what, "member %d correct", i);
        check_int(&log, what, su->member_correct[i], correct[i], SRC);
        snprintf(what, sizeof what, "member %d helped", i);
        check_int(&log, what, su->helped_by[i], helped[i], SRC);
        snprintf(what, sizeof what, "member %d hurt", i);
        check_int(&log, what, su->hurt_by[i], hurt[i], SRC);
        snprintf(what, sizeof what, "member %d alone right", i);
        check_int(&log, what, su->lone_right[i], lone_r[i], SRC);
        snprintf(what, sizeof what, "member %d alone wrong", i);
        check_int(&log, what, su->lone_wrong[i], lone_w[i], SRC);
    }
    const int64_t conf[9] = {2, 1, 0, 1, 1, 0, 0, 0, 0};
    for (int i = 0; i < 9; i++) {
        char what[64];
        snprintf(what, sizeof what, "confusion[label %d][ensemble %d]", i / 3, i % 3);
        check_int(&log, what, su->confusion[i], conf[i], SRC);
    }
    check_int(&log, "not unanimous", su->split_events, 5, SRC);
    check_int(&log, "unlabelled", su->low_margin, 2, SRC);
    check_int(&log, "contested pairs", su->n_contested, 3, SRC);
    if (su->n_contested == 3) {
        check_int(&log, "top contested pair a/b", su->contested[0].a * 10 + su->contested[0].b,
                  1, SRC);
        check_int(&log, "a/b count", su->contested[0].count, 3, SRC);
        check_int(&log, "then a/c (ties by a, then b)", su->contested[1].b, 2, SRC);
        check_int(&log, "then b/c", su->contested[2].a, 1, SRC);
    }
    check_int(&log, "pair a/b events", su->pair_events, 5, SRC);

    const char *wrong[] = {"e7", "e2"};
    check_list(&log, rv, CC_REVIEW_WRONG, wrong, 2, 2);
    check_list(&log, rv, CC_REVIEW_HELPED, NULL, 0, 0);
    const char *hurt_l[] = {"e2"};
    check_list(&log, rv, CC_REVIEW_HURT, hurt_l, 1, 1);
    const char *dis[] = {"e6", "e2", "e3", "e7", "e4", "e1", "e5"};
    check_list(&log, rv, CC_REVIEW_TOP_DISAGREEMENT, dis, 7, 7);
    const char *pair[] = {"e6", "e2", "e7", "e1", "e5"};
    check_list(&log, rv, CC_REVIEW_PAIR, pair, 5, 5);
    const char *low[] = {"e6", "e5"};
    check_list(&log, rv, CC_REVIEW_LOW_MARGIN, low, 2, 2);
    /* mutual information per event (computed with python3's math module from the
     * rows above, formula of METHODS.md section 3): e7 0.279288, e3 0.173148,
     * e4 0.164818, e2 0.093486, e6 0.058892, e1 and e5 0 */
    int n;
    const cc_review_event *mi = cc_review_get_list(rv, CC_REVIEW_TOP_MI, &n, NULL);
    const char *mi_order[] = {"e7", "e3", "e4", "e2", "e6"};
    for (int i = 0; i < 5 && i < n; i++) {
        char what[64];
        snprintf(what, sizeof what, "top-mi #%d is %s (got %s)", i + 1, mi_order[i], mi[i].id);
        check_int(&log, what, strcmp(mi[i].id, mi_order[i]), 0, "computed, python3 math");
    }
    check_int(&log, "top-mi: unanimous events last", n == 7 && (!strcmp(mi[6].id, "e5") ||
                                                              !strcmp(mi[6].id, "e1")), 1, SRC);
    if (n > 0)
        check_close(&log, "top-mi: e7's mutual information", mi[0].view.mutual_information,
                    0.279288, 5e-7, 0, "computed, python3 math");
    const cc_review_event *e6 = NULL;
    for (int i = 0; i < n; i++)
        if (!strcmp(mi[i].id, "e6"))
            e6 = &mi[i];
    check_int(&log, "an event without a segment keeps NULL", e6 && e6->segment == NULL, 1,
              "e6 has none");
    cc_review_free(rv);

    /* deferred: the same lists, read one event at a time by cc_review_each */
    o.deferred = 1;
    if (cc_review_run(&rv, s, m, &o, &err)) {
        fprintf(stderr, "deferred review: %s\n", err.msg);
        return 1;
    }
    const struct { cc_review_where w; const char *const *ids; int n; } want[] = {
        {CC_REVIEW_WRONG, wrong, 2},        {CC_REVIEW_HELPED, NULL, 0},
        {CC_REVIEW_HURT, hurt_l, 1},        {CC_REVIEW_TOP_DISAGREEMENT, dis, 7},
        {CC_REVIEW_PAIR, pair, 5},          {CC_REVIEW_LOW_MARGIN, low, 2},
        {CC_REVIEW_TOP_MI, mi_order, 5}};
    for (size_t i = 0; i < sizeof want / sizeof *want; i++) {
        seen got = {0, {{0}}, NAN};
        char what[96];
        int n_list;
        check_int(&log, "deferred: no event array", cc_review_get_list(rv, want[i].w, &n_list,
                                                                        NULL) == NULL, 1,
                  "review.h");
        check_int(&log, "deferred: each", cc_review_each(rv, want[i].w, collect, &got, &err), 0,
                  "review.h");
        snprintf(what, sizeof what, "deferred %s: length", cc_review_where_name(want[i].w));
        check_int(&log, what, n_list, want[i].w == CC_REVIEW_TOP_MI ? 7 : want[i].n, SRC);
        check_int(&log, what, got.n, n_list, SRC);
        for (int j = 0; j < want[i].n && j < got.n; j++) {
            snprintf(what, sizeof what, "deferred %s: #%d is %s (got %s)",
                     cc_review_where_name(want[i].w), j + 1, want[i].ids[j], got.ids[j]);
            check_int(&log, what, strcmp(got.ids[j], want[i].ids[j]), 0, SRC);
        }
        if (want[i].w == CC_REVIEW_TOP_MI)
            check_close(&log, "deferred top-mi: e7's mutual information", got.first_mi,
                        0.279288, 5e-7, 0, "computed, python3 math");
    }
    cc_review_free(rv);
    o.deferred = 0;

    /* limit, segment and inclusive bounds */
    o.limit = 1;
    o.segment = "s2";
    o.to = base + 700;
    if (cc_review_run(&rv, s, m, &o, &err)) {
        fprintf(stderr, "review: %s\n", err.msg);
        return 1;
    }
    su = cc_review_get_summary(rv);
    check_int(&log, "segment s2: events", su->events, 2, SRC);
    check_int(&log, "segment s2: best member x (e7)", su->best_member, 0, SRC);
    const char *wrong_s2[] = {"e7"};
    check_list(&log, rv, CC_REVIEW_WRONG, wrong_s2, 1, 1);
    cc_review_free(rv);
    o.segment = NULL;
    o.limit = 1;
    o.to = base + 400;
    cc_review_run(&rv, s, m, &o, &err);
    check_int(&log, "--to is inclusive (e1..e4)", cc_review_get_summary(rv)->events, 4, SRC);
    const char *wrong_lim[] = {"e2"};
    check_list(&log, rv, CC_REVIEW_WRONG, wrong_lim, 1, 1);
    cc_review_free(rv);
    o.from = base + 86400;
    o.to = base + 2 * 86400 - 1;
    cc_review_run(&rv, s, m, &o, &err);
    check_int(&log, "next day: only e8", cc_review_get_summary(rv)->events, 1, SRC);
    check_int(&log, "next day: no contested pairs", cc_review_get_summary(rv)->n_contested, 0,
              SRC);
    cc_review_free(rv);
    o.from = base + 10 * 86400;
    o.to = base + 11 * 86400;
    cc_review_run(&rv, s, m, &o, &err);
    check_int(&log, "empty range: no events, no best member",
              cc_review_get_summary(rv)->events * 10 + cc_review_get_summary(rv)->best_member,
              -1, SRC);
    cc_review_free(rv);
    o.lists = 1u << CC_REVIEW_PAIR;
    o.pair_b = A;
    check_int(&log, "a pair of one class is refused", cc_review_run(&rv, s, m, &o, &err),
              -CC_EUSAGE, "review.h");

    /* one event by id */
    cc_review_event *e = NULL;
    check_int(&log, "show e7", cc_review_event_get(s, m, "e7", &e, &err), 0, SRC);
    if (e) {
        check_int(&log, "e7 label", e->label, A, SRC);
        check_int(&log, "e7 ensemble class", e->view.ens, B, SRC);
        check_close(&log, "e7 margin", e->view.margin, (0.8 + 0.8 + 0.1) / 3 - (0.8 + 0.1 + 0.1) / 3,
                    1e-6, 0, SRC);
        check_int(&log, "e7 segment", strcmp(e->segment, "s2"), 0, SRC);
    }
    cc_review_event_free(e);
    check_int(&log, "unknown id", cc_review_event_get(s, m, "nope", &e, &err), -CC_ENOTFOUND,
              "review.h");

    /* the scan goes through events_by_time, the lookup through events_by_hash
     * (the SQL below repeats collector/review.c's and store.c's BY_ID) */
    sqlite3 *db = cc_store_db(s);
    check_int(&log, "scan uses events_by_time",
              plan_uses(db, "SELECT id, ts, label, probs FROM events WHERE model_id = 1 AND "
                            "day BETWEEN 1 AND 2 AND ts BETWEEN 1 AND 2 AND (NULL IS NULL OR "
                            "segment = NULL)", "events_by_time"),
              1, "SQLite EXPLAIN QUERY PLAN");
    check_int(&log, "lookup uses events_by_hash",
              plan_uses(db, "SELECT ts, segment, label, probs, label_at FROM events WHERE "
                            "model_id = 1 AND id_hash = 12345 AND id = 'e1'",
                        "events_by_hash (model_id=? AND id_hash=?)"),
              1, "SQLite EXPLAIN QUERY PLAN");

    cc_model_free(m);
    cc_store_close(s);
    char side[64];
    unlink(path);
    snprintf(side, sizeof side, "%s-wal", path);
    unlink(side);
    snprintf(side, sizeof side, "%s-shm", path);
    unlink(side);
    return check_finish(&log);
}
