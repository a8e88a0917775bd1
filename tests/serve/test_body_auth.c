/* test_body_auth.c — request bodies (caps on the wire and decoded, gzip in
 * one or several members, cut short, the memory budget) and the bearer
 * token verdicts, without a server. gzip streams are made here with zlib
 * (RFC 1952 members; RFC 1952 section 2.2 allows several in a row). */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <zlib.h>

#include "../collector/check.h"
#include "auth.h"
#include "body.h"

/* gzip of text into out (cap bytes); returns the length. */
static size_t gz(const char *text, size_t len, unsigned char *out, size_t cap)
{
    z_stream z;
    memset(&z, 0, sizeof z);
    deflateInit2(&z, 6, Z_DEFLATED, 16 + MAX_WBITS, 8, Z_DEFAULT_STRATEGY);
    z.next_in = (Bytef *)(uintptr_t)text;
    z.avail_in = (uInt)len;
    z.next_out = out;
    z.avail_out = (uInt)cap;
    deflate(&z, Z_FINISH);
    size_t n = cap - z.avail_out;
    deflateEnd(&z);
    return n;
}

static long long budget_left;
static long long held;

static int grant(void *ctx, long long bytes)
{
    (void)ctx;
    if (bytes > 0 && held + bytes > budget_left)
        return -1;
    held += bytes;
    return 0;
}

/* feeds data in pieces of step bytes */
static int feed(cc_body *b, const unsigned char *data, size_t len, size_t step)
{
    for (size_t at = 0; at < len; at += step) {
        size_t n = len - at < step ? len - at : step;
        int rc = cc_body_feed(b, (const char *)data + at, n);
        if (rc)
            return rc;
    }
    return cc_body_end(b);
}

int main(void)
{
    const char *text = "{\"id\":\"a\"}\n{\"id\":\"b\"}\n";
    size_t tlen = strlen(text), len;
    unsigned char z1[256], z2[256], both[512], big[1 << 16];
    budget_left = 1 << 30;

    /* plain: kept as given, in any pieces */
    cc_body *b = cc_body_create(0, 100, 100, grant, NULL);
    CHECK(feed(b, (const unsigned char *)text, tlen, 3) == CC_BODY_OK);
    CHECK(strncmp(cc_body_data(b, &len), text, tlen) == 0 && len == tlen);
    cc_body_free(b);
    CHECK(held == 0); /* the budget got everything back */

    /* plain over the wire cap */
    b = cc_body_create(0, 10, 100, grant, NULL);
    CHECK(feed(b, (const unsigned char *)text, tlen, 4) == CC_BODY_TOO_LARGE);
    cc_body_free(b);

    /* gzip, byte by byte, and two members in a row decode to the text twice */
    size_t n1 = gz(text, tlen, z1, sizeof z1), n2 = gz(text, tlen, z2, sizeof z2);
    b = cc_body_create(1, 1000, 1000, grant, NULL);
    CHECK(feed(b, z1, n1, 1) == CC_BODY_OK);
    CHECK(strncmp(cc_body_data(b, &len), text, tlen) == 0 && len == tlen);
    cc_body_free(b);
    memcpy(both, z1, n1);
    memcpy(both + n1, z2, n2);
    b = cc_body_create(1, 1000, 1000, grant, NULL);
    CHECK(feed(b, both, n1 + n2, 7) == CC_BODY_OK);
    const char *d = cc_body_data(b, &len);
    CHECK(len == 2 * tlen && strncmp(d, text, tlen) == 0 && strncmp(d + tlen, text, tlen) == 0);
    cc_body_free(b);

    /* cut short, not gzip, empty */
    b = cc_body_create(1, 1000, 1000, grant, NULL);
    CHECK(feed(b, z1, n1 - 4, 5) == CC_BODY_BAD_GZIP);
    cc_body_free(b);
    b = cc_body_create(1, 1000, 1000, grant, NULL);
    CHECK(feed(b, (const unsigned char *)text, tlen, 5) == CC_BODY_BAD_GZIP);
    cc_body_free(b);
    b = cc_body_create(1, 1000, 1000, grant, NULL);
    CHECK(cc_body_end(b) == CC_BODY_BAD_GZIP);
    cc_body_free(b);

    /* a bomb: 1 MiB of newlines is a few KiB compressed; a 64 KiB decoded cap
     * stops it, and the buffer never passes the cap */
    char *ones = malloc(1 << 20);
    memset(ones, '\n', 1 << 20);
    size_t nb = gz(ones, 1 << 20, big, sizeof big);
    CHECK(nb < 8192);
    b = cc_body_create(1, 1 << 20, 1 << 16, grant, NULL);
    CHECK(feed(b, big, nb, 512) == CC_BODY_TOO_LARGE);
    CHECK(held <= 1 << 16);
    cc_body_free(b);
    /* exactly at the cap is allowed */
    nb = gz(ones, 1 << 16, big, sizeof big);
    b = cc_body_create(1, 1 << 20, 1 << 16, grant, NULL);
    CHECK(feed(b, big, nb, 512) == CC_BODY_OK);
    cc_body_data(b, &len);
    CHECK(len == 1 << 16);
    cc_body_free(b);
    free(ones);

    /* the budget refuses to grow */
    budget_left = 1000;
    b = cc_body_create(0, 1 << 20, 1 << 20, grant, NULL);
    CHECK(cc_body_feed(b, text, tlen) == CC_BODY_NO_MEMORY);
    cc_body_free(b);
    CHECK(held == 0);

    /* tokens: 401 without a bearer token, 403 with a wrong one; the write
     * token reads too, the read token cannot write; no tokens, all open */
    CHECK(cc_auth_check(NULL, "w", "r", 0) == 401);
    CHECK(cc_auth_check("Basic dzpy", "w", "r", 0) == 401);
    CHECK(cc_auth_check("Bearer ", "w", "r", 1) == 401);
    CHECK(cc_auth_check("Bearer x", "w", "r", 0) == 403);
    CHECK(cc_auth_check("Bearer ww", "w", "r", 1) == 403);
    CHECK(cc_auth_check("Bearer r", "w", "r", 1) == 403);
    CHECK(cc_auth_check("Bearer r", "w", "r", 0) == 0);
    CHECK(cc_auth_check("bearer w", "w", "r", 0) == 0);
    CHECK(cc_auth_check("Bearer w", "w", "r", 1) == 0);
    CHECK(cc_auth_check("Bearer w", "w", NULL, 0) == 0);
    CHECK(cc_auth_check("Bearer r", "w", NULL, 0) == 403);
    CHECK(cc_auth_check(NULL, NULL, NULL, 1) == 0);
    return CHECK_DONE("test_body_auth");
}
