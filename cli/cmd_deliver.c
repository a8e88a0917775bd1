/* cmd_deliver.c — `concord deliver`: sends what waits in the outbox (for a
 * cron line or after a receiver came back), and re-queues dead letters. */
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "deliver.h"
#include "state.h"
#include "webhook.h"

const char help_deliver[] =
    "usage: concord deliver --db FILE|--store URL [--retry-now] [--requeue-dead] [--format text|json]\n\n"
    "Sends the notifications whose next attempt is due, marks each sent on a 2xx answer\n"
    "only, and schedules failures again with exponential backoff and jitter; after the\n"
    "receiver's max_attempts a notification is kept as a dead letter ('concord alerts').\n"
    "A receiver that fails is not tried again in the same run.\n\n"
    "  --retry-now      ignore the backoff: try every pending notification now\n"
    "  --requeue-dead   make dead letters pending again (attempts reset), then send\n"
    CLI_HELP_STORE_WRITES "\n"
    "exit: 0 everything due was delivered, 12 some deliveries failed or gave up (they\n"
    "are kept), 2 usage, 3 file or database error\n";

static void on_event(void *ctx, const cc_deliver_event *e)
{
    (void)ctx;
    if (e->ok)
        printf("sent     %s -> %s\n", e->notice_id, e->receiver);
    else
        printf("%-8s %s -> %s (attempt %d): %s\n", e->dead ? "dead" : "failed", e->notice_id,
               e->receiver, e->attempts, e->error);
}

int cmd_deliver(int argc, char **argv)
{
    cli_opt opts[] = {CLI_STORE_OPTS,
                      {"retry-now", 0, 0, NULL},
                      {"requeue-dead", 0, 0, NULL},
                      {"format", 0, 1, NULL}};
    int n_opts = (int)(sizeof opts / sizeof *opts), n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "deliver"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_deliver, stdout);
        return EXIT_OK;
    }
    const char *db, *url, *format = cli_get(opts, n_opts, "format");
    if (cli_store_name("deliver", opts, n_opts, CLI_STORE_WRITES, &db, &url))
        return EXIT_USAGE;
    if (n_pos)
        return cli_usage("deliver", "unexpected argument '%s'", pos[0]);
    int json = format && strcmp(format, "json") == 0;
    if (format && !json && strcmp(format, "text") != 0)
        return cli_usage("deliver", "--format must be text or json, not '%s'", format);

    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    cc_deliver_opts o = CC_DELIVER_OPTS_INIT;
    cc_deliver_stats st;
    int requeued = 0, rc;
    o.now = cli_now();
    o.ignore_backoff = cli_get(opts, n_opts, "retry-now") != NULL;
    if (!json)
        o.on_event = on_event;
    cc_webhook_global_init();
    if (cli_store_open(&store, db, 0, &err) || cc_state_prepare(store, &err) ||
        (cli_get(opts, n_opts, "requeue-dead") &&
         cc_deliver_requeue_dead(store, o.now, &requeued, &err)) ||
        cc_deliver_run(store, &o, &st, &err)) {
        rc = cli_fail(&err);
    } else {
        if (json)
            printf("{\"requeued\": %d, \"sent\": %d, \"failed\": %d, \"dead\": %d, "
                   "\"deferred\": %d, \"pending_in_outbox\": %lld, "
                   "\"dead_letters_in_outbox\": %lld}\n",
                   requeued, st.sent, st.failed, st.dead, st.deferred, (long long)st.pending,
                   (long long)st.dead_total);
        else
            printf("deliver: %s%d sent, %d failed (retried later), %d became dead letters, %d "
                   "waiting behind a failed receiver; outbox: %lld pending, %lld dead letters\n",
                   requeued ? "requeued dead letters, " : "", st.sent, st.failed, st.dead,
                   st.deferred, (long long)st.pending, (long long)st.dead_total);
        rc = st.failed || st.dead || st.deferred ? EXIT_UNDELIVERED : EXIT_OK;
    }
    cc_store_close(store);
    cc_webhook_global_cleanup();
    return rc;
}
