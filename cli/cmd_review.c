/* cmd_review.c — `concord review`: the events behind an incident, read
 * from the stored rows of a time range, with a summary of the range. */
#include <errno.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "names_text.h"
#include "out.h"
#include "date.h"
#include "review.h"
#include "review_render.h"

const char help_review[] =
    "usage: concord review --db FILE --model NAME --from TS --to TS [--segment S]\n"
    "                      [--where WHAT] [--limit N] [--format text|json|csv] [-o FILE]\n\n"
    "Lists the events of a time range that answer one question, after a summary of the\n"
    "range: counts per category, the ensemble's confusion matrix, the contested class\n"
    "pairs, and for each member how often it was the lone right or lone wrong voice.\n"
    "Reads the stored event rows of the range once.\n\n"
    "  --from, --to TS    RFC 3339 date-times (2026-10-13T06:00:00Z) or dates; a date\n"
    "                     covers its whole UTC day; both ends are inclusive\n"
    "  --segment S        only events of this segment\n"
    "  --where WHAT       wrong             the ensemble was wrong (default)\n"
    "                     helped            the ensemble right, the range's best member wrong\n"
    "                     hurt              the best member right, the ensemble wrong\n"
    "                     top-mi            highest mutual information among the members\n"
    "                     top-disagreement  most member pairs disagreeing\n"
    "                     pair:A,B          the averaged output's top two classes are A and B\n"
    "                     low-margin        unlabelled events with the smallest margin\n"
    "                     all               every list above except pair\n"
    "                     The best member has the highest accuracy on the range's labelled\n"
    "                     events (ties to the lowest index). Labelled lists put the largest\n"
    "                     margin (the most confident answer) first.\n"
    "  --limit N          events per list (default 20)\n"
    "  --format F         text (default), json, or csv (one row per event, no summary)\n"
    "  -o FILE            write there instead of standard output\n\n"
    "exit: 0 ok, 2 usage, 3 file or database error, 4 unknown model\n";

/* An RFC 3339 date-time, or a date meaning its first (start) or last second. */
static int parse_ts(const char *command, const char *opt, const char *text, int end,
                    int64_t *out)
{
    int64_t day;
    const char *why = NULL;
    if (strlen(text) == 10 && cc_parse_date(text, &day) == 0) {
        *out = day * 86400 + (end ? 86399 : 0);
        return 0;
    }
    if (cc_parse_rfc3339(text, (int)strlen(text), out, &why) == 0)
        return 0;
    cli_usage(command, "--%s '%s' is neither a date (YYYY-MM-DD) nor an RFC 3339 time%s%s",
              opt, text, why ? ": " : "", why ? why : "");
    return -1;
}

static int time_range(const char *command, const char *from, const char *to, int64_t *a,
                      int64_t *b)
{
    if (!from || !to) {
        cli_usage(command, "--from and --to are required");
        return -1;
    }
    if (parse_ts(command, "from", from, 0, a) || parse_ts(command, "to", to, 1, b))
        return -1;
    if (*b < *a) {
        cli_usage(command, "--to is before --from");
        return -1;
    }
    return 0;
}

/* A class by name, else by index; -1 when neither. */
static int class_of(const cc_model *m, const char *text, size_t len)
{
    int c = cc_model_class_index(m, text, (int)len);
    if (c >= 0)
        return c;
    char *end;
    char buf[16];
    if (len == 0 || len >= sizeof buf)
        return -1;
    memcpy(buf, text, len);
    buf[len] = '\0';
    long v = strtol(buf, &end, 10);
    return *end == '\0' && v >= 0 && v < m->k ? (int)v : -1;
}

