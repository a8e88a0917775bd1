/* test_summary_store.c — the summary's algebra and its storage: merging is
 * exact and order-free, a retracted contribution leaves no trace, the codec
 * round-trips, and stored summaries equal those rebuilt from rows.
 * These are properties of our own design; no outside reference applies. */
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "check.h"
#include "store.h"
#include "summary.h"
#include "summary_codec.h"

static unsigned long long rng = 88172645463325252ull;
static double uniform(void)
{
    rng ^= rng << 13;
    rng ^= rng >> 7;
    rng ^= rng << 17;
    return (double)(rng >> 11) / 9007199254740992.0;
}

static void random_event(float *p, int m, int k)
{
    for (int i = 0; i < m; i++) {
        double s = 0;
        for (int c = 0; c < k; c++)
            s += (p[i * k + c] = (float)(uniform() * uniform()));
        for (int c = 0; c < k; c++)
            p[i * k + c] = (float)(p[i * k + c] / s);
    }
}

int main(void)
{
    const int m = 4, k = 5, n = 500;
    float *ev = malloc(sizeof(float) * (size_t)(n * m * k));
    int labels[500];
    for (int i = 0; i < n; i++) {
        random_event(ev + i * m * k, m, k);
        labels[i] = (int)(uniform() * k);
    }
    cc_summary *all = cc_summary_create(m, k), *a = cc_summary_create(m, k),
               *b = cc_summary_create(m, k), *tmp = cc_summary_create(m, k);
    for (int i = 0; i < n; i++) {
        cc_summary_add_unlabeled(all, ev + i * m * k, 1);
        cc_summary_add_labeled(all, ev + i * m * k, labels[i], 1);
        cc_summary *half = i % 3 ? a : b;
        cc_summary_add_unlabeled(half, ev + i * m * k, 1);
        cc_summary_add_labeled(half, ev + i * m * k, labels[i], 1);
    }
    /* merge in both orders */
    cc_summary_merge(tmp, b);
    cc_summary_merge(tmp, a);
    CHECK(cc_summary_equal(tmp, all));
    cc_summary_clear(tmp);
    cc_summary_merge(tmp, a);
    cc_summary_merge(tmp, b);
    CHECK(cc_summary_equal(tmp, all));
    /* relabel event 0 and back: exact */
    cc_summary_add_labeled(tmp, ev, labels[0], -1);
    cc_summary_add_labeled(tmp, ev, (labels[0] + 1) % k, 1);
    CHECK(!cc_summary_equal(tmp, all));
    cc_summary_add_labeled(tmp, ev, (labels[0] + 1) % k, -1);
    cc_summary_add_labeled(tmp, ev, labels[0], 1);
    CHECK(cc_summary_equal(tmp, all));
    cc_summary_merge_signed(tmp, b, -1);
    CHECK(cc_summary_equal(tmp, a));

    const cc_layout *L = cc_summary_layout(all);
    const int64_t *v = cc_summary_data(all);
    CHECK(v[L->n_events] == n && v[L->n_labeled] == n);
    int64_t tot = 0;
    for (int c = 0; c < k; c++)
        tot += v[L->pred_counts + c];
    CHECK(tot == n);
    CHECK(cc_pair_index(4, 0, 1) == 0 && cc_pair_index(4, 0, 3) == 2 &&
          cc_pair_index(4, 1, 2) == 3 && cc_pair_index(4, 2, 3) == 5);

    /* codec */
    size_t len;
    unsigned char *blob = cc_codec_encode(v, L->len, &len);
    int64_t *back = malloc(L->len * sizeof *back);
    CHECK(blob && cc_codec_decode(blob, len, back, L->len) == 0);
    CHECK(memcmp(back, v, L->len * sizeof *back) == 0);
    CHECK(len < L->len * sizeof(int64_t) / 4); /* sparse: mostly zero runs */
    CHECK(cc_codec_decode(blob, len - 1, back, L->len) != 0 ||
          memcmp(back, v, L->len * sizeof *back) != 0);
    CHECK(cc_codec_decode(blob, len, back, L->len - 1) != 0);
    int64_t neg[3] = {-5, 0, INT64_MIN};
    free(blob);
    blob = cc_codec_encode(neg, 3, &len);
    CHECK(cc_codec_decode(blob, len, back, 3) == 0 && back[0] == -5 && back[1] == 0 &&
          back[2] == INT64_MIN);
    free(blob);

    /* store: write rows + summary delta in one transaction, rebuild from rows */
    char path[] = "/tmp/cc_test_store_XXXXXX";
    int fd = mkstemp(path);
    close(fd);
    unlink(path);
    cc_error err = CC_ERROR_INIT;
    cc_store *st = NULL;
    cc_model *model = NULL;
    CHECK(cc_store_open(&st, path, 1, &err) == 0);
    CHECK(cc_store_model_create(st, "t", m, k, NULL, NULL, &model, &err) == 0);
    CHECK(model && strcmp(model->classes[2], "2") == 0 && strcmp(model->members[1], "m1") == 0);
    CHECK(cc_store_begin(st, &err) == 0);
    for (int i = 0; i < n; i++) {
        char id[16];
        int ins;
        snprintf(id, sizeof id, "e%d", i);
        CHECK(cc_store_event_insert(st, model, id, (int)strlen(id), 86400 * 3 + i, NULL, 0, 0,
                                    labels[i], ev + i * m * k, &ins, &err) == 0 && ins);
    }
    CHECK(cc_store_summary_add(st, model, 3, all, &err) == 0);
    CHECK(cc_store_commit(st, &err) == 0);
    cc_summary_clear(tmp);
    CHECK(cc_store_summary_get(st, model, 3, tmp, &err) == 0 && cc_summary_equal(tmp, all));
    cc_summary_clear(tmp);
    CHECK(cc_store_summary_from_rows(st, model, 3, tmp, &err) == 0 && cc_summary_equal(tmp, all));
    int ins = 1;
    CHECK(cc_store_begin(st, &err) == 0);
    CHECK(cc_store_event_insert(st, model, "e0", 2, 0, NULL, 0, 0, -1, ev, &ins, &err) == 0 &&
          ins == 0);
    cc_store_rollback(st);
    cc_model_free(model);
    cc_store_close(st);
    unlink(path);
    char side[64];
    snprintf(side, sizeof side, "%s-wal", path);
    unlink(side);
    snprintf(side, sizeof side, "%s-shm", path);
    unlink(side);

    free(back);
    free(ev);
    cc_summary_free(all);
    cc_summary_free(a);
    cc_summary_free(b);
    cc_summary_free(tmp);
    return CHECK_DONE("summary_store");
}
