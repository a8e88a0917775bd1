/* cmd_report.c — `concord report`: windows of stored summaries as text or JSON. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "report.h"
#include "date.h"
#include "history.h"
#include "review.h"

const char help_report[] =
    "usage: concord report --db FILE --model NAME [--from DATE] [--to DATE]\n"
    "                      [--by day|week|all] [--format text|json|html] [--no-review]\n"
    "                      [-o FILE]\n\n"
    "Diversity of the members (disagreement, Cohen's and Fleiss' kappa), uncertainty of\n"
    "the averaged output (entropy, expected entropy, mutual information), class mix,\n"
    "contested class pairs, and on labelled events accuracy of members, ensemble, vote\n"
    "and oracle, Kuncheva-Whitaker diversity and McNemar's test against the best member.\n"
    "Reads the per-day summaries only. Without --from/--to every day with events is\n"
    "shown. Weeks are ISO weeks (Monday to Sunday, UTC).\n\n"
    "  --by day|week|all  one window per day (default), per week, or one for the range\n"
    "  --format text|json the JSON contract is described in the README\n"
    "  --format html      one self-contained page with charts (write it with -o); it also\n"
    "                     reads the range's event rows for the review lists, unless\n"
    "  --no-review        is given\n"
    "  -o FILE            write there instead of standard output\n\n"
    "exit: 0 ok, 2 usage, 3 file or database error, 4 unknown model\n";

/* The rules firing now, one line each, for the page's status line. */
typedef struct firing {
    char **lines;
    int n;
} firing;

static int add_firing(void *ctx, const cc_state_row *row)
{
    firing *f = ctx;
    char since[11], line[512];
    cc_format_date(row->since_day, since);
    snprintf(line, sizeof line, "%s (%s): raised since %s; %s = %.4g, bound %.4g", row->rule,
             row->urgency, since, row->metric, row->last_value, row->last_bound);
    char **grown = realloc(f->lines, (size_t)(f->n + 1) * sizeof *grown);
    if (!grown || !(grown[f->n] = strdup(line))) {
        if (grown)
            f->lines = grown;
        return 1;
    }
    f->lines = grown;
    f->n++;
    return 0;
}

static void free_firing(firing *f)
{
    for (int i = 0; i < f->n; i++)
        free(f->lines[i]);
    free(f->lines);
}

int cli_report_html(cc_store *store, const cc_report *r, int with_review, const char *note,
                    char **out)
{
    cc_html_extras x = CC_HTML_EXTRAS_INIT;
    cc_review *rv = NULL;
    cc_error err = CC_ERROR_INIT;
    x.note = note;
    *out = NULL;
    if (with_review && r->n_windows > 0) {
        cc_review_opts o = CC_REVIEW_OPTS_INIT;
        o.from = r->windows[0].from * 86400;
        o.to = r->windows[r->n_windows - 1].to * 86400 + 86399;
        o.lists = ((1u << CC_REVIEW_KINDS) - 1) & ~(1u << CC_REVIEW_PAIR);
        o.limit = 10;
        if (cc_review_run(&rv, store, r->model, &o, &err))
            return cli_fail(&err);
        x.review = rv;
    }
    firing f = {NULL, 0};
    if (cc_history_evaluated(store, r->model->name)) {
        x.alerts_known = 1;
        if (cc_history_states(store, r->model->name, "raised", add_firing, &f, &err)) {
            cc_review_free(rv);
            free_firing(&f);
            return cli_fail(&err);
        }
        x.alerts = (const char *const *)f.lines;
        x.n_alerts = f.n;
    }
    *out = cc_report_html(r, &x);
    cc_review_free(rv);
    free_firing(&f);
    return EXIT_OK;
}

int cmd_report(int argc, char **argv)
{
    cli_opt opts[] = {{"db", 0, 1, NULL},  {"model", 0, 1, NULL},  {"from", 0, 1, NULL},
                      {"to", 0, 1, NULL},  {"by", 0, 1, NULL},     {"format", 0, 1, NULL},
                      {"output", 'o', 1, NULL}, {"no-review", 0, 0, NULL}};
    int n_opts = 8, n_pos, help;
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
    int html = format && strcmp(format, "html") == 0;
    if (format && !json && !html && strcmp(format, "text") != 0)
        return cli_usage("report", "--format must be text, json or html, not '%s'", format);

    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    cc_report *r = NULL;
    int rc = EXIT_OK;
    if (cc_store_open(&store, db, 0, &err) || cc_report_build(&r, store, &ro, &err)) {
        rc = cli_fail(&err);
    } else {
        char *text = NULL;
        if (html)
            rc = cli_report_html(store, r, !cli_get(opts, n_opts, "no-review"), NULL, &text);
        else
            text = json ? cc_report_json(r) : cc_report_text(r);
        if (rc != EXIT_OK) {
            cc_report_free(r);
            cc_store_close(store);
            return rc;
        }
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