static int parse_where(const char *where, const cc_model *m, cc_review_opts *o)
{
    if (!where || strcmp(where, "wrong") == 0) {
        o->lists = 1u << CC_REVIEW_WRONG;
        return 0;
    }
    if (strcmp(where, "all") == 0) {
        o->lists = ((1u << CC_REVIEW_KINDS) - 1) & ~(1u << CC_REVIEW_PAIR);
        return 0;
    }
    if (strncmp(where, "pair:", 5) == 0) {
        const char *a = where + 5, *comma = strchr(a, ',');
        if (!comma)
            return cli_usage("review", "--where pair:A,B needs two classes, not '%s'", where);
        o->pair_a = class_of(m, a, (size_t)(comma - a));
        o->pair_b = class_of(m, comma + 1, strlen(comma + 1));
        if (o->pair_a < 0 || o->pair_b < 0)
        {
            char list[400];
            cc_names_text(list, sizeof list, (const char *const *)m->classes, m->k);
            return cli_usage("review", "--where %s: unknown class; model %s has the classes %s",
                             where, m->name, list);
        }
        if (o->pair_a == o->pair_b)
            return cli_usage("review", "--where %s: the two classes must differ", where);
        o->lists = 1u << CC_REVIEW_PAIR;
        return 0;
    }
    int w = cc_review_where_from_name(where);
    if (w < 0 || w == CC_REVIEW_PAIR)
        return cli_usage("review", "unknown --where '%s'", where);
    o->lists = 1u << w;
    return 0;
}

int cmd_review(int argc, char **argv)
{
    cli_opt opts[] = {{"db", 0, 1, NULL},      {"model", 0, 1, NULL},  {"from", 0, 1, NULL},
                      {"to", 0, 1, NULL},      {"segment", 0, 1, NULL}, {"where", 0, 1, NULL},
                      {"limit", 0, 1, NULL},   {"format", 0, 1, NULL}, {"output", 'o', 1, NULL}};
    int n_opts = 9, n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "review"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_review, stdout);
        return EXIT_OK;
    }
    const char *db = cli_get(opts, n_opts, "db"), *model = cli_get(opts, n_opts, "model");
    const char *format = cli_get(opts, n_opts, "format"), *limit = cli_get(opts, n_opts, "limit");
    if (!db || !model)
        return cli_usage("review", "--db and --model are required");
    if (n_pos)
        return cli_usage("review", "unexpected argument '%s'", pos[0]);
    cc_review_opts ro = CC_REVIEW_OPTS_INIT;
    if (time_range("review", cli_get(opts, n_opts, "from"), cli_get(opts, n_opts, "to"),
                       &ro.from, &ro.to))
        return EXIT_USAGE;
    if (limit) {
        long long v;
        if (cli_int("review", "limit", limit, 0, 100000, &v))
            return EXIT_USAGE;
        ro.limit = (int)v;
    }
    enum { TEXT, JSON, CSV } fmt = TEXT;
    if (format && strcmp(format, "json") == 0)
        fmt = JSON;
    else if (format && strcmp(format, "csv") == 0)
        fmt = CSV;
    else if (format && strcmp(format, "text") != 0)
        return cli_usage("review", "--format must be text, json or csv, not '%s'", format);
    ro.segment = cli_get(opts, n_opts, "segment");
    ro.deferred = 1;

    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    cc_model *m = NULL;
    cc_review *rv = NULL;
    int rc = EXIT_OK;
    if (cli_store_open(&store, db, CC_STORE_READONLY, &err) || cc_store_model_get(store, model, &m, &err)) {
        rc = cli_fail(&err);
    } else if (parse_where(cli_get(opts, n_opts, "where"), m, &ro)) {
        rc = EXIT_USAGE;
    } else if (cc_review_run(&rv, store, m, &ro, &err)) {
        rc = cli_fail(&err);
    } else {
        cli_note_pruned(store, m, cc_day_of_unix(ro.from), cc_day_of_unix(ro.to), "review");
        /* events are read and written one at a time (deferred review),
         * through the checked writer (no partial file on failure) */
        cc_out *o;
        if (cc_out_open(&o, cli_get(opts, n_opts, "output"), fmt == TEXT ? CC_OUT_TEXT : 0,
                        &err)) {
            rc = cli_fail(&err);
        } else {
            FILE *f = cc_out_stream(o);
            int wrc = fmt == JSON ? cc_review_write_json(f, rv, m, &err)
                      : fmt == CSV ? cc_review_write_csv(f, rv, m, &err)
                                   : cc_review_write_text(f, rv, m, &err);
            if (wrc && ferror(f)) {
                /* the output failed: the writer names the file and the reason */
                cc_out_commit(o, &err);
                rc = cli_fail(&err);
            } else if (wrc) {
                cc_out_discard(o);
                rc = cli_fail(&err);
            } else {
                if (fmt == JSON)
                    fputc('\n', f);
                if (cc_out_commit(o, &err))
                    rc = cli_fail(&err);
            }
        }
    }
    cc_review_free(rv);
    cc_model_free(m);
    cc_store_close(store);
    return rc;
}
