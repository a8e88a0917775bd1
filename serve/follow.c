/* follow.c — tailing files into the store, with rotation, truncation,
 * resumable offsets, day-close checks and periodic delivery. */
#include "follow.h"

#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "date.h"
#include "line_reader.h"

#define READ_SIZE 65536

typedef struct tail {
    const char *path;
    cc_record_kind kind;
    int fd;
    dev_t dev;
    ino_t ino;
    off_t pos;              /* bytes read from fd */
    off_t consumed;         /* end of the last complete line taken */
    int64_t line;           /* complete lines taken */
    char *partial;          /* the line being read */
    size_t plen, pcap;
    int missing_noted;
} tail;

typedef struct follower {
    cc_store *store;
    const cc_follow_opts *o;
    cc_follow_stats *stats;
    char *chunk_buf;        /* complete lines waiting to be ingested, in memory */
    size_t chunk_len;
    FILE *chunk;            /* open_memstream over chunk_buf */
    int64_t chunk_lines, chunk_first;
    tail *chunk_tail;
    char buf[READ_SIZE];
} follower;

static void note(follower *f, const char *path, const char *what)
{
    char msg[1200];
    if (!f->o->on_note)
        return;
    snprintf(msg, sizeof msg, "%s: %s", path, what);
    f->o->on_note(f->o->ctx, msg);
}

static void sleep_ms(int ms);

/* Where an earlier run stopped in this very file (same device and inode). */
static void load_offset(follower *f, tail *t, off_t size)
{
    cc_follow_offset o;
    int found = 0;
    if (cc_store_follow_offset_get(f->store, t->path, &found, &o, NULL) || !found)
        return;
    if ((dev_t)o.dev == t->dev && (ino_t)o.ino == t->ino && o.offset <= size &&
        lseek(t->fd, (off_t)o.offset, SEEK_SET) >= 0) {
        t->pos = t->consumed = (off_t)o.offset;
        t->line = o.line;
    }
}

static void on_reject(void *payload, const char *source, int64_t line, const char *reason)
{
    const follower *f = payload;
    if (f->o->on_reject)
        f->o->on_reject(f->o->ctx, source, line, reason);
}

static int open_chunk(follower *f, cc_error *err)
{
    f->chunk_len = 0;
    if (!(f->chunk = open_memstream(&f->chunk_buf, &f->chunk_len)))
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    return 0;
}

/* Ingests the lines gathered so far, with the file's new offset, in one
 * unit of work (the chunk fits one ingest batch, and cc_ingest_finish
 * commits the offset with the rows). */
static int flush_chunk(follower *f, cc_error *err)
{
    tail *t = f->chunk_tail;
    if (!t)
        return 0;
    if (fflush(f->chunk) != 0)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    FILE *in = fmemopen(f->chunk_buf, f->chunk_len, "r");
    if (!in)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    cc_ingest_opts io = CC_INGEST_OPTS_INIT;
    io.model = f->o->model;
    io.batch = (int)f->chunk_lines + 16;
    io.on_reject = on_reject;
    io.payload = f;
    io.now = f->o->ingest_now;
    cc_ingest *ing = NULL;
    int rc = cc_ingest_create(&ing, f->store, &io, err);
    if (!rc)
        rc = cc_ingest_stream(ing, in, t->path, f->chunk_first, t->kind, err);
    if (!rc) {
        cc_follow_offset off = {(uint64_t)t->dev, (uint64_t)t->ino, (int64_t)t->consumed,
                                t->line};
        rc = cc_ingest_source_offset(ing, t->path, &off, err);
    }
    if (!rc)
        rc = cc_ingest_finish(ing, err);
    if (!rc) {
        const cc_ingest_stats *s = cc_ingest_get_stats(ing);
        f->stats->lines += s->lines;
        f->stats->accepted += s->accepted;
        f->stats->duplicates += s->duplicates;
        f->stats->rejected += s->rejected;
        f->stats->labels_set += s->labels_set;
        f->stats->chunks++;
    }
    cc_ingest_free(ing);
    fclose(in);
    if (rc)
        return rc;
    fclose(f->chunk); /* start an empty chunk */
    free(f->chunk_buf);
    f->chunk = NULL;
    f->chunk_buf = NULL;
    if ((rc = open_chunk(f, err)))
        return rc;
    f->chunk_tail = NULL;
    f->chunk_lines = 0;
    return 0;
}

/* Takes the partial buffer as one complete line ending at file offset end. */
static int take_line(follower *f, tail *t, off_t end, cc_error *err)
{
    if (f->chunk_tail && f->chunk_tail != t) {
        int rc = flush_chunk(f, err);
        if (rc)
            return rc;
    }
    if (!f->chunk_tail) {
        f->chunk_tail = t;
        f->chunk_first = t->line + 1;
    }
    if ((t->plen && fwrite(t->partial, 1, t->plen, f->chunk) != t->plen) ||
        fputc('\n', f->chunk) == EOF)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    t->plen = 0;
    t->line++;
    t->consumed = end;
    if (++f->chunk_lines >= f->o->chunk_lines)
        return flush_chunk(f, err);
    return 0;
}

