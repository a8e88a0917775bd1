/* cmd_publish.c — `concord publish`: a host's local store to a ClickHouse cluster. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "ch_client.h"
#include "ch_schema.h"
#include "cli.h"
#include "publish.h"

const char help_publish[] =
    "usage: concord publish --db FILE --store clickhouse://HOST:PORT/DATABASE\n"
    "                       [--source NAME] [--retry-for SECONDS]\n"
    "       concord publish --init --store clickhouse://HOST:PORT/DATABASE\n\n"
    "Sends what changed in the local store since its last publish to a ClickHouse\n"
    "cluster: the full summary vector of every (model, day) written since, under this\n"
    "host's source name and a new sequence number; the event rows stored or relabelled\n"
    "since; each model's slice limit and slice order; and labels waiting here for events\n"
    "this host never saw. Labels other hosts sent for events stored here are applied\n"
    "here first; only label rows that may be new here are read (other hosts' runs since\n"
    "the last one read, and the labels of events stored since the last publish), and\n"
    "the count is printed. Publishing again is harmless:\n"
    "the cluster keeps one vector per (model, day, source) and one row per event. A\n"
    "failed insert (a shard down) is retried with a growing pause, said on stderr, up\n"
    "to --retry-for seconds (default 600); then nothing is marked as published.\n"
    "The user and password come from CONCORD_CH_USER and CONCORD_CH_PASSWORD, the\n"
    "cluster name of the Distributed tables from CONCORD_CH_CLUSTER (default concord).\n\n"
    "  --source NAME      this host's name in the cluster (default: the host name);\n"
    "                     letters, digits, '_', '-', '.'; keep it stable per store\n"
    "  --init             create the database and tables on that one server (run once\n"
    "                     on every server of the cluster) and stop\n\n"
    "exit: 0 ok, 2 usage, 3 file, database or cluster error\n";

static void on_retry(void *ctx, const char *what, int attempt, int pause_ms,
                     const cc_error *why)
{
    (void)ctx;
    fprintf(stderr, "concord publish: %s failed (attempt %d): %s; retrying in %.1f s\n", what,
            attempt, why->msg, pause_ms / 1000.0);
}

static int publish_with(cc_store *store, const char *db, const char *url, const char *source,
                        const char *command, int retry_for_s);

int cmd_publish(int argc, char **argv)
{
    cli_opt opts[] = {{"db", 0, 1, NULL},     {"store", 0, 1, NULL},     {"source", 0, 1, NULL},
                      {"init", 0, 0, NULL},   {"retry-for", 0, 1, NULL}};
    int n_opts = 5, n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "publish"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_publish, stdout);
        return EXIT_OK;
    }
    const char *db = cli_get(opts, n_opts, "db"), *url = cli_get(opts, n_opts, "store");
    const char *source = cli_get(opts, n_opts, "source");
    int init = cli_get(opts, n_opts, "init") != NULL;
    if (n_pos)
        return cli_usage("publish", "unexpected argument '%s'", pos[0]);
    if (!url)
        return cli_usage("publish", "--store clickhouse://HOST:PORT/DATABASE is required");
    if (!init && !db)
        return cli_usage("publish", "--db is required (or --init to create the tables only)");
    cc_publish_opts po = CC_PUBLISH_OPTS_INIT;
    if (cli_get(opts, n_opts, "retry-for")) {
        long long v;
        if (cli_int("publish", "retry-for", cli_get(opts, n_opts, "retry-for"), 0, 86400, &v))
            return EXIT_USAGE;
        po.retry_for_s = (int)v;
    }
    cc_error err = CC_ERROR_INIT;
    if (init) {
        cc_ch *ch = NULL;
        int rc = EXIT_OK;
        if (cc_ch_open(&ch, url, &err))
            return err.code == CC_EUSAGE ? cli_usage("publish", "%s", err.msg) : cli_fail(&err);
        if (cc_ch_schema_create(ch, &err))
            rc = cli_fail(&err);
        else
            printf("tables ready in %s on %s\n", cc_ch_database(ch), cc_ch_where(ch));
        cc_ch_close(ch);
        return rc;
    }
    cc_store *store = NULL;
    if (cli_store_open(&store, db, 0, &err))
        return cli_fail(&err);
    int rc = publish_with(store, db, url, source, "publish", po.retry_for_s);
    cc_store_close(store);
    return rc;
}

static int publish_with(cc_store *store, const char *db, const char *url, const char *source,
                        const char *command, int retry_for_s)
{
    cc_publish_opts po = CC_PUBLISH_OPTS_INIT;
    cc_error err = CC_ERROR_INIT;
    char host[256];
    if (!source) {
        if (gethostname(host, sizeof host) != 0)
            return cli_usage(command, "cannot read the host name; give --source");
        host[sizeof host - 1] = 0;
        source = host;
    }
    if (!cc_publish_source_ok(source))
        return cli_usage(command,
                         "--source '%s': use 1 to 64 letters, digits, '_', '-' or '.'", source);
    po.source = source;
    po.on_retry = on_retry;
    po.retry_for_s = retry_for_s;
    cc_ch *ch = NULL;
    if (cc_ch_open(&ch, url, &err))
        return err.code == CC_EUSAGE ? cli_usage(command, "%s", err.msg) : cli_fail(&err);
    int rc = EXIT_OK;
    cc_publish_stats st;
    if (cc_publish_run(store, ch, &po, &st, &err)) {
        rc = cli_fail(&err);
    } else {
        printf("published %s as '%s' (seq %lld): %lld summary vector%s (and %lld of slices), "
               "%lld event row%s, %lld waiting label%s sent, %lld label%s from other hosts "
               "applied (%lld label row%s read); %lld bytes\n",
               db, source, (long long)st.seq, (long long)st.days, st.days == 1 ? "" : "s",
               (long long)st.slice_days, (long long)st.events, st.events == 1 ? "" : "s", (long long)st.labels_sent,
               st.labels_sent == 1 ? "" : "s", (long long)st.labels_applied,
               st.labels_applied == 1 ? "" : "s", (long long)st.labels_read,
               st.labels_read == 1 ? "" : "s", (long long)st.bytes);
    }
    cc_ch_close(ch);
    return rc;
}

int cli_publish_store(cc_store *store, const char *db, const char *url, const char *source,
                      const char *command)
{
    return publish_with(store, db, url, source, command, CC_PUBLISH_RETRY_DEFAULT_S);
}

int cli_publish_hook_init(cli_publish_hook *h, const char *url, const char *source,
                          const char *command)
{
    memset(h, 0, sizeof *h);
    h->command = command;
    if (strncmp(url, "clickhouse://", 13) != 0)
        return cli_usage(command, "--publish takes clickhouse://HOST:PORT/DATABASE, not '%s'",
                         url);
    h->url = url;
    if (!source) {
        if (gethostname(h->host, sizeof h->host) != 0)
            return cli_usage(command, "cannot read the host name; give --source");
        h->host[sizeof h->host - 1] = 0;
        source = h->host;
    }
    if (!cc_publish_source_ok(source))
        return cli_usage(command,
                         "--source '%s': use 1 to 64 letters, digits, '_', '-' or '.'", source);
    h->source = source;
    cc_ch *ch = NULL;
    cc_error err = CC_ERROR_INIT;
    if (cc_ch_open(&ch, url, &err)) /* parses the URL; connects later */
        return err.code == CC_EUSAGE ? cli_usage(command, "%s", err.msg) : cli_fail(&err);
    cc_ch_close(ch);
    return EXIT_OK;
}

int cli_publish_hook_run(void *ctx, cc_store *s, cc_error *err)
{
    const cli_publish_hook *h = ctx;
    cc_publish_opts po = CC_PUBLISH_OPTS_INIT;
    po.source = h->source;
    po.retry_for_s = 0;
    cc_ch *ch = NULL;
    cc_publish_stats st;
    int rc = cc_ch_open(&ch, h->url, err);
    if (!rc)
        rc = cc_publish_run(s, ch, &po, &st, err);
    cc_ch_close(ch);
    if (!rc && (st.days || st.events || st.labels_sent || st.labels_applied))
        fprintf(stderr, "concord %s: published as '%s' (seq %lld): %lld summary vector%s (and "
                        "%lld of slices), %lld event row%s, %lld waiting label%s sent, %lld "
                        "applied\n",
                h->command, h->source, (long long)st.seq, (long long)st.days,
                st.days == 1 ? "" : "s", (long long)st.slice_days, (long long)st.events,
                st.events == 1 ? "" : "s", (long long)st.labels_sent,
                st.labels_sent == 1 ? "" : "s", (long long)st.labels_applied);
    return rc;
}
