/* event_parse.c — JSON Lines records to events and labels. One pass over the
 * line reads the known keys in place and syntax-checks the rest
 * (json_scan.c), so a line costs no allocation. Duplicate keys: the first
 * one counts. */
#include "event_parse.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"
#include "utf8.h"
#include "json_scan.h"
#include "summary.h"

#define NAME_MAX_BYTES 128

struct cc_parser {
    double *vals; /* CC_MAX_MEMBERS * CC_MAX_CLASSES */
    char id[CC_ID_MAX + 1];
    char model[NAME_MAX_BYTES + 1];
    char segment[CC_SEGMENT_MAX + 1];
    char label_name[NAME_MAX_BYTES + 1];
    int64_t ts_first, ts_last; /* accepted event times, Unix seconds, inclusive */
};

cc_parser *cc_parser_create(void)
{
    cc_parser *p = calloc(1, sizeof *p);
    if (p && !(p->vals = malloc(sizeof(double) * CC_MAX_MEMBERS * CC_MAX_CLASSES))) {
        free(p);
        return NULL;
    }
    if (p)
        cc_parser_ts_range(p, cc_days_from_civil(CC_TS_FIRST_YEAR, 1, 1) * 86400,
                           cc_days_from_civil(CC_TS_LAST_YEAR + 1, 1, 1) * 86400 - 1);
    return p;
}

void cc_parser_ts_range(cc_parser *p, int64_t first, int64_t last)
{
    p->ts_first = first;
    p->ts_last = last;
}

void cc_parser_free(cc_parser *p)
{
    if (!p)
        return;
    free(p->vals);
    free(p);
}

