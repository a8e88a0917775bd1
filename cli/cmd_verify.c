/* cmd_verify.c — `concord verify`: rebuilds each day's summary from its
 * event rows (plus the part kept for pruned rows) and compares it with the
 * stored one; finds days with rows but no summary, and class indexes out of
 * range; with --deep, SQLite's integrity check. */
#include <stdio.h>
#include <stdlib.h>

#include "cli.h"
#include "date.h"
#include "store.h"
#include "store_slices.h"

const char help_verify[] =
    "usage: concord verify --db FILE|--store URL --model NAME [--deep]\n\n"
    "Recomputes every day's summary from the stored events and labels (adding, for a\n"
    "pruned day, the part kept for its deleted rows) and compares it, counter by\n"
    "counter, with the summary the reports read. Prints one line per day. Also reports\n"
    "days with event rows but no summary, summaries with neither rows nor a pruned\n"
    "record, and stored labels or classes outside 0..K-1. Then the slices (one per\n"
    "segment): on every day their summaries must add up to the model's, counter by\n"
    "counter, and each slice's summary must equal its rows plus its pruned part.\n"
    "Reads one snapshot; writes nothing.\n\n"
    "  --deep   also run SQLite's PRAGMA integrity_check on the whole file and check\n"
    "           every event's id key (id_hash)\n"
    "  --store URL  sqlite:FILE is --db FILE. On a cluster, clickhouse://HOST:PORT/DATABASE,\n"
    "           where the hosts' rows are not rebuilt into summaries, verify proves the\n"
    "           merged view: every day's vector has the model's layout (its length and\n"
    "           counters decode), and on every day the slices' merged vectors add up to\n"
    "           the model's merged vector, counter by counter, with no slice on a day the\n"
    "           model lacks. Each host proves its own rows with verify --db.\n\n"
    "exit: 0 nothing found, 1 some finding (listed), 2 usage, 3 file or database error,\n"
    "4 unknown model\n";

static int show_fault(void *ctx, const char *what, const char *id, int64_t value)
{
    int *shown = ctx;
    if ((*shown)++ < 20)
        printf("%s %lld of event '%.128s' is outside 0..K-1\n", what, (long long)value,
               id ? id : "?");
    return 0;
}

static int show_integrity(void *ctx, const char *line)
{
    int *shown = ctx;
    if ((*shown)++ < 50)
        printf("integrity_check: %s\n", line);
    return 0;
}

/* Index of day in the sorted array, or -1. */
static int find_day(const int64_t *days, int n, int64_t day)
{
    int lo = 0, hi = n - 1;
    while (lo <= hi) {
        int mid = lo + (hi - lo) / 2;
        if (days[mid] == day)
            return mid;
        if (days[mid] < day)
            lo = mid + 1;
        else
            hi = mid - 1;
    }
    return -1;
}

/* The slices' check: on each of the model's days the slices sum to the
 * stored summary, and each slice equals its rows plus its pruned part; no
 * slice has a day the model lacks. Prints the mismatches and a total line;
 * *found = 1 when there is any. */
