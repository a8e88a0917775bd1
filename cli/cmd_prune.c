/* cmd_prune.c — `concord prune`: deletes the event rows of old days and
 * keeps their summaries, one day per transaction. */
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "cli.h"
#include "date.h"
#include "store.h"

const char help_prune[] =
    "usage: concord prune --db FILE|--store URL --model NAME --before DATE [--dry-run]\n\n"
    "Deletes the stored event rows of the model's days before DATE (UTC) and keeps\n"
    "those days' summaries, so reports, baselines and alert checks on them go on\n"
    "working; review and show can no longer list their events, and say so. The summary\n"
    "part of the deleted rows is recorded per day (pruned_days), so 'concord verify'\n"
    "still proves every summary. Events for a pruned day are refused by later ingests\n"
    "(their ids can no longer be checked for duplicates). One transaction per day;\n"
    "other writers get the lock between days.\n\n"
    "  --dry-run   list the days that would be pruned, change nothing\n"
    CLI_HELP_STORE_WRITES "\n"
    "exit: 0 ok, 2 usage, 3 file or database error, 4 unknown model\n";

int cmd_prune(int argc, char **argv)
{
    cli_opt opts[] = {CLI_STORE_OPTS, {"model", 0, 1, NULL}, {"before", 0, 1, NULL},
                      {"dry-run", 0, 0, NULL}};
    int n_opts = (int)(sizeof opts / sizeof *opts), n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "prune"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_prune, stdout);
        return EXIT_OK;
    }
    const char *db, *url, *model = cli_get(opts, n_opts, "model");
    const char *bv = cli_get(opts, n_opts, "before");
    int dry = cli_get(opts, n_opts, "dry-run") != NULL;
    int64_t before;
    if (cli_store_name("prune", opts, n_opts, CLI_STORE_WRITES, &db, &url))
        return EXIT_USAGE;
    if (!model || !bv)
        return cli_usage("prune", "--model and --before are required");
    if (n_pos)
        return cli_usage("prune", "unexpected argument '%s'", pos[0]);
    if (cli_date("prune", "before", bv, &before))
        return EXIT_USAGE;

    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    cc_model *m = NULL;
    int64_t *days = NULL, total = 0;
    int n_days = 0, rc = EXIT_OK, done_days = 0;
    if (cli_store_open(&store, db, dry ? CC_STORE_READONLY : 0, &err) ||
        cc_store_model_get(store, model, &m, &err) ||
        cc_store_row_days(store, m, &days, &n_days, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    int64_t now = (int64_t)time(NULL);
    for (int i = 0; i < n_days && days[i] < before; i++) {
        char d[11];
        int64_t removed = 0;
        cc_format_date(days[i], d);
        if (dry) {
            printf("%s would be pruned\n", d);
            done_days++;
            continue;
        }
        if (cc_store_work_begin(store, &err) ||
            cc_store_prune_day(store, m, days[i], now, &removed, &err) ||
            cc_store_work_commit(store, &err)) {
            cc_store_work_abort(store);
            rc = cli_fail(&err);
            break;
        }
        printf("%s %lld event rows deleted, summary kept\n", d, (long long)removed);
        total += removed;
        done_days++;
    }
    if (rc == EXIT_OK && !dry)
        fprintf(stderr, "concord prune: model '%s': %d days before %s pruned, %lld event rows "
                        "deleted; their summaries are kept\n",
                model, done_days, bv, (long long)total);
    else if (rc == EXIT_OK)
        fprintf(stderr, "concord prune: %d days would be pruned (dry run)\n", done_days);
done:
    free(days);
    cc_model_free(m);
    cc_store_close(store);
    return rc;
}
