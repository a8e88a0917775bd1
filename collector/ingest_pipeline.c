/* ingest_pipeline.c — worker threads that parse chunks of lines ahead of the
 * single writer (see ingest_pipeline.h). A ring of chunks with sequence
 * numbers: the calling thread fills chunk `tail`, workers take chunks in
 * order from `next_take`, and the calling thread takes chunk `head` back
 * when it is done (parsing it itself when no worker has started it), so
 * lines reach the writer in input order whatever the threads' timing. */
#include "ingest_pipeline.h"

#include <errno.h>
#include <pthread.h>
#include <stdlib.h>
#include <string.h>

#define NONE ((size_t)-1)
#define WHY_MAX 256

typedef enum chunk_state { FREE, READY, TAKEN, DONE } chunk_state;

typedef struct chunk {
    chunk_state state;
    cc_record_kind kind;
    char *text;               /* the lines' bytes, back to back */
    size_t text_len, text_cap;
    cc_pipe_line *lines;      /* CC_PIPE_CHUNK_LINES */
    int n_lines;
    char *arena;              /* what the worker made of them */
    size_t arena_len, arena_cap;
    int failed;               /* out of memory while parsing */
} chunk;

typedef struct worker {
    cc_pipe *pipe;
    cc_parser *parser;
} worker;

struct cc_pipe {
    pthread_mutex_t mu;
    pthread_cond_t ready;     /* a chunk to take, or stop */
    pthread_cond_t done;      /* a chunk parsed */
    int n_workers, n_chunks, started;
    chunk *ring;
    int64_t head, tail, next_take; /* sequence numbers; chunk s is ring[s % n_chunks] */
    int stop;
    worker *workers;
    pthread_t *threads;
    cc_parser *own;           /* the calling thread's, for chunks it parses itself */
};

/* n bytes of room in the arena, aligned; their offset, or NONE. */
static size_t reserve(chunk *c, size_t n, size_t align)
{
    size_t at = (c->arena_len + align - 1) / align * align;
    if (at + n > c->arena_cap) {
        size_t cap = c->arena_cap ? c->arena_cap : 64 << 10;
        while (cap < at + n)
            cap *= 2;
        char *grown = realloc(c->arena, cap);
        if (!grown)
            return NONE;
        c->arena = grown;
        c->arena_cap = cap;
    }
    c->arena_len = at + n;
    return at;
}

/* A copy of n bytes with a NUL after them; NONE for s == NULL or no memory
 * (then c->failed is set). */
static size_t put_text(chunk *c, const char *s, size_t n)
{
    if (!s)
        return NONE;
    size_t at = reserve(c, n + 1, 1);
    if (at == NONE) {
        c->failed = 1;
        return NONE;
    }
    memcpy(c->arena + at, s, n);
    c->arena[at + n] = '\0';
    return at;
}

static void parse_event_line(chunk *c, cc_pipe_line *L, const char *text, cc_parser *parser)
{
    char why[WHY_MAX];
    cc_event ev;
    if (cc_parse_event(parser, text, L->ln.len, &ev, why, sizeof why)) {
        L->status = CC_PIPE_BAD;
        L->off_why = put_text(c, why, strlen(why));
        return;
    }
    L->status = CC_PIPE_OK;
    L->ev = ev;
    L->off_id = put_text(c, ev.id, (size_t)ev.id_len);
    L->off_model = ev.model ? put_text(c, ev.model, strlen(ev.model)) : NONE;
    L->off_segment = put_text(c, ev.segment, (size_t)ev.segment_len);
    L->off_label_name = ev.label_name ? put_text(c, ev.label_name, strlen(ev.label_name)) : NONE;
    size_t n = (size_t)ev.m * (size_t)ev.k;
    size_t at = reserve(c, n * sizeof(float), sizeof(double));
    if (at == NONE) {
        c->failed = 1;
        return;
    }
    L->off_probs = at;
    float *probs = (float *)(void *)(c->arena + at);
    for (size_t i = 0; i < n; i++)
        probs[i] = (float)ev.probs[i];
    /* the label-free view; the writer adds the label once it is resolved */
    cc_event_view v;
    if (cc_event_view_compute(&v, probs, ev.m, ev.k, -1))
        return;
    cc_event_view_uncertainty(&v, probs);
    size_t ints = ((size_t)ev.m + (size_t)ev.k) * sizeof(int);
    at = reserve(c, (size_t)ev.k * sizeof(double) + ints, sizeof(double));
    if (at == NONE) {
        c->failed = 1;
        return;
    }
    L->off_view = at;
    double *avg = (double *)(void *)(c->arena + at);
    int *member_class = (int *)(void *)(avg + ev.k), *votes = member_class + ev.m;
    memcpy(avg, v.avg, (size_t)ev.k * sizeof *avg);
    memcpy(member_class, v.member_class, (size_t)ev.m * sizeof *member_class);
    memcpy(votes, v.votes, (size_t)ev.k * sizeof *votes);
    L->ens = v.ens;
    L->second = v.second;
    L->margin = v.margin;
    L->vote = v.vote;
    L->vote_tie = v.vote_tie;
    L->unanimous = v.unanimous;
    L->disagreement = v.disagreement;
    L->entropy = v.entropy;
    L->expected_entropy = v.expected_entropy;
    L->mutual_information = v.mutual_information;
    L->has_view = 1;
}

