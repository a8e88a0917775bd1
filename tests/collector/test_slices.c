/* test_slices.c — per-segment summaries through the real ingest path: after
 * inline labels, delayed labels, corrected labels and labels that waited for
 * their event, the slices of every day add up to the model's summary counter
 * by counter, each slice equals the summary rebuilt from its own rows, the
 * segments beyond the limit share one overflow slice (with one warning per
 * run), a model exactly at its limit has no overflow slice, and pruning
 * keeps each slice's part so the same identities still hold. Small batches
 * and a tiny delta budget make every event's delta go through eviction and
 * several transactions. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "check.h"
#include "ingest.h"
#include "store.h"
#include "store_slices.h"

typedef struct overflow_seen {
    int calls, limit;
    int64_t events;
    char model[32];
} overflow_seen;

static void on_overflow(void *ctx, const char *model, int limit, int64_t events)
{
    overflow_seen *o = ctx;
    o->calls++;
    o->limit = limit;
    o->events = events;
    snprintf(o->model, sizeof o->model, "%s", model);
}

static void on_reject(void *payload, const char *source, int64_t line, const char *reason)
{
    (void)payload;
    fprintf(stderr, "%s:%lld: rejected: %s\n", source, (long long)line, reason);
}

/* Runs one ingest (or label) pass over text; returns the run's overflow note. */
static overflow_seen run(cc_store *st, const char *text, cc_record_kind kind, int max_slices)
{
    cc_ingest_opts o = CC_INGEST_OPTS_INIT;
    cc_ingest *ing = NULL;
    cc_error err = CC_ERROR_INIT;
    overflow_seen seen;
    memset(&seen, 0, sizeof seen);
    o.batch = 3;
    o.delta_budget = 1; /* one held delta at a time: every switch flushes */
    o.max_slices = max_slices;
    o.now = 1790000000;
    o.on_reject = on_reject;
    FILE *f = fmemopen((void *)text, strlen(text), "r");
    CHECK(f != NULL);
    CHECK(cc_ingest_create(&ing, st, &o, &err) == 0);
    CHECK(cc_ingest_stream(ing, f, "mem", 1, kind, &err) == 0);
    CHECK(cc_ingest_finish(ing, &err) == 0);
    if (err.code)
        fprintf(stderr, "ingest: %s\n", err.msg);
    CHECK(cc_ingest_get_stats(ing)->rejected == 0);
    cc_ingest_each_overflow(ing, on_overflow, &seen);
    cc_ingest_free(ing);
    fclose(f);
    return seen;
}

/* Every day of the model: slices sum to the model; each slice equals its
 * rows plus its pruned part. Returns the number of slice-days with events. */
static int check_identities(cc_store *st, const char *name, const char *stage)
{
    cc_error err = CC_ERROR_INIT;
    cc_model *m = NULL;
    cc_slice *list = NULL;
    int64_t *days = NULL;
    int n = 0, n_days = 0, with_events = 0, bad = 0;
    CHECK(cc_store_model_get(st, name, &m, &err) == 0);
    if (!m)
        return 0;
    CHECK(cc_store_slice_list(st, m, &list, &n, &err) == 0);
    CHECK(cc_store_summary_days(st, m, 0, 1000000, &days, &n_days, &err) == 0);
    cc_summary **rows = calloc((size_t)n + 1, sizeof *rows);
    cc_summary *model = cc_summary_create(m->m, m->k), *sum = cc_summary_create(m->m, m->k);
    cc_summary *one = cc_summary_create(m->m, m->k), *pruned = cc_summary_create(m->m, m->k);
    for (int i = 0; i < n; i++)
        rows[i] = cc_summary_create(m->m, m->k);
    for (int d = 0; d < n_days; d++) {
        CHECK(cc_store_summary_get(st, m, days[d], model, &err) == 0);
        CHECK(cc_store_slice_from_rows(st, m, days[d], list, n, rows, &err) == 0);
        cc_summary_clear(sum);
        for (int i = 0; i < n; i++) {
            int found;
            CHECK(cc_store_slice_summary_get(st, m, days[d], list[i].id, one, &err) == 0);
            CHECK(cc_store_slice_pruned_get(st, m, days[d], list[i].id, &found, pruned,
                                            &err) == 0);
            cc_summary_merge(rows[i], pruned);
            if (!cc_summary_equal(one, rows[i])) {
                fprintf(stderr, "%s: day %lld slice '%s' differs from its rows\n", stage,
                        (long long)days[d], cc_slice_name(&list[i]));
                bad++;
            }
            with_events += cc_summary_data(one)[cc_summary_layout(one)->n_events] > 0;
            cc_summary_merge(sum, one);
        }
        if (!cc_summary_equal(sum, model)) {
            fprintf(stderr, "%s: day %lld: slices do not add up to the model\n", stage,
                    (long long)days[d]);
            bad++;
        }
    }
    CHECK(bad == 0);
    CHECK(n_days > 0);
    for (int i = 0; i < n; i++)
        cc_summary_free(rows[i]);
    free(rows);
    cc_summary_free(model);
    cc_summary_free(sum);
    cc_summary_free(one);
    cc_summary_free(pruned);
    free(days);
    cc_slice_list_free(list, n);
    cc_model_free(m);
    return with_events;
}

