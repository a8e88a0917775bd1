/* cmd_serve.c — `concord serve`: options, tokens from files or the
 * environment, signals, printing; the server itself is serve/serve.c. */
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "auth.h"
#include "check.h"
#include "cli.h"
#include "rule.h"
#include "serve.h"
#include "utf8.h"
#include "webhook.h"

const char help_serve[] =
    "usage: concord serve --db FILE|--store URL [--listen ADDR:PORT] [--token-file FILE]\n"
    "                     [--read-token-file FILE] [--tls-cert FILE --tls-key FILE]\n"
    "                     [--rules FILE [--webhook URL] [--grace SECONDS]]\n"
    "                     [--publish URL [--source NAME]] [limits]\n\n"
    "Serves the database over HTTP: POST /v1/models/NAME/events and .../labels take JSON\n"
    "Lines (the file format; Content-Type application/x-ndjson, optionally gzip) and answer\n"
    "only after the batch is committed; GET /v1/models, /v1/models/NAME/report (the bytes\n"
    "of `concord report`), /v1/metrics (OpenMetrics), /v1/healthz and /v1/readyz. The\n"
    "README's \"Serving over HTTP\" describes the contract.\n\n"
    "  --listen ADDR:PORT   where to listen (127.0.0.1:8750); port 0 picks a free one\n"
    "  --token-file FILE    the write token (POSTs; it also reads), first line of FILE;\n"
    "                       else CONCORD_WRITE_TOKEN. Needed for a non-loopback address\n"
    "  --read-token-file FILE  the read token (GETs), else CONCORD_READ_TOKEN\n"
    "  --tls-cert FILE --tls-key FILE  HTTPS with this PEM certificate and key\n"
    "  --rules FILE         check each UTC day once closed for --grace seconds (300) and\n"
    "                       deliver notifications, as follow does; --webhook URL adds a\n"
    "                       receiver\n"
    "  --publish URL        publish to clickhouse://HOST:PORT/DATABASE after group commits,\n"
    "                       as 'concord publish' does (--source NAME, default the host\n"
    "                       name), from a thread of its own that never holds up an answer;\n"
    "                       a failed publish is said on stderr and tried again after a\n"
    "                       pause growing from 0.5 s to 30 s; /v1/readyz shows its state\n"
    CLI_HELP_STORE_WRITES
    "limits:\n"
    "  --max-body MIB       body size on the wire (16)\n"
    "  --max-decoded MIB    body size after gzip decoding (64)\n"
    "  --memory MIB         request bodies held at once over all requests (96)\n"
    "  --queue N            requests waiting for the writer (64); beyond: 429\n"
    "  --max-connections N  open connections (1024)\n"
    "  --idle-timeout S     close a connection silent this long (30)\n"
    "  --request-timeout S  drop a request whose body still arrives after S (120)\n"
    "  --threads N          connection threads (4)\n\n"
    "SIGINT or SIGTERM: stop accepting, commit and answer the requests in progress, exit 0.\n\n"
    "exit: 0 stopped by a signal, 1 invalid rules file, 2 usage (also: a non-loopback\n"
    "      address without a write token), 3 file, database or listening error\n";

static volatile sig_atomic_t stop_flag;

static void on_signal(int sig)
{
    (void)sig;
    stop_flag = 1;
}

static void on_note(void *ctx, const char *msg)
{
    (void)ctx;
    fputs("concord serve: ", stderr);
    cc_text_put(stderr, msg);
    fputc('\n', stderr);
}

static char *render_html(void *ctx, cc_store *store, const cc_report *r)
{
    (void)ctx;
    char *out = NULL;
    if (cli_report_html(store, r, 1, NULL, &out) != EXIT_OK) {
        free(out);
        return NULL;
    }
    return out;
}

/* A whole file into memory (TLS PEM files). */
static char *slurp(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    char *buf = NULL;
    size_t len = 0;
    FILE *m = open_memstream(&buf, &len);
    char chunk[4096];
    size_t n;
    while (m && (n = fread(chunk, 1, sizeof chunk, f)) > 0)
        fwrite(chunk, 1, n, m);
    int bad = ferror(f);
    fclose(f);
    if (!m || fclose(m) != 0 || bad) {
        free(buf);
        return NULL;
    }
    return buf;
}

static int token_from(const char *file, const char *env, char **out)
{
    cc_error err = CC_ERROR_INIT;
    *out = NULL;
    if (file) {
        if (cc_auth_token_file(file, out, &err))
            return err.code == CC_EUSAGE ? cli_usage("serve", "%s", err.msg) : cli_fail(&err);
        return EXIT_OK;
    }
    const char *v = getenv(env);
    if (v && *v && !(*out = strdup(v)))
        return EXIT_IO;
    return EXIT_OK;
}

