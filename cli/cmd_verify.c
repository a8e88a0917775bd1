/* cmd_verify.c — `concord verify`: rebuilds each day's summary from its
 * event rows and compares it with the stored one. */
#include <stdio.h>
#include <stdlib.h>

#include "cli.h"
#include "date.h"
#include "store.h"

const char help_verify[] =
    "usage: concord verify --db FILE --model NAME\n\n"
    "Recomputes every day's summary from the stored events and labels and compares it,\n"
    "counter by counter, with the summary the reports read. Prints one line per day.\n\n"
    "exit: 0 all days match, 1 some day differs, 2 usage, 3 file or database error,\n"
    "4 unknown model\n";

int cmd_verify(int argc, char **argv)
{
    cli_opt opts[] = {{"db", 0, 1, NULL}, {"model", 0, 1, NULL}};
    int n_opts = 2, n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "verify"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_verify, stdout);
        return EXIT_OK;
    }
    const char *db = cli_get(opts, n_opts, "db"), *model = cli_get(opts, n_opts, "model");
    if (!db || !model)
        return cli_usage("verify", "--db and --model are required");

    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    cc_model *m = NULL;
    cc_summary *stored = NULL, *rebuilt = NULL;
    int64_t *days = NULL;
    int n_days = 0, rc = EXIT_OK, bad = 0;
    if (cc_store_open(&store, db, 0, &err) || cc_store_model_get(store, model, &m, &err) ||
        cc_store_summary_days(store, m, INT64_MIN / 4, INT64_MAX / 4, &days, &n_days, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    stored = cc_summary_create(m->m, m->k);
    rebuilt = cc_summary_create(m->m, m->k);
    if (!stored || !rebuilt) {
        fprintf(stderr, "concord verify: out of memory\n");
        rc = EXIT_IO;
        goto done;
    }
    for (int i = 0; i < n_days; i++) {
        char d[11];
        cc_format_date(days[i], d);
        if (cc_store_summary_get(store, m, days[i], stored, &err) ||
            cc_store_summary_from_rows(store, m, days[i], rebuilt, &err)) {
            rc = cli_fail(&err);
            goto done;
        }
        int same = cc_summary_equal(stored, rebuilt);
        bad += !same;
        printf("%s %lld events %s\n", d,
               (long long)cc_summary_data(stored)[cc_summary_layout(stored)->n_events],
               same ? "ok" : "MISMATCH");
    }
    printf("%d days checked, %d mismatched\n", n_days, bad);
    rc = bad ? EXIT_REJECTED : EXIT_OK;
done:
    free(days);
    cc_summary_free(stored);
    cc_summary_free(rebuilt);
    cc_model_free(m);
    cc_store_close(store);
    return rc;
}