/* The total events of the slice named name, or -1 when absent. */
static int64_t slice_events(cc_store *st, const char *model, const char *name)
{
    cc_error err = CC_ERROR_INIT;
    cc_model *m = NULL;
    cc_slice *list = NULL;
    int n = 0;
    int64_t events = -1;
    if (cc_store_model_get(st, model, &m, &err) || cc_store_slice_list(st, m, &list, &n, &err))
        return -2;
    int at = cc_slice_find(list, n, name);
    if (at >= 0)
        events = list[at].events;
    cc_slice_list_free(list, n);
    cc_model_free(m);
    return events;
}

/* An event line: two members, three classes; probabilities vary with i. */
static void event_line(char *buf, size_t cap, const char *model, int i, int day,
                       const char *segment, int label)
{
    double a = 0.1 + 0.05 * (i % 9), b = 0.1 + 0.05 * (i % 5);
    char seg[48] = "", lab[24] = "";
    if (segment)
        snprintf(seg, sizeof seg, "\"segment\":\"%s\",", segment);
    if (label >= 0)
        snprintf(lab, sizeof lab, ",\"label\":%d", label);
    snprintf(buf, cap,
             "{\"id\":\"%s-%d\",\"model\":\"%s\",\"ts\":\"2026-10-%02dT%02d:%02d:00Z\",%s"
             "\"probs\":[[%.3f,%.3f,%.3f],[%.3f,%.3f,%.3f]]%s}\n",
             model, i, model, day, i % 24, i % 60, seg, a, b, 1 - a - b, b, 1 - a - b, a, lab);
}

