/* cmd_follow.c — `concord follow`: options, the signal flag, printing; the
 * tailing itself is alerts/follow.c. */
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "check.h"
#include "cli.h"
#include "utf8.h"
#include "follow.h"
#include "publisher.h"
#include "rule.h"
#include "webhook.h"

const char help_follow[] =
    "usage: concord follow --db FILE|--store URL [--rules FILE] [--model NAME]\n"
    "                      [--labels FILE] [--webhook URL] [--chunk N] [--interval MS]\n"
    "                      [--grace SECONDS] [--publish URL [--source NAME]] PATH...\n\n"
    "Tails growing JSON-lines files of prediction events (and --labels, a file of delayed\n"
    "labels): every new complete line is ingested, at most --chunk lines (2000) per\n"
    "transaction, together with the offset reached, so a restart resumes where it\n"
    "stopped. A file replaced at its path (rotation) is read to its end first; a file\n"
    "that shrank (truncation) is read again from its start. With --rules, the check runs\n"
    "for each UTC day once it has been closed for --grace seconds (300), and the outbox\n"
    "is drained every minute. SIGINT or SIGTERM stops it after the current chunk is\n"
    "committed: no line that was read is lost.\n\n"
    "  --interval MS    how often to look for new lines (1000)\n"
    "  --wait SECONDS   how long one attempt waits for another writer's lock (60); follow\n"
    "                   does not stop on a locked database: it says so, backs off and\n"
    "                   tries again, keeping what it has read\n"
    "  --publish URL    publish to clickhouse://HOST:PORT/DATABASE after each poll that\n"
    "                   committed lines, as 'concord publish' does (--source NAME, default\n"
    "                   the host name), from a thread of its own: a cluster that is down\n"
    "                   never stops the local ingest; the failure is said on stderr and\n"
    "                   the publish tried again after a pause growing from 0.5 s to 30 s\n"
    "                   (publishing again is idempotent: nothing lost or doubled)\n"
    CLI_HELP_STORE_WRITES "\n"
    "exit: 0 stopped by a signal, 1 invalid rules file, 2 usage, 3 file or database error\n";

static volatile sig_atomic_t stop_flag;

static void on_signal(int sig)
{
    (void)sig;
    stop_flag = 1;
}

typedef struct follow_ctx {
    cli_clock clock; /* first: the ctx is also a cli_clock */
    int64_t rejects_shown;
} follow_ctx;

void cli_clock_start(cli_clock *c)
{
    c->start_now = cli_now();
    clock_gettime(CLOCK_MONOTONIC, &c->start);
}

/* CONCORD_NOW (when set) is the clock at start; it then runs forward. */
int64_t cli_clock_now(void *ctx)
{
    cli_clock *c = ctx;
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return c->start_now + (int64_t)(t.tv_sec - c->start.tv_sec);
}

static void on_reject(void *ctx, const char *path, int64_t line, const char *reason)
{
    follow_ctx *c = ctx;
    if (c->rejects_shown++ < 20)
        fprintf(stderr, "%s:%lld: rejected: %s\n", path, (long long)line, reason);
}

static void on_note(void *ctx, const char *msg)
{
    (void)ctx;
    fputs("concord follow: ", stderr);
    cc_text_put(stderr, msg); /* notes quote file names and log lines */
    fputc('\n', stderr);
}

void cli_on_check(void *ctx, const cc_check_result *r)
{
    (void)ctx;
    cli_print_check(r, 0, 0, NULL, stdout);
    fflush(stdout);
}

void cli_on_deliver(void *ctx, const cc_deliver_stats *st)
{
    (void)ctx;
    printf("delivery: %d sent, %d failed (retried later), %d became dead letters\n", st->sent,
           st->failed, st->dead);
    fflush(stdout);
}

