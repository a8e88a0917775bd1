/* cmd_baseline.c — `concord baseline`: records a model's baseline period. */
#include <stdio.h>
#include <stdlib.h>

#include "cli.h"
#include "date.h"
#include "store.h"

const char help_baseline[] =
    "usage: concord baseline --db FILE|--store URL --model NAME --from DATE --to DATE\n\n"
    "Marks the days (UTC, inclusive) whose traffic is the reference that later windows\n"
    "are compared with. Setting it again replaces the earlier period. The period must\n"
    "hold events.\n\n"
    CLI_HELP_STORE_WRITES "\n"
    "exit: 0 ok, 2 usage, 3 file or database error, 4 unknown model or no events\n";

int cmd_baseline(int argc, char **argv)
{
    cli_opt opts[] = {CLI_STORE_OPTS, {"model", 0, 1, NULL}, {"from", 0, 1, NULL},
                      {"to", 0, 1, NULL}};
    int n_opts = (int)(sizeof opts / sizeof *opts), n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "baseline"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_baseline, stdout);
        return EXIT_OK;
    }
    const char *db, *url, *model = cli_get(opts, n_opts, "model");
    const char *fv = cli_get(opts, n_opts, "from"), *tv = cli_get(opts, n_opts, "to");
    int64_t from, to;
    if (cli_store_name("baseline", opts, n_opts, CLI_STORE_WRITES, &db, &url))
        return EXIT_USAGE;
    if (!model || !fv || !tv)
        return cli_usage("baseline", "--model, --from and --to are required");
    if (n_pos)
        return cli_usage("baseline", "unexpected argument '%s'", pos[0]);
    if (cli_date("baseline", "from", fv, &from) || cli_date("baseline", "to", tv, &to))
        return EXIT_USAGE;
    if (to < from)
        return cli_usage("baseline", "--to %s is before --from %s", tv, fv);

    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    cc_model *m = NULL;
    int64_t *days = NULL;
    int n_days = 0, rc = EXIT_OK;
    if (cli_store_open(&store, db, 0, &err) || cc_store_model_get(store, model, &m, &err) ||
        cc_store_summary_days(store, m, from, to, &days, &n_days, &err)) {
        rc = cli_fail(&err);
    } else if (n_days == 0) {
        fprintf(stderr, "concord baseline: model '%s' has no events from %s to %s\n", model, fv,
                tv);
        rc = EXIT_NOTFOUND;
    } else if (cc_store_work_begin(store, &err) ||
               cc_store_baseline_set(store, m, from, to, &err) ||
               cc_store_work_commit(store, &err)) {
        /* an explicit unit of work: a waiting writer raises its flag (store.h) */
        cc_store_work_abort(store);
        rc = cli_fail(&err);
    } else {
        fprintf(stderr, "baseline of '%s': %s..%s (%d days with events)\n", model, fv, tv,
                n_days);
    }
    free(days);
    cc_model_free(m);
    cc_store_close(store);
    return rc;
}
