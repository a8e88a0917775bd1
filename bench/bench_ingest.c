/* bench_ingest.c — concord-bench: how fast events are parsed and ingested,
 * how long a report over the stored day summaries takes, and how much memory
 * each of those phases needs. Every phase runs in its own forked child so the
 * peak RSS that wait4() reports belongs to that phase alone. */
#define _GNU_SOURCE /* wait4, struct rusage, RUSAGE_THREAD on glibc */

#include <errno.h>
#include <sqlite3.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/time.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "date.h"
#include "error.h"
#include "event_parse.h"
#include "ingest.h"
#include "line_reader.h"
#include "report.h"
#include "review.h"
#include "store.h"
#include "store_sqlite.h" /* cc_store_db: inspects the SQLite file directly */
#include "summary.h"
#include "synth.h"

#define MAX_REPS 1000
#define PATH_CAP 4096

typedef struct bench {
    cc_synth_opts synth;
    const char *input;  /* NULL: generate */
    const char *parent; /* where the temporary directory goes */
    int keep, reps, batch;
    int threads;           /* --threads: a second ingest phase with this many (> 1) */
    const char *model_opt; /* --model, or NULL: the first line's model, else "default" */
    char model[256];       /* the model every phase works on */
    char dir[PATH_CAP - 64], events[PATH_CAP], db[PATH_CAP];
} bench;

/* What a child sends back through its pipe. */
typedef struct phase_out {
    int failed;
    char msg[512];
    int64_t items; /* events generated / parsed / stored */
    int64_t rejected, duplicates;
    int m, k;
    double wall; /* seconds of the measured section */
    int reps;
    double rep_ms[MAX_REPS];
    int windows;
    int64_t report_events;
    size_t json_bytes;
    int64_t review_day, review_kept;
    double thread_cpu; /* ingest: CPU seconds of the calling (reading and storing) thread */
} phase_out;

typedef struct phase_result {
    phase_out out;
    int ran;
    double cpu; /* user + system seconds of the whole child */
    long maxrss_kib;
} phase_result;

typedef void (*phase_fn)(const bench *b, phase_out *out, int arg);

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + (double)t.tv_nsec * 1e-9;
}

