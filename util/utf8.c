/* utf8.c — well-formed UTF-8 and terminal-safe text. */
#include "utf8.h"

#include <stdlib.h>
#include <string.h>

/* Length of the well-formed sequence at s (1..4), or 0 when the bytes there
 * are not one. The ranges of the second byte are RFC 3629's table. */
static size_t seq_len(const unsigned char *s, size_t avail)
{
    unsigned char c = s[0];
    if (c < 0x80)
        return 1;
    unsigned char lo = 0x80, hi = 0xBF;
    size_t n;
    if (c >= 0xC2 && c <= 0xDF)
        n = 2;
    else if (c >= 0xE0 && c <= 0xEF) {
        n = 3;
        if (c == 0xE0)
            lo = 0xA0; /* overlong below U+0800 */
        else if (c == 0xED)
            hi = 0x9F; /* surrogates U+D800..U+DFFF */
    } else if (c >= 0xF0 && c <= 0xF4) {
        n = 4;
        if (c == 0xF0)
            lo = 0x90; /* overlong below U+10000 */
        else if (c == 0xF4)
            hi = 0x8F; /* above U+10FFFF */
    } else {
        return 0; /* 0x80..0xC1 (continuation or overlong lead), 0xF5..0xFF */
    }
    if (avail < n || s[1] < lo || s[1] > hi)
        return 0;
    for (size_t i = 2; i < n; i++)
        if (s[i] < 0x80 || s[i] > 0xBF)
            return 0;
    return n;
}

int cc_utf8_valid(const char *s, size_t len, size_t *bad_at)
{
    const unsigned char *u = (const unsigned char *)s;
    for (size_t i = 0; i < len;) {
        size_t n = seq_len(u + i, len - i);
        if (!n) {
            if (bad_at)
                *bad_at = i;
            return 0;
        }
        i += n;
    }
    return 1;
}

/* Calls emit for each piece of the escaped form of s[0..len). */
typedef int (*emit_fn)(void *ctx, const char *piece, size_t n);

/* multiline: keep LF and TAB and leave backslashes alone (whole documents);
 * otherwise escape every control and double backslashes (one field). */
static int escape(const char *s, size_t len, int multiline, emit_fn emit, void *ctx)
{
    static const char hex[] = "0123456789abcdef";
    const unsigned char *u = (const unsigned char *)s;
    size_t run = 0; /* start of the pending run of plain bytes */
    size_t i = 0;
    while (i < len) {
        size_t n = seq_len(u + i, len - i);
        int c1 = n == 2 && u[i] == 0xC2 && u[i + 1] < 0xA0; /* U+0080..U+009F */
        int special = !n || u[i] < 0x20 || u[i] == 0x7F || c1 || (!multiline && u[i] == '\\');
        if (multiline && (u[i] == '\n' || u[i] == '\t'))
            special = 0;
        if (!special) {
            i += n;
            continue;
        }
        if (i > run && emit(ctx, s + run, i - run))
            return -1;
        char buf[8];
        int rc;
        if (u[i] == '\\') {
            rc = emit(ctx, "\\\\", 2);
            n = 1;
        } else if (c1) {
            memcpy(buf, "\\u00", 4);
            buf[4] = hex[u[i + 1] >> 4], buf[5] = hex[u[i + 1] & 15];
            rc = emit(ctx, buf, 6);
        } else {
            n = 1;
            buf[0] = '\\', buf[1] = 'x', buf[2] = hex[u[i] >> 4], buf[3] = hex[u[i] & 15];
            rc = emit(ctx, buf, 4);
        }
        if (rc)
            return -1;
        i += n;
        run = i;
    }
    return i > run ? emit(ctx, s + run, i - run) : 0;
}

static int emit_file(void *ctx, const char *piece, size_t n)
{
    return fwrite(piece, 1, n, (FILE *)ctx) == n ? 0 : -1;
}

int cc_text_put(FILE *f, const char *s)
{
    return escape(s, strlen(s), 0, emit_file, f) ? EOF : 0;
}

typedef struct growing {
    char *buf;
    size_t n, cap;
} growing;

static int emit_buf(void *ctx, const char *piece, size_t n)
{
    growing *g = ctx;
    if (g->n + n + 1 > g->cap) {
        size_t cap = (g->n + n + 1) * 2;
        char *b = realloc(g->buf, cap);
        if (!b)
            return -1;
        g->buf = b, g->cap = cap;
    }
    memcpy(g->buf + g->n, piece, n);
    g->n += n;
    g->buf[g->n] = '\0';
    return 0;
}

char *cc_text_escape(const char *s, size_t len, int multiline)
{
    growing g = {malloc(len + 1), 0, len + 1};
    if (!g.buf)
        return NULL;
    g.buf[0] = '\0';
    if (escape(s, len, multiline, emit_buf, &g)) {
        free(g.buf);
        return NULL;
    }
    return g.buf;
}

static int emit_none(void *ctx, const char *piece, size_t n)
{
    (void)piece;
    *(size_t *)ctx += n;
    return 0;
}

int cc_text_plain(const char *s)
{
    size_t len = strlen(s), out = 0;
    escape(s, len, 0, emit_none, &out);
    return out == len;
}

int cc_utf8_control(const char *s, size_t len, size_t *at)
{
    const unsigned char *u = (const unsigned char *)s;
    for (size_t i = 0; i < len; i++)
        if (u[i] < 0x20 || u[i] == 0x7F || (u[i] == 0xC2 && i + 1 < len && u[i + 1] < 0xA0)) {
            if (at)
                *at = i;
            return 1;
        }
    return 0;
}