/* Appends to the line being read; past the line limit the rest is dropped
 * (the line is refused as too long when ingested). */
static int extend(tail *t, const char *p, size_t n)
{
    size_t cap_limit = (size_t)CC_LINE_MAX + 2;
    if (t->plen + n > cap_limit)
        n = t->plen < cap_limit ? cap_limit - t->plen : 0;
    if (t->plen + n > t->pcap) {
        size_t cap = t->pcap ? t->pcap : 4096;
        while (cap < t->plen + n)
            cap *= 2;
        char *np = realloc(t->partial, cap);
        if (!np)
            return -1;
        t->partial = np;
        t->pcap = cap;
    }
    memcpy(t->partial + t->plen, p, n);
    t->plen += n;
    return 0;
}

static int open_tail(follower *f, tail *t, int resume, cc_error *err)
{
    int fd = open(t->path, O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
        if (errno == ENOENT) {
            if (!t->missing_noted)
                note(f, t->path, "not there yet; waiting for it");
            t->missing_noted = 1;
            return 0;
        }
        return cc_error_set(err, CC_EIO, "%s: cannot open: %s", t->path, strerror(errno));
    }
    struct stat st;
    if (fstat(fd, &st) != 0 || !S_ISREG(st.st_mode)) {
        close(fd);
        return cc_error_set(err, CC_EIO, "%s: not a regular file", t->path);
    }
    t->fd = fd;
    t->dev = st.st_dev;
    t->ino = st.st_ino;
    t->pos = t->consumed = 0;
    t->line = 0;
    t->plen = 0;
    t->missing_noted = 0;
    if (resume)
        load_offset(f, t, st.st_size);
    return 0;
}

/* Reads what is there; *got = bytes read. */
static int pump(follower *f, tail *t, size_t *got, cc_error *err)
{
    *got = 0;
    while (!*f->o->stop) {
        ssize_t n = read(t->fd, f->buf, sizeof f->buf);
        if (n < 0 && errno == EINTR)
            continue;
        if (n < 0)
            return cc_error_set(err, CC_EIO, "%s: read error: %s", t->path, strerror(errno));
        if (n == 0)
            break;
        off_t start = t->pos;
        t->pos += n;
        *got += (size_t)n;
        const char *p = f->buf, *end = f->buf + n;
        while (p < end) {
            const char *nl = memchr(p, '\n', (size_t)(end - p));
            size_t len = (size_t)((nl ? nl : end) - p);
            if (extend(t, p, len))
                return cc_error_set(err, CC_ENOMEM, "out of memory");
            if (!nl)
                break;
            int rc = take_line(f, t, start + (nl - f->buf) + 1, err);
            if (rc)
                return rc;
            p = nl + 1;
        }
    }
    return 0;
}

/* After reading: has the path moved to a new file, or shrunk? */
static int watch(follower *f, tail *t, size_t got, cc_error *err)
{
    struct stat st;
    if (stat(t->path, &st) != 0)
        return 0;
    if (st.st_dev != t->dev || st.st_ino != t->ino) {
        if (got > 0)
            return 0; /* the old file is still being written; read it out first */
        int rc = 0;
        if (t->plen > 0)
            rc = take_line(f, t, t->pos, err); /* its last line had no newline */
        if (!rc)
            rc = flush_chunk(f, err);
        if (rc)
            return rc;
        close(t->fd);
        t->fd = -1;
        f->stats->rotations++;
        note(f, t->path, "rotated; reading the new file from its start");
        return open_tail(f, t, 0, err);
    }
    if (st.st_size < t->pos) {
        int rc = flush_chunk(f, err);
        if (rc)
            return rc;
        if (lseek(t->fd, 0, SEEK_SET) < 0)
            return cc_error_set(err, CC_EIO, "%s: %s", t->path, strerror(errno));
        t->pos = t->consumed = 0;
        t->line = 0;
        t->plen = 0;
        f->stats->truncations++;
        note(f, t->path, "truncated; reading again from its start");
    }
    return 0;
}

static void sleep_ms(int ms)
{
    struct timespec ts = {ms / 1000, (long)(ms % 1000) * 1000000L};
    nanosleep(&ts, NULL); /* a signal ends it early, which is what we want */
}

static int run_check(follower *f, int64_t day, int64_t now, cc_error *err)
{
    cc_check_opts co = {.model = f->o->check_model, .has_day = 1, .day = day, .now = now,
                        .extra = f->o->extra, .n_extra = f->o->n_extra};
    cc_check_result *res = NULL;
    int rc = cc_check_run(f->store, f->o->rules, &co, &res, err);
    if (rc)
        return rc;
    f->stats->checks++;
    if (f->o->on_check)
        f->o->on_check(f->o->ctx, res);
    cc_check_result_free(res);
    return 0;
}

static int run_deliver(follower *f, int64_t now, cc_error *err)
{
    cc_deliver_opts d = CC_DELIVER_OPTS_INIT;
    cc_deliver_stats st;
    d.now = now;
    int rc = cc_deliver_run(f->store, &d, &st, err);
    if (!rc && f->o->on_deliver && (st.sent || st.failed || st.dead))
        f->o->on_deliver(f->o->ctx, &st);
    return rc;
}

