/* auth.h — bearer tokens of the server: a write token (POSTs; it also reads)
 * and a read token (GETs), read from files or the environment, never from
 * the command line, and compared in constant time. */
#ifndef CC_SERVE_AUTH_H
#define CC_SERVE_AUTH_H

#include "error.h"

/* The token in the first line of path (surrounding blanks and the newline
 * dropped) into *out (caller frees). An empty token is refused. */
int cc_auth_token_file(const char *path, char **out, cc_error *err);

/* The Authorization header's verdict for a request that needs write (1) or
 * read (0) access: 0 allowed, 401 no bearer token given, 403 wrong token.
 * With no token configured at all every request is allowed; without a
 * write token, writes are (the server then listens on loopback only). */
int cc_auth_check(const char *header, const char *write_token, const char *read_token,
                  int need_write);

#endif