int cmd_follow(int argc, char **argv)
{
    cli_opt opts[] = {CLI_STORE_OPTS,          {"rules", 0, 1, NULL},   {"model", 0, 1, NULL},
                      {"labels", 0, 1, NULL},  {"webhook", 0, 1, NULL}, {"chunk", 0, 1, NULL},
                      {"interval", 0, 1, NULL}, {"grace", 0, 1, NULL},
                      {"publish", 0, 1, NULL}, {"source", 0, 1, NULL}};
    int n_opts = (int)(sizeof opts / sizeof *opts), n_pos, help;
    char **pos = calloc((size_t)argc + 1, sizeof *pos);
    if (!pos || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "follow")) {
        free(pos);
        return EXIT_USAGE;
    }
    if (help) {
        free(pos);
        fputs(help_follow, stdout);
        return EXIT_OK;
    }
    const char *db, *url, *rules = cli_get(opts, n_opts, "rules");
    const char *hook = cli_get(opts, n_opts, "webhook");
    const char *publish = cli_get(opts, n_opts, "publish");
    cc_follow_opts fo = CC_FOLLOW_OPTS_INIT;
    cli_publish_hook ph;
    int rc = EXIT_OK;
    if (cli_store_name("follow", opts, n_opts, CLI_STORE_WRITES, &db, &url))
        rc = EXIT_USAGE;
    else if (cli_get(opts, n_opts, "source") && !publish)
        rc = cli_usage("follow", "--source needs --publish");
    else if (publish && cli_publish_hook_init(&ph, publish, cli_get(opts, n_opts, "source"),
                                              "follow"))
        rc = EXIT_USAGE;
    else if (n_pos == 0 && !cli_get(opts, n_opts, "labels"))
        rc = cli_usage("follow", "name the files to follow");
    else if (hook && !rules)
        rc = cli_usage("follow", "--webhook needs --rules");
    const char *v;
    long long n;
    if (!rc && (v = cli_get(opts, n_opts, "chunk"))) {
        if (cli_int("follow", "chunk", v, 1, 100000, &n)) /* lines */
            rc = EXIT_USAGE;
        fo.chunk_lines = (int)n;
    }
    if (!rc && (v = cli_get(opts, n_opts, "interval"))) {
        if (cli_int("follow", "interval", v, 10, 600000, &n)) /* ms */
            rc = EXIT_USAGE;
        fo.poll_ms = (int)n;
    }
    if (!rc && (v = cli_get(opts, n_opts, "grace"))) {
        if (cli_int("follow", "grace", v, 0, 86400, &n)) /* seconds */
            rc = EXIT_USAGE;
        fo.grace_s = (int)n;
    }
    if (rc) {
        free(pos);
        return rc;
    }

    cc_error err = CC_ERROR_INIT;
    cc_ruleset *rs = NULL;
    cc_store *store = NULL;
    cc_receiver extra = {0};
    follow_ctx ctx = {{0, {0, 0}}, 0};
    cli_clock_start(&ctx.clock);
    if (rules && cc_rules_load(&rs, rules, &err)) {
        free(pos);
        return cli_fail(&err);
    }
    if (hook && cc_rules_receiver_for(rs, hook, &extra, &err)) {
        cc_rules_free(rs);
        free(pos);
        return cli_usage("follow", "%s", err.msg);
    }
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigemptyset(&sa.sa_mask);
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);

    fo.paths = pos;
    fo.n_paths = n_pos;
    fo.labels_path = cli_get(opts, n_opts, "labels");
    if (cli_get(opts, n_opts, "model"))
        fo.model = cli_get(opts, n_opts, "model");
    fo.rules = rs;
    fo.extra = hook ? &extra : NULL;
    fo.n_extra = hook ? 1 : 0;
    fo.stop = &stop_flag;
    fo.now = cli_clock_now;
    fo.on_reject = on_reject;
    fo.on_note = on_note;
    fo.on_check = cli_on_check;
    fo.on_deliver = cli_on_deliver;
    fo.ctx = &ctx;
    if (getenv("CONCORD_NOW"))
        fo.ingest_now = ctx.clock.start_now;
    cc_follow_stats st;
    cc_webhook_global_init();
    int opened;
    while ((opened = cli_store_open(&store, db, CC_STORE_CREATE, &err)) != 0 &&
           err.code == CC_EBUSY && !stop_flag) {
        fprintf(stderr, "concord follow: %s; trying again in 5 s\n", err.msg);
        err = (cc_error)CC_ERROR_INIT;
        nanosleep(&(struct timespec){5, 0}, NULL);
    }
    cc_publisher *pub = NULL;
    if (!opened && publish) {
        cc_publisher_opts po = CC_PUBLISHER_OPTS_INIT;
        po.db_path = db;
        po.wait_ms = cli_wait_ms(60000);
        po.publish = cli_publish_hook_run;
        po.on_note = on_note;
        po.publish_ctx = &ph;
        opened = cc_publisher_start(&pub, &po, &err);
        fo.publisher = pub;
    }
    if (opened || cc_follow_run(store, &fo, &st, &err)) {
        rc = cli_fail(&err);
    } else {
        fprintf(stderr, "concord follow: stopped; %lld lines, %lld events stored, %lld "
                        "duplicates, %lld rejected, %lld labels applied, %lld rotations, %lld "
                        "truncations, %lld checks\n",
                (long long)st.lines, (long long)st.accepted, (long long)st.duplicates,
                (long long)st.rejected, (long long)st.labels_set, (long long)st.rotations,
                (long long)st.truncations, (long long)st.checks);
    }
    if (pub) {
        cc_publisher_state ps;
        cc_publisher_stop(pub, &ps);
        fprintf(stderr, "concord follow: %lld publish run%s, %lld failed; %s\n",
                (long long)ps.runs, ps.runs == 1 ? "" : "s", (long long)ps.failures,
                ps.pending ? "the last commits are not published yet (the next publish sends "
                             "them)" : "everything committed is published");
        cc_publisher_free(pub);
    }
    cc_webhook_global_cleanup();
    cc_store_close(store);
    cc_rules_receiver_clear(&extra);
    cc_rules_free(rs);
    free(pos);
    return rc;
}
