/* ch_client.c — ClickHouse over HTTP with libcurl, and RowBinary encoding. */
#include "ch_client.h"

#include <curl/curl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

struct cc_ch {
    char host[256];
    int port;
    char database[128];
    char cluster[128];
    char where[300];
    char *user, *password;
    CURL *curl;
    long last_status;
};

void cc_buf_free(cc_buf *b)
{
    free(b->p);
    b->p = NULL;
    b->len = b->cap = 0;
}

void cc_buf_put(cc_buf *b, const void *data, size_t n)
{
    if (b->oom)
        return;
    if (b->len + n + 1 > b->cap) {
        size_t cap = b->cap ? b->cap : 4096;
        while (cap < b->len + n + 1)
            cap *= 2;
        unsigned char *p = realloc(b->p, cap);
        if (!p) {
            b->oom = 1;
            return;
        }
        b->p = p;
        b->cap = cap;
    }
    if (n)
        memcpy(b->p + b->len, data, n);
    b->len += n;
    b->p[b->len] = 0;
}

void cc_buf_varint(cc_buf *b, uint64_t v)
{
    unsigned char t[10];
    size_t n = 0;
    do {
        t[n] = (unsigned char)(v & 0x7f);
        v >>= 7;
        if (v)
            t[n] |= 0x80;
        n++;
    } while (v);
    cc_buf_put(b, t, n);
}

static void put_le(cc_buf *b, uint64_t v, int bytes)
{
    unsigned char t[8];
    for (int i = 0; i < bytes; i++)
        t[i] = (unsigned char)(v >> (8 * i));
    cc_buf_put(b, t, (size_t)bytes);
}

void cc_buf_string(cc_buf *b, const char *s, size_t n)
{
    cc_buf_varint(b, n);
    cc_buf_put(b, s, n);
}
void cc_buf_i64(cc_buf *b, int64_t v) { put_le(b, (uint64_t)v, 8); }
void cc_buf_u64(cc_buf *b, uint64_t v) { put_le(b, v, 8); }
void cc_buf_i32(cc_buf *b, int32_t v) { put_le(b, (uint32_t)v, 4); }
void cc_buf_u32(cc_buf *b, uint32_t v) { put_le(b, v, 4); }
void cc_buf_u8(cc_buf *b, uint8_t v) { put_le(b, v, 1); }

int cc_rb_varint(cc_rb *r, uint64_t *v)
{
    uint64_t x = 0;
    for (int shift = 0; shift < 64; shift += 7) {
        if (r->p >= r->end)
            return -1;
        unsigned char c = *r->p++;
        x |= (uint64_t)(c & 0x7f) << shift;
        if (!(c & 0x80)) {
            *v = x;
            return 0;
        }
    }
    return -1;
}

static int get_le(cc_rb *r, uint64_t *v, int bytes)
{
    if (r->end - r->p < bytes)
        return -1;
    uint64_t x = 0;
    for (int i = 0; i < bytes; i++)
        x |= (uint64_t)r->p[i] << (8 * i);
    r->p += bytes;
    *v = x;
    return 0;
}

int cc_rb_string(cc_rb *r, const char **s, size_t *n)
{
    uint64_t len;
    if (cc_rb_varint(r, &len) || (uint64_t)(r->end - r->p) < len)
        return -1;
    *s = (const char *)r->p;
    *n = (size_t)len;
    r->p += len;
    return 0;
}

int cc_rb_i64(cc_rb *r, int64_t *v)
{
    uint64_t x;
    if (get_le(r, &x, 8))
        return -1;
    *v = (int64_t)x;
    return 0;
}
int cc_rb_u64(cc_rb *r, uint64_t *v) { return get_le(r, v, 8); }
int cc_rb_i32(cc_rb *r, int32_t *v)
{
    uint64_t x;
    if (get_le(r, &x, 4))
        return -1;
    *v = (int32_t)(uint32_t)x;
    return 0;
}
int cc_rb_u32(cc_rb *r, uint32_t *v)
{
    uint64_t x;
    if (get_le(r, &x, 4))
        return -1;
    *v = (uint32_t)x;
    return 0;
}
int cc_rb_u8(cc_rb *r, uint8_t *v)
{
    uint64_t x;
    if (get_le(r, &x, 1))
        return -1;
    *v = (uint8_t)x;
    return 0;
}
int cc_rb_f32(cc_rb *r, float *v)
{
    uint64_t x;
    if (get_le(r, &x, 4))
        return -1;
    uint32_t u = (uint32_t)x;
    memcpy(v, &u, sizeof *v);
    return 0;
}

