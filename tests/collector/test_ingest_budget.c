/* test_ingest_budget.c — ingest under a tiny memory budget for day-summary
 * deltas (one day held at a time) stores exactly what an unbounded run
 * stores: events that jump between days and models, labels for days long
 * evicted, labels waiting for their event, and a strict run with a bad line
 * that must leave nothing behind. Checked against summaries rebuilt from the
 * stored rows, a property of our own design (no outside reference applies). */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "check.h"
#include "ingest.h"
#include "store.h"
#include "summary.h"

static unsigned long long rng = 0x9E3779B97F4A7C15ull;
static double uniform(void)
{
    rng ^= rng << 13;
    rng ^= rng >> 7;
    rng ^= rng << 17;
    return (double)(rng >> 11) / 9007199254740992.0;
}

/* One event line of model name (m x k), day d, second s, optional label. */
static void event_line(FILE *f, const char *model, int m, int k, int id, int day, int label)
{
    fprintf(f, "{\"id\":\"%s-%d\",\"model\":\"%s\",\"ts\":%lld,\"probs\":[", model, id, model,
            (long long)(1780000000LL / 86400 + day) * 86400 + id % 86400);
    for (int i = 0; i < m; i++) {
        double row[8], s = 0;
        for (int c = 0; c < k; c++)
            s += row[c] = 0.05 + uniform();
        fputs(i ? ",[" : "[", f);
        for (int c = 0; c < k; c++)
            fprintf(f, c ? ",%.6f" : "%.6f", row[c] / s);
        fputc(']', f);
    }
    fputc(']', f);
    if (label >= 0)
        fprintf(f, ",\"label\":%d", label);
    fputs("}\n", f);
}

/* Events of two models over 40 days, visited in a shuffled order so the one
 * held day is evicted almost every line, then labels for some of them (and
 * for ids that only come later), then those later events. */
static void write_inputs(const char *events, const char *labels, const char *late)
{
    FILE *e = fopen(events, "w"), *l = fopen(labels, "w"), *t = fopen(late, "w");
    for (int i = 0; i < 400; i++) {
        int day = (i * 17) % 40;
        if (i % 3 == 0)
            event_line(e, "b", 2, 3, i, day, -1);
        else
            event_line(e, "a", 3, 4, i, day, i % 2 ? (int)(uniform() * 4) : -1);
    }
    for (int i = 0; i < 400; i += 5)
        fprintf(l, "{\"id\":\"%s-%d\",\"model\":\"%s\",\"label\":%d}\n", i % 3 ? "a" : "b", i,
                i % 3 ? "a" : "b", i % 3 ? i % 4 : i % 3);
    for (int i = 1000; i < 1010; i++) {
        fprintf(l, "{\"id\":\"a-%d\",\"model\":\"a\",\"label\":1}\n", i);
        event_line(t, "a", 3, 4, i, (i * 7) % 40, -1);
    }
    fclose(e);
    fclose(l);
    fclose(t);
}

static int run(const char *db, const char *const *files, const cc_record_kind *kinds, int n,
               size_t budget, int strict)
{
    cc_error err = CC_ERROR_INIT;
    cc_store *st = NULL;
    cc_ingest *ing = NULL;
    cc_ingest_opts o = CC_INGEST_OPTS_INIT;
    o.delta_budget = budget;
    o.strict = strict;
    o.batch = 50;
    o.now = 1790000000;
    int rc = cc_store_open(&st, db, 1, &err);
    if (!rc)
        rc = cc_ingest_create(&ing, st, &o, &err);
    for (int i = 0; !rc && i < n; i++)
        rc = cc_ingest_file(ing, files[i], kinds[i], &err);
    if (!rc)
        rc = cc_ingest_finish(ing, &err);
    if (rc)
        fprintf(stderr, "ingest: %s\n", err.msg);
    cc_ingest_free(ing);
    cc_store_close(st);
    return rc;
}

