/* webhook.h — sending one notification: an HTTP POST with libcurl (TLS
 * certificates verified, connect and total timeouts, no redirects) or an
 * append to a local file (file:PATH, one body per line). Signed as the
 * Standard Webhooks specification 1.0 says: HMAC-SHA256 (RFC 2104, FIPS
 * 180-4; OpenSSL's libcrypto) over "<id>.<timestamp>.<body>", sent base64
 * encoded as "v1,<signature>" with the id and the timestamp in their own
 * headers. The secret is base64, optionally prefixed "whsec_". The sender is
 * a function pointer, so tests and other transports can replace it. */
#ifndef CC_ALERTS_WEBHOOK_H
#define CC_ALERTS_WEBHOOK_H

#include <stddef.h>
#include <stdint.h>

#define CC_WEBHOOK_ID_HEADER "webhook-id"               /* the notice id */
#define CC_WEBHOOK_TIMESTAMP_HEADER "webhook-timestamp" /* Unix seconds */
#define CC_WEBHOOK_SIGNATURE_HEADER "webhook-signature" /* "v1,<base64>" */
#define CC_WEBHOOK_SECRET_MAX 256                       /* decoded key bytes */

typedef struct cc_webhook_request {
    const char *url;
    const char *body;
    size_t body_len;
    const char *secret;         /* base64, optional "whsec_" prefix; NULL: unsigned */
    int64_t timestamp;          /* Unix seconds, signed with the id and the body */
    const char *notice_id;      /* the webhook-id */
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

/* The key bytes of a secret: base64 (RFC 4648) after an optional "whsec_".
 * Returns the number of bytes, or -1 when it is not valid base64 or longer
 * than CC_WEBHOOK_SECRET_MAX bytes. */
int cc_webhook_secret_decode(const char *secret, unsigned char key[CC_WEBHOOK_SECRET_MAX]);

/* out = "v1," and the base64 HMAC-SHA256(secret's key, "<id>.<timestamp>.<body>"),
 * NUL-terminated (48 bytes). Returns 0, or -1 for a bad secret. */
int cc_webhook_sign(const char *secret, const char *id, int64_t timestamp, const char *body,
                    size_t body_len, char out[48]);

/* libcurl's process-wide setup; call once before sending, and the cleanup
 * at the end. */
int cc_webhook_global_init(void);
void cc_webhook_global_cleanup(void);

#endif