int main(void)
{
    char path[] = "/tmp/concord-slices-XXXXXX";
    int fd = mkstemp(path);
    CHECK(fd >= 0);
    close(fd);
    unlink(path);
    cc_store *st = NULL;
    cc_error err = CC_ERROR_INIT;
    CHECK(cc_store_open(&st, path, CC_STORE_CREATE, &err) == 0);
    if (!st) {
        fprintf(stderr, "%s\n", err.msg);
        return 1;
    }

    /* model "s": limit 2; segments a, b, none, then c and d go to overflow */
    static const char *const segs[] = {"a", "b", NULL, "c", "d", "a", "b", "c"};
    char *text = malloc(1 << 16), *labels = malloc(1 << 14), line[512];
    size_t len = 0, llen = 0;
    for (int i = 0; i < 40; i++) {
        event_line(line, sizeof line, "s", i, 5 + i % 3, segs[i % 8], i % 4 == 0 ? i % 3 : -1);
        memcpy(text + len, line, strlen(line) + 1);
        len += strlen(line);
    }
    overflow_seen o = run(st, text, CC_RECORD_EVENTS, 2);
    /* events i with i % 8 in {3, 4, 7}: segments c and d, 15 of 40 */
    CHECK(o.calls == 1 && o.limit == 2 && o.events == 15 && strcmp(o.model, "s") == 0);
    CHECK(check_identities(st, "s", "inline labels") > 0);
    CHECK(slice_events(st, "s", "a") == 10 && slice_events(st, "s", "b") == 10);
    CHECK(slice_events(st, "s", "(none)") == 5 && slice_events(st, "s", "(overflow)") == 15);
    CHECK(slice_events(st, "s", "c") == -1);

    /* labels that wait for their event: ids 40..44 are ingested later */
    for (int i = 40; i < 45; i++)
        llen += (size_t)snprintf(labels + llen, 64, "{\"id\":\"s-%d\",\"model\":\"s\",\"label\":%d}\n",
                                 i, i % 3);
    o = run(st, labels, CC_RECORD_LABELS, 0);
    CHECK(o.calls == 0);

    /* delayed labels (on unlabelled events) and corrections (on labelled
     * ones), spread over every slice */
    llen = 0;
    for (int i = 0; i < 40; i++)
        llen += (size_t)snprintf(labels + llen, 64, "{\"id\":\"s-%d\",\"model\":\"s\",\"label\":%d}\n",
                                 i, (i + 1) % 3);
    run(st, labels, CC_RECORD_LABELS, 0);
    check_identities(st, "s", "delayed and corrected labels");

    /* the waiting labels' events arrive; a second run: no new overflow segment
     * (c is known to be in overflow), and --max-slices is not asked again */
    len = 0;
    for (int i = 40; i < 45; i++) {
        event_line(line, sizeof line, "s", i, 6, segs[i % 8], -1);
        memcpy(text + len, line, strlen(line) + 1);
        len += strlen(line);
    }
    o = run(st, text, CC_RECORD_EVENTS, 0);
    /* i = 40..44: segments a, b, none, c, d -> two events to overflow */
    CHECK(o.calls == 1 && o.events == 2);
    check_identities(st, "s", "labels that waited");
    cc_model *m = NULL;
    int labeled_waiting = 0;
    CHECK(cc_store_model_get(st, "s", &m, &err) == 0);
    CHECK(cc_store_pending_label_count(st, m) == 0);
    for (int d = 5; d <= 7; d++) {
        cc_summary *sum = cc_summary_create(2, 3);
        CHECK(cc_store_summary_get(st, m, 20731 + d - 5, sum, &err) == 0);
        labeled_waiting += (int)cc_summary_data(sum)[cc_summary_layout(sum)->n_labeled];
        cc_summary_free(sum);
    }
    CHECK(labeled_waiting == 45); /* every event ends labelled */

    /* pruning day 5 keeps each slice's part: the identities still hold */
    int64_t removed = 0;
    CHECK(cc_store_begin(st, &err) == 0);
    CHECK(cc_store_prune_day(st, m, 20731, 1790000000, &removed, &err) == 0 && removed > 0);
    CHECK(cc_store_commit(st, &err) == 0);
    check_identities(st, "s", "after pruning");

    /* model "t" exactly at its limit of 2: no overflow slice, no warning */
    len = 0;
    for (int i = 0; i < 12; i++) {
        event_line(line, sizeof line, "t", i, 5, i % 2 ? "x" : "y", i % 3);
        memcpy(text + len, line, strlen(line) + 1);
        len += strlen(line);
    }
    o = run(st, text, CC_RECORD_EVENTS, 2);
    CHECK(o.calls == 0);
    CHECK(slice_events(st, "t", "x") == 6 && slice_events(st, "t", "y") == 6);
    CHECK(slice_events(st, "t", "(overflow)") == -1);
    check_identities(st, "t", "at the limit");

    cc_model_free(m);
    free(text);
    free(labels);
    cc_store_close(st);
    unlink(path);
    char side[64];
    snprintf(side, sizeof side, "%s-wal", path);
    unlink(side);
    snprintf(side, sizeof side, "%s-shm", path);
    unlink(side);
    return CHECK_DONE("slices");
}
