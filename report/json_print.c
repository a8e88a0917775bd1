/* json_print.c — cJSON_Print's layout with exact, cheap numbers (see
 * json_print.h). The report's JSON is mostly numbers (2.6 million in a
 * 28-day by-day report at 64 members x 256 classes, 70 % of them counts);
 * cJSON prints each with sprintf("%1.15g"), reads it back with sscanf and
 * accepts it when it is within a relative DBL_EPSILON, so it may drop the last
 * bit. Here counts are written digit by digit and other numbers take the
 * shortest of 15, 16 or 17 significant digits that strtod reads back exactly
 * (17 always does: IEEE 754-2008, 5.12.2). */
#include "json_print.h"

#include <cjson/cJSON.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

typedef struct buf {
    char *p;
    size_t len, cap;
    int failed;
} buf;

static char *reserve(buf *b, size_t n)
{
    if (b->failed)
        return NULL;
    if (b->len + n + 1 > b->cap) {
        size_t cap = b->cap ? b->cap : 4096;
        while (b->len + n + 1 > cap)
            cap *= 2;
        char *p = realloc(b->p, cap);
        if (!p) {
            b->failed = 1;
            return NULL;
        }
        b->p = p;
        b->cap = cap;
    }
    return b->p + b->len;
}

static void put(buf *b, const char *s, size_t n)
{
    char *d = reserve(b, n);
    if (!d)
        return;
    memcpy(d, s, n);
    b->len += n;
}

static void put_c(buf *b, char c) { put(b, &c, 1); }

static void tabs(buf *b, int n)
{
    char *d = reserve(b, n > 0 ? (size_t)n : 0);
    if (!d)
        return;
    for (int i = 0; i < n; i++)
        d[i] = '\t';
    b->len += n > 0 ? (size_t)n : 0;
}

static size_t integer(char *out, int64_t v)
{
    char tmp[24];
    size_t n = 0, len = 0;
    uint64_t u = v < 0 ? (uint64_t)0 - (uint64_t)v : (uint64_t)v;
    do {
        tmp[n++] = (char)('0' + u % 10);
        u /= 10;
    } while (u);
    if (v < 0)
        out[len++] = '-';
    while (n)
        out[len++] = tmp[--n];
    out[len] = '\0';
    return len;
}

/* 10^0 .. 10^40: the literals are rounded once by the compiler */
static const long double p10l[41] = {
    1e0L, 1e1L, 1e2L, 1e3L, 1e4L, 1e5L, 1e6L, 1e7L, 1e8L, 1e9L, 1e10L, 1e11L, 1e12L, 1e13L,
    1e14L, 1e15L, 1e16L, 1e17L, 1e18L, 1e19L, 1e20L, 1e21L, 1e22L, 1e23L, 1e24L, 1e25L, 1e26L,
    1e27L, 1e28L, 1e29L, 1e30L, 1e31L, 1e32L, 1e33L, 1e34L, 1e35L, 1e36L, 1e37L, 1e38L, 1e39L,
    1e40L
};
/* 10^0 .. 10^22, exact in a double */
static const double p10d[23] = {
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22
};

/* |x| to p significant digits: n in [10^(p-1), 10^p) and the decimal exponent
 * of the leading digit, so |x| ~ n 10^(e10 - p + 1). In long double (64-bit
 * significand on x86-64), so n is the correctly rounded one except when |x|
 * scaled lies within about 1e-2 of a half unit; the caller checks. Returns 0
 * when the scaling is out of the table's reach. */
static int digits_of(double ax, int p, uint64_t *n, int *e10)
{
    int e = (int)floor(log10(ax));
    const uint64_t lo = (uint64_t)p10d[p - 1], hi = (uint64_t)p10d[p];
    for (int tries = 0; tries < 3; tries++) {
        const int s = p - 1 - e;
        if (s > 40 || s < -40)
            return 0;
        const long double v = s >= 0 ? (long double)ax * p10l[s] : (long double)ax / p10l[-s];
        const uint64_t m = (uint64_t)(v + 0.5L);
        if (m >= hi)
            e++;
        else if (m < lo)
            e--;
        else {
            *n = m;
            *e10 = e;
            return 1;
        }
    }
    return 0;
}

/* n (p digits) times 10^(e10 - p + 1) as printf's %.{p}g writes it:
 * trailing zeros dropped, exponent form when e10 < -4 or e10 >= p. */
static size_t write_g(char *out, int negative, uint64_t n, int p, int e10)
{
    char d[20];
    int nd = p;
    for (int i = p - 1; i >= 0; i--) {
        d[i] = (char)('0' + n % 10);
        n /= 10;
    }
    while (nd > 1 && d[nd - 1] == '0')
        nd--;
    size_t len = 0;
    if (negative)
        out[len++] = '-';
    if (e10 < -4 || e10 >= p) {
        out[len++] = d[0];
        if (nd > 1) {
            out[len++] = '.';
            memcpy(out + len, d + 1, (size_t)nd - 1);
            len += (size_t)nd - 1;
        }
        out[len++] = 'e';
        out[len++] = e10 < 0 ? '-' : '+';
        int ae = e10 < 0 ? -e10 : e10;
        if (ae >= 100)
            out[len++] = (char)('0' + ae / 100);
        out[len++] = (char)('0' + ae / 10 % 10);
        out[len++] = (char)('0' + ae % 10);
    } else if (e10 >= 0) {
        for (int i = 0; i <= e10; i++)
            out[len++] = i < nd ? d[i] : '0';
        if (nd > e10 + 1) {
            out[len++] = '.';
            memcpy(out + len, d + e10 + 1, (size_t)(nd - e10 - 1));
            len += (size_t)(nd - e10 - 1);
        }
    } else {
        out[len++] = '0';
        out[len++] = '.';
        for (int i = -1; i > e10; i--)
            out[len++] = '0';
        memcpy(out + len, d, (size_t)nd);
        len += (size_t)nd;
    }
    out[len] = '\0';
    return len;
}

