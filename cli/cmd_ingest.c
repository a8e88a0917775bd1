/* cmd_ingest.c — `concord ingest` and `concord label`: files in, a tally
 * and the first rejected lines out. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"
#include "ingest.h"
#include "store_slices.h"
#include "utf8.h"

const char help_ingest[] =
    "usage: concord ingest --db FILE|--store URL [--model NAME] [--classes A,B,...]\n"
    "                      [--members X,Y,...] [--max-slices N] [--strict] [--batch N]\n"
    "                      [--threads N] [--quiet]\n"
    "                      [--publish URL [--source NAME]] FILE...\n\n"
    "Reads prediction events, one JSON object per line ('-' reads standard input), and\n"
    "stores each with the per-day summaries it adds to. Lines that fail validation are\n"
    "refused with the file, line and reason, recorded in the database's rejects table,\n"
    "and the rest is stored. An id already stored for the model is counted as a\n"
    "duplicate and skipped, so re-reading a file is safe.\n\n"
    "  --db FILE        database (created when missing)\n"
    CLI_HELP_STORE_WRITES
    "  --model NAME     model for lines without a \"model\" key (default: default)\n"
    "  --classes LIST   class names, when this run creates the model\n"
    "  --members LIST   member names, when this run creates the model\n"
    "  --max-slices N   named segments the model keeps apart, when this run creates\n"
    "                   it (1..4096, default 64); events of further segments are\n"
    "                   summed in one overflow slice, with a warning\n"
    "  --strict         store nothing at all when any line is bad\n"
    "  --batch N        lines per transaction (default 20000)\n"
    "  --threads N      threads: N - 1 parse and check lines ahead of the one that\n"
    "                   stores them (1..64, default: the online CPUs); the stored\n"
    "                   result and the rejected lines are the same for every N\n"
    "  --ts-range FROM,TO  accept event times from the day FROM to the day TO, both\n"
    "                   included (UTC dates; default 2000-01-01,2099-12-31); others are\n"
    "                   refused with the reason\n"
    "  --quiet          print rejected lines' reasons only in the tally\n"
    "  --publish URL    then publish the store to clickhouse://HOST:PORT/DATABASE, as\n"
    "                   'concord publish' does (--source NAME, default the host name);\n"
    "                   a failed publish is exit 3 with the events kept locally\n\n"
    "exit: 0 all lines stored or duplicates, 1 some lines rejected (with --strict:\n"
    "nothing stored), 2 usage, 3 file or database error (an input file that cannot be\n"
    "read is reported and skipped; the lines of the other files are stored)\n";

const char help_label[] =
    "usage: concord label --db FILE|--store URL [--model NAME] [--threads N] [--quiet]\n"
    "                     [--publish URL [--source NAME]] FILE...\n\n"
    "Reads delayed labels, one {\"id\": ..., \"label\": CLASS} per line (CLASS an index or\n"
    "a class name; optional \"model\"), and adds each to the labelled part of its event's\n"
    "day. A label that differs from an earlier one replaces it exactly. A label whose\n"
    "event is not stored yet waits and is applied when the event is ingested.\n"
    "--publish URL [--source NAME] then publishes the store, as 'concord publish' does.\n"
    "--threads N: N - 1 threads parse lines ahead of the one that applies them (1..64,\n"
    "default: the online CPUs); the result is the same for every N.\n\n"
    CLI_HELP_STORE_WRITES "\n"
    "exit: 0 ok, 1 some lines rejected, 2 usage, 3 file or database error (an input\n"
    "file that cannot be read is reported and skipped; the others are applied)\n";

#define SHOWN_REJECTS 20

typedef struct tally {
    int64_t shown;
    int quiet;
} tally;

static void on_reject(void *payload, const char *source, int64_t line, const char *reason)
{
    tally *t = payload;
    if (!t->quiet && t->shown < SHOWN_REJECTS) {
        /* reasons quote names from the logs: no raw control characters */
        cc_text_put(stderr, source);
        fprintf(stderr, ":%lld: rejected: ", (long long)line);
        cc_text_put(stderr, reason);
        fputc('\n', stderr);
    }
    t->shown++;
}

/* Once per run and model: the limit was reached and where the rest went. */
static void note_overflow(void *ctx, const char *model, int limit, int64_t events)
{
    fputs(ctx, stderr);
    fputs(": warning: model '", stderr);
    cc_text_put(stderr, model);
    fprintf(stderr, "' has reached its limit of %d slices; %lld new events of further "
                    "segments were summed in its overflow slice\n", limit, (long long)events);
}

/* "FROM,TO": two dates, the second not before the first -> Unix seconds of
 * the first second of FROM and the last second of TO. */
