/* line_reader.c — fread blocks, memchr for newlines, a capped line buffer. */
#include "line_reader.h"

#include <stdlib.h>
#include <string.h>

#define BLOCK (1u << 16)

struct cc_line_reader {
    FILE *f;
    char block[BLOCK];
    size_t pos, end;
    int eof;
    char *line;         /* CC_LINE_MAX bytes */
    int64_t number;
};

cc_line_reader *cc_line_reader_create(FILE *f)
{
    cc_line_reader *r = calloc(1, sizeof *r);
    if (!r || !(r->line = malloc(CC_LINE_MAX))) {
        free(r);
        return NULL;
    }
    r->f = f;
    return r;
}

void cc_line_reader_free(cc_line_reader *r)
{
    if (!r)
        return;
    free(r->line);
    free(r);
}

static int refill(cc_line_reader *r)
{
    if (r->eof)
        return 0;
    r->pos = 0;
    r->end = fread(r->block, 1, BLOCK, r->f);
    if (r->end == 0) {
        if (ferror(r->f))
            return -1;
        r->eof = 1;
        return 0;
    }
    return 1;
}

int cc_line_reader_next(cc_line_reader *r, cc_line *out)
{
    size_t kept = 0, full = 0;
    int got_any = 0;
    out->number = r->number + 1;
    for (;;) {
        if (full > CC_LINE_SKIP_MAX)
            return -2;
        if (r->pos == r->end) {
            int rc = refill(r);
            if (rc < 0)
                return -1;
            if (rc == 0) {
                if (!got_any)
                    return 0;
                out->no_newline = 1;
                break;
            }
        }
        got_any = 1;
        const char *start = r->block + r->pos;
        size_t avail = r->end - r->pos;
        const char *nl = memchr(start, '\n', avail);
        size_t take = nl ? (size_t)(nl - start) : avail;
        if (full + take <= CC_LINE_MAX) {
            memcpy(r->line + kept, start, take);
            kept += take;
        }
        full += take;
        r->pos += take + (nl != NULL);
        if (nl) {
            out->no_newline = 0;
            break;
        }
    }
    r->number++;
    out->full_len = full;
    out->too_long = full > CC_LINE_MAX;
    out->len = out->too_long ? 0 : kept;
    if (!out->too_long && out->len && r->line[out->len - 1] == '\r')
        out->len--; /* tolerate CRLF files */
    out->text = r->line;
    return 1;
}

int cc_line_blank(const char *s, size_t n)
{
    for (size_t i = 0; i < n; i++)
        if (s[i] != ' ' && s[i] != '\t' && s[i] != '\r')
            return 0;
    return 1;
}
