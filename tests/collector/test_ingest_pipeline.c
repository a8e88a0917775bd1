/* test_ingest_pipeline.c — the threaded front of ingest hands every line to
 * the caller in input order, with the numbers, parse results, float32
 * values and views that parsing on one thread gives (cc_parse_event,
 * cc_event_view_compute + cc_event_view_uncertainty, compared exactly):
 * with 1, 2, 3 and 8 workers, chunks of many and of few lines, blank, bad
 * and over-long lines, labels, numbering from a first line; a caller that
 * stops in the middle gets nothing after its stop, and the same pipe then
 * reads another input whole. A property of our own design: the reference
 * is the one-thread parser. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "check.h"
#include "event_parse.h"
#include "event_view.h"
#include "ingest_pipeline.h"
#include "line_reader.h"

static unsigned long long rng = 0x2545F4914F6CDD1Dull;
static double uniform(void)
{
    rng ^= rng << 13;
    rng ^= rng >> 7;
    rng ^= rng << 17;
    return (double)(rng >> 11) / 9007199254740992.0;
}

/* n lines of events (kind 0) or labels (kind 1) with some bad ones, into
 * a temporary file whose name goes to path */
static void make_input(int n, int kind, char *path)
{
    strcpy(path, "/tmp/concord-pipe-XXXXXX");
    int fd = mkstemp(path);
    FILE *f = fd >= 0 ? fdopen(fd, "w") : NULL;
    if (!f) {
        perror("temporary file");
        exit(1);
    }
    for (int i = 0; i < n; i++) {
        double r = uniform();
        if (r < 0.03) {
            fputs(i % 2 ? "   \t\n" : "\n", f);
        } else if (r < 0.06) {
            fputs(i % 2 ? "{\"id\":\"x\",\"ts\":0,\"probs\":[[0.5,0.5,0\n" : "not json\n", f);
        } else if (kind == 1) {
            if (i % 3)
                fprintf(f, "{\"id\":\"e%d\",\"label\":%d}\n", i, i % 4);
            else
                fprintf(f, "{\"id\":\"e%d\",\"model\":\"m%d\",\"label\":\"c%d\"}\n", i, i % 2,
                        i % 3);
        } else {
            int m = 1 + i % 4, k = 2 + i % 5;
            fprintf(f, "{\"id\":\"e%d\",\"ts\":%d,", i, 1780000000 + i);
            if (i % 5 == 0)
                fprintf(f, "\"model\":\"m%d\",\"segment\":\"s%d\",", i % 3, i % 7);
            if (i % 4 == 0)
                fprintf(f, "\"label\":%d,", i % k);
            else if (i % 4 == 1)
                fprintf(f, "\"label\":\"c%d\",", i % k);
            fputs("\"probs\":[", f);
            for (int a = 0; a < m; a++) {
                double row[8], s = 0;
                for (int c = 0; c < k; c++)
                    s += row[c] = 0.05 + uniform();
                fputs(a ? ",[" : "[", f);
                for (int c = 0; c < k; c++)
                    fprintf(f, c ? ",%.7f" : "%.7f", row[c] / s);
                fputc(']', f);
            }
            fputs("]}\n", f);
        }
        if (i == n / 2) { /* one line over CC_LINE_MAX */
            fputs("{\"id\":\"big\",\"pad\":\"", f);
            for (unsigned j = 0; j < CC_LINE_MAX; j += 64)
                fputs("xxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxx", f);
            fputs("\"}\n", f);
        }
    }
    if (n)
        fputs("{\"id\":\"last\",\"ts\":1780000000,\"probs\":[[0.25,0.75]]}", f); /* no newline */
    fclose(f);
}

typedef struct seen {
    cc_record_kind kind;
    int64_t first_line, expect_next;
    int stop_at;   /* return -7 at this many lines taken (0: never) */
    int taken;
    FILE *ref;     /* the same input, read again on this thread */
    cc_line_reader *ref_r;
    cc_parser *ref_p;
} seen;

static int same_view(const cc_pipe_line *L, const float *probs, int label)
{
    cc_event_view a, b;
    if (cc_event_view_compute(&a, probs, L->ev.m, L->ev.k, label))
        return !L->has_view;
    cc_event_view_uncertainty(&a, probs);
    if (!L->has_view)
        return 0;
    cc_pipe_view(L, label, &b);
    int ok = a.ens == b.ens && a.second == b.second && a.vote == b.vote &&
             a.vote_tie == b.vote_tie && a.unanimous == b.unanimous && a.margin == b.margin &&
             (a.disagreement == b.disagreement || (isnan(a.disagreement) && isnan(b.disagreement))) &&
             a.entropy == b.entropy && a.expected_entropy == b.expected_entropy &&
             a.mutual_information == b.mutual_information && a.label == b.label &&
             a.ens_right == b.ens_right && a.n_right == b.n_right;
    ok = ok && !memcmp(a.member_class, b.member_class, (size_t)a.m * sizeof(int)) &&
         !memcmp(a.votes, b.votes, (size_t)a.k * sizeof(int)) &&
         !memcmp(a.avg, b.avg, (size_t)a.k * sizeof(double)) &&
         !memcmp(a.member_right, b.member_right, (size_t)a.m * sizeof(int));
    return ok;
}

static int str_eq(const char *a, const char *b) { return (!a && !b) || (a && b && !strcmp(a, b)); }

