/* serve.c — the HTTP side of `concord serve`: routes, limits, answers. The
 * contract (paths, bodies, status codes) is described in the README's
 * "Serving over HTTP". */
#include "serve.h"

#include <arpa/inet.h>
#include <cjson/cJSON.h>
#include <errno.h>
#include <microhttpd.h>
#include <netdb.h>
#include <pthread.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/socket.h>
#include <time.h>
#include <unistd.h>

#include "auth.h"
#include "date.h"
#include "body.h"
#include "follow.h"
#include "openmetrics.h"
#include "publisher.h"
#include "utf8.h"
#include "writer.h"

#define MODEL_NAME_MAX 256

typedef struct server {
    const cc_serve_opts *o;
    cc_writer *writer;
    cc_publisher *publisher;    /* NULL: not publishing */
    struct MHD_Daemon *daemon;
    pthread_mutex_t mu;         /* orders suspend (handler) before resume (writer) */
    atomic_llong held;          /* body bytes held over all requests */
    atomic_int active;          /* requests started and not completed */
    atomic_int receiving;       /* POST bodies still arriving */
} server;

enum stage { ST_GET, ST_RECEIVING, ST_QUEUED, ST_ANSWERED, ST_DONE };

typedef struct request {
    server *s;
    struct MHD_Connection *conn;
    enum stage stage;
    int err_status;
    char err_msg[300];
    char *model;
    cc_body *body;
    cc_write_job job;
    char source[MODEL_NAME_MAX + 64];
    struct timespec start;
    int counted_receiving;
} request;

static double since(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + (double)(t.tv_nsec - t0->tv_nsec) / 1e9;
}

