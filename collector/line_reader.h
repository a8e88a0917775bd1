/* line_reader.h — buffered reading of newline-terminated records with a
 * length cap, so one huge line cannot exhaust memory. */
#ifndef CC_COLLECTOR_LINE_READER_H
#define CC_COLLECTOR_LINE_READER_H

#include <stdio.h>
#include <stddef.h>
#include <stdint.h>

#define CC_LINE_MAX (1u << 20) /* 1 MiB: far above any real event */
/* How much of one over-long line is read past and skipped before the reader
 * gives up on the stream: a device such as /dev/zero, or a binary file, has
 * no newline and would otherwise be read forever. */
#define CC_LINE_SKIP_MAX (64u << 20)

typedef struct cc_line_reader cc_line_reader;

typedef struct cc_line {
    const char *text;   /* without the newline; valid until the next call */
    size_t len;         /* bytes kept (0 when too_long) */
    size_t full_len;    /* bytes the line really had */
    int64_t number;     /* 1-based */
    int too_long;       /* line exceeded CC_LINE_MAX and was skipped */
    int no_newline;     /* last line of the file lacked its newline */
} cc_line;

/* Reads from f (not closed by the reader). NULL on out of memory. */
cc_line_reader *cc_line_reader_create(FILE *f);
void cc_line_reader_free(cc_line_reader *r);

/* 1 and *out filled, 0 at end of file, -1 on a read error (errno set), -2
 * when a line runs past CC_LINE_SKIP_MAX bytes (the stream is not lines).
 * On -1 and -2, out->number is the number of the line being read. */
int cc_line_reader_next(cc_line_reader *r, cc_line *out);

/* 1 when the n bytes at s are only spaces, tabs and carriage returns (a
 * blank line, skipped by ingest without being counted). */
int cc_line_blank(const char *s, size_t n);

#endif