/* Does the decimal n 10^E read back as ax? Exactly by one IEEE division or
 * product when n <= 2^53 and |E| <= 22 (both operands exact, one rounding:
 * Clinger 1990, "How to read floating point numbers accurately", PLDI);
 * otherwise by strtod on the text. */
static int reads_back(const char *text, double x, uint64_t n, int E)
{
#if FLT_EVAL_METHOD == 0 /* double operations rounded once, to double */
    if (n <= (UINT64_C(1) << 53) && E >= -22 && E <= 22) {
        const double y = E >= 0 ? (double)n * p10d[E] : (double)n / p10d[-E];
        return y == fabs(x);
    }
#else
    (void)n;
    (void)E;
#endif
    return strtod(text, NULL) == x;
}

size_t cc_json_number(char *out, double x)
{
    if (!isfinite(x)) {
        memcpy(out, "null", 5);
        return 4;
    }
    if (fabs(x) < 0x1p63 && x == (double)(int64_t)x)
        return integer(out, (int64_t)x);
    for (int p = 15; p <= 17; p++) {
        uint64_t n;
        int e10;
        if (!digits_of(fabs(x), p, &n, &e10))
            break;
        const size_t len = write_g(out, x < 0, n, p, e10);
        if (reads_back(out, x, n, e10 - p + 1))
            return len;
    }
    /* out of the tables' range, or a near tie at 17 digits: printf's exact
     * conversion, the shortest of 15, 16 and 17 digits that reads back */
    int len = 0;
    for (int p = 15; p <= 17; p++) {
        len = snprintf(out, CC_JSON_NUMBER_MAX, "%.*g", p, x);
        if (len > 0 && len < CC_JSON_NUMBER_MAX && (p == 17 || strtod(out, NULL) == x))
            break;
    }
    return len > 0 ? (size_t)len : 0;
}

/* cJSON's print_string_ptr: quotes, backslashes and \b \f \n \r \t escaped
 * by letter, other bytes below 0x20 as \u00xx, everything else as is. */
static void string(buf *b, const char *s)
{
    put_c(b, '"');
    if (s) {
        const unsigned char *p = (const unsigned char *)s, *run = p;
        for (; *p; p++) {
            const char *esc = NULL;
            switch (*p) {
            case '"': esc = "\\\""; break;
            case '\\': esc = "\\\\"; break;
            case '\b': esc = "\\b"; break;
            case '\f': esc = "\\f"; break;
            case '\n': esc = "\\n"; break;
            case '\r': esc = "\\r"; break;
            case '\t': esc = "\\t"; break;
            default:
                if (*p >= 32)
                    continue;
            }
            put(b, (const char *)run, (size_t)(p - run));
            if (esc) {
                put(b, esc, 2);
            } else {
                char u[7];
                snprintf(u, sizeof u, "\\u%04x", *p);
                put(b, u, 6);
            }
            run = p + 1;
        }
        put(b, (const char *)run, (size_t)(p - run));
    }
    put_c(b, '"');
}

/* depth: cJSON's output_buffer->depth when the item is printed */
static void value(buf *b, const cJSON *item, int depth)
{
    switch (item->type & 0xFF) {
    case cJSON_NULL:
        put(b, "null", 4);
        return;
    case cJSON_False:
        put(b, "false", 5);
        return;
    case cJSON_True:
        put(b, "true", 4);
        return;
    case cJSON_Number: {
        char *d = reserve(b, CC_JSON_NUMBER_MAX);
        if (d)
            b->len += cc_json_number(d, item->valuedouble);
        return;
    }
    case cJSON_String:
        string(b, item->valuestring);
        return;
    case cJSON_Raw:
        if (!item->valuestring) {
            b->failed = 1;
            return;
        }
        put(b, item->valuestring, strlen(item->valuestring));
        return;
    case cJSON_Array:
        put_c(b, '[');
        for (const cJSON *c = item->child; c; c = c->next) {
            value(b, c, depth + 1);
            if (c->next)
                put(b, ", ", 2);
        }
        put_c(b, ']');
        return;
    case cJSON_Object:
        put(b, "{\n", 2);
        for (const cJSON *c = item->child; c; c = c->next) {
            tabs(b, depth + 1);
            string(b, c->string);
            put(b, ":\t", 2);
            value(b, c, depth + 1);
            if (c->next)
                put_c(b, ',');
            put_c(b, '\n');
        }
        tabs(b, depth);
        put_c(b, '}');
        return;
    default:
        b->failed = 1;
    }
}

char *cc_json_print(const cJSON *item, int depth)
{
    buf b = {NULL, 0, 0, 0};
    if (!item)
        return NULL;
    value(&b, item, depth);
    if (!reserve(&b, 0)) {
        free(b.p);
        return NULL;
    }
    b.p[b.len] = '\0';
    return b.p;
}
