/* cmd_report.c — `concord report`: windows of stored summaries as text, JSON or HTML. */
#include <errno.h>
#ifdef __GLIBC__
#include <malloc.h>
#endif
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "out.h"
#include "report.h"
#include "date.h"
#include "review.h"

const char help_report[] =
    "usage: concord report (--db FILE | --store URL) --model NAME [--from DATE] [--to DATE]\n"
    "                      [--by day|week|all] [--format text|json|html] [--no-review]\n"
    "                      [--review-max N|all] [--rules FILE] [--segment S | --by-segment]\n"
    "                      [-o FILE]\n"
    "       concord report --db FILE|--store URL --model NAME --by hour --from TIME --to TIME\n"
    "                      [--format text|json|html] [--no-review] [--review-max N|all]\n"
    "                      [--rules FILE] [-o FILE]\n\n"
    "Diversity of the members (disagreement, Cohen's and Fleiss' kappa), uncertainty of\n"
    "the averaged output (entropy, expected entropy, mutual information), class mix,\n"
    "contested class pairs, and on labelled events accuracy of members, ensemble, vote\n"
    "and oracle, Kuncheva-Whitaker diversity and McNemar's test against the best member.\n"
    "Reads the per-day summaries only. Without --from/--to every day with events is\n"
    "shown. Weeks are ISO weeks (Monday to Sunday, UTC).\n\n"
    "  --by day|week|all  one window per day (default), per week, or one for the range\n"
    "  --by hour          one window per UTC hour that has events, computed from the\n"
    "                     stored event rows (days that were pruned cannot be shown);\n"
    "                     --from and --to are then required: RFC 3339 times on whole\n"
    "                     hours (--to excluded, e.g. 2026-11-03T22:00:00Z) or dates\n"
    "                     (--to's whole day included)\n"
    "  --format text|json the JSON contract is described in the README\n"
    "  --format html      one self-contained page with charts (write it with -o); it also\n"
    "                     reads the range's event rows for the review lists, unless\n"
    "  --no-review        is given\n"
    "  --review-max N|all the page's review reads at most about N events (default\n"
    "                     100000): when the range has more, one in ceil(events / N) in\n"
    "                     arrival order, and the page says so; 'all' reads every event\n"
    "                     (as `concord review` does)\n"
    "  --rules FILE       replay these alert rules day by day over the report's days\n"
    "                     (from a fresh state, recording and sending nothing) and add the\n"
    "                     alert timeline; the HTML page's status line always comes from\n"
    "                     such a replay, of the default rules when --rules is not given\n"
    "  --segment S        the report of one slice (the events whose segment is S): its\n"
    "                     windows against its own baseline days; '(none)' is the\n"
    "                     events without a segment, '(overflow)' the segments past the\n"
    "                     model's slice limit (see 'concord models')\n"
    "  --by-segment       adds one row per slice to every window: events, disagreement,\n"
    "                     mutual information, accuracy, class-mix and KS drift against\n"
    "                     the slice's own baseline days, and its class mix against the\n"
    "                     whole model's in the same window (JSON: a \"segments\" array\n"
    "                     in each window)\n"
    "  -o FILE            write there instead of standard output\n"
    "  --store URL        sqlite:PATH (the same as --db PATH) or\n"
    "                     clickhouse://HOST:PORT/DATABASE: the cluster's merged summaries\n"
    "                     (see 'concord publish'); fails when a shard does not answer\n\n"
    "exit: 0 ok, 2 usage, 3 file or database error, 4 unknown model or segment (or, with\n"
    "      --by hour, a range that touches pruned days)\n";

/* The alert timeline over the days from..to of a report with n windows
 * (NULL rules_path: the default rules); t stays empty when n is 0. */
static int timeline_of(cc_store *store, const char *model, int n, int64_t from, int64_t to,
                       const char *rules_path, cli_replay *rp, cc_report_timeline *t)
{
    memset(rp, 0, sizeof *rp);
    memset(t, 0, sizeof *t);
    t->rules = rules_path ? rules_path : "default rules";
    if (n == 0)
        return EXIT_OK;
    int rc = cli_replay_run(store, rules_path, model, from, to, rp);
    if (rc)
        return rc;
    t->items = rp->items;
    t->n = rp->n_items;
    t->raised = rp->raised;
    t->n_raised = rp->n_raised;
    t->not_evaluated = rp->not_evaluated;
    t->last_day = to;
    return EXIT_OK;
}