int cmd_serve(int argc, char **argv)
{
    cli_opt opts[] = {
        CLI_STORE_OPTS,               {"listen", 0, 1, NULL},
        {"publish", 0, 1, NULL},      {"source", 0, 1, NULL},
        {"token-file", 0, 1, NULL},   {"read-token-file", 0, 1, NULL},
        {"tls-cert", 0, 1, NULL},     {"tls-key", 0, 1, NULL},
        {"rules", 0, 1, NULL},        {"webhook", 0, 1, NULL},
        {"grace", 0, 1, NULL},        {"max-body", 0, 1, NULL},
        {"max-decoded", 0, 1, NULL},  {"memory", 0, 1, NULL},
        {"queue", 0, 1, NULL},        {"max-connections", 0, 1, NULL},
        {"idle-timeout", 0, 1, NULL}, {"request-timeout", 0, 1, NULL},
        {"threads", 0, 1, NULL}};
    int n_opts = (int)(sizeof opts / sizeof *opts), n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "serve"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_serve, stdout);
        return EXIT_OK;
    }
    cc_serve_opts so = CC_SERVE_OPTS_INIT;
    const char *url;
    if (cli_store_name("serve", opts, n_opts, CLI_STORE_WRITES, &so.db_path, &url))
        return EXIT_USAGE;
    const char *publish = cli_get(opts, n_opts, "publish");
    static cli_publish_hook ph;
    if (cli_get(opts, n_opts, "source") && !publish)
        return cli_usage("serve", "--source needs --publish");
    if (publish && cli_publish_hook_init(&ph, publish, cli_get(opts, n_opts, "source"), "serve"))
        return EXIT_USAGE;
    if (publish) {
        so.publish = cli_publish_hook_run;
        so.publish_ctx = &ph;
    }
    const char *rules = cli_get(opts, n_opts, "rules"), *hook = cli_get(opts, n_opts, "webhook");
    const char *cert = cli_get(opts, n_opts, "tls-cert"), *key = cli_get(opts, n_opts, "tls-key");
    if (n_pos)
        return cli_usage("serve", "unexpected argument '%s'", pos[0]);
    if (hook && !rules)
        return cli_usage("serve", "--webhook needs --rules");
    if (!cert != !key)
        return cli_usage("serve", "--tls-cert and --tls-key go together");
    if (cli_get(opts, n_opts, "listen"))
        so.listen = cli_get(opts, n_opts, "listen");
    static const struct {
        const char *name;
        long long min, max, scale;
    } nums[] = {{"max-body", 1, 4096, 1 << 20},    {"max-decoded", 1, 16384, 1 << 20},
                {"memory", 1, 65536, 1 << 20},     {"queue", 1, 100000, 1},
                {"max-connections", 1, 100000, 1}, {"idle-timeout", 1, 86400, 1},
                {"request-timeout", 1, 86400, 1},  {"threads", 1, 256, 1},
                {"grace", 0, 86400, 1}};
    for (size_t i = 0; i < sizeof nums / sizeof *nums; i++) {
        const char *v = cli_get(opts, n_opts, nums[i].name);
        long long n;
        if (!v)
            continue;
        if (cli_int("serve", nums[i].name, v, nums[i].min, nums[i].max, &n))
            return EXIT_USAGE;
        switch (i) {
        case 0: so.max_wire = (size_t)(n * nums[i].scale); break;
        case 1: so.max_decoded = (size_t)(n * nums[i].scale); break;
        case 2: so.memory_budget = (size_t)(n * nums[i].scale); break;
        case 3: so.queue_cap = (int)n; break;
        case 4: so.max_connections = (int)n; break;
        case 5: so.idle_timeout_s = (int)n; break;
        case 6: so.request_timeout_s = (int)n; break;
        case 7: so.threads = (int)n; break;
        default: so.grace_s = (int)n; break;
        }
    }
    cc_error err = CC_ERROR_INIT;
    int loop = cc_serve_listen_loopback(so.listen, &err);
    if (loop < 0)
        return cli_usage("serve", "%s", err.msg);

    char *wtok = NULL, *rtok = NULL, *cert_pem = NULL, *key_pem = NULL;
    cc_ruleset *rs = NULL;
    cc_receiver extra = {0};
    int rc = token_from(cli_get(opts, n_opts, "token-file"), "CONCORD_WRITE_TOKEN", &wtok);
    if (!rc)
        rc = token_from(cli_get(opts, n_opts, "read-token-file"), "CONCORD_READ_TOKEN", &rtok);
    if (!rc && !loop && !wtok)
        rc = cli_usage("serve", "refusing to listen on %s without a write token: anyone who "
                                "can reach it could write; give --token-file (or "
                                "CONCORD_WRITE_TOKEN), or listen on a loopback address such "
                                "as 127.0.0.1", so.listen);
    if (!rc && cert && (!(cert_pem = slurp(cert)) || !(key_pem = slurp(key)))) {
        fprintf(stderr, "concord serve: cannot read %s\n", cert_pem ? key : cert);
        rc = EXIT_IO;
    }
    if (!rc && rules && cc_rules_load(&rs, rules, &err))
        rc = cli_fail(&err);
    if (!rc && hook && cc_rules_receiver_for(rs, hook, &extra, &err))
        rc = cli_usage("serve", "%s", err.msg);
    if (rc)
        goto done;
    cli_clock ctx;
    cli_clock_start(&ctx);
    so.write_token = wtok;
    so.read_token = rtok;
    so.tls_cert = cert_pem;
    so.tls_key = key_pem;
    so.wait_ms = cli_wait_ms(60000);
    if (getenv("CONCORD_NOW"))
        so.ingest_now = ctx.start_now;
    so.render_html = render_html;
    so.rules = rs;
    so.extra = hook ? &extra : NULL;
    so.n_extra = hook ? 1 : 0;
    so.now = cli_clock_now;
    so.on_check = cli_on_check;
    so.on_deliver = cli_on_deliver;
    so.on_note = on_note;
    so.stop = &stop_flag;
    so.ctx = &ctx;

    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigemptyset(&sa.sa_mask);
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);
    signal(SIGPIPE, SIG_IGN);
    if (rs)
        cc_webhook_global_init();
    if (cc_serve_run(&so, &err))
        rc = err.code == CC_EUSAGE ? cli_usage("serve", "%s", err.msg) : cli_fail(&err);
    else
        fprintf(stderr, "concord serve: stopped\n");
    if (rs)
        cc_webhook_global_cleanup();
done:
    cc_rules_receiver_clear(&extra);
    cc_rules_free(rs);
    free(wtok);
    free(rtok);
    free(cert_pem);
    free(key_pem);
    return rc;
}