static void note(phase_out *out, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void note(phase_out *out, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(out->msg, sizeof out->msg, fmt, ap);
    va_end(ap);
}

#define fail(out, ...) ((out)->failed = 1, note((out), __VA_ARGS__))

static void phase_idle(const bench *b, phase_out *out, int arg)
{
    (void)b;
    (void)out;
    (void)arg;
}

static void phase_generate(const bench *b, phase_out *out, int arg)
{
    (void)arg;
    double t0 = now();
    FILE *f = fopen(b->events, "wb");
    if (!f) {
        fail(out, "%s: %s", b->events, strerror(errno));
        return;
    }
    int rc = cc_synth_write(f, &b->synth);
    if (fclose(f) != 0)
        rc = -1;
    out->wall = now() - t0;
    if (rc) {
        fail(out, "writing %s: %s", b->events, strerror(errno));
        return;
    }
    out->items = b->synth.n;
    out->m = b->synth.members;
    out->k = b->synth.classes;
}

static void phase_parse(const bench *b, phase_out *out, int arg)
{
    (void)arg;
    double t0 = now();
    FILE *f = fopen(b->events, "rb");
    cc_line_reader *r = f ? cc_line_reader_create(f) : NULL;
    cc_parser *p = cc_parser_create();
    if (!f || !r || !p) {
        fail(out, "%s: %s", b->events,
                 f ? "out of memory" : strerror(errno));
    }
    cc_line ln;
    cc_event ev;
    char why[256];
    int got = 0;
    while (!out->failed && (got = cc_line_reader_next(r, &ln)) > 0) {
        if (ln.too_long) {
            out->rejected++;
            continue;
        }
        size_t i = 0;
        while (i < ln.len && (ln.text[i] == ' ' || ln.text[i] == '\t' || ln.text[i] == '\r'))
            i++;
        if (i == ln.len)
            continue;
        if (cc_parse_event(p, ln.text, ln.len, &ev, why, sizeof why) != 0) {
            if (out->rejected++ == 0)
                note(out, "line %lld: %s", (long long)ln.number, why);
            continue;
        }
        if (out->items++ == 0) {
            out->m = ev.m;
            out->k = ev.k;
        }
    }
    if (got < 0) {
        fail(out, "reading %s: %s", b->events, strerror(errno));
    }
    cc_parser_free(p);
    cc_line_reader_free(r);
    if (f)
        fclose(f);
    out->wall = now() - t0;
}

static void remove_db(const bench *b)
{
    static const char *const suffix[] = {"", "-wal", "-shm", "-journal"};
    char path[PATH_CAP + 16];
    for (size_t i = 0; i < sizeof suffix / sizeof *suffix; i++) {
        snprintf(path, sizeof path, "%s%s", b->db, suffix[i]);
        unlink(path);
    }
}

/* The floor of ingest: every line parsed as in phase_parse and its row
 * inserted with the store's own statement in transactions of the same
 * size; no event view beyond the stored class, no summaries, no labels. */
static void phase_floor(const bench *b, phase_out *out, int arg)
{
    (void)arg;
    remove_db(b);
    cc_error err = CC_ERROR_INIT;
    cc_store *s = NULL;
    cc_model *model = NULL;
    cc_parser *p = cc_parser_create();
    cc_line_reader *r = NULL;
    float *probs = malloc(sizeof(float) * CC_MAX_MEMBERS * CC_MAX_CLASSES);
    double avg[CC_MAX_CLASSES];
    int batch = b->batch > 0 ? b->batch : 20000, rc = 0, got = 0, in_tx = 0;
    double t0 = now();
    FILE *f = fopen(b->events, "rb");
    if (!f || !p || !probs || !(r = cc_line_reader_create(f))) {
        fail(out, "%s: %s", b->events, f ? "out of memory" : strerror(errno));
        goto done;
    }
    if ((rc = cc_store_open(&s, b->db, 1, &err)) || (rc = cc_store_begin(s, &err)))
        goto done;
    in_tx = 1;
    cc_line ln;
    cc_event ev;
    char why[256];
    int64_t since = 0;
    while (!rc && (got = cc_line_reader_next(r, &ln)) > 0) {
        if (ln.too_long || cc_parse_event(p, ln.text, ln.len, &ev, why, sizeof why) != 0) {
            out->rejected++;
            continue;
        }
        if (!model && (rc = cc_store_model_create(s, b->model, ev.m, ev.k, NULL, NULL,
                                                  &model, &err)))
            break;
        if (ev.m != model->m || ev.k != model->k) {
            out->rejected++;
            continue;
        }
        for (int c = 0; c < ev.k; c++)
            avg[c] = 0.0;
        for (int i = 0; i < ev.m * ev.k; i++) {
            probs[i] = (float)ev.probs[i];
            avg[i % ev.k] += probs[i];
        }
        int inserted;
        if ((rc = cc_store_event_insert(s, model, ev.id, ev.id_len, ev.ts, ev.segment,
                                        ev.segment_len, cc_argmax_d(avg, ev.k), ev.label, probs,
                                        &inserted, &err)))
            break;
        out->items += inserted;
        if (++since >= batch) {
            in_tx = 0;
            if ((rc = cc_store_commit(s, &err)) || (rc = cc_store_begin(s, &err)))
                break;
            in_tx = 1;
            since = 0;
        }
    }
    if (!rc && got < 0)
        fail(out, "reading %s: %s", b->events, strerror(errno));
    if (!rc && in_tx) {
        in_tx = 0;
        rc = cc_store_commit(s, &err);
    }
done:
    if (in_tx)
        cc_store_rollback(s);
    cc_store_close(s);
    out->wall = now() - t0;
    if (!out->failed && err.code)
        fail(out, "%s", err.msg);
    cc_model_free(model);
    cc_line_reader_free(r);
    cc_parser_free(p);
    free(probs);
    if (f)
        fclose(f);
}

/* arg = threads (cc_ingest_opts.threads; 1 = all on one thread) */
static void phase_ingest(const bench *b, phase_out *out, int arg)
{
    remove_db(b);
    cc_error err = CC_ERROR_INIT;
    cc_store *s = NULL;
    cc_ingest *ing = NULL;
    cc_ingest_opts opts = CC_INGEST_OPTS_INIT;
    if (b->batch > 0)
        opts.batch = b->batch;
    opts.threads = arg;

    double t0 = now();
    int rc = cc_store_open(&s, b->db, 1, &err);
    if (!rc)
        rc = cc_ingest_create(&ing, s, &opts, &err);
    if (!rc)
        rc = cc_ingest_file(ing, b->events, CC_RECORD_EVENTS, &err);
    if (!rc)
        rc = cc_ingest_finish(ing, &err);
    struct rusage self;
    if (getrusage(RUSAGE_THREAD, &self) == 0)
        out->thread_cpu = (double)self.ru_utime.tv_sec + (double)self.ru_utime.tv_usec * 1e-6 +
                          (double)self.ru_stime.tv_sec + (double)self.ru_stime.tv_usec * 1e-6;
    if (ing) {
        const cc_ingest_stats *st = cc_ingest_get_stats(ing);
        out->items = st->accepted;
        out->rejected = st->rejected;
        out->duplicates = st->duplicates;
    }
    cc_ingest_free(ing);
    out->wall = now() - t0;
    /* the first seven days become the baseline, so reports carry the drift,
     * label-shift and z-score work (not timed: it is one small write) */
    cc_model *model = NULL;
    int64_t *days = NULL;
    int n_days = 0;
    if (!rc && !(rc = cc_store_model_get(s, b->model, &model, &err)) &&
        !(rc = cc_store_summary_days(s, model, INT64_MIN / 4, INT64_MAX / 4, &days, &n_days,
                                     &err)) &&
        n_days > 0)
        rc = cc_store_baseline_set(s, model, days[0], days[0] + 6, &err);
    free(days);
    cc_model_free(model);
    cc_store_close(s);
    if (rc) {
        fail(out, "%s", err.msg);
    }
}

/* The report as `concord report --format json` makes it: cc_report_write_json,
 * window by window, into a file in the bench directory (rewritten each
 * time). The window and event counts come from one untimed cc_report_build. */
static void phase_report(const bench *b, phase_out *out, int by)
{
    cc_error err = CC_ERROR_INIT;
    cc_store *s = NULL;
    if (cc_store_open(&s, b->db, 0, &err)) {
        fail(out, "%s", err.msg);
        return;
    }
    char path[PATH_CAP + 16];
    snprintf(path, sizeof path, "%s/report.json", b->dir);
    cc_report_opts ro = {b->model, 0, 0, 0, 0, (cc_grouping)by, NULL, 0, 0, 0};
    double start = now();
    for (int i = 0; i < b->reps; i++) {
        double t0 = now();
        FILE *f = fopen(path, "w");
        int rc = f ? cc_report_write_json(f, s, &ro, &err) : -1;
        long bytes = f ? ftell(f) : 0;
        if (f && fclose(f) != 0)
            rc = rc ? rc : -1;
        if (rc) {
            fail(out, "%s", f ? err.msg : strerror(errno));
            break;
        }
        out->rep_ms[out->reps++] = (now() - t0) * 1e3;
        out->json_bytes = (size_t)bytes;
    }
    out->wall = now() - start;
    cc_report *r = NULL;
    if (!out->failed && cc_report_build(&r, s, &ro, &err) == 0) {
        out->windows = r->n_windows;
        out->m = r->model->m;
        out->k = r->model->k;
        for (int w = 0; w < r->n_windows; w++)
            out->report_events += r->windows[w].metrics.events;
    }
    cc_report_free(r);
    out->items = out->report_events;
    cc_store_close(s);
}

/* Review of the busiest day: arg 0 = the plain scan of that day's rows through
 * events_by_time (the floor: every row read, nothing computed), 1 = review
 * --where wrong, 2 = review --where top-mi; at most 5 repetitions each. */
static void phase_review(const bench *b, phase_out *out, int arg)
{
    cc_error err = CC_ERROR_INIT;
    cc_store *s = NULL;
    cc_model *m = NULL;
    sqlite3_stmt *q = NULL;
    if (cc_store_open(&s, b->db, 0, &err) || cc_store_model_get(s, b->model, &m, &err)) {
        fail(out, "%s", err.msg);
        cc_store_close(s);
        return;
    }
    sqlite3 *db = cc_store_db(s);
    sqlite3_prepare_v2(db, "SELECT day, count(*) FROM events WHERE model_id = ?1 GROUP BY day "
                           "ORDER BY 2 DESC, 1 LIMIT 1", -1, &q, NULL);
    sqlite3_bind_int64(q, 1, m->id);
    if (sqlite3_step(q) == SQLITE_ROW) {
        out->review_day = sqlite3_column_int64(q, 0);
        out->items = sqlite3_column_int64(q, 1);
    }
    sqlite3_finalize(q);
    q = NULL;
    int reps = b->reps < 5 ? b->reps : 5;
    double start = now();
    for (int i = 0; i < reps && !out->failed; i++) {
        double t0 = now();
        if (arg == 0) {
            int64_t rows = 0, bytes = 0;
            if (!q)
                sqlite3_prepare_v2(db, "SELECT id, ts, label, probs FROM events WHERE "
                                       "model_id = ?1 AND day BETWEEN ?2 AND ?2", -1, &q, NULL);
            sqlite3_reset(q);
            sqlite3_bind_int64(q, 1, m->id);
            sqlite3_bind_int64(q, 2, out->review_day);
            while (sqlite3_step(q) == SQLITE_ROW) {
                const unsigned char *blob = sqlite3_column_blob(q, 3);
                rows++;
                bytes += sqlite3_column_bytes(q, 3) + (blob ? blob[0] : 0);
            }
            out->review_kept = bytes > 0 ? rows : 0;
        } else {
            cc_review_opts o = CC_REVIEW_OPTS_INIT;
            cc_review *rv = NULL;
            o.from = out->review_day * 86400;
            o.to = o.from + 86399;
            o.lists = 1u << (arg == 1 ? CC_REVIEW_WRONG : CC_REVIEW_TOP_MI);
            if (cc_review_run(&rv, s, m, &o, &err)) {
                fail(out, "%s", err.msg);
                break;
            }
            int n;
            cc_review_get_list(rv, arg == 1 ? CC_REVIEW_WRONG : CC_REVIEW_TOP_MI, &n, NULL);
            out->review_kept = n;
            if (cc_review_get_summary(rv)->events != out->items)
                fail(out, "review saw %lld events, the day has %lld",
                     (long long)cc_review_get_summary(rv)->events, (long long)out->items);
            cc_review_free(rv);
        }
        out->rep_ms[out->reps++] = (now() - t0) * 1e3;
    }
    out->wall = now() - start;
    sqlite3_finalize(q);
    cc_model_free(m);
    cc_store_close(s);
}

static int write_all(int fd, const void *data, size_t n)
{
    const char *p = data;
    while (n) {
        ssize_t w = write(fd, p, n);
        if (w < 0 && errno == EINTR)
            continue;
        if (w <= 0)
            return -1;
        p += w;
        n -= (size_t)w;
    }
    return 0;
}

static size_t read_all(int fd, void *data, size_t n)
{
    char *p = data;
    size_t got = 0;
    while (got < n) {
        ssize_t r = read(fd, p + got, n - got);
        if (r < 0 && errno == EINTR)
            continue;
        if (r <= 0)
            break;
        got += (size_t)r;
    }
    return got;
}

static void run_phase(const bench *b, phase_fn fn, int arg, phase_result *res)
{
    static phase_out child_out;
    memset(res, 0, sizeof *res);
    res->ran = 1;
    int fds[2];
    if (pipe(fds) != 0) {
        res->out.failed = 1;
        snprintf(res->out.msg, sizeof res->out.msg, "pipe: %s", strerror(errno));
        return;
    }
    fflush(stdout);
    fflush(stderr);
    pid_t pid = fork();
    if (pid < 0) {
        res->out.failed = 1;
        snprintf(res->out.msg, sizeof res->out.msg, "fork: %s", strerror(errno));
        close(fds[0]);
        close(fds[1]);
        return;
    }
    if (pid == 0) {
        close(fds[0]);
        memset(&child_out, 0, sizeof child_out);
        fn(b, &child_out, arg);
        _exit(write_all(fds[1], &child_out, sizeof child_out) ? 1 : 0);
    }
    close(fds[1]);
    size_t got = read_all(fds[0], &res->out, sizeof res->out);
    close(fds[0]);
    int status = 0;
    struct rusage ru;
    memset(&ru, 0, sizeof ru);
    while (wait4(pid, &status, 0, &ru) < 0 && errno == EINTR)
        ;
    res->cpu = (double)ru.ru_utime.tv_sec + (double)ru.ru_utime.tv_usec * 1e-6 +
               (double)ru.ru_stime.tv_sec + (double)ru.ru_stime.tv_usec * 1e-6;
    res->maxrss_kib = ru.ru_maxrss;
    if (got != sizeof res->out || !WIFEXITED(status) || WEXITSTATUS(status) != 0) {
        res->out.failed = 1;
        if (WIFSIGNALED(status))
            snprintf(res->out.msg, sizeof res->out.msg, "child killed by signal %d",
                     WTERMSIG(status));
        else if (got != sizeof res->out)
            snprintf(res->out.msg, sizeof res->out.msg, "child sent no result");
    }
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Median and minimum of the repetitions (sorts a copy). */
static void rep_stats(const phase_out *o, double *median, double *min)
{
    double v[MAX_REPS];
    int n = o->reps;
    memcpy(v, o->rep_ms, (size_t)n * sizeof *v);
    qsort(v, (size_t)n, sizeof *v, cmp_double);
    *min = n ? v[0] : 0.0;
    *median = n == 0 ? 0.0 : n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

/* 1234567 -> "1,234,567" */
static const char *grouped(char *buf, size_t cap, double value)
{
    char digits[32];
    snprintf(digits, sizeof digits, "%.0f", value < 0 ? 0.0 : value);
    size_t n = strlen(digits), j = 0;
    for (size_t i = 0; i < n && j + 2 < cap; i++) {
        if (i && (n - i) % 3 == 0)
            buf[j++] = ',';
        buf[j++] = digits[i];
    }
    buf[j] = '\0';
    return buf;
}

static double file_mib(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0 ? (double)st.st_size / 1048576.0 : 0.0;
}

static double db_mib(const bench *b)
{
    char wal[PATH_CAP + 8];
    snprintf(wal, sizeof wal, "%s-wal", b->db);
    return file_mib(b->db) + file_mib(wal);
}

/* Rates per wall second and per CPU second: on a shared machine the second
 * moves far less with the load (the CPU time is the whole child's). */
static void print_row(const char *name, const phase_result *r, int rate)
{
    char rate_txt[32] = "-", cpu_rate[32] = "-", wall[16], cpu[16], rss[16];
    if (!r->ran) {
        printf("  %-28s %9s %9s %13s %13s %12s\n", name, "-", "-", "-", "-", "(skipped)");
        return;
    }
    if (rate && r->out.wall > 0)
        grouped(rate_txt, sizeof rate_txt, (double)r->out.items / r->out.wall);
    if (rate && r->cpu > 0)
        grouped(cpu_rate, sizeof cpu_rate, (double)r->out.items / r->cpu);
    snprintf(wall, sizeof wall, "%.3f", r->out.wall);
    snprintf(cpu, sizeof cpu, "%.3f", r->cpu);
    snprintf(rss, sizeof rss, "%.1f", (double)r->maxrss_kib / 1024.0);
    printf("  %-28s %9s %9s %13s %13s %12s\n", name, wall, cpu, rate_txt, cpu_rate, rss);
}

static void usage(FILE *f)
{
    fputs("usage: concord-bench [options]\n"
          "\n"
          "Measures, each phase in its own child process:\n"
          "  generate   write N synthetic events (skipped with --input)\n"
          "  parse      line reader + cc_parse_event over the file, nothing stored\n"
          "  floor      parse + a bare insert of the same rows into a fresh database of\n"
          "             the same schema (no summaries, views or labels): what ingest\n"
          "             cannot beat\n"
          "  ingest     fresh database: cc_store_open, cc_ingest_create/_file/_finish\n"
          "  report     cc_report_write_json (what the command runs) over every stored day,\n"
          "             by day and as one window, repeated --reps times\n"
          "  review     the busiest day: a plain scan of its rows, then cc_review_run\n"
          "             --where wrong and --where top-mi (at most 5 times each)\n"
          "and prints wall time, CPU time, events/s and peak RSS per phase.\n"
          "\n"
          "options:\n"
          "  --n N              events to generate (default 1000000)\n"
          "  --members M        members (default 5)\n"
          "  --classes K        classes (default 10)\n"
          "  --days D           days the events spread over (default 28)\n"
          "  --seed S           generator seed (default 1)\n"
          "  --label-share F    fraction of events with a label (default 0.3)\n"
          "  --input FILE       use this JSON Lines file instead of generating one\n"
          "  --model NAME       the model to measure (default: the first line's \"model\",\n"
          "                     or \"default\" when it has none)\n"
          "  --reps R           report repetitions, 1..1000 (default 20)\n"
          "  --batch B          lines per ingest transaction (default: the library's)\n"
          "  --threads T        also run the ingest phase with T threads (2..64; T - 1\n"
          "                     parse ahead of the writer) after the one-thread run, on\n"
          "                     a fresh database each, and print the scaling\n"
          "  --dir DIR          where to create the temporary directory\n"
          "                     (default $TMPDIR or /tmp)\n"
          "  --random-ids       generate ids like random UUIDs instead of ascending ones\n"
          "  --keep             keep the temporary directory (events file, database)\n"
          "  -h, --help         show this text\n",
          f);
}

/* The model the phases work on: --model, else the "model" of the first line
 * that parses (ingest stores each line under its own model), else "default"
 * (what ingest uses for lines without one). Returns 0 or -1 after a message. */
static int resolve_model(bench *b)
{
    if (b->model_opt) {
        snprintf(b->model, sizeof b->model, "%s", b->model_opt);
        return 0;
    }
    snprintf(b->model, sizeof b->model, "default");
    FILE *f = fopen(b->events, "rb");
    if (!f) {
        fprintf(stderr, "concord-bench: %s: %s\n", b->events, strerror(errno));
        return -1;
    }
    cc_parser *p = cc_parser_create();
    cc_line_reader *r = p ? cc_line_reader_create(f) : NULL;
    cc_line ln;
    cc_event ev;
    char why[256];
    while (r && cc_line_reader_next(r, &ln) > 0) {
        if (ln.too_long || cc_parse_event(p, ln.text, ln.len, &ev, why, sizeof why) != 0)
            continue;
        if (ev.model)
            snprintf(b->model, sizeof b->model, "%s", ev.model);
        break;
    }
    cc_line_reader_free(r);
    cc_parser_free(p);
    fclose(f);
    return 0;
}

static int parse_args(int argc, char **argv, bench *b)
{
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) {
            usage(stdout);
            exit(0);
        }
        if (!strcmp(a, "--keep")) {
            b->keep = 1;
            continue;
        }
        if (!strcmp(a, "--random-ids")) {
            b->synth.random_ids = 1;
            continue;
        }
        static const char *const valued[] = {"--n",    "--members", "--classes",
                                             "--days", "--seed",    "--label-share",
                                             "--input", "--reps",   "--batch",
                                             "--dir",  "--model",   "--threads"};
        int known = 0;
        for (size_t j = 0; j < sizeof valued / sizeof *valued; j++)
            known |= !strcmp(a, valued[j]);
        if (!known) {
            fprintf(stderr, "concord-bench: unknown option '%s' (see --help)\n", a);
            return -1;
        }
        if (i + 1 >= argc) {
            fprintf(stderr, "concord-bench: %s needs a value\n", a);
            return -1;
        }
        const char *v = argv[++i];
        int bad = 0;
        int64_t seed;
        char *end;
        if (!strcmp(a, "--n"))
            bad = cc_synth_parse_i64(v, &b->synth.n) || b->synth.n < 1;
        else if (!strcmp(a, "--members"))
            bad = cc_synth_parse_int(v, &b->synth.members);
        else if (!strcmp(a, "--classes"))
            bad = cc_synth_parse_int(v, &b->synth.classes);
        else if (!strcmp(a, "--days"))
            bad = cc_synth_parse_int(v, &b->synth.days);
        else if (!strcmp(a, "--seed")) {
            bad = cc_synth_parse_i64(v, &seed) || seed < 0;
            b->synth.seed = (uint64_t)seed;
        } else if (!strcmp(a, "--label-share")) {
            errno = 0;
            b->synth.label_share = strtod(v, &end);
            bad = errno || end == v || *end;
        } else if (!strcmp(a, "--input"))
            b->input = v;
        else if (!strcmp(a, "--reps"))
            bad = cc_synth_parse_int(v, &b->reps) || b->reps < 1 || b->reps > MAX_REPS;
        else if (!strcmp(a, "--batch"))
            bad = cc_synth_parse_int(v, &b->batch) || b->batch < 1;
        else if (!strcmp(a, "--model"))
            b->model_opt = v;
        else if (!strcmp(a, "--threads"))
            bad = cc_synth_parse_int(v, &b->threads) || b->threads < 2 || b->threads > 64;
        else
            b->parent = v;
        if (bad) {
            fprintf(stderr, "concord-bench: %s: bad value '%s'\n", a, v);
            return -1;
        }
    }
    const char *problem = cc_synth_check(&b->synth);
    if (problem) {
        fprintf(stderr, "concord-bench: %s\n", problem);
        return -1;
    }
    return 0;
}

static int report_failure(const char *phase, const phase_result *r)
{
    if (!r->ran || !r->out.failed)
        return 0;
    fprintf(stderr, "concord-bench: %s failed: %s\n", phase, r->out.msg);
    return 1;
}

int main(int argc, char **argv)
{
    static bench b;
    cc_synth_defaults(&b.synth);
    b.reps = 20;
    const char *tmpdir = getenv("TMPDIR");
    b.parent = tmpdir && *tmpdir ? tmpdir : "/tmp";
    if (parse_args(argc, argv, &b))
        return 2;

    if (snprintf(b.dir, sizeof b.dir, "%s/concord-bench.XXXXXX", b.parent) >=
            (int)sizeof b.dir ||
        !mkdtemp(b.dir)) {
        fprintf(stderr, "concord-bench: cannot create a directory in %s: %s\n", b.parent,
                strerror(errno));
        return 1;
    }
    snprintf(b.db, sizeof b.db, "%s/bench.db", b.dir);
    if (b.input)
        snprintf(b.events, sizeof b.events, "%s", b.input);
    else
        snprintf(b.events, sizeof b.events, "%s/events.jsonl", b.dir);

    static phase_result idle, gen, parse, floor_ph, ingest, ingest_t, by_day, by_all, scan,
        rv_wrong, rv_mi;
    int failed = 0;
    run_phase(&b, phase_idle, 0, &idle);
    if (!b.input) {
        run_phase(&b, phase_generate, 0, &gen);
        failed |= report_failure("generate", &gen);
    }
    if (!failed && resolve_model(&b))
        failed = 1;
    if (!failed) {
        run_phase(&b, phase_parse, 0, &parse);
        failed |= report_failure("parse", &parse);
    }
    if (!failed) {
        run_phase(&b, phase_floor, 0, &floor_ph);
        failed |= report_failure("floor", &floor_ph);
    }
    if (!failed && b.threads > 1) {
        /* first, so the database the reports read is the one-thread run's */
        run_phase(&b, phase_ingest, b.threads, &ingest_t);
        failed |= report_failure("ingest with threads", &ingest_t);
    }
    if (!failed) {
        run_phase(&b, phase_ingest, 1, &ingest);
        failed |= report_failure("ingest", &ingest);
    }
    if (!failed) {
        run_phase(&b, phase_report, CC_BY_DAY, &by_day);
        failed |= report_failure("report by day", &by_day);
    }
    if (!failed) {
        run_phase(&b, phase_report, CC_BY_ALL, &by_all);
        failed |= report_failure("report all", &by_all);
    }
    if (!failed) {
        run_phase(&b, phase_review, 0, &scan);
        failed |= report_failure("review scan", &scan);
    }
    if (!failed) {
        run_phase(&b, phase_review, 1, &rv_wrong);
        failed |= report_failure("review wrong", &rv_wrong);
    }
    if (!failed) {
        run_phase(&b, phase_review, 2, &rv_mi);
        failed |= report_failure("review top-mi", &rv_mi);
    }

    if (!failed) {
        char n_txt[32], g1[32], g2[32];
        int64_t lines = parse.out.items + parse.out.rejected;
        printf("concord-bench: N = %s events, M = %d members, K = %d classes",
               grouped(n_txt, sizeof n_txt, (double)lines), parse.out.m, parse.out.k);
        if (b.input)
            printf(" (from %s, model '%s')\n", b.input, b.model);
        else
            printf(", %d days, label share %.2f, seed %llu\n", b.synth.days,
                   b.synth.label_share, (unsigned long long)b.synth.seed);
        printf("events file %.1f MiB, database %.1f MiB; each phase in its own child process\n\n",
               file_mib(b.events), db_mib(&b));
        printf("  %-28s %9s %9s %13s %13s %12s\n", "phase", "wall s", "CPU s", "events/s",
               "events/CPU-s", "peak RSS MiB");
        printf("  %-28s %9s %9s %13s %13s %12s\n", "----------------------------", "---------",
               "---------", "-------------", "-------------", "------------");
        print_row("idle child (floor)", &idle, 0);
        if (!b.input)
            print_row("generate", &gen, 1);
        print_row("parse only", &parse, 1);
        print_row("parse + bare insert (floor)", &floor_ph, 1);
        print_row("ingest end to end", &ingest, 1);
        char label_t[64];
        snprintf(label_t, sizeof label_t, "ingest, --threads %d", b.threads);
        if (b.threads > 1)
            print_row(label_t, &ingest_t, 1);
        char label[64];
        snprintf(label, sizeof label, "report by day x%d", b.reps);
        print_row(label, &by_day, 0);
        snprintf(label, sizeof label, "report all x%d", b.reps);
        print_row(label, &by_all, 0);
        print_row("review day: plain scan", &scan, 0);
        print_row("review day: --where wrong", &rv_wrong, 0);
        print_row("review day: --where top-mi", &rv_mi, 0);

        double med_day, min_day, med_all, min_all;
        rep_stats(&by_day.out, &med_day, &min_day);
        rep_stats(&by_all.out, &med_all, &min_all);
        printf("\n  report (cc_report_write_json to a file), %d runs each:\n", b.reps);
        printf("    by day: median %8.2f ms  min %8.2f ms  first %8.2f ms  %d windows, "
               "%s events, JSON %.1f KiB\n",
               med_day, min_day, by_day.out.rep_ms[0], by_day.out.windows,
               grouped(g1, sizeof g1, (double)by_day.out.report_events),
               (double)by_day.out.json_bytes / 1024.0);
        printf("    all:    median %8.2f ms  min %8.2f ms  first %8.2f ms  %d window,  "
               "%s events, JSON %.1f KiB\n",
               med_all, min_all, by_all.out.rep_ms[0], by_all.out.windows,
               grouped(g2, sizeof g2, (double)by_all.out.report_events),
               (double)by_all.out.json_bytes / 1024.0);

        double med_scan, med_wrong, med_mi, min_x;
        char day_txt[11];
        rep_stats(&scan.out, &med_scan, &min_x);
        rep_stats(&rv_wrong.out, &med_wrong, &min_x);
        rep_stats(&rv_mi.out, &med_mi, &min_x);
        cc_format_date(scan.out.review_day, day_txt);
        printf("\n  review of the busiest day (%s, %s events), median of %d runs each:\n"
               "    plain scan of its rows %8.1f ms\n"
               "    --where wrong          %8.1f ms  (%.2fx the scan)\n"
               "    --where top-mi         %8.1f ms  (%.2fx the scan)\n",
               day_txt, grouped(g1, sizeof g1, (double)scan.out.items), scan.out.reps,
               med_scan, med_wrong, med_scan > 0 ? med_wrong / med_scan : 0.0, med_mi,
               med_scan > 0 ? med_mi / med_scan : 0.0);

        double parse_rate = parse.out.wall > 0 ? (double)parse.out.items / parse.out.wall : 0;
        double ingest_rate =
            ingest.out.wall > 0 ? (double)ingest.out.items / ingest.out.wall : 0;
        printf("\n  ingest/parse rate ratio: %.3f (ingest takes %.2fx the parse-only time per "
               "event)\n",
               parse_rate > 0 ? ingest_rate / parse_rate : 0.0,
               ingest_rate > 0 ? parse_rate / ingest_rate : 0.0);
        double floor_rate =
            floor_ph.out.wall > 0 ? (double)floor_ph.out.items / floor_ph.out.wall : 0;
        printf("  ingest/floor rate ratio: %.3f (ingest takes %.2fx the time of parsing and "
               "inserting the same rows; the store part alone, floor minus parse, is %.0f %% "
               "of the floor)\n",
               floor_rate > 0 ? ingest_rate / floor_rate : 0.0,
               ingest_rate > 0 ? floor_rate / ingest_rate : 0.0,
               floor_ph.out.wall > 0 ? 100.0 * (floor_ph.out.wall - parse.out.wall) /
                                           floor_ph.out.wall
                                     : 0.0);
        printf("  by CPU time: ingest/floor %.3f (ingest takes %.2fx the floor's CPU), "
               "parse share of the floor's CPU %.0f %%\n",
               ingest.cpu > 0 ? floor_ph.cpu / ingest.cpu : 0.0,
               floor_ph.cpu > 0 ? ingest.cpu / floor_ph.cpu : 0.0,
               floor_ph.cpu > 0 ? 100.0 * parse.cpu / floor_ph.cpu : 0.0);
        if (b.threads > 1 && ingest.out.wall > 0 && ingest.cpu > 0 && ingest_t.out.wall > 0 &&
            ingest_t.cpu > 0 && floor_ph.out.wall > 0 && floor_ph.cpu > 0) {
            double w1 = (double)ingest.out.items / ingest.out.wall;
            double wt = (double)ingest_t.out.items / ingest_t.out.wall;
            double c1 = (double)ingest.out.items / ingest.cpu;
            double ct = (double)ingest_t.out.items / ingest_t.cpu;
            double wf = (double)floor_ph.out.items / floor_ph.out.wall;
            double cf = (double)floor_ph.out.items / floor_ph.cpu;
            printf("  threads: ingest with %d threads / with 1: %.3f in events per wall second, "
                   "%.3f per CPU second\n", b.threads, wt / w1, ct / c1);
            printf("  threads: ingest with %d threads / floor: %.3f per wall second, %.3f per "
                   "CPU second (1 thread: %.3f, %.3f)\n", b.threads, wt / wf, ct / cf, w1 / wf,
                   c1 / cf);
            if (ingest_t.out.thread_cpu > 0) {
                /* the storing thread is the pipeline's critical path: with a free CPU
                 * for every thread, wall time tends to its CPU time */
                double pw = (double)ingest_t.out.items / ingest_t.out.thread_cpu;
                printf("  threads: the storing thread used %.3f of the run's %.3f CPU s: %s "
                       "events per second of it, %.3f of the floor's events per CPU second "
                       "(the bound with a free CPU per thread)\n",
                       ingest_t.out.thread_cpu, ingest_t.cpu,
                       grouped(g1, sizeof g1, pw), pw / cf);
                printf("  threads: storing-thread bound / one thread's events per CPU second: "
                       "%.3f\n", pw / c1);
                printf("  threads: storing-thread bound / floor: %.3f\n", pw / cf);
            }
        }
        printf("  targets: ingest >= 150,000 events/s: %s; report by day (median) < 100 ms: %s\n",
               ingest_rate >= 150000 ? "met" : "NOT met", med_day < 100.0 ? "met" : "NOT met");

        if (parse.out.rejected)
            printf("  warning: %lld lines did not parse (first: %s)\n",
                   (long long)parse.out.rejected, parse.out.msg);
        if (b.threads > 1 && (ingest_t.out.items != ingest.out.items ||
                              ingest_t.out.rejected != ingest.out.rejected ||
                              ingest_t.out.duplicates != ingest.out.duplicates))
            printf("  warning: ingest with %d threads stored %lld, rejected %lld, duplicates "
                   "%lld; with 1 thread %lld, %lld, %lld\n", b.threads,
                   (long long)ingest_t.out.items, (long long)ingest_t.out.rejected,
                   (long long)ingest_t.out.duplicates, (long long)ingest.out.items,
                   (long long)ingest.out.rejected, (long long)ingest.out.duplicates);
        if (ingest.out.items != parse.out.items || ingest.out.rejected || ingest.out.duplicates)
            printf("  warning: ingest stored %lld, rejected %lld, duplicates %lld; parse "
                   "accepted %lld\n",
                   (long long)ingest.out.items, (long long)ingest.out.rejected,
                   (long long)ingest.out.duplicates, (long long)parse.out.items);
        if (by_day.out.report_events != ingest.out.items ||
            by_all.out.report_events != ingest.out.items)
            printf("  warning: reports count %lld / %lld events, ingest stored %lld\n",
                   (long long)by_day.out.report_events, (long long)by_all.out.report_events,
                   (long long)ingest.out.items);
    }

    if (b.keep) {
        printf("\n  kept: %s\n", b.dir);
    } else {
        if (!b.input)
            unlink(b.events);
        remove_db(&b);
        rmdir(b.dir);
    }
    return failed ? 1 : 0;
}
