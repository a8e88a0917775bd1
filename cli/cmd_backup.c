/* cmd_backup.c — `concord backup`: a consistent copy of the database. */
#include <stdio.h>

#include "cli.h"
#include "store.h"

const char help_backup[] =
    "usage: concord backup --db FILE|--store sqlite:FILE OUT\n\n"
    "Copies the whole database (every model, summary, alert state and outbox row) to\n"
    "OUT with SQLite's online backup API, from one read snapshot: ingests, labels and\n"
    "follow may go on meanwhile, and the copy holds exactly what was committed when the\n"
    "backup began. The copy is written to a temporary name next to OUT, owner-only, and\n"
    "appears under OUT only when complete; an existing OUT is never overwritten.\n\n"
    CLI_HELP_STORE_LOCAL "\n"
    "exit: 0 ok, 2 usage, 3 file or database error (OUT exists, disk full, ...)\n";

int cmd_backup(int argc, char **argv)
{
    cli_opt opts[] = {CLI_STORE_OPTS};
    int n_opts = (int)(sizeof opts / sizeof *opts), n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "backup"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_backup, stdout);
        return EXIT_OK;
    }
    const char *db, *url;
    if (cli_store_name("backup", opts, n_opts, CLI_STORE_LOCAL, &db, &url))
        return EXIT_USAGE;
    if (n_pos != 1)
        return cli_usage("backup", "give exactly one output file");
    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    int rc = EXIT_OK;
    if (cli_store_open(&store, db, CC_STORE_READONLY, &err) ||
        cc_store_backup(store, pos[0], &err))
        rc = cli_fail(&err);
    else
        fprintf(stderr, "concord backup: %s copied to %s\n", db, pos[0]);
    cc_store_close(store);
    return rc;
}