/* A failure because another writer kept the lock past the wait bound: follow
 * does not stop for it, it backs off (doubling, up to 30 s) and tries again;
 * what it had read stays in memory and is committed by a later attempt. */
static int busy_backoff(follower *f, int *tries, cc_error *err)
{
    if (err->code != CC_EBUSY && !cc_store_take_timed_out(f->store))
        return 0;
    int ms = f->o->poll_ms;
    for (int i = 0; i < *tries && ms < 30000; i++)
        ms *= 2;
    if (ms > 30000)
        ms = 30000;
    char msg[128];
    snprintf(msg, sizeof msg, "still locked by another writer after the wait bound; "
                              "keeping what was read, backing off %d ms and trying again", ms);
    note(f, cc_store_path(f->store), msg);
    ++*tries;
    *err = (cc_error)CC_ERROR_INIT;
    sleep_ms(ms);
    return 1;
}

int cc_follow_day_close(cc_store *s, const cc_follow_opts *o, cc_follow_clock *clk,
                        cc_follow_stats *stats, cc_error *err)
{
    if (!o->rules)
        return 0;
    follower f = {.store = s, .o = o, .stats = stats};
    int64_t now = o->now(o->ctx);
    int64_t closed = cc_day_of_unix(now - o->grace_s) - 1;
    if (closed > clk->last_checked) {
        int rc = run_check(&f, closed, now, err);
        if (rc)
            return rc;
        clk->last_checked = closed;
        clk->deliver_now = 1;
    }
    if (clk->deliver_now || now - clk->last_deliver >= o->deliver_every_s) {
        int rc = run_deliver(&f, now, err);
        if (rc)
            return rc;
        clk->last_deliver = now;
        clk->deliver_now = 0;
    }
    return 0;
}

/* The store's schema holds follow_offsets and the alert tables; a store
 * that cannot write them is refused here rather than after the first read. */
static int setup(follower *f, cc_error *err)
{
    if (cc_store_readonly(f->store))
        return cc_error_set(err, CC_EIO, "%s: follow needs a store it can write",
                            cc_store_path(f->store));
    return 0;
}

int cc_follow_run(cc_store *s, const cc_follow_opts *o, cc_follow_stats *stats, cc_error *err)
{
    memset(stats, 0, sizeof *stats);
    int n = o->n_paths + (o->labels_path ? 1 : 0);
    follower *f = calloc(1, sizeof *f);
    tail *tails = calloc((size_t)(n ? n : 1), sizeof *tails);
    int rc = 0;
    if (!f || !tails) {
        free(f);
        free(tails);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    f->store = s;
    f->o = o;
    f->stats = stats;
    cc_error local = CC_ERROR_INIT;
    int tries = 0;
    if (!err)
        err = &local;
    rc = open_chunk(f, err);
    while (!rc && (rc = setup(f, err)) && !*o->stop && busy_backoff(f, &tries, err))
        rc = 0;
    for (int i = 0; i < n; i++) {
        tails[i].path = i < o->n_paths ? o->paths[i] : o->labels_path;
        tails[i].kind = i < o->n_paths ? CC_RECORD_EVENTS : CC_RECORD_LABELS;
        tails[i].fd = -1;
    }
    for (int i = 0; !rc && i < n; i++)
        rc = open_tail(f, &tails[i], 1, err);

    cc_follow_clock clk = CC_FOLLOW_CLOCK_INIT;
    int64_t published_chunks = stats->chunks;
    if (!rc)
        cc_publisher_poke(o->publisher); /* what an earlier run left unpublished */
    while (!rc && !*o->stop) {
        for (int i = 0; !rc && i < n && !*o->stop; i++) {
            tail *t = &tails[i];
            size_t got = 0;
            if (t->fd < 0 && (rc = open_tail(f, t, 0, err)))
                break;
            if (t->fd < 0)
                continue;
            rc = pump(f, t, &got, err);
            if (!rc)
                rc = flush_chunk(f, err);
            if (!rc && !*o->stop)
                rc = watch(f, t, got, err);
        }
        if (!rc && stats->chunks != published_chunks) {
            cc_publisher_poke(o->publisher);
            published_chunks = stats->chunks;
        }
        if (!rc && !*o->stop && o->rules)
            rc = cc_follow_day_close(s, o, &clk, stats, err);
        if (rc && !*o->stop && busy_backoff(f, &tries, err)) {
            rc = 0;
            continue;
        }
        if (!rc)
            tries = 0;
        if (!rc && !*o->stop)
            sleep_ms(o->poll_ms);
    }
    if (!rc)
        rc = flush_chunk(f, err);
    if (!rc && stats->chunks != published_chunks)
        cc_publisher_poke(o->publisher);
    for (int i = 0; i < n; i++) {
        if (tails[i].fd >= 0)
            close(tails[i].fd);
        free(tails[i].partial);
    }
    if (f->chunk)
        fclose(f->chunk);
    free(f->chunk_buf);
    free(tails);
    free(f);
    return rc;
}