static int fail(char *why, size_t n, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static int fail(char *why, size_t n, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(why, n, fmt, ap);
    va_end(ap);
    return -1;
}

void cc_softmax(double *x, int k)
{
    double mx = x[0], sum = 0.0;
    for (int c = 1; c < k; c++)
        if (x[c] > mx)
            mx = x[c];
    for (int c = 0; c < k; c++) {
        x[c] = exp(x[c] - mx);
        sum += x[c];
    }
    for (int c = 0; c < k; c++)
        x[c] /= sum;
}

/* What the second pass found, before validation. */
enum { F_ID, F_TS, F_MODEL, F_SEGMENT, F_LABEL, F_PROBS, F_LOGITS, F_COUNT };
static const char *const field_names[F_COUNT] = {"id",    "ts",    "model", "segment",
                                                 "label", "probs", "logits"};

typedef struct found {
    int seen[F_COUNT];
    char type[F_COUNT];      /* 's' string, 'n' number, 'z' null, 'a' array, 'o' other */
    double num[F_COUNT];
    size_t len[F_COUNT];     /* decoded string length */
    int nul[F_COUNT];        /* string held a NUL character */
    char ts[64];
    int m, k;
    const char *matrix_err;  /* set when the array is not a rectangle of numbers */
    char matrix_why[160];
} found;

static int field_of(const char *key, size_t len)
{
    for (int f = 0; f < F_COUNT; f++)
        if (strlen(field_names[f]) == len && memcmp(field_names[f], key, len) == 0)
            return f;
    return -1;
}

static char value_type(const cc_js *s)
{
    char c = *s->p;
    return c == '"' ? 's' : c == 'n' ? 'z' : c == '[' ? 'a' : (c == '-' || (c >= '0' && c <= '9')) ? 'n' : 'o';
}

static char peek(const cc_js *s) { return s->p < s->end ? *s->p : '\0'; }

/* After an object member: ',' (1), '}' (0), or a syntax error (-1). */
static int next_object_member(cc_js *s)
{
    cc_js_ws(s);
    char c = peek(s);
    if (c == ',' || c == '}') {
        s->p++;
        return c == ',';
    }
    return -1;
}

/* After an element of an array: ',' (1, more follow), ']' (0, done), or a
 * syntax error (-1). */
static int next_in_array(cc_js *s)
{
    cc_js_ws(s);
    char c = peek(s);
    if (c == ',' || c == ']') {
        s->p++;
        return c == ',';
    }
    return -1;
}

/* Records the first shape problem of a matrix (later ones are not news). */
#define MATRIX_ERROR(fd, ...)                                                                  \
    do {                                                                                       \
        if (!(fd)->matrix_err) {                                                               \
            snprintf((fd)->matrix_why, sizeof (fd)->matrix_why, __VA_ARGS__);                  \
            (fd)->matrix_err = (fd)->matrix_why;                                               \
        }                                                                                      \
    } while (0)

/* Reads an array of member rows of numbers into p->vals, row i at
 * p->vals + i * CC_MAX_CLASSES. A shape problem is recorded in fd and the
 * rest of the value is still syntax-checked; -1 only on a JSON syntax error. */
static int read_matrix(cc_js *s, cc_parser *p, found *fd, const char *field)
{
    int m = 0, k = -1, more;
    s->p++; /* '[' */
    cc_js_ws(s);
    if (peek(s) == ']') {
        s->p++;
        MATRIX_ERROR(fd, "field '%s': 0 member rows (allowed 1..%d)", field, CC_MAX_MEMBERS);
        return 0;
    }
    do {
        cc_js_ws(s);
        if (peek(s) != '[' || m >= CC_MAX_MEMBERS) {
            if (peek(s) != '[')
                MATRIX_ERROR(fd, "field '%s': row %d is not an array", field, m);
            else
                MATRIX_ERROR(fd, "field '%s': more than %d member rows", field, CC_MAX_MEMBERS);
            if (cc_js_skip(s))
                return -1;
            m++;
            continue;
        }
        int c = 0;
        s->p++;
        cc_js_ws(s);
        if (peek(s) == ']') {
            s->p++;
        } else {
            int more_values;
            do {
                cc_js_ws(s);
                char t = peek(s);
                double x;
                if (t != '-' && (t < '0' || t > '9')) {
                    MATRIX_ERROR(fd, "field '%s': row %d value %d is not a finite number", field, m,
                                 c);
                    if (cc_js_skip(s))
                        return -1;
                } else if (cc_js_number(s, &x)) {
                    return -1;
                } else if (!isfinite(x)) {
                    MATRIX_ERROR(fd, "field '%s': row %d value %d is not a finite number", field, m,
                                 c);
                } else if (c < CC_MAX_CLASSES) {
                    p->vals[(size_t)m * CC_MAX_CLASSES + (size_t)c] = x;
                }
                c++;
            } while ((more_values = next_in_array(s)) == 1);
            if (more_values < 0)
                return -1;
        }
        if (k < 0) {
            k = c;
            if (k < 2 || k > CC_MAX_CLASSES)
                MATRIX_ERROR(fd, "field '%s': %d classes (allowed 2..%d)", field, k, CC_MAX_CLASSES);
        } else if (c != k) {
            MATRIX_ERROR(fd, "field '%s': row %d has %d values, row 0 has %d", field, m, c, k);
        }
        m++;
    } while ((more = next_in_array(s)) == 1);
    if (more < 0)
        return -1;
    fd->m = m;
    fd->k = k;
    return 0;
}

/* One pass over the line: the known keys are read in place, everything else
 * is syntax-checked and skipped. */
static int scan(cc_parser *p, const char *line, size_t len, found *fd, char *why, size_t n)
{
    cc_js s;
    memset(fd, 0, sizeof *fd);
    cc_js_init(&s, line, len);
    cc_js_ws(&s);
    if (peek(&s) != '{') {
        long at;
        if (cc_js_validate(line, len, &at) == 0)
            return fail(why, n, "a line must hold one JSON object");
        return fail(why, n, "malformed JSON near byte %ld", at);
    }
    s.p++;
    cc_js_ws(&s);
    if (peek(&s) == '}') {
        s.p++;
    } else {
        int more;
        do {
            char key[16];
            size_t klen;
            cc_js_ws(&s);
            if (peek(&s) != '"' || cc_js_string(&s, key, sizeof key, &klen))
                goto malformed;
            cc_js_ws(&s);
            if (peek(&s) != ':')
                goto malformed;
            s.p++;
            cc_js_ws(&s);
            int f = klen < sizeof key ? field_of(key, klen) : -1;
            if (f < 0 || fd->seen[f] || s.p >= s.end) {
                if (cc_js_skip(&s))
                    goto malformed;
                continue;
            }
            fd->seen[f] = 1;
            fd->type[f] = value_type(&s);
            char *dst = NULL;
            size_t cap = 0;
            switch (f) {
            case F_ID: dst = p->id, cap = sizeof p->id; break;
            case F_MODEL: dst = p->model, cap = sizeof p->model; break;
            case F_SEGMENT: dst = p->segment, cap = sizeof p->segment; break;
            case F_LABEL: dst = p->label_name, cap = sizeof p->label_name; break;
            case F_TS: dst = fd->ts, cap = sizeof fd->ts; break;
            }
            int bad;
            if (fd->type[f] == 's' && dst) {
                bad = cc_js_string(&s, dst, cap, &fd->len[f]);
                fd->nul[f] = !bad && fd->len[f] < cap && strlen(dst) != fd->len[f];
            } else if (fd->type[f] == 'n') {
                bad = cc_js_number(&s, &fd->num[f]);
            } else if (fd->type[f] == 'a' && (f == F_PROBS || f == F_LOGITS) &&
                       !(fd->seen[F_PROBS] && fd->seen[F_LOGITS])) {
                bad = read_matrix(&s, p, fd, field_names[f]);
            } else {
                bad = cc_js_skip(&s);
            }
            if (bad)
                goto malformed;
        } while ((more = next_object_member(&s)) == 1);
        if (more < 0)
            goto malformed;
    }
    cc_js_ws(&s);
    if (s.p != s.end)
        return fail(why, n, "malformed JSON: text after the object at byte %ld",
                    (long)(s.p - s.start));
    return 0;
malformed:
    return fail(why, n, "malformed JSON near byte %ld", (long)(s.p - s.start));
}

/* Names end up in JSON, CSV and HTML output: they must be UTF-8. */
static int check_utf8(const char *field, const char *buf, size_t len, char *why, size_t n)
{
    size_t at;
    if (cc_utf8_valid(buf, len, &at))
        return 0;
    return fail(why, n, "field '%s': not valid UTF-8 (byte %zu of the value, 0x%02x)", field,
                at + 1, (unsigned char)buf[at]);
}

static int take_string(const found *fd, int f, const char *buf, size_t max, const char **out,
                       int required, char *why, size_t n)
{
    *out = NULL;
    if (!fd->seen[f] || fd->type[f] == 'z')
        return required ? fail(why, n, "field '%s': missing", field_names[f]) : 0;
    if (fd->type[f] != 's')
        return fail(why, n, "field '%s': must be a string", field_names[f]);
    if (fd->len[f] < 1 || fd->len[f] > max)
        return fail(why, n, "field '%s': length %zu outside 1..%zu bytes", field_names[f],
                    fd->len[f], max);
    if (fd->nul[f])
        return fail(why, n, "field '%s': contains a NUL character", field_names[f]);
    if (check_utf8(field_names[f], buf, fd->len[f], why, n))
        return -1;
    size_t at;
    if (f == F_MODEL && cc_utf8_control(buf, fd->len[f], &at))
        /* a model's name is printed by every command, unescaped in places */
        return fail(why, n, "field 'model': control character 0x%02x at byte %zu",
                    (unsigned char)buf[at], at + 1);
    *out = buf;
    return 0;
}

static int take_label(cc_parser *p, const found *fd, int required, int *label,
                      const char **name, char *why, size_t n)
{
    *label = -1;
    *name = NULL;
    if (!fd->seen[F_LABEL] || fd->type[F_LABEL] == 'z')
        return required ? fail(why, n, "field 'label': missing") : 0;
    if (fd->type[F_LABEL] == 's') {
        if (fd->len[F_LABEL] == 0)
            return fail(why, n, "field 'label': empty class name");
        if (fd->len[F_LABEL] > NAME_MAX_BYTES)
            return fail(why, n, "field 'label': class name longer than %d bytes", NAME_MAX_BYTES);
        if (fd->nul[F_LABEL])
            return fail(why, n, "field 'label': class name contains a NUL character");
        if (check_utf8("label", p->label_name, fd->len[F_LABEL], why, n))
            return -1;
        *name = p->label_name;
        return 0;
    }
    double x = fd->num[F_LABEL];
    if (fd->type[F_LABEL] != 'n' || !isfinite(x) || x != floor(x))
        return fail(why, n, "field 'label': must be a class index or a class name");
    if (x < 0 || x > CC_MAX_CLASSES)
        return fail(why, n, "field 'label': %g is out of range", x);
    *label = (int)x;
    return 0;
}

static int range_error(const cc_parser *p, double t, char *why, size_t n)
{
    char a[11], b[11];
    cc_format_date(cc_day_of_unix(p->ts_first), a);
    cc_format_date(cc_day_of_unix(p->ts_last), b);
    return fail(why, n, "field 'ts': %.0f (Unix seconds) is outside the accepted range %s..%s "
                        "(UTC; see --ts-range)", floor(t), a, b);
}

int cc_parse_event(cc_parser *p, const char *line, size_t len, cc_event *out, char *why,
                   size_t n)
{
    found fd;
    memset(out, 0, sizeof *out);
    out->label = -1;
    if (scan(p, line, len, &fd, why, n) ||
        take_string(&fd, F_ID, p->id, CC_ID_MAX, &out->id, 1, why, n) ||
        take_string(&fd, F_MODEL, p->model, NAME_MAX_BYTES, &out->model, 0, why, n))
        return -1;
    out->id_len = (int)fd.len[F_ID];

    double ts_outside = NAN;
    if (!fd.seen[F_TS])
        return fail(why, n, "field 'ts': missing");
    if (fd.type[F_TS] == 's') {
        const char *reason;
        if (fd.len[F_TS] >= sizeof fd.ts ||
            cc_parse_rfc3339(fd.ts, (int)fd.len[F_TS], &out->ts, &reason))
            return fail(why, n, "field 'ts': %s",
                        fd.len[F_TS] >= sizeof fd.ts ? "not an RFC 3339 date-time" : reason);
    } else if (fd.type[F_TS] == 'n') {
        double t = fd.num[F_TS];
        if (!isfinite(t))
            return fail(why, n, "field 'ts': %g is not a usable Unix time", t);
        if (t < (double)p->ts_first || t >= (double)p->ts_last + 1.0)
            ts_outside = t; /* reported after the structural checks */
        else
            out->ts = (int64_t)floor(t);
    } else {
        return fail(why, n, "field 'ts': must be an RFC 3339 string or Unix seconds");
    }

    if (fd.seen[F_PROBS] && fd.seen[F_LOGITS])
        return fail(why, n, "fields 'probs' and 'logits': give one, not both");
    int f = fd.seen[F_PROBS] ? F_PROBS : F_LOGITS;
    if (!fd.seen[f])
        return fail(why, n, "field 'probs': missing (and no 'logits')");
    if (fd.type[f] != 'a')
        return fail(why, n, "field '%s': must be an array of member rows", field_names[f]);
    if (fd.matrix_err)
        return fail(why, n, "%s", fd.matrix_err);
    out->m = fd.m;
    out->k = fd.k;
    /* rows were stored with stride CC_MAX_CLASSES: pack them */
    for (int i = 1; i < out->m; i++)
        memmove(p->vals + (size_t)i * out->k, p->vals + (size_t)i * CC_MAX_CLASSES,
                (size_t)out->k * sizeof *p->vals);
    for (int i = 0; i < out->m; i++) {
        double *row = p->vals + (size_t)i * out->k;
        if (f == F_LOGITS) {
            cc_softmax(row, out->k);
            continue;
        }
        double sum = 0.0;
        for (int c = 0; c < out->k; c++) {
            if (row[c] < 0.0 || row[c] > 1.0)
                return fail(why, n, "field 'probs': row %d value %d = %g is outside [0, 1]", i,
                            c, row[c]);
            sum += row[c];
        }
        if (fabs(sum - 1.0) > CC_ROW_SUM_TOL)
            return fail(why, n, "field 'probs': row %d sums to %.6g, not 1 (tolerance %g)", i,
                        sum, CC_ROW_SUM_TOL);
    }
    out->probs = p->vals;

    if (take_string(&fd, F_SEGMENT, p->segment, CC_SEGMENT_MAX, &out->segment, 0, why, n))
        return -1;
    out->segment_len = out->segment ? (int)fd.len[F_SEGMENT] : 0;
    if (take_label(p, &fd, 0, &out->label, &out->label_name, why, n))
        return -1;
    /* last, so a line with a structural fault is refused for that fault */
    if (!isnan(ts_outside))
        return range_error(p, ts_outside, why, n);
    if (out->ts < p->ts_first || out->ts > p->ts_last)
        return range_error(p, (double)out->ts, why, n);
    return 0;
}

int cc_parse_label(cc_parser *p, const char *line, size_t len, cc_label_line *out, char *why,
                   size_t n)
{
    found fd;
    memset(out, 0, sizeof *out);
    if (scan(p, line, len, &fd, why, n) ||
        take_string(&fd, F_ID, p->id, CC_ID_MAX, &out->id, 1, why, n) ||
        take_string(&fd, F_MODEL, p->model, NAME_MAX_BYTES, &out->model, 0, why, n))
        return -1;
    out->id_len = (int)fd.len[F_ID];
    return take_label(p, &fd, 1, &out->label, &out->label_name, why, n);
}