static int take(void *ctx, const cc_pipe_line *L)
{
    seen *s = ctx;
    cc_line ln;
    CHECK(cc_line_reader_next(s->ref_r, &ln) == 1);
    int64_t number = ln.number + s->first_line - 1;
    CHECK(L->ln.number == number);
    CHECK(L->ln.number == s->expect_next);
    s->expect_next = L->ln.number + 1;
    CHECK(L->ln.too_long == ln.too_long && L->ln.full_len == ln.full_len);
    CHECK(L->ln.len == ln.len && (ln.len == 0 || !memcmp(L->ln.text, ln.text, ln.len)));
    if (ln.too_long) {
        CHECK(L->status == CC_PIPE_LONG);
    } else if (cc_line_blank(ln.text, ln.len)) {
        CHECK(L->status == CC_PIPE_BLANK);
    } else {
        char why[256];
        if (s->kind == CC_RECORD_EVENTS) {
            cc_event ev;
            int rc = cc_parse_event(s->ref_p, ln.text, ln.len, &ev, why, sizeof why);
            CHECK(L->status == (rc ? CC_PIPE_BAD : CC_PIPE_OK));
            if (rc) {
                CHECK(L->why && !strcmp(L->why, why));
            } else if (L->status == CC_PIPE_OK) {
                CHECK(L->ev.id_len == ev.id_len && !memcmp(L->ev.id, ev.id, (size_t)ev.id_len));
                CHECK(L->ev.ts == ev.ts && L->ev.m == ev.m && L->ev.k == ev.k);
                CHECK(str_eq(L->ev.model, ev.model) && str_eq(L->ev.label_name, ev.label_name));
                CHECK(L->ev.label == ev.label && L->ev.segment_len == ev.segment_len);
                CHECK(!ev.segment || !memcmp(L->ev.segment, ev.segment, (size_t)ev.segment_len));
                float probs[64];
                for (int i = 0; i < ev.m * ev.k; i++) {
                    probs[i] = (float)ev.probs[i];
                    CHECK(L->probs[i] == probs[i]);
                }
                CHECK(same_view(L, probs, -1));
                CHECK(same_view(L, probs, ev.k - 1));
            }
        } else {
            cc_label_line lab;
            int rc = cc_parse_label(s->ref_p, ln.text, ln.len, &lab, why, sizeof why);
            CHECK(L->status == (rc ? CC_PIPE_BAD : CC_PIPE_OK));
            if (!rc && L->status == CC_PIPE_OK) {
                CHECK(L->lab.id_len == lab.id_len && !memcmp(L->lab.id, lab.id, (size_t)lab.id_len));
                CHECK(L->lab.label == lab.label && str_eq(L->lab.model, lab.model));
                CHECK(str_eq(L->lab.label_name, lab.label_name));
            }
        }
    }
    return ++s->taken == s->stop_at ? -7 : 0;
}

/* Runs the file at path through p; checks against the one-thread parse of
 * the same file. */
static int run(cc_pipe *p, const char *path, cc_record_kind kind, int64_t first_line,
               int stop_at, int *taken)
{
    FILE *f = fopen(path, "rb"), *ref = fopen(path, "rb");
    if (!f || !ref) {
        perror(path);
        exit(1);
    }
    seen s = {kind, first_line, first_line, stop_at, 0, ref, NULL, cc_parser_create()};
    s.ref_r = cc_line_reader_create(ref);
    cc_line_reader *r = cc_line_reader_create(f);
    int status;
    int64_t line;
    int rc = cc_pipe_run(p, r, kind, first_line, take, &s, &status, &line);
    CHECK(status == 0 || rc != 0);
    cc_line_reader_free(r);
    cc_line_reader_free(s.ref_r);
    cc_parser_free(s.ref_p);
    fclose(ref);
    fclose(f);
    *taken = s.taken;
    return rc;
}

int main(void)
{
    const int n = 5000;
    char events[64], labels[64], empty[64];
    make_input(n, 0, events);
    make_input(n, 1, labels);
    make_input(0, 0, empty);
    int lines = n + 2; /* the over-long line and the last one */
    int workers[] = {1, 2, 3, 8};
    for (size_t w = 0; w < sizeof workers / sizeof *workers; w++) {
        cc_pipe *p = cc_pipe_create(workers[w]);
        CHECK(p != NULL);
        if (!p)
            continue;
        int taken;
        CHECK(run(p, events, CC_RECORD_EVENTS, 1, 0, &taken) == 0 && taken == lines);
        CHECK(run(p, labels, CC_RECORD_LABELS, 100, 0, &taken) == 0 && taken == lines);
        /* a stop in the middle of a chunk: nothing after it, and the pipe
         * reads the next input whole */
        CHECK(run(p, events, CC_RECORD_EVENTS, 1, 3001, &taken) == -7 && taken == 3001);
        CHECK(run(p, events, CC_RECORD_EVENTS, 7, 0, &taken) == 0 && taken == lines);
        CHECK(run(p, labels, CC_RECORD_LABELS, 1, 1, &taken) == -7 && taken == 1);
        CHECK(run(p, labels, CC_RECORD_LABELS, 1, 0, &taken) == 0 && taken == lines);
        cc_pipe_free(p);
    }
    /* an empty input */
    cc_pipe *p = cc_pipe_create(2);
    int taken = -1;
    CHECK(run(p, empty, CC_RECORD_EVENTS, 1, 0, &taken) == 0 && taken == 0);
    cc_pipe_free(p);
    CHECK(cc_pipe_create(0) == NULL);
    cc_pipe_free(NULL);
    unlink(empty);
    unlink(events);
    unlink(labels);
    return CHECK_DONE("ingest_pipeline");
}