static int name_ok(const char *s)
{
    if (!*s)
        return 0;
    for (; *s; s++)
        if (!((*s >= 'a' && *s <= 'z') || (*s >= 'A' && *s <= 'Z') || (*s >= '0' && *s <= '9') ||
              *s == '_'))
            return 0;
    return 1;
}

int cc_ch_open(cc_ch **out, const char *url, cc_error *err)
{
    static const char scheme[] = "clickhouse://";
    *out = NULL;
    if (strncmp(url, scheme, sizeof scheme - 1) != 0)
        return cc_error_set(err, CC_EUSAGE, "store URL '%s' does not start with %s", url,
                            scheme);
    const char *h = url + sizeof scheme - 1, *colon = strchr(h, ':'), *slash = strchr(h, '/');
    if (!colon || !slash || colon > slash || colon == h || (size_t)(colon - h) >= 256)
        return cc_error_set(err, CC_EUSAGE,
                            "store URL '%s': expected clickhouse://HOST:PORT/DATABASE", url);
    char *end;
    long port = strtol(colon + 1, &end, 10);
    if (end != slash || port < 1 || port > 65535)
        return cc_error_set(err, CC_EUSAGE, "store URL '%s': the port must be 1..65535", url);
    if (!name_ok(slash + 1) || strlen(slash + 1) >= 128)
        return cc_error_set(err, CC_EUSAGE,
                            "store URL '%s': the database name must be letters, digits and '_'",
                            url);
    const char *cluster = getenv("CONCORD_CH_CLUSTER");
    if (!cluster || !*cluster)
        cluster = "concord";
    if (!name_ok(cluster) || strlen(cluster) >= 128)
        return cc_error_set(err, CC_EUSAGE,
                            "CONCORD_CH_CLUSTER '%s': a cluster name is letters, digits and '_'",
                            cluster);
    cc_ch *c = calloc(1, sizeof *c);
    if (!c)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    memcpy(c->host, h, (size_t)(colon - h));
    c->port = (int)port;
    strcpy(c->database, slash + 1);
    strcpy(c->cluster, cluster);
    snprintf(c->where, sizeof c->where, "%s:%d", c->host, c->port);
    const char *u = getenv("CONCORD_CH_USER"), *p = getenv("CONCORD_CH_PASSWORD");
    if ((u && !(c->user = strdup(u))) || (p && !(c->password = strdup(p))) ||
        !(c->curl = curl_easy_init())) {
        cc_ch_close(c);
        return cc_error_set(err, CC_ENOMEM, "out of memory (starting libcurl)");
    }
    *out = c;
    return 0;
}

void cc_ch_close(cc_ch *c)
{
    if (!c)
        return;
    if (c->curl)
        curl_easy_cleanup(c->curl);
    free(c->user);
    if (c->password) {
        memset(c->password, 0, strlen(c->password));
        free(c->password);
    }
    free(c);
}

const char *cc_ch_database(const cc_ch *c) { return c->database; }
const char *cc_ch_cluster(const cc_ch *c) { return c->cluster; }
const char *cc_ch_where(const cc_ch *c) { return c->where; }
long cc_ch_last_status(const cc_ch *c) { return c->last_status; }

void cc_ch_quote(cc_buf *b, const char *s)
{
    cc_buf_put(b, "'", 1);
    for (; *s; s++) {
        if (*s == '\'' || *s == '\\')
            cc_buf_put(b, "\\", 1);
        cc_buf_put(b, s, 1);
    }
    cc_buf_put(b, "'", 1);
}

static size_t on_body(char *data, size_t size, size_t n, void *p)
{
    cc_buf *b = p;
    cc_buf_put(b, data, size * n);
    return b->oom ? 0 : size * n;
}

/* "Code: 47, e.displayText() = DB::Exception: Unknown identifier: foo,
 * e.what() = DB::Exception" (18.16) -> "Code 47: Unknown identifier: foo". */
