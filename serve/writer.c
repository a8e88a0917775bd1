/* writer.c — the queue between connection threads and the store, and the
 * thread that drains it in group transactions (see writer.h). */
#include "writer.h"

#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "store.h"
#include "testpoint.h"

typedef struct totals_row {
    char *model;
    cc_writer_totals t;
} totals_row;

struct cc_writer {
    cc_writer_opts o;
    cc_store *store;
    pthread_t thread;
    pthread_mutex_t mu;
    pthread_cond_t cv;
    cc_write_job *head, *tail;
    int queued, stopping, failed, started;
    int64_t commits;
    totals_row *totals;
    int n_totals;
    cc_write_job *cur;          /* the job whose lines are being taken */
};

void cc_write_job_clear(cc_write_job *job)
{
    for (int i = 0; i < job->n_rejects; i++)
        free(job->rejects[i].reason);
    free(job->rejects);
    job->rejects = NULL;
    job->n_rejects = 0;
}

static void on_reject(void *payload, const char *source, int64_t line, const char *reason)
{
    (void)source;
    cc_writer *w = payload;
    cc_write_job *job = w->cur;
    if (!job)
        return;
    if (job->n_rejects >= CC_WRITER_REJECTS_MAX) {
        job->rejects_truncated = 1;
        return;
    }
    if (!job->rejects && !(job->rejects = calloc(CC_WRITER_REJECTS_MAX, sizeof *job->rejects))) {
        job->rejects_truncated = 1;
        return;
    }
    char *r = strdup(reason);
    if (!r) {
        job->rejects_truncated = 1;
        return;
    }
    job->rejects[job->n_rejects].line = line;
    job->rejects[job->n_rejects++].reason = r;
}

/* Takes a job's body line by line. */
static int take_body(cc_ingest *ing, cc_write_job *job, cc_error *err)
{
    const char *p = job->body, *end = job->body + job->len;
    int64_t line = 0;
    while (p < end) {
        const char *nl = memchr(p, '\n', (size_t)(end - p));
        size_t n = (size_t)((nl ? nl : end) - p);
        int rc = cc_ingest_line(ing, p, n, job->source, ++line, job->kind, err);
        if (rc)
            return rc;
        p = nl ? nl + 1 : end;
    }
    return 0;
}

static void add_totals(cc_writer *w, const cc_write_job *job)
{
    totals_row *row = NULL;
    for (int i = 0; i < w->n_totals && !row; i++)
        if (strcmp(w->totals[i].model, job->model) == 0)
            row = &w->totals[i];
    if (!row && w->n_totals < 4096) {
        totals_row *grown = realloc(w->totals, (size_t)(w->n_totals + 1) * sizeof *grown);
        char *name = strdup(job->model);
        if (!grown || !name) {
            free(name);
            if (grown)
                w->totals = grown;
            return;
        }
        w->totals = grown;
        row = &w->totals[w->n_totals++];
        memset(row, 0, sizeof *row);
        row->model = name;
        row->t.model = name;
    }
    if (!row)
        return;
    row->t.accepted += job->accepted;
    row->t.duplicates += job->duplicates;
    row->t.rejected += job->rejected;
    row->t.labels_set += job->labels_set;
    row->t.requests++;
}

/* One transaction for the jobs first..last (linked by next). */
static void run_group(cc_writer *w, cc_write_job *first, int strict)
{
    cc_error err = CC_ERROR_INIT;
    cc_ingest_opts io = CC_INGEST_OPTS_INIT;
    io.strict = strict;
    io.batch = 1 << 30; /* never commit inside a group */
    io.on_reject = on_reject;
    io.payload = w;
    io.now = w->o.ingest_now;
    io.model = first->model;
    cc_ingest *ing = NULL;
    int rc = cc_ingest_create(&ing, w->store, &io, &err);
    for (cc_write_job *j = first; !rc && j; j = j->next) {
        const cc_ingest_stats before = *cc_ingest_get_stats(ing);
        cc_ingest_set_model(ing, j->model);
        w->cur = j;
        rc = take_body(ing, j, &err);
        w->cur = NULL;
        const cc_ingest_stats *after = cc_ingest_get_stats(ing);
        j->lines = after->lines - before.lines;
        j->accepted = after->accepted - before.accepted;
        j->duplicates = after->duplicates - before.duplicates;
        j->rejected = after->rejected - before.rejected;
        j->labels_set = after->labels_set - before.labels_set;
        j->labels_pending = after->labels_pending - before.labels_pending;
    }
    if (!rc)
        rc = cc_ingest_finish(ing, &err);
    int rolled_back = !rc && strict && cc_ingest_get_stats(ing)->rejected > 0;
    cc_ingest_free(ing);
    if (!rc)
        cc_testpoint("serve-group-committed");
    pthread_mutex_lock(&w->mu);
    if (!rc)
        w->commits++;
    w->failed = rc != 0;
    for (cc_write_job *j = first; j; j = j->next) {
        if (rc) {
            j->status = 503;
            j->committed = 0;
            snprintf(j->message, sizeof j->message, "the batch was not stored: %.400s", err.msg);
            continue;
        }
        j->status = 200;
        j->committed = !rolled_back;
        if (rolled_back)
            j->accepted = j->duplicates = j->labels_set = j->labels_pending = 0;
        add_totals(w, j);
    }
    pthread_mutex_unlock(&w->mu);
    for (cc_write_job *j = first, *next; j; j = next) {
        next = j->next;
        j->next = NULL;
        j->done(j->ctx, j);
    }
}