/* The page of pg with its review and alert timeline. */
static int page_html(cc_store *store, const cc_report_page *pg, long long review_max,
                     const char *note, const char *rules_path, char **out)
{
    cc_html_extras x = CC_HTML_EXTRAS_INIT;
    cc_review *rv = NULL;
    cc_error err = CC_ERROR_INIT;
    const cc_report *r = cc_report_page_head(pg);
    int64_t first, last;
    int n = cc_report_page_windows(pg, &first, &last);
    x.note = note;
    *out = NULL;
    if (review_max != 0 && n > 0) {
        cc_review_opts o = CC_REVIEW_OPTS_INIT;
        o.from = first * 86400;
        o.to = last * 86400 + 86399;
        o.lists = ((1u << CC_REVIEW_KINDS) - 1) & ~(1u << CC_REVIEW_PAIR);
        o.limit = 10;
        const int64_t events = cc_report_page_events(pg);
        if (review_max > 0 && events > review_max)
            o.sample_every = (events + review_max - 1) / review_max;
        x.review_range_events = events;
        if (cc_review_run(&rv, store, r->model, &o, &err))
            return cli_fail(&err);
        x.review = rv;
    }
    cli_replay rp;
    cc_report_timeline t;
    int rc = timeline_of(store, r->model->name, n, first, last, rules_path, &rp, &t);
    if (rc) {
        cc_review_free(rv);
        return rc;
    }
    x.timeline = &t;
    *out = cc_report_page_html(pg, &x);
    cc_review_free(rv);
    cli_replay_free(&rp);
    return EXIT_OK;
}

int cli_report_html_rules(cc_store *store, const cc_report *r, long long review_max,
                          const char *note, const char *rules_path, char **out)
{
    cc_report_page *pg = cc_report_page_of(r);
    *out = NULL;
    if (!pg) {
        fprintf(stderr, "concord: out of memory\n");
        return EXIT_IO;
    }
    int rc = page_html(store, pg, review_max, note, rules_path, out);
    cc_report_page_free(pg);
    return rc;
}

int cli_report_html(cc_store *store, const cc_report *r, long long review_max, const char *note,
                    char **out)
{
    return cli_report_html_rules(store, r, review_max, note, NULL, out);
}

/* --from/--to of `--by hour`: a date (its first second; for --to the
 * second after the day) or an RFC 3339 time on a whole hour. */
static int hour_bound(const char *opt, const char *text, int is_to, int64_t *out)
{
    int64_t day;
    const char *why = NULL;
    if (cc_parse_date(text, &day) == 0) {
        *out = (day + (is_to ? 1 : 0)) * 86400;
        return 0;
    }
    if (cc_parse_rfc3339(text, (int)strlen(text), out, &why) != 0) {
        cli_usage("report", "--%s '%s' is neither a date (YYYY-MM-DD) nor an RFC 3339 time "
                            "(%s)", opt, text, why ? why : "unreadable");
        return -1;
    }
    if (*out % 3600 != 0) {
        cli_usage("report", "--%s '%s' is not on a whole UTC hour (--by hour windows are "
                            "UTC hours, e.g. 2026-11-03T14:00:00Z)", opt, text);
        return -1;
    }
    return 0;
}

