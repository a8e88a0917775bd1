/* event_parse.c — JSON Lines records to events and labels, with cJSON. */
#include "event_parse.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"
#include "summary.h"

struct cc_parser {
    cJSON *doc;
    double *vals;
    size_t cap;
};

cc_parser *cc_parser_create(void) { return calloc(1, sizeof(cc_parser)); }

void cc_parser_free(cc_parser *p)
{
    if (!p)
        return;
    cJSON_Delete(p->doc);
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

static int parse_doc(cc_parser *p, const char *line, size_t len, char *why, size_t n)
{
    const char *end = NULL;
    cJSON_Delete(p->doc);
    p->doc = cJSON_ParseWithLengthOpts(line, len, &end, 0);
    if (!p->doc) {
        const char *at = cJSON_GetErrorPtr();
        long off = at && at >= line && at <= line + len ? (long)(at - line) : -1;
        return fail(why, n, "malformed JSON near byte %ld", off);
    }
    for (const char *q = end; q && q < line + len; q++)
        if (*q != ' ' && *q != '\t' && *q != '\r')
            return fail(why, n, "malformed JSON: text after the object at byte %ld",
                        (long)(q - line));
    if (!cJSON_IsObject(p->doc))
        return fail(why, n, "a line must hold one JSON object");
    return 0;
}

static int get_id(const cJSON *doc, const char **id, int *id_len, char *why, size_t n)
{
    const cJSON *j = cJSON_GetObjectItemCaseSensitive(doc, "id");
    if (!j)
        return fail(why, n, "field 'id': missing");
    if (!cJSON_IsString(j))
        return fail(why, n, "field 'id': must be a string");
    size_t len = strlen(j->valuestring);
    if (len < 1 || len > CC_ID_MAX)
        return fail(why, n, "field 'id': length %zu outside 1..%d bytes", len, CC_ID_MAX);
    *id = j->valuestring;
    *id_len = (int)len;
    return 0;
}

static int get_model(const cJSON *doc, const char **model, char *why, size_t n)
{
    const cJSON *j = cJSON_GetObjectItemCaseSensitive(doc, "model");
    *model = NULL;
    if (!j || cJSON_IsNull(j))
        return 0;
    if (!cJSON_IsString(j) || !j->valuestring[0] || strlen(j->valuestring) > 128)
        return fail(why, n, "field 'model': must be a string of 1..128 bytes");
    *model = j->valuestring;
    return 0;
}

static int get_label(const cJSON *doc, int required, int *label, const char **name, char *why,
                     size_t n)
{
    const cJSON *j = cJSON_GetObjectItemCaseSensitive(doc, "label");
    *label = -1;
    *name = NULL;
    if (!j || cJSON_IsNull(j))
        return required ? fail(why, n, "field 'label': missing") : 0;
    if (cJSON_IsString(j)) {
        if (!j->valuestring[0])
            return fail(why, n, "field 'label': empty class name");
        *name = j->valuestring;
        return 0;
    }
    if (!cJSON_IsNumber(j) || j->valuedouble != floor(j->valuedouble) ||
        !isfinite(j->valuedouble))
        return fail(why, n, "field 'label': must be a class index or a class name");
    if (j->valuedouble < 0 || j->valuedouble > CC_MAX_CLASSES)
        return fail(why, n, "field 'label': %g is out of range", j->valuedouble);
    *label = (int)j->valuedouble;
    return 0;
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

/* Reads an array of M arrays of K finite numbers into p->vals. */
static int get_matrix(cc_parser *p, const cJSON *arr, const char *field, int *m_out,
                      int *k_out, char *why, size_t n)
{
    if (!cJSON_IsArray(arr))
        return fail(why, n, "field '%s': must be an array of member rows", field);
    int m = cJSON_GetArraySize(arr), k = -1, i = 0;
    if (m < 1 || m > CC_MAX_MEMBERS)
        return fail(why, n, "field '%s': %d member rows (allowed 1..%d)", field, m,
                    CC_MAX_MEMBERS);
    const cJSON *row;
    cJSON_ArrayForEach(row, arr)
    {
        if (!cJSON_IsArray(row))
            return fail(why, n, "field '%s': row %d is not an array", field, i);
        int rk = cJSON_GetArraySize(row);
        if (k < 0) {
            k = rk;
            if (k < 2 || k > CC_MAX_CLASSES)
                return fail(why, n, "field '%s': %d classes (allowed 2..%d)", field, k,
                            CC_MAX_CLASSES);
            size_t need = (size_t)m * (size_t)k;
            if (need > p->cap) {
                double *grown = realloc(p->vals, need * sizeof *grown);
                if (!grown)
                    return fail(why, n, "out of memory");
                p->vals = grown;
                p->cap = need;
            }
        } else if (rk != k) {
            return fail(why, n, "field '%s': row %d has %d values, row 0 has %d", field, i, rk,
                        k);
        }
        int c = 0;
        const cJSON *x;
        cJSON_ArrayForEach(x, row)
        {
            if (!cJSON_IsNumber(x) || !isfinite(x->valuedouble))
                return fail(why, n, "field '%s': row %d value %d is not a finite number", field,
                            i, c);
            p->vals[(size_t)i * k + c++] = x->valuedouble;
        }
        i++;
    }
    *m_out = m;
    *k_out = k;
    return 0;
}

int cc_parse_event(cc_parser *p, const char *line, size_t len, cc_event *out, char *why,
                   size_t n)
{
    memset(out, 0, sizeof *out);
    out->label = -1;
    if (parse_doc(p, line, len, why, n) || get_id(p->doc, &out->id, &out->id_len, why, n) ||
        get_model(p->doc, &out->model, why, n))
        return -1;

    const cJSON *ts = cJSON_GetObjectItemCaseSensitive(p->doc, "ts");
    if (!ts)
        return fail(why, n, "field 'ts': missing");
    if (cJSON_IsString(ts)) {
        const char *reason;
        if (cc_parse_rfc3339(ts->valuestring, (int)strlen(ts->valuestring), &out->ts, &reason))
            return fail(why, n, "field 'ts': %s", reason);
    } else if (cJSON_IsNumber(ts)) {
        double t = ts->valuedouble;
        if (!isfinite(t) || t < 0 || t > 253402300799.0) /* 9999-12-31 */
            return fail(why, n, "field 'ts': %g is not a usable Unix time", t);
        out->ts = (int64_t)floor(t);
    } else {
        return fail(why, n, "field 'ts': must be an RFC 3339 string or Unix seconds");
    }

    const cJSON *probs = cJSON_GetObjectItemCaseSensitive(p->doc, "probs");
    const cJSON *logits = cJSON_GetObjectItemCaseSensitive(p->doc, "logits");
    if (probs && logits)
        return fail(why, n, "fields 'probs' and 'logits': give one, not both");
    if (!probs && !logits)
        return fail(why, n, "field 'probs': missing (and no 'logits')");
    if (get_matrix(p, probs ? probs : logits, probs ? "probs" : "logits", &out->m, &out->k,
                   why, n))
        return -1;
    for (int i = 0; i < out->m; i++) {
        double *row = p->vals + (size_t)i * out->k;
        if (logits) {
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

    const cJSON *seg = cJSON_GetObjectItemCaseSensitive(p->doc, "segment");
    if (seg && !cJSON_IsNull(seg)) {
        if (!cJSON_IsString(seg))
            return fail(why, n, "field 'segment': must be a string");
        size_t sl = strlen(seg->valuestring);
        if (sl > CC_SEGMENT_MAX)
            return fail(why, n, "field 'segment': longer than %d bytes", CC_SEGMENT_MAX);
        out->segment = seg->valuestring;
        out->segment_len = (int)sl;
    }
    return get_label(p->doc, 0, &out->label, &out->label_name, why, n);
}

int cc_parse_label(cc_parser *p, const char *line, size_t len, cc_label_line *out, char *why,
                   size_t n)
{
    memset(out, 0, sizeof *out);
    if (parse_doc(p, line, len, why, n) || get_id(p->doc, &out->id, &out->id_len, why, n) ||
        get_model(p->doc, &out->model, why, n))
        return -1;
    return get_label(p->doc, 1, &out->label, &out->label_name, why, n);
}