static int verify_slices(cc_store *store, const cc_model *m, const int64_t *days, int n_days,
                         int with_rows, int *found, cc_error *err)
{
    cc_slice *list = NULL;
    cc_summary **rows = NULL, *stored = NULL, *sum = NULL, *one = NULL, *pruned = NULL;
    int n = 0, rc = 0, bad_sum = 0, bad_slice = 0, stray = 0, checked = 0;
    if (!cc_store_slices_kept(store)) {
        printf("slices: not kept yet (a database of schema 3; the first writing command "
               "upgrades it)\n");
        return 0;
    }
    if ((rc = cc_store_slice_list(store, m, &list, &n, err)))
        return rc;
    rows = calloc((size_t)n + 1, sizeof *rows);
    stored = cc_summary_create(m->m, m->k);
    sum = cc_summary_create(m->m, m->k);
    one = cc_summary_create(m->m, m->k);
    pruned = cc_summary_create(m->m, m->k);
    int ok = rows && stored && sum && one && pruned;
    for (int i = 0; ok && i < n; i++)
        ok = (rows[i] = cc_summary_create(m->m, m->k)) != NULL;
    if (!ok) {
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    for (int d = 0; d < n_days; d++) {
        char date[11];
        cc_format_date(days[d], date);
        if ((rc = cc_store_summary_get(store, m, days[d], stored, err)) ||
            (with_rows && (rc = cc_store_slice_from_rows(store, m, days[d], list, n, rows, err))))
            goto done;
        cc_summary_clear(sum);
        for (int i = 0; i < n; i++) {
            int was_pruned;
            if ((rc = cc_store_slice_summary_get(store, m, days[d], list[i].id, one, err)) ||
                (with_rows && (rc = cc_store_slice_pruned_get(store, m, days[d], list[i].id,
                                                              &was_pruned, pruned, err))))
                goto done;
            cc_summary_merge(sum, one);
            checked++;
            if (!with_rows)
                continue;
            cc_summary_merge(rows[i], pruned);
            if (!cc_summary_equal(one, rows[i])) {
                bad_slice++;
                printf("%s slice '%s': MISMATCH: its summary differs from its rows plus its "
                       "pruned part\n", date, cc_slice_name(&list[i]));
            }
        }
        if (!cc_summary_equal(sum, stored)) {
            bad_sum++;
            printf("%s slices: MISMATCH: the slices do not add up to the model's summary\n",
                   date);
        }
    }
    for (int i = 0; i < n; i++) {
        int64_t *sd = NULL;
        int n_sd = 0;
        if ((rc = cc_store_slice_summary_days(store, m, list[i].id, INT64_MIN / 4,
                                              INT64_MAX / 4, &sd, &n_sd, err)))
            goto done;
        for (int j = 0; j < n_sd; j++)
            if (find_day(days, n_days, sd[j]) < 0) {
                char date[11];
                cc_format_date(sd[j], date);
                printf("%s slice '%s': MISMATCH: a slice summary on a day the model has "
                       "none\n", date, cc_slice_name(&list[i]));
                stray++;
            }
        free(sd);
    }
    printf("slices: %d, %d slice-days checked, %d mismatched, %d days where the slices do not "
           "add up to the model, %d stray slice days\n",
           n, checked, bad_slice, bad_sum, stray);
    *found = bad_slice || bad_sum || stray;
done:
    for (int i = 0; rows && i < n; i++)
        cc_summary_free(rows[i]);
    free(rows);
    cc_summary_free(stored);
    cc_summary_free(sum);
    cc_summary_free(one);
    cc_summary_free(pruned);
    cc_slice_list_free(list, n);
    return rc;
}

/* verify on a cluster: each day's merged vector read with the model's
 * layout, then the slices' sums (verify_slices without rows). */
static int verify_cluster(const char *url, const char *model)
{
    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    cc_model *m = NULL;
    cc_summary *stored = NULL;
    int64_t *days = NULL;
    int n_days = 0, found = 0, rc = EXIT_OK;
    if (cli_store_open_named(NULL, url, CC_STORE_READONLY, &store, &err) ||
        cc_store_model_get(store, model, &m, &err) ||
        cc_store_summary_days(store, m, INT64_MIN / 4, INT64_MAX / 4, &days, &n_days, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    if (!(stored = cc_summary_create(m->m, m->k))) {
        fprintf(stderr, "concord verify: out of memory\n");
        rc = EXIT_IO;
        goto done;
    }
    for (int i = 0; i < n_days; i++) {
        char d[11];
        cc_format_date(days[i], d);
        if (cc_store_summary_get(store, m, days[i], stored, &err)) {
            rc = cli_fail(&err);
            goto done;
        }
        printf("%s %lld events ok (merged vector, %zu counters)\n", d,
               (long long)cc_summary_data(stored)[cc_summary_layout(stored)->n_events],
               cc_summary_layout(stored)->len);
    }
    printf("%d days read from the cluster %s; rows are verified on each host (verify --db)\n",
           n_days, url);
    if (verify_slices(store, m, days, n_days, 0, &found, &err))
        rc = cli_fail(&err);
    else
        rc = found ? EXIT_REJECTED : EXIT_OK;
done:
    free(days);
    cc_summary_free(stored);
    cc_model_free(m);
    cc_store_close(store);
    return rc;
}

int cmd_verify(int argc, char **argv)
{
    cli_opt opts[] = {CLI_STORE_OPTS, {"model", 0, 1, NULL}, {"deep", 0, 0, NULL}};
    int n_opts = (int)(sizeof opts / sizeof *opts), n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "verify"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_verify, stdout);
        return EXIT_OK;
    }
    const char *db, *url, *model = cli_get(opts, n_opts, "model");
    if (cli_store_name("verify", opts, n_opts, CLI_STORE_CLUSTER, &db, &url))
        return EXIT_USAGE;
    if (!model)
        return cli_usage("verify", "--model is required");
    if (url && cli_get(opts, n_opts, "deep"))
        return cli_usage("verify", "--deep checks a SQLite file; a cluster has none");
    if (n_pos)
        return cli_usage("verify", "unexpected argument '%s'", pos[0]);
    if (url)
        return verify_cluster(url, model);

    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    cc_model *m = NULL;
    cc_summary *stored = NULL, *rebuilt = NULL, *pruned = NULL;
    int64_t *days = NULL, *row_days = NULL, faults = 0;
    int n_days = 0, n_row_days = 0, rc = EXIT_OK, bad = 0, orphans = 0, shown = 0;
    if (cli_store_open(&store, db, CC_STORE_READONLY, &err) ||
        cc_store_model_get(store, model, &m, &err) ||
        cc_store_summary_days(store, m, INT64_MIN / 4, INT64_MAX / 4, &days, &n_days, &err) ||
        cc_store_row_days(store, m, &row_days, &n_row_days, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    stored = cc_summary_create(m->m, m->k);
    rebuilt = cc_summary_create(m->m, m->k);
    pruned = cc_summary_create(m->m, m->k);
    if (!stored || !rebuilt || !pruned) {
        fprintf(stderr, "concord verify: out of memory\n");
        rc = EXIT_IO;
        goto done;
    }
    for (int i = 0; i < n_days; i++) {
        char d[11];
        int was_pruned;
        cc_format_date(days[i], d);
        if (cc_store_summary_get(store, m, days[i], stored, &err) ||
            cc_store_summary_from_rows(store, m, days[i], rebuilt, &err) ||
            cc_store_pruned_get(store, m, days[i], &was_pruned, pruned, &err)) {
            rc = cli_fail(&err);
            goto done;
        }
        int has_rows = find_day(row_days, n_row_days, days[i]) >= 0;
        cc_summary_merge(rebuilt, pruned);
        int same = cc_summary_equal(stored, rebuilt);
        bad += !same;
        const char *verdict = same ? "ok" : "MISMATCH";
        if (!has_rows && !was_pruned)
            verdict = "MISMATCH: a summary without event rows and without a pruned record";
        printf("%s %lld events %s%s\n", d,
               (long long)cc_summary_data(stored)[cc_summary_layout(stored)->n_events],
               verdict, same && was_pruned ? (has_rows ? " (partly pruned)" : " (pruned)") : "");
    }
    for (int i = 0; i < n_row_days; i++)
        if (find_day(days, n_days, row_days[i]) < 0) {
            char d[11];
            cc_format_date(row_days[i], d);
            printf("%s MISSING SUMMARY: the day has event rows but no summary\n", d);
            orphans++;
        }
    if (cc_store_class_faults(store, m, show_fault, &shown, &faults, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    printf("%d days checked, %d mismatched, %d days with rows but no summary, %lld class "
           "indexes out of range\n",
           n_days, bad, orphans, (long long)faults);
    int found = bad || orphans || faults, slices_found = 0;
    if (verify_slices(store, m, days, n_days, 1, &slices_found, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    found |= slices_found;
    if (cli_get(opts, n_opts, "deep")) {
        int ok, lines = 0;
        if (cc_store_integrity(store, show_integrity, &lines, &ok, &err)) {
            rc = cli_fail(&err);
            goto done;
        }
        printf("integrity_check: %s\n", ok ? "ok" : "PROBLEMS (listed above)");
        found |= !ok;
    }
    rc = found ? EXIT_REJECTED : EXIT_OK;
done:
    free(days);
    free(row_days);
    cc_summary_free(stored);
    cc_summary_free(rebuilt);
    cc_summary_free(pruned);
    cc_model_free(m);
    cc_store_close(store);
    return rc;
}