static void note(const server *s, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void note(const server *s, const char *fmt, ...)
{
    if (!s->o->on_note)
        return;
    char msg[1024];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    s->o->on_note(s->o->ctx, msg);
}

/* ---- answers ---- */

static enum MHD_Result send_text(struct MHD_Connection *c, unsigned status, const char *type,
                                 char *text, size_t len)
{
    struct MHD_Response *r =
        MHD_create_response_from_buffer(len, text, MHD_RESPMEM_MUST_FREE);
    if (!r) {
        free(text);
        return MHD_NO;
    }
    MHD_add_response_header(r, MHD_HTTP_HEADER_CONTENT_TYPE, type);
    MHD_add_response_header(r, "Cache-Control", "no-store");
    enum MHD_Result ok = MHD_queue_response(c, status, r);
    MHD_destroy_response(r);
    return ok;
}

static enum MHD_Result send_json(struct MHD_Connection *c, unsigned status, cJSON *doc)
{
    char *text = cJSON_PrintUnformatted(doc);
    cJSON_Delete(doc);
    if (!text)
        return MHD_NO;
    size_t len = strlen(text);
    char *withnl = realloc(text, len + 2);
    if (!withnl) {
        free(text);
        return MHD_NO;
    }
    withnl[len] = '\n';
    withnl[len + 1] = 0;
    return send_text(c, status, "application/json", withnl, len + 1);
}

/* {"error":{"status":N,"message":"..."}}, with Retry-After on 429 and 503
 * and Allow on 405 (allow: the methods, or NULL). */
static enum MHD_Result send_error(struct MHD_Connection *c, unsigned status, const char *allow,
                                  const char *fmt, ...) __attribute__((format(printf, 4, 5)));
static enum MHD_Result send_error(struct MHD_Connection *c, unsigned status, const char *allow,
                                  const char *fmt, ...)
{
    char msg[700];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    cJSON *doc = cJSON_CreateObject(), *e = cJSON_AddObjectToObject(doc, "error");
    cJSON_AddNumberToObject(e, "status", status);
    cJSON_AddStringToObject(e, "message", msg);
    char *text = cJSON_PrintUnformatted(doc);
    cJSON_Delete(doc);
    if (!text)
        return MHD_NO;
    size_t len = strlen(text);
    struct MHD_Response *r =
        MHD_create_response_from_buffer(len, text, MHD_RESPMEM_MUST_FREE);
    if (!r) {
        free(text);
        return MHD_NO;
    }
    MHD_add_response_header(r, MHD_HTTP_HEADER_CONTENT_TYPE, "application/json");
    if (status == 429 || status == 503)
        MHD_add_response_header(r, MHD_HTTP_HEADER_RETRY_AFTER, "1");
    if (allow)
        MHD_add_response_header(r, MHD_HTTP_HEADER_ALLOW, allow);
    enum MHD_Result ok = MHD_queue_response(c, status, r);
    MHD_destroy_response(r);
    return ok;
}

/* ---- memory budget for bodies ---- */

static int grant(void *ctx, long long bytes)
{
    server *s = ctx;
    if (bytes <= 0) {
        atomic_fetch_add(&s->held, bytes);
        return 0;
    }
    long long now = atomic_fetch_add(&s->held, bytes) + bytes;
    if (now > (long long)s->o->memory_budget) {
        atomic_fetch_sub(&s->held, bytes);
        return -1;
    }
    return 0;
}

/* ---- GET ---- */

static int open_snapshot(server *s, cc_store **out, cc_error *err)
{
    cc_store_opts so = CC_STORE_OPTS_INIT;
    so.flags = CC_STORE_READONLY;
    return cc_store_open_with(out, s->o->db_path, &so, err);
}

static enum MHD_Result get_models(server *s, struct MHD_Connection *c)
{
    cc_error err = CC_ERROR_INIT;
    cc_store *st = NULL;
    char **names = NULL;
    int n = 0;
    if (open_snapshot(s, &st, &err) || cc_store_model_list(st, &names, &n, &err)) {
        cc_store_close(st);
        return send_error(c, 503, NULL, "cannot read the database: %s", err.msg);
    }
    cJSON *doc = cJSON_CreateObject(), *arr = cJSON_AddArrayToObject(doc, "models");
    for (int i = 0; i < n; i++) {
        cc_model *m = NULL;
        if (cc_store_model_get(st, names[i], &m, &err) == 0) {
            cJSON *o = cJSON_CreateObject();
            cJSON_AddStringToObject(o, "name", m->name);
            cJSON_AddItemToObject(o, "members",
                                  cJSON_CreateStringArray((const char *const *)m->members, m->m));
            cJSON_AddItemToObject(o, "classes",
                                  cJSON_CreateStringArray((const char *const *)m->classes, m->k));
            cJSON_AddItemToArray(arr, o);
            cc_model_free(m);
        }
        free(names[i]);
    }
    free(names);
    cc_store_close(st);
    return send_json(c, 200, doc);
}

static const char *arg(struct MHD_Connection *c, const char *name)
{
    return MHD_lookup_connection_value(c, MHD_GET_ARGUMENT_KIND, name);
}

static enum MHD_Result get_report(server *s, struct MHD_Connection *c, const char *model)
{
    cc_report_opts ro = {.model = model, .by = CC_BY_DAY};
    const char *format = arg(c, "format"), *by = arg(c, "by"), *v;
    if (!format)
        format = "json";
    if (strcmp(format, "json") && strcmp(format, "text") && strcmp(format, "html"))
        return send_error(c, 400, NULL, "query 'format' must be json, text or html, not '%.64s'",
                          format);
    if (!strcmp(format, "html") && !s->o->render_html)
        return send_error(c, 400, NULL, "this server renders no html");
    if (by && !strcmp(by, "week"))
        ro.by = CC_BY_WEEK;
    else if (by && !strcmp(by, "all"))
        ro.by = CC_BY_ALL;
    else if (by && strcmp(by, "day"))
        return send_error(c, 400, NULL, "query 'by' must be day, week or all, not '%.64s'", by);
    if ((v = arg(c, "from"))) {
        if (cc_parse_date(v, &ro.from))
            return send_error(c, 400, NULL, "query 'from' must be a date YYYY-MM-DD, not '%.64s'",
                              v);
        ro.has_from = 1;
    }
    if ((v = arg(c, "to"))) {
        if (cc_parse_date(v, &ro.to))
            return send_error(c, 400, NULL, "query 'to' must be a date YYYY-MM-DD, not '%.64s'",
                              v);
        ro.has_to = 1;
    }
    if (ro.has_from && ro.has_to && ro.to < ro.from)
        return send_error(c, 400, NULL, "query 'to' is before 'from'");
    cc_error err = CC_ERROR_INIT;
    cc_store *st = NULL;
    if (open_snapshot(s, &st, &err))
        return send_error(c, 503, NULL, "cannot read the database: %s", err.msg);
    char *text = NULL;
    size_t len = 0;
    int rc;
    if (!strcmp(format, "html")) {
        cc_report *r = NULL;
        rc = cc_report_build(&r, st, &ro, &err);
        if (!rc && !(text = s->o->render_html(s->o->ctx, st, r)))
            rc = cc_error_set(&err, CC_EIO, "the page could not be made");
        cc_report_free(r);
        if (text)
            len = strlen(text);
    } else {
        FILE *f = open_memstream(&text, &len);
        if (!f) {
            cc_store_close(st);
            return send_error(c, 503, NULL, "out of memory");
        }
        rc = !strcmp(format, "json") ? cc_report_write_json(f, st, &ro, &err)
                                     : cc_report_write_text(f, st, &ro, &err);
        if (!rc && !strcmp(format, "json"))
            fputc('\n', f);
        if (fclose(f) != 0 && !rc)
            rc = cc_error_set(&err, CC_ENOMEM, "out of memory");
        if (!rc && !strcmp(format, "text")) {
            /* as `concord report` writes text: control characters shown as \xHH */
            char *esc = cc_text_escape(text, len, 1);
            free(text);
            text = esc;
            len = esc ? strlen(esc) : 0;
            if (!esc)
                rc = cc_error_set(&err, CC_ENOMEM, "out of memory");
        }
    }
    cc_store_close(st);
    if (rc) {
        free(text);
        if (err.code == CC_ENOTFOUND)
            return send_error(c, 404, NULL, "no model '%s' in the database", model);
        return send_error(c, 503, NULL, "the report failed: %s", err.msg);
    }
    const char *type = !strcmp(format, "json")   ? "application/json"
                       : !strcmp(format, "html") ? "text/html; charset=utf-8"
                                                 : "text/plain; charset=utf-8";
    return send_text(c, 200, type, text, len);
}

static enum MHD_Result get_metrics(server *s, struct MHD_Connection *c)
{
    cc_error err = CC_ERROR_INIT;
    cc_store *st = NULL;
    if (open_snapshot(s, &st, &err))
        return send_error(c, 503, NULL, "cannot read the database: %s", err.msg);
    char *text = cc_openmetrics_render(st, s->writer, &err);
    cc_store_close(st);
    if (!text)
        return send_error(c, 503, NULL, "the metrics failed: %s", err.msg);
    return send_text(c, 200, CC_OPENMETRICS_CONTENT_TYPE, text, strlen(text));
}

static enum MHD_Result status_ok(struct MHD_Connection *c, unsigned status, const char *word)
{
    cJSON *doc = cJSON_CreateObject();
    cJSON_AddStringToObject(doc, "status", word);
    return send_json(c, status, doc);
}

/* Ready; with publishing, where it stands: runs, failures (in a row too),
 * commits not yet published and the last success (Unix time, null for
 * none). A cluster that is down does not make the server unready: it
 * ingests locally and publishes later. */
static enum MHD_Result ready_ok(server *s, struct MHD_Connection *c)
{
    cJSON *doc = cJSON_CreateObject();
    cJSON_AddStringToObject(doc, "status", "ready");
    if (s->publisher) {
        cc_publisher_state ps;
        /* a commit the main loop has not told yet counts as pending */
        cc_publisher_poke_to(s->publisher, cc_writer_commits(s->writer) + 1);
        cc_publisher_state_get(s->publisher, &ps);
        cJSON *p = cJSON_AddObjectToObject(doc, "publish");
        cJSON_AddNumberToObject(p, "runs", (double)ps.runs);
        cJSON_AddNumberToObject(p, "failures", (double)ps.failures);
        cJSON_AddNumberToObject(p, "failures_in_a_row", (double)ps.consecutive_failures);
        cJSON_AddNumberToObject(p, "pending_commits", (double)ps.pending);
        if (ps.last_ok_unix)
            cJSON_AddNumberToObject(p, "last_ok", (double)ps.last_ok_unix);
        else
            cJSON_AddNullToObject(p, "last_ok");
    }
    return send_json(c, 200, doc);
}

/* ---- POST ---- */

static enum MHD_Result send_job(struct MHD_Connection *c, const cc_write_job *j)
{
    if (j->status != 200)
        return send_error(c, j->status, NULL, "%s", j->message);
    cJSON *doc = cJSON_CreateObject();
    cJSON_AddNumberToObject(doc, "accepted", (double)j->accepted);
    cJSON_AddNumberToObject(doc, "duplicates", (double)j->duplicates);
    cJSON_AddNumberToObject(doc, "rejected", (double)j->rejected);
    cJSON_AddNumberToObject(doc, "labels_set", (double)j->labels_set);
    cJSON_AddNumberToObject(doc, "labels_pending", (double)j->labels_pending);
    cJSON *arr = cJSON_AddArrayToObject(doc, "rejects");
    for (int i = 0; i < j->n_rejects; i++) {
        cJSON *o = cJSON_CreateObject();
        cJSON_AddNumberToObject(o, "line", (double)j->rejects[i].line);
        cJSON_AddStringToObject(o, "reason", j->rejects[i].reason);
        cJSON_AddItemToArray(arr, o);
    }
    cJSON_AddBoolToObject(doc, "rejects_truncated", j->rejects_truncated);
    cJSON_AddBoolToObject(doc, "committed", j->committed);
    return send_json(c, 200, doc);
}

/* The writer thread's call: the job's transaction is over. */
static void job_done(void *ctx, cc_write_job *job)
{
    request *rq = ctx;
    server *s = rq->s; /* rq may be freed as soon as the connection is resumed */
    (void)job;
    pthread_mutex_lock(&s->mu);
    rq->stage = ST_ANSWERED;
    MHD_resume_connection(rq->conn);
    pthread_mutex_unlock(&s->mu);
}

static int media_type_is(const char *header, const char *want)
{
    size_t n = strlen(want);
    if (strncasecmp(header, want, n) != 0)
        return 0;
    return header[n] == 0 || header[n] == ';' || header[n] == ' ';
}

/* 1 when word appears in header, ignoring case. */
static int has_word(const char *header, const char *word)
{
    size_t n = strlen(word);
    for (const char *p = header; *p; p++)
        if (strncasecmp(p, word, n) == 0)
            return 1;
    return 0;
}

/* Headers of an ingest POST: every refusal that needs no body. */
static enum MHD_Result post_start(server *s, struct MHD_Connection *c, request *rq)
{
    const char *type = MHD_lookup_connection_value(c, MHD_HEADER_KIND,
                                                   MHD_HTTP_HEADER_CONTENT_TYPE);
    const char *enc = MHD_lookup_connection_value(c, MHD_HEADER_KIND,
                                                  MHD_HTTP_HEADER_CONTENT_ENCODING);
    const char *clen = MHD_lookup_connection_value(c, MHD_HEADER_KIND,
                                                   MHD_HTTP_HEADER_CONTENT_LENGTH);
    const char *te = MHD_lookup_connection_value(c, MHD_HEADER_KIND,
                                                 MHD_HTTP_HEADER_TRANSFER_ENCODING);
    if (!type || !(media_type_is(type, "application/x-ndjson") ||
                   media_type_is(type, "application/jsonl")))
        return send_error(c, 415, NULL,
                          "Content-Type must be application/x-ndjson or application/jsonl "
                          "(JSON Lines), not '%.80s'", type ? type : "(none)");
    int gzip = 0;
    if (enc && !strcasecmp(enc, "gzip"))
        gzip = 1;
    else if (enc && strcasecmp(enc, "identity"))
        return send_error(c, 415, NULL, "Content-Encoding must be gzip or identity, not '%.80s'",
                          enc);
    if (!clen && !(te && has_word(te, "chunked")))
        return send_error(c, 411, NULL, "a body needs Content-Length (or chunked transfer)");
    if (clen) {
        char *end;
        errno = 0;
        unsigned long long n = strtoull(clen, &end, 10);
        if (errno || *end || end == clen)
            return send_error(c, 400, NULL, "Content-Length is not a number");
        if (n > s->o->max_wire)
            return send_error(c, 413, NULL, "the body is %llu bytes, more than the limit of %zu",
                              n, s->o->max_wire);
    }
    const char *strict = arg(c, "strict");
    if (strict && strcmp(strict, "true") && strcmp(strict, "false"))
        return send_error(c, 400, NULL, "query 'strict' must be true or false");
    if (!cc_writer_ready(s->writer))
        return send_error(c, 429, NULL, "the ingest queue is full; try again shortly");
    rq->job.strict = strict && !strcmp(strict, "true");
    rq->body = cc_body_create(gzip, s->o->max_wire, s->o->max_decoded, grant, s);
    if (!rq->body)
        return send_error(c, 503, NULL, "out of memory");
    rq->stage = ST_RECEIVING;
    rq->counted_receiving = 1;
    atomic_fetch_add(&s->receiving, 1);
    return MHD_YES;
}

static void body_refused(request *rq, int why)
{
    if (rq->err_status)
        return;
    const cc_serve_opts *o = rq->s->o;
    if (why == CC_BODY_TOO_LARGE) {
        rq->err_status = 413;
        snprintf(rq->err_msg, sizeof rq->err_msg,
                 "the body is larger than the limit (%zu bytes on the wire, %zu decoded)",
                 o->max_wire, o->max_decoded);
    } else if (why == CC_BODY_BAD_GZIP) {
        rq->err_status = 400;
        snprintf(rq->err_msg, sizeof rq->err_msg,
                 "Content-Encoding is gzip, but the body is not a complete gzip stream");
    } else {
        rq->err_status = 429;
        snprintf(rq->err_msg, sizeof rq->err_msg,
                 "the server holds as many request bodies as its memory budget allows; try "
                 "again shortly");
    }
    cc_body_free(rq->body); /* give the memory back at once */
    rq->body = NULL;
}

static void stop_receiving(request *rq)
{
    if (rq->counted_receiving) {
        rq->counted_receiving = 0;
        atomic_fetch_sub(&rq->s->receiving, 1);
    }
}

static enum MHD_Result post_body(server *s, struct MHD_Connection *c, request *rq,
                                 const char *data, size_t *size)
{
    if (*size) {
        if (since(&rq->start) > s->o->request_timeout_s) {
            note(s, "dropped a request whose body took longer than %d s",
                 s->o->request_timeout_s);
            return MHD_NO;
        }
        if (rq->body) {
            int r = cc_body_feed(rq->body, data, *size);
            if (r)
                body_refused(rq, r);
        }
        *size = 0;
        return MHD_YES;
    }
    stop_receiving(rq);
    if (rq->body && !rq->err_status) {
        int r = cc_body_end(rq->body);
        if (r)
            body_refused(rq, r);
    }
    if (rq->err_status) {
        rq->stage = ST_DONE;
        return send_error(c, (unsigned)rq->err_status, NULL, "%s", rq->err_msg);
    }
    cc_write_job *j = &rq->job;
    j->model = rq->model;
    j->body = cc_body_data(rq->body, &j->len);
    j->source = rq->source;
    j->done = job_done;
    j->ctx = rq;
    pthread_mutex_lock(&s->mu);
    int r = cc_writer_submit(s->writer, j);
    if (r == 0) {
        rq->stage = ST_QUEUED;
        MHD_suspend_connection(c);
    }
    pthread_mutex_unlock(&s->mu);
    if (r == 0)
        return MHD_YES;
    rq->stage = ST_DONE;
    if (r == -1)
        return send_error(c, 429, NULL, "the ingest queue is full; try again shortly");
    return send_error(c, 503, NULL, "the server is stopping");
}

/* ---- routing ---- */

/* "/v1/models/NAME/WHAT" -> NAME (copied into name) and WHAT; -1 when the
 * path is not of that form, -2 when NAME does not fit in cap bytes. */
static int model_path(const char *url, char *name, size_t cap, const char **what)
{
    const char *prefix = "/v1/models/";
    size_t pl = strlen(prefix);
    if (strncmp(url, prefix, pl) != 0)
        return -1;
    const char *p = url + pl, *slash = strchr(p, '/');
    if (!slash || slash == p)
        return -1;
    if ((size_t)(slash - p) >= cap)
        return -2;
    memcpy(name, p, (size_t)(slash - p));
    name[slash - p] = 0;
    *what = slash + 1;
    return 0;
}

static enum MHD_Result route(server *s, struct MHD_Connection *c, request *rq, const char *url,
                             const char *method)
{
    int is_get = !strcmp(method, "GET") || !strcmp(method, "HEAD");
    int is_post = !strcmp(method, "POST");
    const char *auth = MHD_lookup_connection_value(c, MHD_HEADER_KIND,
                                                   MHD_HTTP_HEADER_AUTHORIZATION);
    char name[MODEL_NAME_MAX + 1];
    const char *what = NULL;
    int mp;
    enum { P_HEALTH, P_READY, P_METRICS, P_MODELS, P_REPORT, P_EVENTS, P_LABELS, P_NONE } p;
    if (!strcmp(url, "/v1/healthz"))
        p = P_HEALTH;
    else if (!strcmp(url, "/v1/readyz"))
        p = P_READY;
    else if (!strcmp(url, "/v1/metrics"))
        p = P_METRICS;
    else if (!strcmp(url, "/v1/models"))
        p = P_MODELS;
    else if ((mp = model_path(url, name, sizeof name, &what)) == -2) {
        rq->stage = ST_DONE;
        return send_error(c, 400, NULL, "a model name is at most %d bytes", MODEL_NAME_MAX);
    } else if (mp == 0 && !strcmp(what, "report"))
        p = P_REPORT;
    else if (what && !strcmp(what, "events"))
        p = P_EVENTS;
    else if (what && !strcmp(what, "labels"))
        p = P_LABELS;
    else
        p = P_NONE;
    rq->stage = ST_DONE;
    if (p == P_NONE)
        return send_error(c, 404, NULL, "no such path: %.200s (paths are under /v1/)", url);
    int post_path = p == P_EVENTS || p == P_LABELS;
    if (post_path ? !is_post : !is_get)
        return send_error(c, 405, post_path ? "POST" : "GET, HEAD",
                          "%s is not allowed here; use %s", method, post_path ? "POST" : "GET");
    if (p == P_HEALTH)
        return status_ok(c, 200, "ok");
    if (p == P_READY)
        return cc_writer_ready(s->writer) ? ready_ok(s, c)
                                          : send_error(c, 503, NULL, "not ready: the ingest "
                                                       "queue is full or the store failed");
    int verdict = cc_auth_check(auth, s->o->write_token, s->o->read_token, post_path);
    if (verdict == 401)
        return send_error(c, 401, NULL, "this server needs 'Authorization: Bearer TOKEN'");
    if (verdict == 403)
        return send_error(c, 403, NULL, "the token does not give %s access",
                          post_path ? "write" : "read");
    if (what) {
        size_t bad;
        if (!cc_utf8_valid(name, strlen(name), &bad) || cc_utf8_control(name, strlen(name), &bad))
            return send_error(c, 400, NULL, "the model name must be UTF-8 without control "
                                            "characters");
    }
    switch (p) {
    case P_METRICS:
        return get_metrics(s, c);
    case P_MODELS:
        return get_models(s, c);
    case P_REPORT:
        return get_report(s, c, name);
    default:
        break;
    }
    if (!(rq->model = strdup(name)))
        return send_error(c, 503, NULL, "out of memory");
    rq->job.kind = p == P_EVENTS ? CC_RECORD_EVENTS : CC_RECORD_LABELS;
    snprintf(rq->source, sizeof rq->source, "POST /v1/models/%s/%s", name, what);
    return post_start(s, c, rq);
}

static enum MHD_Result handler(void *cls, struct MHD_Connection *c, const char *url,
                               const char *method, const char *version, const char *data,
                               size_t *size, void **con_cls)
{
    (void)version;
    server *s = cls;
    request *rq = *con_cls;
    if (!rq) {
        if (!(rq = calloc(1, sizeof *rq)))
            return MHD_NO;
        rq->s = s;
        rq->conn = c;
        clock_gettime(CLOCK_MONOTONIC, &rq->start);
        *con_cls = rq;
        atomic_fetch_add(&s->active, 1);
        return route(s, c, rq, url, method);
    }
    switch (rq->stage) {
    case ST_RECEIVING:
        return post_body(s, c, rq, data, size);
    case ST_ANSWERED:
        rq->stage = ST_DONE;
        return send_job(c, &rq->job);
    default:
        *size = 0;
        return MHD_YES;
    }
}

static void completed(void *cls, struct MHD_Connection *c, void **con_cls,
                      enum MHD_RequestTerminationCode why)
{
    (void)c;
    (void)why;
    server *s = cls;
    request *rq = *con_cls;
    if (!rq)
        return;
    stop_receiving(rq);
    cc_body_free(rq->body);
    cc_write_job_clear(&rq->job);
    free(rq->model);
    free(rq);
    *con_cls = NULL;
    atomic_fetch_sub(&s->active, 1);
}

static void mhd_log(void *cls, const char *fmt, va_list ap)
{
    server *s = cls;
    char msg[512];
    vsnprintf(msg, sizeof msg, fmt, ap);
    size_t n = strlen(msg);
    while (n && msg[n - 1] == '\n')
        msg[--n] = 0;
    note(s, "http: %s", msg);
}

/* ---- the listening address ---- */

static int parse_listen(const char *listen, struct sockaddr_storage *ss, socklen_t *len,
                        cc_error *err)
{
    char host[256];
    const char *port;
    if (listen[0] == '[') {
        const char *close = strchr(listen, ']');
        if (!close || close[1] != ':' || (size_t)(close - listen - 1) >= sizeof host)
            goto bad;
        memcpy(host, listen + 1, (size_t)(close - listen - 1));
        host[close - listen - 1] = 0;
        port = close + 2;
    } else {
        const char *colon = strrchr(listen, ':');
        if (!colon || (size_t)(colon - listen) >= sizeof host || strchr(listen, ':') != colon)
            goto bad;
        memcpy(host, listen, (size_t)(colon - listen));
        host[colon - listen] = 0;
        port = colon + 1;
    }
    char *end;
    long pn = strtol(port, &end, 10);
    if (!*port || *end || pn < 0 || pn > 65535 || !*host)
        goto bad;
    struct addrinfo hints = {0}, *res = NULL;
    hints.ai_family = AF_UNSPEC;
    hints.ai_socktype = SOCK_STREAM;
    hints.ai_flags = AI_NUMERICSERV;
    int g = getaddrinfo(host, port, &hints, &res);
    if (g != 0)
        return cc_error_set(err, CC_EUSAGE, "--listen %s: %s", listen, gai_strerror(g));
    memcpy(ss, res->ai_addr, res->ai_addrlen);
    *len = res->ai_addrlen;
    freeaddrinfo(res);
    return 0;
bad:
    return cc_error_set(err, CC_EUSAGE,
                        "--listen must be ADDR:PORT (e.g. 127.0.0.1:8750 or [::1]:8750), not "
                        "'%s'", listen);
}

static int is_loopback(const struct sockaddr_storage *ss)
{
    if (ss->ss_family == AF_INET) {
        const struct sockaddr_in *a = (const struct sockaddr_in *)ss;
        return (ntohl(a->sin_addr.s_addr) >> 24) == 127;
    }
    const struct sockaddr_in6 *a = (const struct sockaddr_in6 *)ss;
    return IN6_IS_ADDR_LOOPBACK(&a->sin6_addr) ||
           (IN6_IS_ADDR_V4MAPPED(&a->sin6_addr) && a->sin6_addr.s6_addr[12] == 127);
}

int cc_serve_listen_loopback(const char *listen, cc_error *err)
{
    struct sockaddr_storage ss;
    socklen_t len;
    int rc = parse_listen(listen, &ss, &len, err);
    return rc ? rc : is_loopback(&ss);
}

/* ---- day-close checks, in a thread with a connection of its own ---- */

typedef struct rules_thread {
    server *s;
    pthread_t t;
    int started;
    atomic_int quit;
} rules_thread;

static void *rules_main(void *arg)
{
    rules_thread *rt = arg;
    const cc_serve_opts *o = rt->s->o;
    cc_store *st = NULL;
    cc_error err = CC_ERROR_INIT;
    cc_follow_opts fo = CC_FOLLOW_OPTS_INIT;
    fo.rules = o->rules;
    fo.extra = o->extra;
    fo.n_extra = o->n_extra;
    fo.grace_s = o->grace_s;
    fo.deliver_every_s = o->deliver_every_s;
    fo.now = o->now;
    fo.on_check = o->on_check;
    fo.on_deliver = o->on_deliver;
    fo.ctx = o->ctx;
    cc_follow_clock clk = CC_FOLLOW_CLOCK_INIT;
    cc_follow_stats stats;
    memset(&stats, 0, sizeof stats);
    while (!atomic_load(&rt->quit)) {
        if (!st) {
            cc_store_opts so = CC_STORE_OPTS_INIT;
            so.wait_ms = o->wait_ms;
            if (cc_store_open_with(&st, o->db_path, &so, &err) == 0)
                err = (cc_error)CC_ERROR_INIT;
        }
        if (st && cc_follow_day_close(st, &fo, &clk, &stats, &err)) {
            note(rt->s, "check: %s; trying again later", err.msg);
            err = (cc_error)CC_ERROR_INIT;
        }
        for (int i = 0; i < 10 && !atomic_load(&rt->quit); i++)
            nanosleep(&(struct timespec){0, 100000000L}, NULL);
    }
    cc_store_close(st);
    return NULL;
}

/* ---- running ---- */

static void sleep_ms(long ms)
{
    struct timespec t = {ms / 1000, (ms % 1000) * 1000000L};
    nanosleep(&t, NULL);
}

int cc_serve_run(const cc_serve_opts *o, cc_error *err)
{
    struct sockaddr_storage ss;
    socklen_t sslen;
    int rc = parse_listen(o->listen, &ss, &sslen, err);
    if (rc)
        return rc;
    if (!is_loopback(&ss) && !o->write_token)
        return cc_error_set(err, CC_EUSAGE,
                            "refusing to listen on %s without a write token: anyone who can "
                            "reach it could write; give --token-file (or CONCORD_WRITE_TOKEN), "
                            "or listen on a loopback address such as 127.0.0.1", o->listen);
    int tls = o->tls_cert && o->tls_key;
    if (tls && MHD_is_feature_supported(MHD_FEATURE_TLS) != MHD_YES)
        return cc_error_set(err, CC_EUSAGE, "this libmicrohttpd has no TLS; run behind a "
                                            "reverse proxy that terminates TLS instead");
    server s;
    memset(&s, 0, sizeof s);
    s.o = o;
    pthread_mutex_init(&s.mu, NULL);
    cc_writer_opts wo = CC_WRITER_OPTS_INIT;
    wo.db_path = o->db_path;
    wo.queue_cap = o->queue_cap;
    wo.ingest_now = o->ingest_now;
    wo.wait_ms = o->wait_ms;
    if ((rc = cc_writer_start(&s.writer, &wo, err))) {
        pthread_mutex_destroy(&s.mu);
        return rc;
    }
    unsigned flags = MHD_USE_EPOLL_INTERNAL_THREAD | MHD_ALLOW_SUSPEND_RESUME | MHD_USE_ERROR_LOG;
    if (ss.ss_family == AF_INET6)
        flags |= MHD_USE_IPv6;
    if (tls)
        flags |= MHD_USE_TLS;
    unsigned threads = (unsigned)(o->threads > 0 ? o->threads : 1);
    unsigned limit = (unsigned)(o->max_connections > 0 ? o->max_connections : 1);
    if (limit < threads)
        limit = threads;
    struct MHD_OptionItem tls_opts[] = {
        {tls ? MHD_OPTION_HTTPS_MEM_KEY : MHD_OPTION_END, 0, (void *)(uintptr_t)o->tls_key},
        {tls ? MHD_OPTION_HTTPS_MEM_CERT : MHD_OPTION_END, 0, (void *)(uintptr_t)o->tls_cert},
        {MHD_OPTION_END, 0, NULL}};
    s.daemon = MHD_start_daemon(
        flags, 0, NULL, NULL, handler, &s, MHD_OPTION_EXTERNAL_LOGGER, mhd_log, &s,
        MHD_OPTION_SOCK_ADDR, (struct sockaddr *)&ss,
        MHD_OPTION_THREAD_POOL_SIZE, threads, MHD_OPTION_CONNECTION_LIMIT, limit,
        MHD_OPTION_CONNECTION_TIMEOUT, (unsigned)o->idle_timeout_s,
        MHD_OPTION_CONNECTION_MEMORY_LIMIT, (size_t)65536, MHD_OPTION_LISTENING_ADDRESS_REUSE,
        (unsigned)1, MHD_OPTION_NOTIFY_COMPLETED, completed, &s, MHD_OPTION_ARRAY, tls_opts, MHD_OPTION_END);
    if (!s.daemon) {
        cc_writer_free(s.writer);
        pthread_mutex_destroy(&s.mu);
        return cc_error_set(err, CC_EIO, "cannot listen on %s (address in use, or not this "
                                         "host's?)", o->listen);
    }
    const union MHD_DaemonInfo *di = MHD_get_daemon_info(s.daemon, MHD_DAEMON_INFO_BIND_PORT);
    char shown[300];
    snprintf(shown, sizeof shown, "%.*s:%u",
             (int)(strrchr(o->listen, ':') - o->listen), o->listen,
             di ? (unsigned)di->port : 0u);
    note(&s, "listening on %s%s (database %s)", tls ? "https://" : "http://", shown,
         o->db_path);

    rules_thread rt = {.s = &s};
    if (o->rules && pthread_create(&rt.t, NULL, rules_main, &rt) == 0)
        rt.started = 1;
    if (o->publish) {
        cc_publisher_opts po = CC_PUBLISHER_OPTS_INIT;
        po.db_path = o->db_path;
        po.wait_ms = o->wait_ms;
        po.publish = o->publish;
        po.publish_ctx = o->publish_ctx;
        po.on_note = o->on_note;
        po.ctx = o->ctx;
        cc_error perr = CC_ERROR_INIT;
        if (cc_publisher_start(&s.publisher, &po, &perr))
            note(&s, "not publishing: %s", perr.msg);
    }
    /* the publisher is told the writer's commit count plus one: the one
     * is the run at start, for what an earlier run left unpublished */
    while (!*o->stop) {
        cc_publisher_poke_to(s.publisher, cc_writer_commits(s.writer) + 1);
        sleep_ms(100);
    }

    /* stop accepting; let bodies being received arrive (bounded), then the
     * writer commits and answers all that is queued */
    MHD_socket lfd = MHD_quiesce_daemon(s.daemon);
    if (lfd != MHD_INVALID_SOCKET)
        close(lfd); /* ours now: new connections are refused at once */
    note(&s, "stopping: no new connections; finishing the requests in progress");
    for (int i = 0; i < o->request_timeout_s * 10 && atomic_load(&s.receiving) > 0; i++)
        sleep_ms(100);
    cc_writer_stop(s.writer);
    /* the answers go out; a client that does not read its answer is not waited for long */
    for (int i = 0; i < 50 && atomic_load(&s.active) > 0; i++)
        sleep_ms(100);
    MHD_stop_daemon(s.daemon);
    if (s.publisher) {
        cc_publisher_poke_to(s.publisher, cc_writer_commits(s.writer) + 1);
        cc_publisher_state ps;
        cc_publisher_stop(s.publisher, &ps);
        note(&s, "publish: %lld run%s, %lld failed; %s", (long long)ps.runs,
             ps.runs == 1 ? "" : "s", (long long)ps.failures,
             ps.pending ? "the last commits are not published yet (the next publish sends them)"
                        : "everything committed is published");
        cc_publisher_free(s.publisher);
    }
    cc_writer_free(s.writer);
    if (rt.started) {
        atomic_store(&rt.quit, 1);
        pthread_join(rt.t, NULL);
    }
    pthread_mutex_destroy(&s.mu);
    return 0;
}
