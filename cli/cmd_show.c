/* cmd_show.c — `concord show`: one stored event in full. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "review.h"
#include "review_render.h"

const char help_show[] =
    "usage: concord show (--db FILE | --store URL) --model NAME [--format text|json] ID\n\n"
    "One event in full: every member's probability vector, the averaged vector and the\n"
    "ensemble's class, the vote, the label, which members agree with the ensemble and\n"
    "which were right, the margin, the entropy split and the members' disagreement.\n"
    "--store takes sqlite:PATH or clickhouse://HOST:PORT/DATABASE (a cluster).\n\n"
    "exit: 0 ok, 2 usage, 3 file or database error, 4 unknown model or event\n";

int cmd_show(int argc, char **argv)
{
    cli_opt opts[] = {{"db", 0, 1, NULL}, {"model", 0, 1, NULL}, {"format", 0, 1, NULL}, {"store", 0, 1, NULL}};
    int n_opts = 4, n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "show"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_show, stdout);
        return EXIT_OK;
    }
    const char *db = cli_get(opts, n_opts, "db"), *model = cli_get(opts, n_opts, "model");
    const char *format = cli_get(opts, n_opts, "format");
    const char *url = cli_get(opts, n_opts, "store");
    if ((!db && !url) || !model)
        return cli_usage("show", "--db (or --store) and --model are required");
    if (n_pos != 1)
        return cli_usage("show", "give exactly one event id");
    int json = format && strcmp(format, "json") == 0;
    if (format && !json && strcmp(format, "text") != 0)
        return cli_usage("show", "--format must be text or json, not '%s'", format);

    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    cc_model *m = NULL;
    cc_review_event *e = NULL;
    int rc = EXIT_OK;
    if (cli_store_url_open("show", db, url, model, 1, pos[0], &store, &err) || cc_store_model_get(store, model, &m, &err) ||
        cc_review_event_get(store, m, pos[0], &e, &err)) {
        rc = cli_fail(&err);
        if (m && err.code == CC_ENOTFOUND)
            cli_note_pruned(store, m, INT64_MIN / 4, INT64_MAX / 4, "show");
    } else {
        char *text = json ? cc_review_event_json(e, m) : cc_review_event_text(e, m);
        if (!text) {
            fprintf(stderr, "concord show: out of memory\n");
            rc = EXIT_IO;
        } else {
            rc = cli_write_output("show", NULL, text, json ? CLI_OUT_NEWLINE : CLI_OUT_TEXT);
        }
        free(text);
    }
    cc_review_event_free(e);
    cc_model_free(m);
    cli_store_url_close(store);
    return rc;
}
