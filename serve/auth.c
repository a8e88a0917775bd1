/* auth.c — reading and checking bearer tokens (RFC 6750's header form). */
#include "auth.h"

#include <errno.h>
#include <openssl/crypto.h>
#include <openssl/sha.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

int cc_auth_token_file(const char *path, char **out, cc_error *err)
{
    *out = NULL;
    FILE *f = fopen(path, "r");
    if (!f)
        return cc_error_set(err, CC_EIO, "%s: cannot read the token: %s", path,
                            strerror(errno));
    char buf[1024];
    size_t n = fread(buf, 1, sizeof buf - 1, f);
    fclose(f);
    buf[n] = 0;
    char *nl = strchr(buf, '\n');
    if (nl)
        *nl = 0;
    char *s = buf, *e = buf + strlen(buf);
    while (*s == ' ' || *s == '\t')
        s++;
    while (e > s && (e[-1] == ' ' || e[-1] == '\t' || e[-1] == '\r'))
        e--;
    *e = 0;
    if (!*s)
        return cc_error_set(err, CC_EUSAGE, "%s: the token file's first line is empty", path);
    for (const char *p = s; *p; p++)
        if ((unsigned char)*p < 0x21 || (unsigned char)*p > 0x7e)
            return cc_error_set(err, CC_EUSAGE,
                                "%s: a token is printable ASCII without spaces", path);
    if (!(*out = strdup(s)))
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    return 0;
}

/* Equal in time that does not depend on where they differ: both are hashed
 * and the digests compared with CRYPTO_memcmp (lengths may differ). */
static int same_token(const char *given, size_t len, const char *want)
{
    unsigned char a[SHA256_DIGEST_LENGTH], b[SHA256_DIGEST_LENGTH];
    SHA256((const unsigned char *)given, len, a);
    SHA256((const unsigned char *)want, strlen(want), b);
    return CRYPTO_memcmp(a, b, sizeof a) == 0;
}

int cc_auth_check(const char *header, const char *write_token, const char *read_token,
                  int need_write)
{
    if (!write_token && !read_token)
        return 0;
    if (need_write && !write_token)
        return 0; /* writes unguarded: the server listens on loopback only */
    if (!header || strncasecmp(header, "Bearer ", 7) != 0)
        return 401;
    const char *tok = header + 7;
    while (*tok == ' ')
        tok++;
    size_t len = strlen(tok);
    while (len > 0 && tok[len - 1] == ' ')
        len--;
    if (len == 0)
        return 401;
    int w = write_token && same_token(tok, len, write_token);
    int r = read_token && same_token(tok, len, read_token);
    if (need_write)
        return w ? 0 : 403;
    return w || r ? 0 : 403;
}
