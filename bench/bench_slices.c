/* bench_slices.c — what keeping the whole model's (model, day) rows beside
 * the slices' saves a reader: for every day of a model, the time to read
 * and merge the model's row, and the time to read and merge all its slices'
 * rows (what a sum on read would cost), with a check that both give the
 * same counters; and the stored bytes per day of each. Not a test.
 *
 *   concord-bench-slices DB MODEL [REPS] */
#include <sqlite3.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "store.h"
#include "store_slices.h"

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

static double bytes_of(cc_store *s, const char *sql, int64_t model)
{
    sqlite3_stmt *st;
    double v = 0;
    if (sqlite3_prepare_v2(cc_store_db(s), sql, -1, &st, NULL) != SQLITE_OK)
        return -1;
    sqlite3_bind_int64(st, 1, model);
    if (sqlite3_step(st) == SQLITE_ROW)
        v = sqlite3_column_double(st, 0);
    sqlite3_finalize(st);
    return v;
}

int main(int argc, char **argv)
{
    if (argc < 3) {
        fprintf(stderr, "usage: concord-bench-slices DB MODEL [REPS]\n");
        return 2;
    }
    int reps = argc > 3 ? atoi(argv[3]) : 10;
    cc_error err = CC_ERROR_INIT;
    cc_store *s = NULL;
    cc_model *m = NULL;
    cc_slice *list = NULL;
    int64_t *days = NULL;
    int n = 0, n_days = 0;
    if (cc_store_open(&s, argv[1], CC_STORE_READONLY, &err) ||
        cc_store_model_get(s, argv[2], &m, &err) || cc_store_slice_list(s, m, &list, &n, &err) ||
        cc_store_summary_days(s, m, INT64_MIN / 4, INT64_MAX / 4, &days, &n_days, &err)) {
        fprintf(stderr, "%s\n", err.msg);
        return 1;
    }
    cc_summary *a = cc_summary_create(m->m, m->k), *b = cc_summary_create(m->m, m->k);
    cc_summary *day = cc_summary_create(m->m, m->k);
    double t_model = 0, t_slices = 0;
    int same = 1;
    for (int r = 0; r < reps; r++) {
        double t0 = now_s();
        cc_summary_clear(a);
        for (int d = 0; d < n_days; d++) {
            cc_store_summary_get(s, m, days[d], day, &err);
            cc_summary_merge(a, day);
        }
        double t1 = now_s();
        cc_summary_clear(b);
        for (int d = 0; d < n_days; d++)
            for (int i = 0; i < n; i++) {
                cc_store_slice_summary_get(s, m, days[d], list[i].id, day, &err);
                cc_summary_merge(b, day);
            }
        double t2 = now_s();
        t_model += t1 - t0;
        t_slices += t2 - t1;
        same &= cc_summary_equal(a, b);
    }
    double mb = bytes_of(s, "SELECT total(length(counters)) FROM summaries WHERE model_id = ?1",
                         m->id);
    double sb = bytes_of(s, "SELECT total(length(counters)) FROM slice_summaries "
                            "WHERE model_id = ?1", m->id);
    double rows = bytes_of(s, "SELECT count(*) FROM slice_summaries WHERE model_id = ?1", m->id);
    printf("model %s: %d days, %d slices, %d x %d\n", m->name, n_days, n, m->m, m->k);
    printf("read + merge of every day, mean of %d: model rows %.4f s, all slices' rows "
           "%.4f s (ratio %.1f); same counters: %s\n",
           reps, t_model / reps, t_slices / reps, t_model > 0 ? t_slices / t_model : 0,
           same ? "yes" : "NO");
    printf("summary bytes per day: model row %.0f, all slices %.0f, per slice-day %.0f\n",
           n_days ? mb / n_days : 0, n_days ? sb / n_days : 0, rows > 0 ? sb / rows : 0);
    cc_summary_free(a);
    cc_summary_free(b);
    cc_summary_free(day);
    free(days);
    cc_slice_list_free(list, n);
    cc_model_free(m);
    cc_store_close(s);
    return same ? 0 : 1;
}
