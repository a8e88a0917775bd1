/* body.c — request bodies with wire and decoded caps and optional gzip
 * decoding (zlib, RFC 1952 members, possibly several in a row). */
#include "body.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <zlib.h>

struct cc_body {
    int gzip, z_open, z_ended;
    z_stream z;
    size_t max_wire, max_decoded, wire;
    char *buf;
    size_t len, cap;
    cc_body_grant_fn grant;
    void *ctx;
};

cc_body *cc_body_create(int gzip, size_t max_wire, size_t max_decoded, cc_body_grant_fn grant,
                        void *ctx)
{
    cc_body *b = calloc(1, sizeof *b);
    if (!b)
        return NULL;
    b->gzip = gzip;
    b->max_wire = max_wire;
    b->max_decoded = max_decoded;
    b->grant = grant;
    b->ctx = ctx;
    if (gzip) {
        if (inflateInit2(&b->z, 16 + MAX_WBITS) != Z_OK) {
            free(b);
            return NULL;
        }
        b->z_open = 1;
    }
    return b;
}

/* Room for need more decoded bytes, within the decoded cap and the budget. */
static int reserve(cc_body *b, size_t need)
{
    if (b->len + need > b->max_decoded)
        return CC_BODY_TOO_LARGE;
    if (b->len + need <= b->cap)
        return CC_BODY_OK;
    size_t cap = b->cap ? b->cap : 65536;
    while (cap < b->len + need)
        cap *= 2;
    if (cap > b->max_decoded)
        cap = b->max_decoded;
    if (b->grant && b->grant(b->ctx, (long long)(cap - b->cap)))
        return CC_BODY_NO_MEMORY;
    char *nb = realloc(b->buf, cap);
    if (!nb) {
        if (b->grant)
            b->grant(b->ctx, -(long long)(cap - b->cap));
        return CC_BODY_NO_MEMORY;
    }
    b->buf = nb;
    b->cap = cap;
    return CC_BODY_OK;
}

static int inflate_some(cc_body *b, const char *data, size_t n)
{
    b->z.next_in = (Bytef *)(uintptr_t)data;
    b->z.avail_in = (uInt)n;
    while (b->z.avail_in > 0) {
        if (b->z_ended) {
            /* another gzip member follows the one that ended */
            if (inflateReset(&b->z) != Z_OK)
                return CC_BODY_BAD_GZIP;
            b->z_ended = 0;
        }
        int rc = reserve(b, 65536 < b->max_decoded - b->len ? 65536 : b->max_decoded - b->len);
        if (rc)
            return rc;
        if (b->len == b->cap) /* the decoded cap is reached and more is coming */
            return CC_BODY_TOO_LARGE;
        b->z.next_out = (Bytef *)b->buf + b->len;
        b->z.avail_out = (uInt)(b->cap - b->len);
        int zr = inflate(&b->z, Z_NO_FLUSH);
        b->len = b->cap - b->z.avail_out;
        if (zr == Z_STREAM_END)
            b->z_ended = 1;
        else if (zr == Z_BUF_ERROR && b->z.avail_out == 0)
            continue;
        else if (zr != Z_OK)
            return CC_BODY_BAD_GZIP;
    }
    return CC_BODY_OK;
}

int cc_body_feed(cc_body *b, const char *data, size_t n)
{
    if (n > b->max_wire - b->wire)
        return CC_BODY_TOO_LARGE;
    b->wire += n;
    if (b->gzip)
        return inflate_some(b, data, n);
    int rc = reserve(b, n);
    if (rc)
        return rc;
    memcpy(b->buf + b->len, data, n);
    b->len += n;
    return CC_BODY_OK;
}

int cc_body_end(cc_body *b)
{
    if (!b->gzip)
        return CC_BODY_OK;
    /* an empty body is no gzip stream; one cut short has not ended */
    if (b->wire == 0 || !b->z_ended)
        return CC_BODY_BAD_GZIP;
    /* a decoder may still hold output when the cap was met exactly */
    return CC_BODY_OK;
}

const char *cc_body_data(const cc_body *b, size_t *len)
{
    *len = b->len;
    return b->buf ? b->buf : "";
}

void cc_body_free(cc_body *b)
{
    if (!b)
        return;
    if (b->z_open)
        inflateEnd(&b->z);
    if (b->grant && b->cap)
        b->grant(b->ctx, -(long long)b->cap);
    free(b->buf);
    free(b);
}
