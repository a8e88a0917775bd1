/* body.h — a request body received in pieces: kept in memory up to a cap on
 * the bytes on the wire and a cap on the bytes after gzip decoding (so a
 * small compressed body cannot inflate without bound), with every growth of
 * its buffer first granted by the caller's memory budget. */
#ifndef CC_SERVE_BODY_H
#define CC_SERVE_BODY_H

#include <stddef.h>

enum {
    CC_BODY_OK = 0,
    CC_BODY_TOO_LARGE = -1, /* past a cap (413) */
    CC_BODY_BAD_GZIP = -2,  /* not a gzip stream, or cut short (400) */
    CC_BODY_NO_MEMORY = -3, /* the budget refused to grow (429), or malloc failed */
};

typedef struct cc_body cc_body;

/* grant(ctx, bytes) reserves bytes more (> 0) or gives bytes back (< 0);
 * it returns nonzero to refuse a reservation. */
typedef int (*cc_body_grant_fn)(void *ctx, long long bytes);

cc_body *cc_body_create(int gzip, size_t max_wire, size_t max_decoded, cc_body_grant_fn grant,
                        void *ctx);
/* Appends n bytes as received; CC_BODY_* */
int cc_body_feed(cc_body *b, const char *data, size_t n);
/* The body is complete: a gzip stream must have ended. CC_BODY_* */
int cc_body_end(cc_body *b);
/* The decoded bytes (valid until cc_body_free). */
const char *cc_body_data(const cc_body *b, size_t *len);
/* Gives the buffer back to the budget and frees. Accepts NULL. */
void cc_body_free(cc_body *b);

#endif