static void parse_label_line(chunk *c, cc_pipe_line *L, const char *text, cc_parser *parser)
{
    char why[WHY_MAX];
    cc_label_line lab;
    if (cc_parse_label(parser, text, L->ln.len, &lab, why, sizeof why)) {
        L->status = CC_PIPE_BAD;
        L->off_why = put_text(c, why, strlen(why));
        return;
    }
    L->status = CC_PIPE_OK;
    L->lab = lab;
    L->off_id = put_text(c, lab.id, (size_t)lab.id_len);
    L->off_model = lab.model ? put_text(c, lab.model, strlen(lab.model)) : NONE;
    L->off_label_name = lab.label_name ? put_text(c, lab.label_name, strlen(lab.label_name))
                                       : NONE;
}

static const void *at(const chunk *c, size_t off) { return off == NONE ? NULL : c->arena + off; }

/* Parses every line of c; then, the arena no longer moving, points the
 * lines' fields into it. */
static void process(chunk *c, cc_parser *parser)
{
    c->arena_len = 0;
    c->failed = 0;
    for (int i = 0; i < c->n_lines && !c->failed; i++) {
        cc_pipe_line *L = &c->lines[i];
        const char *text = c->text + L->off_text;
        if (L->ln.too_long)
            L->status = CC_PIPE_LONG;
        else if (cc_line_blank(text, L->ln.len))
            L->status = CC_PIPE_BLANK;
        else if (c->kind == CC_RECORD_EVENTS)
            parse_event_line(c, L, text, parser);
        else
            parse_label_line(c, L, text, parser);
    }
    if (c->failed)
        return;
    for (int i = 0; i < c->n_lines; i++) {
        cc_pipe_line *L = &c->lines[i];
        L->ln.text = c->text + L->off_text;
        L->why = at(c, L->off_why);
        if (L->status != CC_PIPE_OK)
            continue;
        if (c->kind == CC_RECORD_EVENTS) {
            L->ev.id = at(c, L->off_id);
            L->ev.model = at(c, L->off_model);
            L->ev.segment = at(c, L->off_segment);
            L->ev.label_name = at(c, L->off_label_name);
            L->ev.probs = NULL;
            L->probs = at(c, L->off_probs);
            if (L->has_view) {
                L->avg = at(c, L->off_view);
                L->member_class = (const int *)(const void *)(L->avg + L->ev.k);
                L->votes = L->member_class + L->ev.m;
            }
        } else {
            L->lab.id = at(c, L->off_id);
            L->lab.model = at(c, L->off_model);
            L->lab.label_name = at(c, L->off_label_name);
        }
    }
}

static void *work(void *arg)
{
    worker *w = arg;
    cc_pipe *p = w->pipe;
    pthread_mutex_lock(&p->mu);
    for (;;) {
        while (!p->stop && p->next_take >= p->tail)
            pthread_cond_wait(&p->ready, &p->mu);
        if (p->stop)
            break;
        chunk *c = &p->ring[p->next_take++ % p->n_chunks];
        c->state = TAKEN;
        pthread_mutex_unlock(&p->mu);
        process(c, w->parser);
        pthread_mutex_lock(&p->mu);
        c->state = DONE;
        pthread_cond_broadcast(&p->done);
    }
    pthread_mutex_unlock(&p->mu);
    return NULL;
}

