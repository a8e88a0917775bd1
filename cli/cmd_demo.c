/* cmd_demo.c — `concord demo`: generates the invented packhouse data,
 * ingests events and delayed labels, sets days 1-7 as baseline, and writes
 * the per-day report as text (also printed) and JSON. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include "cli.h"
#include "date.h"
#include "ingest.h"
#include "packhouse.h"
#include "report.h"

const char help_demo[] =
    "usage: concord demo [--dir DIR] [--per-day N] [--seed N]\n\n"
    "Runs the whole job on invented data: an apple packhouse that grades fruit into six\n"
    "grades with five members on three packing lines, 28 days, with five injected\n"
    "incidents - a fogged camera (days 9-11: members disagree, mutual information\n"
    "rises), one member running an old model (days 14-15: 'size' is less accurate and\n"
    "disagrees with the others), a late-season grade mix (from day 16: class mix moves,\n"
    "labels confirm it), one line's camera fogging on and off (days 19-20: line-2 only;\n"
    "the whole house barely moves) and a retrain after which the members are near\n"
    "copies (from day 23: disagreement collapses).\n"
    "Writes events.jsonl, labels.jsonl, demo.db, report.txt, report.json and report.html\n"
    "into DIR (default ./concord-demo, replacing an earlier demo database there). Then\n"
    "checks the default alert rules day by day (rules.jsonc) and prints the alert timeline\n"
    "(alerts.jsonl).\n\n"
    "exit: 0 ok, 2 usage, 3 file or database error\n";

enum { DIR_MAX = 4000 };

static int write_file(const char *path, const char *text, int flags)
{
    return cli_write_output("demo", path, text, flags) == EXIT_OK ? 0 : -1;
}

int cmd_demo(int argc, char **argv)
{
    cli_opt opts[] = {{"dir", 0, 1, NULL}, {"per-day", 0, 1, NULL}, {"seed", 0, 1, NULL}};
    int n_opts = 3, n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "demo"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_demo, stdout);
        return EXIT_OK;
    }
    if (n_pos)
        return cli_usage("demo", "unexpected argument '%s'", pos[0]);
    const char *dir = cli_get(opts, n_opts, "dir") ? cli_get(opts, n_opts, "dir")
                                                   : "concord-demo";
    if (strlen(dir) > DIR_MAX) /* leaves room for "/alerts.jsonl" and "-wal" in 4096 bytes */
        return cli_usage("demo", "--dir is %zu bytes long; at most %d bytes, so that the file "
                                 "names inside it fit", strlen(dir), DIR_MAX);
    cc_demo_opts dopts = CC_DEMO_OPTS_INIT;
    long long v;
    if (cli_get(opts, n_opts, "per-day")) {
        if (cli_int("demo", "per-day", cli_get(opts, n_opts, "per-day"), 10, 1000000, &v))
            return EXIT_USAGE;
        dopts.per_day = (int)v;
    }
    if (cli_get(opts, n_opts, "seed")) {
        if (cli_int("demo", "seed", cli_get(opts, n_opts, "seed"), 0, INT64_MAX, &v))
            return EXIT_USAGE;
        dopts.seed = (uint64_t)v;
    }
    if (mkdir(dir, 0777) != 0 && errno != EEXIST) {
        fprintf(stderr, "concord demo: cannot create %s: %s\n", dir, strerror(errno));
        return EXIT_IO;
    }

    char events[4096], labels[4096], db[4096], txt[4096], json[4096], wal[4200], html[4096];
    snprintf(events, sizeof events, "%s/events.jsonl", dir);
    snprintf(labels, sizeof labels, "%s/labels.jsonl", dir);
    snprintf(db, sizeof db, "%s/demo.db", dir);
    snprintf(txt, sizeof txt, "%s/report.txt", dir);
    snprintf(json, sizeof json, "%s/report.json", dir);
    snprintf(html, sizeof html, "%s/report.html", dir);
    remove(db);
    snprintf(wal, sizeof wal, "%s-wal", db);
    remove(wal);
    snprintf(wal, sizeof wal, "%s-shm", db);
    remove(wal);

    cc_error err = CC_ERROR_INIT;
    cc_demo_incidents inc;
    struct timespec t0, t1;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    if (cc_demo_generate(events, labels, &dopts, &inc, &err))
        return cli_fail(&err);

    int n_classes, n_members, rc = EXIT_OK;
    char **classes = cli_split_names(CC_DEMO_CLASSES, &n_classes);
    char **members = cli_split_names(CC_DEMO_MEMBERS, &n_members);
    cc_store *store = NULL;
    cc_ingest *ing = NULL;
    cc_report *rep = NULL;
    cc_model *model = NULL;
    char *text = NULL, *js = NULL, *page = NULL;
    cc_ingest_opts io = CC_INGEST_OPTS_INIT;
    io.model = "apple-grader";
    io.classes = classes;
    io.n_classes = n_classes;
    io.members = members;
    io.n_members = n_members;
    if (cli_store_open(&store, db, CC_STORE_CREATE, &err) || cc_ingest_create(&ing, store, &io, &err) ||
        cc_ingest_file(ing, events, CC_RECORD_EVENTS, &err) ||
        cc_ingest_file(ing, labels, CC_RECORD_LABELS, &err) || cc_ingest_finish(ing, &err) ||
        cc_store_model_get(store, io.model, &model, &err) ||
        cc_store_baseline_set(store, model, dopts.first_day, dopts.first_day + 6, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    const cc_ingest_stats *s = cc_ingest_get_stats(ing);
    cc_report_opts ro = {io.model, 0, 0, 0, 0, CC_BY_DAY, NULL, 0, 0, 0};
    if (cc_report_build(&rep, store, &ro, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    text = cc_report_text(rep);
    js = cc_report_json(rep);
    if (!text || !js || write_file(txt, text, CLI_OUT_TEXT) || write_file(json, js, 0)) {
        if (!text || !js)
            fprintf(stderr, "concord demo: out of memory\n");
        rc = EXIT_IO;
        goto done;
    }
    clock_gettime(CLOCK_MONOTONIC, &t1);
    char d1[11], fog_a[11], fog_b[11], mix_a[11], re_a[11], br_a[11], br_b[11], lf_a[11],
        lf_b[11];
    cc_format_date(dopts.first_day, d1);
    cc_format_date(dopts.first_day + inc.fog_from - 1, fog_a);
    cc_format_date(dopts.first_day + inc.fog_to - 1, fog_b);
    cc_format_date(dopts.first_day + inc.mix_from - 1, mix_a);
    cc_format_date(dopts.first_day + inc.retrain_from - 1, re_a);
    cc_format_date(dopts.first_day + inc.broken_from - 1, br_a);
    cc_format_date(dopts.first_day + inc.broken_to - 1, br_b);
    cc_format_date(dopts.first_day + inc.line_fog_from - 1, lf_a);
    cc_format_date(dopts.first_day + inc.line_fog_to - 1, lf_b);
    printf("concord demo: an INVENTED apple packhouse (not real data). Five members grade\n"
           "fruit into six grades; %lld events over %d days from %s, %lld labels inline and\n"
           "%lld delayed (stored: %lld events, %lld delayed labels applied).\n"
           "Injected incidents to look for below:\n"
           "  fogged camera    %s..%s  members disagree: 'disagree' and 'mutual' jump\n"
           "  old model file   %s..%s  member '%s' alone: its accuracy falls, it leans\n"
           "                               a grade lower and disagrees with the others\n"
           "  late-season mix  from %s  more class-2/juice/cull in both mixes\n"
           "  retrain          from %s  members near copies: 'disagree' falls toward 0,\n"
           "                               kappa toward 1, oracle accuracy meets ensemble\n"
           "  one line fogged  %s..%s  segment 'line-%d' only: its members scatter;\n"
           "                               the whole house barely moves\n"
           "Baseline: days 1-7.\n\n",
           (long long)inc.events, dopts.days, d1, (long long)inc.inline_labels,
           (long long)inc.delayed_labels, (long long)s->accepted, (long long)s->labels_set,
           fog_a, fog_b, br_a, br_b, members && inc.broken_member < n_members ? members[inc.broken_member] : "?", mix_a, re_a,
           lf_a, lf_b, inc.line_fog_line);
    fputs(text, stdout);
    printf("\nwritten: %s, %s, %s (database), %s and %s (%.1f s)\n", events, labels, db,
           txt, json, (double)(t1.tv_sec - t0.tv_sec) + (double)(t1.tv_nsec - t0.tv_nsec) / 1e9);
    printf("try: %s report --db %s --model apple-grader --from %s --to %s --by all\n",
           cli_program, db, fog_a, fog_b);
    printf("review the fog days: %s review --db %s --model apple-grader --from %s --to %s "
           "--where top-mi\n", cli_program, db, fog_a, fog_b);
    if ((rc = cli_demo_alerts(store, dir, dopts.first_day, dopts.days)) != EXIT_OK)
        goto done;
    /* the page last, so its status line shows the rules still raised; it
     * also shows each packing line (the per-slice rows of --by-segment) */
    cc_report_free(rep);
    rep = NULL;
    ro.by_segment = 1;
    if (cc_report_build(&rep, store, &ro, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    if ((rc = cli_report_html(store, rep, CLI_REVIEW_MAX_DEFAULT,
                              "Invented data from concord demo: an imaginary apple packhouse, "
                              "not real measurements.",
                              &page)) != EXIT_OK)
        goto done;
    if (!page || write_file(html, page, 0)) {
        if (!page)
            fprintf(stderr, "concord demo: out of memory\n");
        rc = EXIT_IO;
        goto done;
    }
    printf("\nopen in a browser: %s\n", html);
done:
    free(text);
    free(js);
    free(page);
    cc_report_free(rep);
    cc_model_free(model);
    cc_ingest_free(ing);
    cc_store_close(store);
    cli_free_names(classes, n_classes);
    cli_free_names(members, n_members);
    return rc;
}
