/* json_scan.c — the non-allocating JSON reader behind event parsing. */
#include "json_scan.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#define MAX_DEPTH 64

void cc_js_init(cc_js *s, const char *text, size_t len)
{
    s->start = s->p = text;
    s->end = text + len;
}

void cc_js_ws(cc_js *s)
{
    while (s->p < s->end && (*s->p == ' ' || *s->p == '\t' || *s->p == '\n' || *s->p == '\r'))
        s->p++;
}

static int hexval(char c)
{
    return c >= '0' && c <= '9' ? c - '0'
           : c >= 'a' && c <= 'f' ? c - 'a' + 10
           : c >= 'A' && c <= 'F' ? c - 'A' + 10
                                  : -1;
}

static int hex4(const char *p, const char *end, unsigned *out)
{
    if (end - p < 4)
        return -1;
    unsigned v = 0;
    for (int i = 0; i < 4; i++) {
        int h = hexval(p[i]);
        if (h < 0)
            return -1;
        v = v * 16 + (unsigned)h;
    }
    *out = v;
    return 0;
}

static void put(char *out, size_t cap, size_t *n, char c)
{
    if (*n + 1 < cap)
        out[*n] = c;
    (*n)++;
}

static void put_utf8(char *out, size_t cap, size_t *n, unsigned cp)
{
    if (cp < 0x80) {
        put(out, cap, n, (char)cp);
    } else if (cp < 0x800) {
        put(out, cap, n, (char)(0xC0 | (cp >> 6)));
        put(out, cap, n, (char)(0x80 | (cp & 0x3F)));
    } else if (cp < 0x10000) {
        put(out, cap, n, (char)(0xE0 | (cp >> 12)));
        put(out, cap, n, (char)(0x80 | ((cp >> 6) & 0x3F)));
        put(out, cap, n, (char)(0x80 | (cp & 0x3F)));
    } else {
        put(out, cap, n, (char)(0xF0 | (cp >> 18)));
        put(out, cap, n, (char)(0x80 | ((cp >> 12) & 0x3F)));
        put(out, cap, n, (char)(0x80 | ((cp >> 6) & 0x3F)));
        put(out, cap, n, (char)(0x80 | (cp & 0x3F)));
    }
}

int cc_js_string(cc_js *s, char *out, size_t cap, size_t *len)
{
    size_t n = 0;
    if (s->p >= s->end || *s->p != '"')
        return -1;
    s->p++;
    while (s->p < s->end) {
        unsigned char c = (unsigned char)*s->p;
        if (c == '"') {
            s->p++;
            if (out && cap)
                out[n < cap ? n : cap - 1] = '\0';
            *len = n;
            return 0;
        }
        if (c < 0x20)
            return -1;
        if (c != '\\') {
            if (out)
                put(out, cap, &n, (char)c);
            else
                n++;
            s->p++;
            continue;
        }
        if (s->end - s->p < 2)
            return -1;
        char e = s->p[1];
        s->p += 2;
        char plain = e == '"' ? '"' : e == '\\' ? '\\' : e == '/' ? '/' : e == 'b' ? '\b'
                   : e == 'f' ? '\f' : e == 'n' ? '\n' : e == 'r' ? '\r' : e == 't' ? '\t' : 0;
        if (plain) {
            if (out)
                put(out, cap, &n, plain);
            else
                n++;
            continue;
        }
        if (e != 'u')
            return -1;
        unsigned cp, lo;
        if (hex4(s->p, s->end, &cp))
            return -1;
        s->p += 4;
        if (cp >= 0xD800 && cp <= 0xDBFF) {
            if (s->end - s->p < 6 || s->p[0] != '\\' || s->p[1] != 'u' ||
                hex4(s->p + 2, s->end, &lo) || lo < 0xDC00 || lo > 0xDFFF)
                return -1;
            s->p += 6;
            cp = 0x10000 + ((cp - 0xD800) << 10) + (lo - 0xDC00);
        } else if (cp >= 0xDC00 && cp <= 0xDFFF) {
            return -1;
        }
        if (out) {
            put_utf8(out, cap, &n, cp);
        } else {
            n += cp < 0x80 ? 1 : cp < 0x800 ? 2 : cp < 0x10000 ? 3 : 4;
        }
    }
    return -1;
}

static const double pow10_exact[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                     1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                     1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};

static int is_digit(char c) { return c >= '0' && c <= '9'; }

/* Slow path: the token [begin, end) through strtod (correctly rounded). */
static int number_strtod(const char *begin, const char *end, double *out)
{
    char buf[128];
    size_t n = (size_t)(end - begin);
    char *text = n < sizeof buf ? buf : malloc(n + 1);
    if (!text)
        return -1;
    memcpy(text, begin, n);
    text[n] = '\0';
    *out = strtod(text, NULL);
    if (text != buf)
        free(text);
    return 0;
}