cc_pipe *cc_pipe_create(int workers)
{
    if (workers < 1 || workers > CC_PIPE_MAX_THREADS)
        return NULL;
    cc_pipe *p = calloc(1, sizeof *p);
    if (!p)
        return NULL;
    p->n_workers = workers;
    p->n_chunks = 2 * workers + 2;
    p->ring = calloc((size_t)p->n_chunks, sizeof *p->ring);
    p->workers = calloc((size_t)workers, sizeof *p->workers);
    p->threads = calloc((size_t)workers, sizeof *p->threads);
    p->own = cc_parser_create();
    int ok = p->ring && p->workers && p->threads && p->own;
    for (int i = 0; ok && i < workers; i++) {
        p->workers[i].pipe = p;
        ok = (p->workers[i].parser = cc_parser_create()) != NULL;
    }
    if (!ok || pthread_mutex_init(&p->mu, NULL) != 0) {
        if (p->workers)
            for (int i = 0; i < workers; i++)
                cc_parser_free(p->workers[i].parser);
        cc_parser_free(p->own);
        free(p->workers);
        free(p->threads);
        free(p->ring);
        free(p);
        return NULL;
    }
    pthread_cond_init(&p->ready, NULL);
    pthread_cond_init(&p->done, NULL);
    for (; p->started < workers; p->started++)
        if (pthread_create(&p->threads[p->started], NULL, work, &p->workers[p->started]) != 0)
            break;
    if (p->started < workers) {
        cc_pipe_free(p);
        return NULL;
    }
    return p;
}

void cc_pipe_free(cc_pipe *p)
{
    if (!p)
        return;
    pthread_mutex_lock(&p->mu);
    p->stop = 1;
    pthread_cond_broadcast(&p->ready);
    pthread_mutex_unlock(&p->mu);
    for (int i = 0; i < p->started; i++)
        pthread_join(p->threads[i], NULL);
    for (int i = 0; i < p->n_workers; i++)
        cc_parser_free(p->workers[i].parser);
    for (int i = 0; i < p->n_chunks; i++) {
        free(p->ring[i].text);
        free(p->ring[i].lines);
        free(p->ring[i].arena);
    }
    cc_parser_free(p->own);
    pthread_cond_destroy(&p->ready);
    pthread_cond_destroy(&p->done);
    pthread_mutex_destroy(&p->mu);
    free(p->workers);
    free(p->threads);
    free(p->ring);
    free(p);
}

void cc_pipe_ts_range(cc_pipe *p, int64_t first, int64_t last)
{
    for (int i = 0; i < p->n_workers; i++)
        cc_parser_ts_range(p->workers[i].parser, first, last);
    cc_parser_ts_range(p->own, first, last);
}

/* Reads lines into c until it is full or the input ends (*ended = 1, with
 * *status and *line as cc_pipe_run reports them; -3 = out of memory). */
static void fill(chunk *c, cc_line_reader *r, int64_t first_line, int *ended, int *status,
                 int64_t *line)
{
    c->n_lines = 0;
    c->text_len = 0;
    if (!c->lines && !(c->lines = malloc(CC_PIPE_CHUNK_LINES * sizeof *c->lines))) {
        *ended = 1;
        *status = -3;
        return;
    }
    while (c->n_lines < CC_PIPE_CHUNK_LINES && c->text_len < CC_PIPE_CHUNK_BYTES) {
        cc_line ln;
        int got = cc_line_reader_next(r, &ln);
        if (got <= 0) {
            *ended = 1;
            *status = got;
            *line = ln.number + first_line - 1;
            return;
        }
        if (c->text_len + ln.len > c->text_cap) {
            size_t cap = c->text_cap ? c->text_cap : CC_PIPE_CHUNK_BYTES;
            while (cap < c->text_len + ln.len)
                cap *= 2;
            char *grown = realloc(c->text, cap);
            if (!grown) {
                *ended = 1;
                *status = -3;
                return;
            }
            c->text = grown;
            c->text_cap = cap;
        }
        cc_pipe_line *L = &c->lines[c->n_lines++];
        memset(L, 0, sizeof *L);
        L->ln = ln;
        L->ln.text = NULL;
        L->ln.number = ln.number + first_line - 1;
        L->off_text = c->text_len;
        if (ln.len)
            memcpy(c->text + c->text_len, ln.text, ln.len);
        c->text_len += ln.len;
        L->off_why = L->off_id = L->off_model = L->off_segment = NONE;
        L->off_label_name = L->off_probs = L->off_view = NONE;
    }
}