int cmd_report(int argc, char **argv)
{
    cli_opt opts[] = {CLI_STORE_OPTS,      {"model", 0, 1, NULL},  {"from", 0, 1, NULL},
                      {"to", 0, 1, NULL},  {"by", 0, 1, NULL},     {"format", 0, 1, NULL},
                      {"output", 'o', 1, NULL}, {"no-review", 0, 0, NULL},
                      {"rules", 0, 1, NULL},
                      {"segment", 0, 1, NULL}, {"by-segment", 0, 0, NULL},
                      {"review-max", 0, 1, NULL}};
    int n_opts = (int)(sizeof opts / sizeof *opts), n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "report"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_report, stdout);
        return EXIT_OK;
    }
    cc_report_opts ro = {0};
    const char *db, *url;
    if (cli_store_name("report", opts, n_opts, CLI_STORE_CLUSTER, &db, &url))
        return EXIT_USAGE;
    const char *by = cli_get(opts, n_opts, "by"), *format = cli_get(opts, n_opts, "format");
    const char *out = cli_get(opts, n_opts, "output");
    ro.model = cli_get(opts, n_opts, "model");
    if (!ro.model)
        return cli_usage("report", "--model is required");
    if (n_pos)
        return cli_usage("report", "unexpected argument '%s'", pos[0]);
    if (by && strcmp(by, "hour") == 0) {
        ro.by = CC_BY_HOUR;
        if (!cli_get(opts, n_opts, "from") || !cli_get(opts, n_opts, "to"))
            return cli_usage("report", "--by hour needs --from and --to");
        if (hour_bound("from", cli_get(opts, n_opts, "from"), 0, &ro.ts_from) ||
            hour_bound("to", cli_get(opts, n_opts, "to"), 1, &ro.ts_to))
            return EXIT_USAGE;
        if (ro.ts_to <= ro.ts_from)
            return cli_usage("report", "--to is not after --from");
    } else if (cli_get(opts, n_opts, "from")) {
        ro.has_from = 1;
        if (cli_date("report", "from", cli_get(opts, n_opts, "from"), &ro.from))
            return EXIT_USAGE;
    }
    if (ro.by != CC_BY_HOUR && cli_get(opts, n_opts, "to")) {
        ro.has_to = 1;
        if (cli_date("report", "to", cli_get(opts, n_opts, "to"), &ro.to))
            return EXIT_USAGE;
    }
    if (ro.has_from && ro.has_to && ro.to < ro.from)
        return cli_usage("report", "--to is before --from");
    if (ro.by == CC_BY_HOUR) {
        /* set with its bounds above */
    } else if (!by || strcmp(by, "day") == 0) {
        ro.by = CC_BY_DAY;
    } else if (strcmp(by, "week") == 0) {
        ro.by = CC_BY_WEEK;
    } else if (strcmp(by, "all") == 0) {
        ro.by = CC_BY_ALL;
    } else {
        return cli_usage("report", "--by must be hour, day, week or all, not '%s'", by);
    }
    long long review_max = CLI_REVIEW_MAX_DEFAULT;
    const char *rmax = cli_get(opts, n_opts, "review-max");
    if (rmax && strcmp(rmax, "all") == 0) {
        review_max = CLI_REVIEW_ALL;
    } else if (rmax) {
        char *end;
        errno = 0;
        review_max = strtoll(rmax, &end, 10);
        if (errno || end == rmax || *end || review_max < 1)
            return cli_usage("report", "--review-max must be a whole number >= 1 or 'all', not '%s'",
                             rmax);
    }
    if (cli_get(opts, n_opts, "no-review"))
        review_max = 0;
    int json = format && strcmp(format, "json") == 0;
    int html = format && strcmp(format, "html") == 0;
    if (format && !json && !html && strcmp(format, "text") != 0)
        return cli_usage("report", "--format must be text, json or html, not '%s'", format);
    ro.segment = cli_get(opts, n_opts, "segment");
    ro.by_segment = cli_get(opts, n_opts, "by-segment") != NULL;
    if (ro.segment && ro.by_segment)
        return cli_usage("report", "--segment and --by-segment do not go together");
    if ((ro.segment || ro.by_segment) && (html || cli_get(opts, n_opts, "rules")))
        return cli_usage("report", "--segment and --by-segment give text or JSON, without "
                                   "--rules");
    /* the page has a slice section: it reads the per-slice rows */
    if (html && ro.by != CC_BY_HOUR)
        ro.by_segment = 1;

    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    cc_report *r = NULL;
    int rc = EXIT_OK;
    if (cli_store_url_open("report", db, url, ro.model, html && !cli_get(opts, n_opts, "no-review"),
                           NULL, &store, &err))
        return cli_fail(&err);
    if (!html && !cli_get(opts, n_opts, "rules")) {
        /* text and JSON are written window by window as they are computed,
         * through the checked writer (no partial file on failure) */
        cc_out *o;
        if (cc_out_open(&o, out, json ? 0 : CC_OUT_TEXT, &err)) {
            cli_store_url_close(store);
            return cli_fail(&err);
        }
        FILE *f = cc_out_stream(o);
        if ((json ? cc_report_write_json(f, store, &ro, &err)
                  : cc_report_write_text(f, store, &ro, &err)) != 0) {
            if (ferror(f))
                cc_out_commit(o, &err); /* names the file and the reason; removes it */
            else
                cc_out_discard(o);
            rc = cli_fail(&err);
        } else {
            if (json)
                fputc('\n', f);
            if (cc_out_commit(o, &err))
                rc = cli_fail(&err);
        }
        cli_store_url_close(store);
        return rc;
    }
    /* the page keeps the plotted numbers of each window, not its figures */
    cc_report_page *pg = NULL;
#ifdef __GLIBC__
    /* the page's alert replay builds and frees a one-day report per day (at
     * 64 x 256 a few summaries of 15.3 MiB each); glibc would hand each back
     * to the system and fault it in again (at 365 days 15 s of system time
     * against 0.2 s): keep freed memory for the next day instead, for a peak
     * about 15-30 MiB higher (bench/RESULTS.md, "HTML page"). */
    if (html) {
        mallopt(M_MMAP_THRESHOLD, 32 << 20);
        mallopt(M_TRIM_THRESHOLD, 128 << 20);
    }
#endif
    if (html ? cc_report_page_build(&pg, store, &ro, &err)
             : cc_report_build(&r, store, &ro, &err)) {
        rc = cli_fail(&err);
    } else {
        char *text = NULL;
        const char *rules = cli_get(opts, n_opts, "rules");
        if (html) {
            rc = page_html(store, pg, review_max, NULL, rules, &text);
        } else if (rules) {
            cli_replay rp;
            cc_report_timeline t;
            int n = r->n_windows;
            rc = timeline_of(store, r->model->name, n, n ? r->windows[0].from : 0,
                             n ? r->windows[n - 1].to : 0, rules, &rp, &t);
            if (rc == EXIT_OK)
                text = json ? cc_report_json_with(r, &t) : cc_report_text_with(r, &t);
            cli_replay_free(&rp);
        } else {
            text = json ? cc_report_json(r) : cc_report_text(r);
        }
        if (rc != EXIT_OK) {
            cc_report_free(r);
            cc_report_page_free(pg);
            cli_store_url_close(store);
            return rc;
        }
        if (!text) {
            fprintf(stderr, "concord report: out of memory\n");
            rc = EXIT_IO;
        } else {
            rc = cli_write_output("report", out, text,
                                  json ? CLI_OUT_NEWLINE : html ? 0 : CLI_OUT_TEXT);
        }
        free(text);
    }
    cc_report_free(r);
    cc_report_page_free(pg);
    cli_store_url_close(store);
    return rc;
}