int cc_js_number(cc_js *s, double *out)
{
    const char *p = s->p, *end = s->end, *begin = p;
    int neg = 0, exp10 = 0, digits;
    uint64_t mant = 0;
    if (p < end && *p == '-') {
        neg = 1;
        p++;
    }
    if (p >= end || !is_digit(*p))
        return -1;
    const char *int_start = p;
    if (*p == '0')
        p++;
    else
        while (p < end && is_digit(*p))
            mant = mant * 10 + (uint64_t)(*p++ - '0');
    digits = (int)(p - int_start);
    if (p < end && *p == '.') {
        const char *frac = ++p;
        while (p < end && is_digit(*p))
            mant = mant * 10 + (uint64_t)(*p++ - '0');
        if (p == frac)
            return -1;
        exp10 = -(int)(p - frac);
        digits += (int)(p - frac);
    }
    if (p < end && (*p == 'e' || *p == 'E')) {
        p++;
        int eneg = 0, eval = 0;
        if (p < end && (*p == '+' || *p == '-'))
            eneg = *p++ == '-';
        if (p >= end || !is_digit(*p))
            return -1;
        while (p < end && is_digit(*p)) {
            if (eval < 100000)
                eval = eval * 10 + (*p - '0');
            p++;
        }
        exp10 += eneg ? -eval : eval;
    }
    s->p = p;
    /* Clinger's fast path: with at most 19 digits mant is exact (leading
     * zeros included, so no overflow); when mant and 10^|e| are both exact
     * in a double, one correctly rounded operation gives the correctly
     * rounded result. Anything else goes through strtod. */
    if (digits <= 19 && mant <= (UINT64_C(1) << 53) && exp10 >= -22 && exp10 <= 22) {
        double v = (double)mant;
        v = exp10 < 0 ? v / pow10_exact[-exp10] : v * pow10_exact[exp10];
        *out = neg ? -v : v;
        return 0;
    }
    return number_strtod(begin, p, out);
}

/* Number syntax only (RFC 8259 §6), for values that are skipped. */
static int skip_number(cc_js *s)
{
    const char *p = s->p, *end = s->end;
    if (p < end && *p == '-')
        p++;
    if (p >= end || !is_digit(*p))
        return -1;
    if (*p == '0')
        p++;
    else
        while (p < end && is_digit(*p))
            p++;
    if (p < end && *p == '.') {
        if (++p >= end || !is_digit(*p))
            return -1;
        while (p < end && is_digit(*p))
            p++;
    }
    if (p < end && (*p == 'e' || *p == 'E')) {
        p++;
        if (p < end && (*p == '+' || *p == '-'))
            p++;
        if (p >= end || !is_digit(*p))
            return -1;
        while (p < end && is_digit(*p))
            p++;
    }
    s->p = p;
    return 0;
}

static int literal(cc_js *s, const char *word, size_t n)
{
    if ((size_t)(s->end - s->p) < n || memcmp(s->p, word, n) != 0)
        return -1;
    s->p += n;
    return 0;
}

static int skip_depth(cc_js *s, int depth)
{
    size_t len;
    if (depth > MAX_DEPTH)
        return -1;
    cc_js_ws(s);
    if (s->p >= s->end)
        return -1;
    switch (*s->p) {
    case '"':
        return cc_js_string(s, NULL, 0, &len);
    case 't':
        return literal(s, "true", 4);
    case 'f':
        return literal(s, "false", 5);
    case 'n':
        return literal(s, "null", 4);
    case '[':
    case '{': {
        char close = *s->p == '[' ? ']' : '}';
        int object = close == '}';
        s->p++;
        cc_js_ws(s);
        if (s->p < s->end && *s->p == close) {
            s->p++;
            return 0;
        }
        for (;;) {
            if (object) {
                cc_js_ws(s);
                if (cc_js_string(s, NULL, 0, &len))
                    return -1;
                cc_js_ws(s);
                if (s->p >= s->end || *s->p != ':')
                    return -1;
                s->p++;
            }
            if (skip_depth(s, depth + 1))
                return -1;
            cc_js_ws(s);
            if (s->p >= s->end)
                return -1;
            if (*s->p == ',') {
                s->p++;
                continue;
            }
            if (*s->p == close) {
                s->p++;
                return 0;
            }
            return -1;
        }
    }
    default:
        return skip_number(s);
    }
}

int cc_js_skip(cc_js *s) { return skip_depth(s, 0); }

int cc_js_validate(const char *text, size_t len, long *at)
{
    cc_js s;
    cc_js_init(&s, text, len);
    if (cc_js_skip(&s)) {
        *at = (long)(s.p - s.start);
        return -1;
    }
    cc_js_ws(&s);
    if (s.p != s.end) {
        *at = (long)(s.p - s.start);
        return -1;
    }
    return 0;
}