/* Waits for the oldest chunk (parsing it here when no worker has taken it)
 * and hands its lines to take. Returns take's result; 1 when the chunk could
 * not be parsed for want of memory. */
static int take_oldest(cc_pipe *p, cc_pipe_take_fn take, void *ctx)
{
    chunk *c = &p->ring[p->head % p->n_chunks];
    pthread_mutex_lock(&p->mu);
    if (c->state == READY && p->next_take == p->head) {
        p->next_take++;
        c->state = TAKEN;
        pthread_mutex_unlock(&p->mu);
        process(c, p->own);
        pthread_mutex_lock(&p->mu);
        c->state = DONE;
    }
    while (c->state != DONE)
        pthread_cond_wait(&p->done, &p->mu);
    pthread_mutex_unlock(&p->mu);
    int rc = c->failed ? 1 : 0;
    for (int i = 0; !rc && i < c->n_lines; i++)
        rc = take(ctx, &c->lines[i]);
    pthread_mutex_lock(&p->mu);
    c->state = FREE;
    p->head++;
    pthread_mutex_unlock(&p->mu);
    return rc;
}

/* After a failure: chunks not started are dropped, the ones being parsed
 * are waited for, and the ring is empty again. */
static void discard(cc_pipe *p)
{
    pthread_mutex_lock(&p->mu);
    p->next_take = p->tail;
    for (int64_t s = p->head; s < p->tail; s++) {
        chunk *c = &p->ring[s % p->n_chunks];
        while (c->state == TAKEN)
            pthread_cond_wait(&p->done, &p->mu);
        c->state = FREE;
    }
    p->head = p->tail;
    pthread_mutex_unlock(&p->mu);
}

int cc_pipe_run(cc_pipe *p, cc_line_reader *r, cc_record_kind kind, int64_t first_line,
                cc_pipe_take_fn take, void *ctx, int *read_status, int64_t *read_line)
{
    int rc = 0, ended = 0, status = 0, saved_errno = 0;
    int64_t line = 0;
    while (!rc && !ended) {
        while (!rc && p->tail - p->head >= p->n_chunks)
            rc = take_oldest(p, take, ctx);
        if (rc)
            break;
        chunk *c = &p->ring[p->tail % p->n_chunks];
        fill(c, r, first_line, &ended, &status, &line);
        saved_errno = errno;
        if (c->n_lines > 0) {
            pthread_mutex_lock(&p->mu);
            c->kind = kind;
            c->state = READY;
            p->tail++;
            pthread_cond_signal(&p->ready);
            pthread_mutex_unlock(&p->mu);
        }
    }
    while (!rc && p->head < p->tail)
        rc = take_oldest(p, take, ctx);
    if (rc)
        discard(p);
    if (rc == 1) {
        rc = 0;
        status = -3;
    }
    *read_status = status;
    *read_line = line;
    errno = saved_errno;
    return rc;
}

void cc_pipe_view(const cc_pipe_line *L, int label, cc_event_view *out)
{
    int m = L->ev.m, k = L->ev.k;
    out->m = m;
    out->k = k;
    memcpy(out->member_class, L->member_class, (size_t)m * sizeof *out->member_class);
    memcpy(out->avg, L->avg, (size_t)k * sizeof *out->avg);
    memcpy(out->votes, L->votes, (size_t)k * sizeof *out->votes);
    out->ens = L->ens;
    out->second = L->second;
    out->margin = L->margin;
    out->vote = L->vote;
    out->vote_tie = L->vote_tie;
    out->unanimous = L->unanimous;
    out->disagreement = L->disagreement;
    out->entropy = L->entropy;
    out->expected_entropy = L->expected_entropy;
    out->mutual_information = L->mutual_information;
    cc_event_view_set_label(out, label);
}