static void *writer_main(void *arg)
{
    cc_writer *w = arg;
    pthread_mutex_lock(&w->mu);
    for (;;) {
        while (!w->head && !w->stopping)
            pthread_cond_wait(&w->cv, &w->mu);
        if (!w->head)
            break;
        /* a strict job alone; otherwise the non-strict jobs at the head, up to the bounds */
        cc_write_job *first = w->head, *last = first;
        int strict = first->strict, n = 1;
        size_t bytes = first->len;
        while (!strict && last->next && !last->next->strict && n < w->o.group_jobs &&
               bytes + last->next->len <= w->o.group_bytes) {
            last = last->next;
            bytes += last->len;
            n++;
        }
        w->head = last->next;
        if (!w->head)
            w->tail = NULL;
        last->next = NULL;
        w->queued -= n;
        pthread_mutex_unlock(&w->mu);
        run_group(w, first, strict);
        pthread_mutex_lock(&w->mu);
    }
    pthread_mutex_unlock(&w->mu);
    return NULL;
}

int cc_writer_start(cc_writer **out, const cc_writer_opts *o, cc_error *err)
{
    *out = NULL;
    cc_writer *w = calloc(1, sizeof *w);
    if (!w)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    w->o = *o;
    if (w->o.queue_cap < 1)
        w->o.queue_cap = 1;
    if (w->o.group_jobs < 1)
        w->o.group_jobs = 1;
    cc_store_opts so = CC_STORE_OPTS_INIT;
    so.flags = CC_STORE_CREATE;
    so.wait_ms = o->wait_ms;
    int rc = cc_store_open_with(&w->store, o->db_path, &so, err);
    if (rc) {
        free(w);
        return rc;
    }
    pthread_mutex_init(&w->mu, NULL);
    pthread_cond_init(&w->cv, NULL);
    if (pthread_create(&w->thread, NULL, writer_main, w) != 0) {
        cc_store_close(w->store);
        pthread_mutex_destroy(&w->mu);
        pthread_cond_destroy(&w->cv);
        free(w);
        return cc_error_set(err, CC_ENOMEM, "cannot start the writer thread");
    }
    w->started = 1;
    *out = w;
    return 0;
}

int cc_writer_submit(cc_writer *w, cc_write_job *job)
{
    pthread_mutex_lock(&w->mu);
    int rc = 0;
    if (w->stopping)
        rc = -2;
    else if (w->queued >= w->o.queue_cap)
        rc = -1;
    if (!rc) {
        job->next = NULL;
        if (w->tail)
            w->tail->next = job;
        else
            w->head = job;
        w->tail = job;
        w->queued++;
        pthread_cond_signal(&w->cv);
    }
    pthread_mutex_unlock(&w->mu);
    return rc;
}

int cc_writer_ready(cc_writer *w)
{
    pthread_mutex_lock(&w->mu);
    int ok = !w->stopping && !w->failed && w->queued < w->o.queue_cap;
    pthread_mutex_unlock(&w->mu);
    return ok;
}

int cc_writer_queued(cc_writer *w)
{
    pthread_mutex_lock(&w->mu);
    int n = w->queued;
    pthread_mutex_unlock(&w->mu);
    return n;
}

int64_t cc_writer_commits(cc_writer *w)
{
    pthread_mutex_lock(&w->mu);
    int64_t n = w->commits;
    pthread_mutex_unlock(&w->mu);
    return n;
}

void cc_writer_totals_each(cc_writer *w, void (*fn)(void *ctx, const cc_writer_totals *t),
                           void *ctx)
{
    pthread_mutex_lock(&w->mu);
    for (int i = 0; i < w->n_totals; i++)
        fn(ctx, &w->totals[i].t);
    pthread_mutex_unlock(&w->mu);
}

void cc_writer_stop(cc_writer *w)
{
    if (!w)
        return;
    pthread_mutex_lock(&w->mu);
    w->stopping = 1;
    pthread_cond_broadcast(&w->cv);
    pthread_mutex_unlock(&w->mu);
    if (w->started)
        pthread_join(w->thread, NULL);
    w->started = 0;
    cc_store_close(w->store);
    w->store = NULL;
}

void cc_writer_free(cc_writer *w)
{
    if (!w)
        return;
    cc_writer_stop(w);
    for (int i = 0; i < w->n_totals; i++)
        free(w->totals[i].model);
    free(w->totals);
    pthread_mutex_destroy(&w->mu);
    pthread_cond_destroy(&w->cv);
    free(w);
}
