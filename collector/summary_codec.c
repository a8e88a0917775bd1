/* summary_codec.c — zero-run + zigzag-varint encoding of summary counters,
 * and reading a stored summary of any layout version still understood. */
#include "summary_codec.h"

#include <stdlib.h>
#include <string.h>

static size_t put_varint(unsigned char *p, uint64_t x)
{
    size_t n = 0;
    while (x >= 0x80) {
        p[n++] = (unsigned char)(x | 0x80);
        x >>= 7;
    }
    p[n++] = (unsigned char)x;
    return n;
}

static int get_varint(const unsigned char *p, size_t len, size_t *at, uint64_t *x)
{
    uint64_t v = 0;
    for (int shift = 0; shift < 64; shift += 7) {
        if (*at >= len)
            return -1;
        unsigned char b = p[(*at)++];
        v |= (uint64_t)(b & 0x7f) << shift;
        if (!(b & 0x80)) {
            *x = v;
            return 0;
        }
    }
    return -1;
}

static size_t varint_len(uint64_t x)
{
    size_t n = 1;
    while (x >= 0x80) {
        x >>= 7;
        n++;
    }
    return n;
}

unsigned char *cc_codec_encode(const int64_t *v, size_t n, size_t *out_len)
{
    /* first pass: the exact size, so a mostly-zero summary gets a small buffer */
    size_t need = 0, i = 0;
    while (i < n) {
        size_t run = 0;
        while (i + run < n && v[i + run] == 0)
            run++;
        need += varint_len(run);
        i += run;
        if (i < n) {
            int64_t x = v[i++];
            need += varint_len(((uint64_t)x << 1) ^ (uint64_t)(x >> 63));
        }
    }
    unsigned char *buf = malloc(need ? need : 1), *p = buf;
    if (!buf)
        return NULL;
    i = 0;
    while (i < n) {
        size_t run = 0;
        while (i + run < n && v[i + run] == 0)
            run++;
        p += put_varint(p, run);
        i += run;
        if (i < n) {
            int64_t x = v[i++];
            p += put_varint(p, ((uint64_t)x << 1) ^ (uint64_t)(x >> 63));
        }
    }
    *out_len = (size_t)(p - buf);
    return buf;
}

int cc_codec_decode(const unsigned char *buf, size_t len, int64_t *v, size_t n)
{
    size_t at = 0, i = 0;
    memset(v, 0, n * sizeof *v);
    while (at < len) {
        uint64_t run, z;
        if (get_varint(buf, len, &at, &run) || run > n - i)
            return -1;
        i += run;
        if (at == len)
            break;
        if (i >= n || get_varint(buf, len, &at, &z))
            return -1;
        v[i++] = (int64_t)(z >> 1) ^ -(int64_t)(z & 1);
    }
    return i == n ? 0 : -1;
}

int cc_codec_decode_summary(const unsigned char *buf, size_t len, int64_t version,
                            cc_summary *out)
{
    const cc_layout *lay = cc_summary_layout(out);
    cc_layout old;
    if (version == CC_SUMMARY_VERSION) {
        cc_summary_clear(out);
        if (cc_codec_decode(buf, len, cc_summary_data_mut(out), lay->len) ||
            !cc_layout_is_normalized(lay, cc_summary_data(out)))
            return -1;
        return 0;
    }
    if (version < 1 || version > CC_SUMMARY_VERSION ||
        cc_layout_init_version(&old, lay->m, lay->k, (int)version))
        return -2;
    int64_t *v = malloc(old.len * sizeof *v);
    if (!v)
        return -3;
    int rc = cc_codec_decode(buf, len, v, old.len) ||
                     cc_summary_convert(out, v, old.len, (int)version)
                 ? -1
                 : 0;
    free(v);
    return rc;
}
