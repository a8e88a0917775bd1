/* deliver.c — the outbox drain: claim, send, mark; backoff and dead letters. */
#include "deliver.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "testpoint.h"

#define MAX_FAILED_RECEIVERS 64
#define LEASE_MARGIN_S 60

double cc_deliver_backoff(int attempts, int base_s, int cap_s, double u)
{
    double d = base_s * ldexp(1.0, attempts > 1 ? (attempts > 40 ? 40 : attempts - 1) : 0);
    if (d > cap_s)
        d = cap_s;
    return d * (0.5 + 0.5 * u);
}

/* xorshift64*, for jitter only */
static double next_unit(uint64_t *x)
{
    *x ^= *x >> 12;
    *x ^= *x << 25;
    *x ^= *x >> 27;
    return (double)((*x * UINT64_C(2685821657736338717)) >> 11) / 9007199254740992.0;
}

typedef struct failed_set {
    char **names;
    int n;
} failed_set;

/* Rows of a receiver that failed in this run wait for the next run. */
static int failed_before(void *ctx, const char *receiver)
{
    const failed_set *f = ctx;
    for (int i = 0; i < f->n; i++)
        if (strcmp(f->names[i], receiver) == 0)
            return 1;
    return 0;
}

int cc_deliver_run(cc_store *s, const cc_deliver_opts *o, cc_deliver_stats *stats,
                   cc_error *err)
{
    memset(stats, 0, sizeof *stats);
    int64_t now = o->now > 0 ? o->now : (int64_t)time(NULL);
    uint64_t seed = o->seed ? o->seed
                            : ((uint64_t)time(NULL) << 20) ^ (uint64_t)getpid() ^ UINT64_C(0x9e37);
    cc_webhook_sender send = o->send ? o->send : cc_webhook_post;
    char *failed[MAX_FAILED_RECEIVERS];
    int n_failed = 0, rc = 0;
    int64_t after = 0;
    for (int sends = 0; sends < o->max_sends; sends++) {
        cc_outbox_row r;
        failed_set fs = {failed, n_failed};
        int found = 0;
        if ((rc = cc_store_outbox_claim(s, after, now, o->ignore_backoff, LEASE_MARGIN_S,
                                        failed_before, &fs, &r, &found, &stats->deferred, err)))
            break;
        if (!found)
            break;
        after = r.id;
        cc_webhook_response res = {0, ""};
        const char *secret = NULL;
        int is_file = strncmp(r.receiver, "file:", 5) == 0;
        int ok;
        if (r.secret_env && !is_file && !(secret = getenv(r.secret_env))) {
            snprintf(res.error, sizeof res.error,
                     "environment variable %s (the signing secret) is not set", r.secret_env);
            ok = 0;
        } else {
            cc_webhook_request req = {r.receiver, r.body,      strlen(r.body),
                                      secret,     now,         r.notice_id,
                                      r.connect_timeout_ms,    r.timeout_ms};
            ok = send(o->send_ctx, &req, &res) == 0;
        }
        cc_testpoint("deliver-sent");
        int attempts = r.attempts + 1;
        int dead = !ok && attempts >= r.max_attempts;
        int64_t next_at = now;
        if (!ok && !dead)
            next_at = now + (int64_t)ceil(cc_deliver_backoff(attempts, r.backoff_s,
                                                             r.max_backoff_s, next_unit(&seed)));
        rc = cc_store_outbox_mark(s, r.id, ok ? "sent" : dead ? "dead" : "pending",
                                  res.status, ok ? NULL : res.error, next_at, ok ? now : -1,
                                  err);
        if (ok)
            stats->sent++;
        else if (dead)
            stats->dead++;
        else
            stats->failed++;
        if (o->on_event) {
            cc_deliver_event e = {r.receiver, r.notice_id, ok, dead, attempts, res.status,
                                  res.error, next_at};
            o->on_event(o->event_ctx, &e);
        }
        if (!ok && n_failed < MAX_FAILED_RECEIVERS)
            failed[n_failed++] = r.receiver;
        else
            free(r.receiver);
        r.receiver = NULL;
        cc_outbox_row_clear(&r);
        if (rc)
            break;
    }
    for (int i = 0; i < n_failed; i++)
        free(failed[i]);
    if (!rc)
        rc = cc_store_outbox_count(s, "pending", &stats->pending, err);
    if (!rc)
        rc = cc_store_outbox_count(s, "dead", &stats->dead_total, err);
    return rc;
}

int cc_deliver_requeue_dead(cc_store *s, int64_t now, int *n, cc_error *err)
{
    return cc_store_outbox_requeue_dead(s, now, n, err);
}