static void server_message(const cc_buf *body, char *out, size_t cap)
{
    const char *t = body->p ? (const char *)body->p : "";
    long code = -1;
    const char *msg = t, *stop = NULL;
    if (sscanf(t, "Code: %ld", &code) == 1) {
        /* the text after "e.displayText() = DB::SomeException: " */
        const char *e = strstr(t, "e.displayText() = ");
        if (e && strncmp(e + 18, "DB::", 4) == 0 && strstr(e, ": "))
            msg = strstr(e, ": ") + 2;
        stop = strstr(msg, ", e.what() = ");
    }
    size_t n = stop ? (size_t)(stop - msg) : strlen(msg);
    while (n && (msg[n - 1] == '\n' || msg[n - 1] == ' '))
        n--;
    if (n > 400)
        n = 400;
    if (code >= 0)
        snprintf(out, cap, "Code %ld: %.*s", code, (int)n, msg);
    else
        snprintf(out, cap, "%.*s", (int)n, msg);
}

int cc_ch_query(cc_ch *c, const char *sql, const cc_buf *body, cc_buf *out, cc_error *err)
{
    CURL *h = c->curl;
    cc_buf answer = CC_BUF_INIT;
    char *url = NULL;
    int rc = 0;
    curl_easy_reset(h);
    /* statements name their tables with the database, so no database=
     * parameter (it would fail CREATE DATABASE when the database is missing) */
    char *q = body ? curl_easy_escape(h, sql, 0) : NULL;
    size_t n = strlen(c->host) + (q ? strlen(q) : 0) + 128;
    if ((body && !q) || !(url = malloc(n))) {
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    snprintf(url, n, "http://%s:%d/?insert_distributed_sync=1%s%s", c->host, c->port,
             q ? "&query=" : "", q ? q : "");
    curl_easy_setopt(h, CURLOPT_URL, url);
    curl_easy_setopt(h, CURLOPT_PROTOCOLS_STR, "http");
    curl_easy_setopt(h, CURLOPT_NOSIGNAL, 1L);
    curl_easy_setopt(h, CURLOPT_CONNECTTIMEOUT, 30L);
    curl_easy_setopt(h, CURLOPT_TIMEOUT, 600L);
    curl_easy_setopt(h, CURLOPT_POST, 1L);
    if (body) {
        curl_easy_setopt(h, CURLOPT_POSTFIELDS, body->p ? (const char *)body->p : "");
        curl_easy_setopt(h, CURLOPT_POSTFIELDSIZE_LARGE, (curl_off_t)body->len);
    } else {
        curl_easy_setopt(h, CURLOPT_POSTFIELDS, sql);
        curl_easy_setopt(h, CURLOPT_POSTFIELDSIZE_LARGE, (curl_off_t)strlen(sql));
    }
    struct curl_slist *hdr = curl_slist_append(NULL, "Expect:");
    curl_easy_setopt(h, CURLOPT_HTTPHEADER, hdr);
    if (c->user) {
        curl_easy_setopt(h, CURLOPT_HTTPAUTH, (long)CURLAUTH_BASIC);
        curl_easy_setopt(h, CURLOPT_USERNAME, c->user);
        curl_easy_setopt(h, CURLOPT_PASSWORD, c->password ? c->password : "");
    }
    curl_easy_setopt(h, CURLOPT_WRITEFUNCTION, on_body);
    curl_easy_setopt(h, CURLOPT_WRITEDATA, &answer);
    CURLcode cr = curl_easy_perform(h);
    curl_slist_free_all(hdr);
    long status = 0;
    curl_easy_getinfo(h, CURLINFO_RESPONSE_CODE, &status);
    c->last_status = cr == CURLE_OK ? status : 0;
    if (answer.oom) {
        rc = cc_error_set(err, CC_ENOMEM, "ClickHouse %s: out of memory reading the answer",
                          c->where);
    } else if (cr != CURLE_OK) {
        rc = cc_error_set(err, CC_EIO, "ClickHouse %s: cannot reach the server: %s", c->where,
                          curl_easy_strerror(cr));
    } else if (status != 200) {
        char msg[512];
        server_message(&answer, msg, sizeof msg);
        rc = cc_error_set(err, CC_EIO, "ClickHouse %s: HTTP %ld: %s", c->where, status, msg);
    }
done:
    curl_free(q);
    free(url);
    if (rc || !out)
        cc_buf_free(&answer);
    else
        *out = answer;
    return rc;
}
