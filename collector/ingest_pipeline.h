/* ingest_pipeline.h — the threaded front of an ingest (private to
 * collector/): worker threads parse and check chunks of lines and compute
 * each event's float32 values and label-free view; the calling thread reads
 * the input and takes the finished lines strictly in input order, so what it
 * stores, and the rejects it reports, are those of a one-thread run.
 *
 * Memory is bounded: at most 2 x workers + 2 chunks are in flight, each of
 * at most CC_PIPE_CHUNK_LINES lines and about CC_PIPE_CHUNK_BYTES bytes of
 * text (one line over that makes a chunk of its own). */
#ifndef CC_COLLECTOR_INGEST_PIPELINE_H
#define CC_COLLECTOR_INGEST_PIPELINE_H

#include <stdint.h>

#include "event_parse.h"
#include "event_view.h"
#include "ingest.h"
#include "line_reader.h"

#define CC_PIPE_CHUNK_LINES 1024
#define CC_PIPE_CHUNK_BYTES ((size_t)256 << 10)
#define CC_PIPE_MAX_THREADS 64

typedef enum cc_pipe_status {
    CC_PIPE_BLANK,   /* blank line: skipped, not counted */
    CC_PIPE_LONG,    /* longer than CC_LINE_MAX (ln.too_long) */
    CC_PIPE_BAD,     /* refused by the parser: why */
    CC_PIPE_OK       /* ev (events) or lab (labels) filled */
} cc_pipe_status;

/* One line as the calling thread takes it. Every pointer is valid until the
 * take function returns. */
typedef struct cc_pipe_line {
    cc_line ln;              /* the line as read (numbered from first_line) */
    cc_pipe_status status;
    const char *why;         /* CC_PIPE_BAD */
    cc_event ev;             /* events; ev.probs is NULL, see probs */
    const float *probs;      /* events: m x k float32, what the row keeps */
    int has_view;            /* events: the label-free view below was computed */
    cc_label_line lab;       /* labels */
    /* the label-free part of cc_event_view, see cc_pipe_view */
    int ens, second, vote, vote_tie, unanimous;
    double margin, disagreement, entropy, expected_entropy, mutual_information;
    const int *member_class, *votes;
    const double *avg;
    /* offsets into the chunk's arena while the worker fills it */
    size_t off_text, off_why, off_id, off_model, off_segment, off_label_name, off_probs, off_view;
} cc_pipe_line;

typedef struct cc_pipe cc_pipe;

/* workers >= 1 threads. NULL on failure (out of memory, no threads). */
cc_pipe *cc_pipe_create(int workers);
void cc_pipe_free(cc_pipe *p); /* joins the workers; accepts NULL */

/* Accepted event times of every parser (see cc_parser_ts_range). Only
 * between runs. */
void cc_pipe_ts_range(cc_pipe *p, int64_t first, int64_t last);

/* Called on the calling thread for each line, in input order; a non-zero
 * return stops the run (the lines after it are dropped) and is returned. */
typedef int (*cc_pipe_take_fn)(void *ctx, const cc_pipe_line *line);

/* Reads r to its end through the workers. Returns 0, or what take returned.
 * *read_status is the reader's last result: 0 at the end, -1 a read error
 * (errno set), -2 a line without end (see cc_line_reader_next), and then
 * *read_line its number; every line before it was taken. */
int cc_pipe_run(cc_pipe *p, cc_line_reader *r, cc_record_kind kind, int64_t first_line,
                cc_pipe_take_fn take, void *ctx, int *read_status, int64_t *read_line);

/* The view of an event line (has_view) with the given label (-1 = none):
 * equal to cc_event_view_compute and cc_event_view_uncertainty on the same
 * probs and label. */
void cc_pipe_view(const cc_pipe_line *line, int label, cc_event_view *out);

#endif
