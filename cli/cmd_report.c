/* cmd_report.c — `concord report`: windows of stored summaries as text or JSON. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "report.h"

const char help_report[] =
    "usage: concord report --db FILE --model NAME [--from DATE] [--to DATE]\n"
    "                      [--by day|week|all] [--format text|json] [-o FILE]\n\n"
    "Diversity of the members (disagreement, Cohen's and Fleiss' kappa), uncertainty of\n"
    "the averaged output (entropy, expected entropy, mutual information), class mix,\n"
    "contested class pairs, and on labelled events accuracy of members, ensemble, vote\n"
    "and oracle, Kuncheva-Whitaker diversity and McNemar's test against the best member.\n"
    "Reads the per-day summaries only. Without --from/--to every day with events is\n"
    "shown. Weeks are ISO weeks (Monday to Sunday, UTC).\n\n"
    "  --by day|week|all  one window per day (default), per week, or one for the range\n"
    "  --format text|json the JSON contract is described in the README\n"
    "  -o FILE            write there instead of standard output\n\n"
    "exit: 0 ok, 2 usage, 3 file or database error, 4 unknown model\n";

int cmd_report(int argc, char **argv)
{
    cli_opt opts[] = {{"db", 0, 1, NULL},  {"model", 0, 1, NULL},  {"from", 0, 1, NULL},
                      {"to", 0, 1, NULL},  {"by", 0, 1, NULL},     {"format", 0, 1, NULL},
                      {"output", 'o', 1, NULL}};
    int n_opts = 7, n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "report"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_report, stdout);
        return EXIT_OK;
    }
    cc_report_opts ro = {0};
    const char *db = cli_get(opts, n_opts, "db");
    const char *by = cli_get(opts, n_opts, "by"), *format = cli_get(opts, n_opts, "format");
    const char *out = cli_get(opts, n_opts, "output");
    ro.model = cli_get(opts, n_opts, "model");
    if (!db || !ro.model)
        return cli_usage("report", "--db and --model are required");
    if (n_pos)
        return cli_usage("report", "unexpected argument '%s'", pos[0]);
    if (cli_get(opts, n_opts, "from")) {
        ro.has_from = 1;
        if (cli_date("report", "from", cli_get(opts, n_opts, "from"), &ro.from))
            return EXIT_USAGE;
    }
    if (cli_get(opts, n_opts, "to")) {
        ro.has_to = 1;
        if (cli_date("report", "to", cli_get(opts, n_opts, "to"), &ro.to))
            return EXIT_USAGE;
    }
    if (ro.has_from && ro.has_to && ro.to < ro.from)
        return cli_usage("report", "--to is before --from");
    if (!by || strcmp(by, "day") == 0)
        ro.by = CC_BY_DAY;
    else if (strcmp(by, "week") == 0)
        ro.by = CC_BY_WEEK;
    else if (strcmp(by, "all") == 0)
        ro.by = CC_BY_ALL;
    else
        return cli_usage("report", "--by must be day, week or all, not '%s'", by);
    int json = format && strcmp(format, "json") == 0;
    if (format && !json && strcmp(format, "text") != 0)
        return cli_usage("report", "--format must be text or json, not '%s'", format);

    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    cc_report *r = NULL;
    int rc = EXIT_OK;
    if (cc_store_open(&store, db, 0, &err) || cc_report_build(&r, store, &ro, &err)) {
        rc = cli_fail(&err);
    } else {
        char *text = json ? cc_report_json(r) : cc_report_text(r);
        FILE *f = out ? fopen(out, "w") : stdout;
        if (!text) {
            fprintf(stderr, "concord report: out of memory\n");
            rc = EXIT_IO;
        } else if (!f) {
            fprintf(stderr, "concord report: %s: cannot write: %s\n", out, strerror(errno));
            rc = EXIT_IO;
        } else {
            fputs(text, f);
            if (json)
                fputc('\n', f);
            if ((out ? fclose(f) : fflush(f)) != 0) {
                fprintf(stderr, "concord report: %s: write failed: %s\n",
                        out ? out : "<stdout>", strerror(errno));
                rc = EXIT_IO;
            }
        }
        free(text);
    }
    cc_report_free(r);
    cc_store_close(store);
    return rc;
}
