/* serve.h — `concord serve`: an HTTP server (libmicrohttpd) in front of one
 * store. POSTed JSON Lines go through a bounded queue to the one writer
 * thread (writer.h) and are answered after their transaction committed;
 * reports, the model list and the OpenMetrics exposition are read from
 * read-only snapshots. Tokens (auth.h), body caps (body.h), connection and
 * time limits, and a graceful stop on *stop are handled here. */
#ifndef CC_SERVE_SERVE_H
#define CC_SERVE_SERVE_H

#include <signal.h>
#include <stddef.h>
#include <stdint.h>

#include "check.h"
#include "deliver.h"
#include "error.h"
#include "report.h"
#include "rule.h"
#include "store.h"

typedef struct cc_serve_opts {
    const char *db_path;
    const char *listen;             /* "ADDR:PORT" (IPv6 as "[ADDR]:PORT"); port 0 = any */
    const char *write_token;        /* NULL: writes unguarded (loopback only) */
    const char *read_token;         /* NULL: reads need the write token, if any */
    const char *tls_cert, *tls_key; /* PEM text of both, or NULL for plain HTTP */
    size_t max_wire;                /* body bytes on the wire */
    size_t max_decoded;             /* body bytes after gzip decoding */
    size_t memory_budget;           /* body bytes held over all requests at once */
    int queue_cap;                  /* requests waiting for the writer */
    int max_connections;
    int idle_timeout_s;             /* a connection silent this long is closed */
    int request_timeout_s;          /* a request body still arriving after this is dropped */
    int threads;                    /* connection threads */
    int64_t ingest_now;             /* arrival time of delayed labels; 0 = the clock */
    int wait_ms;                    /* the writer's wait for another process's lock */
    /* the report as an HTML page (the command line's renderer); NULL: 415 for html */
    char *(*render_html)(void *ctx, cc_store *store, const cc_report *r);
    /* day-close checks and delivery (NULL rules: none) */
    const cc_ruleset *rules;
    const cc_receiver *extra;
    int n_extra;
    int grace_s, deliver_every_s;
    int64_t (*now)(void *ctx);
    void (*on_check)(void *ctx, const cc_check_result *r);
    void (*on_deliver)(void *ctx, const cc_deliver_stats *st);
    volatile sig_atomic_t *stop;
    void (*on_note)(void *ctx, const char *message);
    void *ctx;
    /* publishing (publisher.h): one run of the hook after group commits, from
     * a thread of its own, never holding up an answer; NULL: none. /v1/readyz
     * tells where it stands. */
    int (*publish)(void *publish_ctx, cc_store *s, cc_error *err);
    void *publish_ctx;
} cc_serve_opts;

#define CC_SERVE_OPTS_INIT                                                                    \
    {NULL, "127.0.0.1:8750", NULL, NULL, NULL, NULL, (size_t)16 << 20, (size_t)64 << 20,    \
     (size_t)96 << 20, 64, 1024, 30, 120, 4, 0, 60000, NULL, NULL, NULL, 0, 300, 60, NULL,   \
     NULL, NULL, NULL, NULL, NULL, NULL, NULL}

/* 1 when the address is a loopback one (127.0.0.0/8, ::1), 0 when not, and
 * -CC_EUSAGE with err set when it does not parse. */
int cc_serve_listen_loopback(const char *listen, cc_error *err);

/* Runs until *stop: then stops accepting, lets the requests being received
 * finish (up to request_timeout_s), commits and answers every queued one,
 * and returns 0. Errors at start: CC_EUSAGE (address, a non-loopback
 * address without a write token, TLS not available), CC_EIO (the store,
 * the port taken). */
int cc_serve_run(const cc_serve_opts *o, cc_error *err);

#endif
