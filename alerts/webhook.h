/* webhook.h — sending one notification: an HTTP POST with libcurl (TLS
 * certificates verified, connect and total timeouts, no redirects) or an
 * append to a local file (file:PATH, one body per line). The body is signed
 * with HMAC-SHA256 (RFC 2104, FIPS 180-4; OpenSSL's libcrypto) over
 * "<timestamp>.<body>". The sender is a function pointer, so tests and
 * other transports can replace it. */
#ifndef CC_ALERTS_WEBHOOK_H
#define CC_ALERTS_WEBHOOK_H

#include <stddef.h>
#include <stdint.h>

#define CC_WEBHOOK_SIGNATURE_HEADER "X-Concord-Signature"   /* "sha256=<hex>" */
#define CC_WEBHOOK_TIMESTAMP_HEADER "X-Concord-Timestamp"   /* Unix seconds */
#define CC_WEBHOOK_KEY_HEADER "X-Concord-Dedupe-Key"
#define CC_WEBHOOK_KIND_HEADER "X-Concord-Event"            /* fired, resolved, reminder */

typedef struct cc_webhook_request {
    const char *url;
    const char *body;
    size_t body_len;
    const char *secret;         /* NULL: unsigned */
    size_t secret_len;
    int64_t timestamp;          /* Unix seconds, signed with the body */
    const char *dedupe_key;
    const char *kind;
    int connect_timeout_ms, timeout_ms;
} cc_webhook_request;

typedef struct cc_webhook_response {
    long status;                /* HTTP status; 0 when there was no answer */
    char error[256];            /* why it failed */
} cc_webhook_response;

/* Returns 0 when the receiver accepted the notification (2xx, or the line
 * written to a file), -1 otherwise with res->error set. */
typedef int (*cc_webhook_sender)(void *ctx, const cc_webhook_request *req,
                                 cc_webhook_response *res);

/* The default sender (ctx unused). */
int cc_webhook_post(void *ctx, const cc_webhook_request *req, cc_webhook_response *res);

/* hex = lowercase hex of HMAC-SHA256(key, data), 64 chars and a NUL.
 * Returns 0 or -1. */
int cc_webhook_hmac_hex(const void *key, size_t key_len, const void *data, size_t data_len,
                        char hex[65]);

/* hex = lowercase hex of HMAC-SHA256(secret, "<timestamp>.<body>"), 64 chars
 * and a NUL. Returns 0 or -1. */
int cc_webhook_sign(const char *secret, size_t secret_len, int64_t timestamp, const char *body,
                    size_t body_len, char hex[65]);

/* libcurl's process-wide setup; call once before sending, and the cleanup
 * at the end. */
int cc_webhook_global_init(void);
void cc_webhook_global_cleanup(void);

#endif