/* Every stored day of model name equals its rows and the other database's. */
static void compare(const char *db, const char *ref, const char *name, int want_days)
{
    cc_error err = CC_ERROR_INIT;
    cc_store *a = NULL, *b = NULL;
    cc_model *ma = NULL, *mb = NULL;
    int64_t *days = NULL, *ref_days = NULL;
    int n = 0, n_ref = 0;
    CHECK(cc_store_open(&a, db, 0, &err) == 0 && cc_store_open(&b, ref, 0, &err) == 0);
    CHECK(cc_store_model_get(a, name, &ma, &err) == 0 && cc_store_model_get(b, name, &mb, &err) == 0);
    if (!ma || !mb)
        return;
    CHECK(cc_store_summary_days(a, ma, INT64_MIN / 4, INT64_MAX / 4, &days, &n, &err) == 0);
    CHECK(cc_store_summary_days(b, mb, INT64_MIN / 4, INT64_MAX / 4, &ref_days, &n_ref, &err) == 0);
    CHECK(n == want_days && n_ref == want_days);
    cc_summary *x = cc_summary_create(ma->m, ma->k), *y = cc_summary_create(ma->m, ma->k);
    for (int i = 0; i < n && i < n_ref; i++) {
        CHECK(days[i] == ref_days[i]);
        CHECK(cc_store_summary_get(a, ma, days[i], x, &err) == 0);
        CHECK(cc_store_summary_from_rows(a, ma, days[i], y, &err) == 0);
        CHECK(cc_summary_equal(x, y));
        CHECK(cc_store_summary_get(b, mb, days[i], y, &err) == 0);
        CHECK(cc_summary_equal(x, y));
    }
    cc_summary_free(x);
    cc_summary_free(y);
    free(days);
    free(ref_days);
    cc_model_free(ma);
    cc_model_free(mb);
    cc_store_close(a);
    cc_store_close(b);
}

int main(void)
{
    char dir[] = "/tmp/cc_test_budget_XXXXXX";
    CHECK(mkdtemp(dir) != NULL);
    char events[96], labels[96], late[96], bad[96], tight[96], wide[96], strict_db[96];
    snprintf(events, sizeof events, "%s/events.jsonl", dir);
    snprintf(labels, sizeof labels, "%s/labels.jsonl", dir);
    snprintf(late, sizeof late, "%s/late.jsonl", dir);
    snprintf(bad, sizeof bad, "%s/bad.jsonl", dir);
    snprintf(tight, sizeof tight, "%s/tight.db", dir);
    snprintf(wide, sizeof wide, "%s/wide.db", dir);
    snprintf(strict_db, sizeof strict_db, "%s/strict.db", dir);
    write_inputs(events, labels, late);

    const char *files[] = {events, labels, late};
    const cc_record_kind kinds[] = {CC_RECORD_EVENTS, CC_RECORD_LABELS, CC_RECORD_EVENTS};
    /* budget 1 byte: a single delta is held; the default holds all 40 days */
    CHECK(run(tight, files, kinds, 3, 1, 0) == 0);
    CHECK(run(wide, files, kinds, 3, 0, 0) == 0);
    compare(tight, wide, "a", 40);
    compare(tight, wide, "b", 40);

    /* strict: evicted deltas were written inside the run's one transaction,
     * so a bad line rolls them back with the rows */
    FILE *f = fopen(bad, "w");
    fputs("{\"id\":\"x\",\"model\":\"a\",\"ts\":1780000000,\"probs\":[[1]]}\n", f);
    fclose(f);
    const char *strict_files[] = {events, bad};
    CHECK(run(strict_db, strict_files, kinds, 2, 1, 1) == 0);
    cc_error err = CC_ERROR_INIT;
    cc_store *st = NULL;
    cc_model *ma = NULL;
    int64_t *days = NULL;
    int n = -1;
    CHECK(cc_store_open(&st, strict_db, 0, &err) == 0);
    /* the models themselves may or may not survive; no day may */
    if (cc_store_model_get(st, "a", &ma, &err) == 0) {
        CHECK(cc_store_summary_days(st, ma, INT64_MIN / 4, INT64_MAX / 4, &days, &n, &err) == 0);
        CHECK(n == 0);
    }
    free(days);
    cc_model_free(ma);
    cc_store_close(st);

    char cmd[160];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    CHECK(system(cmd) == 0);
    return CHECK_DONE("ingest_budget");
}