static int parse_range(const char *command, const char *text, int64_t *first, int64_t *last)
{
    const char *comma = strchr(text, ',');
    char a[16], b[16];
    int64_t da, db;
    if (!comma || comma - text >= (long)sizeof a || strlen(comma + 1) >= sizeof b) {
        cli_usage(command, "--ts-range must be FROM,TO (two dates YYYY-MM-DD), not '%s'", text);
        return -1;
    }
    memcpy(a, text, (size_t)(comma - text));
    a[comma - text] = '\0';
    strcpy(b, comma + 1);
    if (cli_date(command, "ts-range", a, &da) || cli_date(command, "ts-range", b, &db))
        return -1;
    if (db < da) {
        cli_usage(command, "--ts-range: %s is before %s", b, a);
        return -1;
    }
    *first = da * 86400;
    *last = db * 86400 + 86399;
    return 0;
}

static int run(int argc, char **argv, cc_record_kind kind)
{
    const char *command = kind == CC_RECORD_EVENTS ? "ingest" : "label";
    cli_opt opts[] = {
        CLI_STORE_OPTS,          {"model", 0, 1, NULL}, {"classes", 0, 1, NULL},
        {"members", 0, 1, NULL}, {"strict", 0, 0, NULL}, {"batch", 0, 1, NULL},
        {"quiet", 'q', 0, NULL}, {"ts-range", 0, 1, NULL}, {"max-slices", 0, 1, NULL},
        {"publish", 0, 1, NULL}, {"source", 0, 1, NULL}, {"threads", 0, 1, NULL},
    };
    int n_opts = (int)(sizeof opts / sizeof *opts), n_pos, help;
    char **pos = calloc((size_t)argc + 1, sizeof *pos);
    if (!pos || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, command)) {
        free(pos);
        return EXIT_USAGE;
    }
    if (help) {
        fputs(kind == CC_RECORD_EVENTS ? help_ingest : help_label, stdout);
        free(pos);
        return EXIT_OK;
    }
    const char *db, *url;
    if (cli_store_name(command, opts, n_opts, CLI_STORE_WRITES, &db, &url)) {
        free(pos);
        return EXIT_USAGE;
    }
    if (cli_get(opts, n_opts, "publish") &&
        strncmp(cli_get(opts, n_opts, "publish"), "clickhouse://", 13) != 0) {
        free(pos);
        return cli_usage(command, "--publish takes clickhouse://HOST:PORT/DATABASE, not '%s'",
                         cli_get(opts, n_opts, "publish"));
    }
    int rc = EXIT_OK, n_classes = 0, n_members = 0;
    char **classes = NULL, **members = NULL;
    if (n_pos == 0)
        rc = cli_usage(command, "no input files (use '-' for standard input)");
    else if (kind == CC_RECORD_LABELS &&
             (cli_get(opts, n_opts, "classes") || cli_get(opts, n_opts, "members") ||
              cli_get(opts, n_opts, "strict") || cli_get(opts, n_opts, "ts-range") ||
              cli_get(opts, n_opts, "max-slices")))
        rc = cli_usage(command, "--classes, --members, --max-slices, --strict and --ts-range "
                                "belong to 'ingest'");
    else if (cli_get(opts, n_opts, "model") && cli_check_name(command, "model",
                                                              cli_get(opts, n_opts, "model")))
        rc = EXIT_USAGE;
    const char *cv = cli_get(opts, n_opts, "classes"), *mv = cli_get(opts, n_opts, "members");
    if (!rc && cv) {
        if (cli_check_name(command, "classes", cv))
            rc = EXIT_USAGE;
        else if (!(classes = cli_split_names(cv, &n_classes)))
            rc = cli_usage(command, "--classes needs distinct, non-empty names up to 64 bytes");
    }
    if (!rc && mv) {
        if (cli_check_name(command, "members", mv))
            rc = EXIT_USAGE;
        else if (!(members = cli_split_names(mv, &n_members)))
            rc = cli_usage(command, "--members needs distinct, non-empty names up to 64 bytes");
    }
    cc_ingest_opts io = CC_INGEST_OPTS_INIT;
    const char *bv = cli_get(opts, n_opts, "batch");
    long long batch;
    if (!rc && bv) {
        if (cli_int(command, "batch", bv, 1, 10000000, &batch))
            rc = EXIT_USAGE;
        else
            io.batch = (int)batch;
    }
    /* default: one thread per online CPU (the reader/writer and N - 1 parsers) */
    long online = sysconf(_SC_NPROCESSORS_ONLN);
    io.threads = online < 1 ? 1 : online > CC_INGEST_MAX_THREADS ? CC_INGEST_MAX_THREADS
                                                                 : (int)online;
    const char *tv = cli_get(opts, n_opts, "threads");
    long long threads;
    if (!rc && tv) {
        if (cli_int(command, "threads", tv, 1, CC_INGEST_MAX_THREADS, &threads))
            rc = EXIT_USAGE;
        else
            io.threads = (int)threads;
    }
    const char *sv = cli_get(opts, n_opts, "max-slices");
    long long max_slices;
    if (!rc && sv) {
        if (cli_int(command, "max-slices", sv, 1, CC_SLICES_LIMIT_MAX, &max_slices))
            rc = EXIT_USAGE;
        else
            io.max_slices = (int)max_slices;
    }
    int64_t ts_first = 0, ts_last = 0;
    const char *range = cli_get(opts, n_opts, "ts-range");
    if (!rc && range && parse_range(command, range, &ts_first, &ts_last))
        rc = EXIT_USAGE;
    if (rc) {
        cli_free_names(classes, n_classes);
        cli_free_names(members, n_members);
        free(pos);
        return rc;
    }

    tally t = {0, cli_get(opts, n_opts, "quiet") != NULL};
    if (cli_get(opts, n_opts, "model"))
        io.model = cli_get(opts, n_opts, "model");
    io.classes = classes;
    io.n_classes = n_classes;
    io.members = members;
    io.n_members = n_members;
    io.strict = cli_get(opts, n_opts, "strict") != NULL;
    io.on_reject = on_reject;
    io.payload = &t;
    if (getenv("CONCORD_NOW")) /* a fixed clock for reproducible tests */
        io.now = strtoll(getenv("CONCORD_NOW"), NULL, 10);

    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    cc_ingest *ing = NULL;
    int e = cli_store_open(&store, db, kind == CC_RECORD_EVENTS ? CC_STORE_CREATE : 0, &err);
    if (!e)
        e = cc_ingest_create(&ing, store, &io, &err);
    if (!e && range)
        cc_ingest_ts_range(ing, ts_first, ts_last);
    int unreadable = 0;
    for (int i = 0; !e && i < n_pos; i++) {
        e = cc_ingest_file(ing, pos[i], kind, &err);
        if (e && cc_ingest_file_failed(ing) && !io.strict) {
            /* one bad input file does not cost the lines of the others */
            cli_fail(&err);
            unreadable++;
            e = 0;
        }
    }
    if (!e)
        e = cc_ingest_finish(ing, &err);
    if (e) {
        rc = cli_fail(&err);
        if (ing && cc_ingest_get_stats(ing)->accepted > 0)
            fprintf(stderr, "concord %s: batches committed before the error are kept; "
                            "re-running the same files is safe\n", command);
    } else {
        const cc_ingest_stats *s = cc_ingest_get_stats(ing);
        if (t.shown > SHOWN_REJECTS && !t.quiet)
            fprintf(stderr, "... and %lld more rejected lines\n",
                    (long long)(t.shown - SHOWN_REJECTS));
        if (kind == CC_RECORD_EVENTS)
            fprintf(stderr, "%s: %lld lines, %lld events stored, %lld duplicates skipped, %lld "
                            "rejected",
                    command, (long long)s->lines, (long long)s->accepted,
                    (long long)s->duplicates, (long long)s->rejected);
        else
            fprintf(stderr, "%s: %lld lines, %lld labels applied (%lld replaced an earlier "
                            "label), %lld unchanged, %lld waiting for their event, %lld rejected",
                    command, (long long)s->lines, (long long)s->labels_set,
                    (long long)s->labels_changed, (long long)s->labels_unchanged,
                    (long long)s->labels_pending, (long long)s->rejected);
        if (kind == CC_RECORD_EVENTS && s->labels_set > 0)
            fprintf(stderr, ", %lld waiting labels applied", (long long)s->labels_set);
        fputc('\n', stderr);
        cc_ingest_each_overflow(ing, note_overflow, (void *)command);
        if (s->empty_files > 0)
            fprintf(stderr, "%s: warning: %lld input file(s) had no lines\n", command,
                    (long long)s->empty_files);
        if (s->rejected > 0) {
            if (io.strict)
                fprintf(stderr, "%s: --strict: nothing was stored; the rejected lines are in "
                                "the rejects table\n", command);
            else
                fprintf(stderr, "%s: rejected lines and their reasons are in the rejects "
                                "table of %s\n", command, db);
            rc = EXIT_REJECTED;
        }
        if (unreadable > 0) {
            fprintf(stderr, "%s: %d input file(s) could not be read (see above); the lines of "
                            "the others are stored\n", command, unreadable);
            rc = EXIT_IO;
        }
    }
    cc_ingest_free(ing);
    ing = NULL;
    /* --publish: what this run committed goes to the cluster */
    if (!e && cli_get(opts, n_opts, "publish") && store) {
        int prc = cli_publish_store(store, db, cli_get(opts, n_opts, "publish"),
                                    cli_get(opts, n_opts, "source"), command);
        if (prc != EXIT_OK)
            rc = prc;
    }
    cc_store_close(store);
    cli_free_names(classes, n_classes);
    cli_free_names(members, n_members);
    free(pos);
    return rc;
}

int cmd_ingest(int argc, char **argv) { return run(argc, argv, CC_RECORD_EVENTS); }
int cmd_label(int argc, char **argv) { return run(argc, argv, CC_RECORD_LABELS); }
