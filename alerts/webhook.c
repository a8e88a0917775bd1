/* webhook.c — Standard Webhooks signing (HMAC with OpenSSL's EVP_MAC,
 * base64 with EVP_EncodeBlock), the libcurl POST and the file: sink. */
#include "webhook.h"

#include <curl/curl.h>
#include <errno.h>
#include <fcntl.h>
#include <inttypes.h>
#include <openssl/core_names.h>
#include <openssl/crypto.h>
#include <openssl/evp.h>
#include <openssl/params.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

/* HMAC-SHA256 of the concatenated parts, the 32 bytes into mac. */
static int hmac_parts(const void *key, size_t key_len, const void *const *parts,
                      const size_t *lens, int n, unsigned char mac[32])
{
    size_t mac_len = 0;
    int ok = 1;
    EVP_MAC *alg = EVP_MAC_fetch(NULL, "HMAC", NULL);
    EVP_MAC_CTX *ctx = alg ? EVP_MAC_CTX_new(alg) : NULL;
    char digest[] = "SHA256";
    OSSL_PARAM params[] = {OSSL_PARAM_construct_utf8_string(OSSL_MAC_PARAM_DIGEST, digest, 0),
                           OSSL_PARAM_construct_end()};
    ok = ctx && EVP_MAC_init(ctx, key, key_len, params);
    for (int i = 0; ok && i < n; i++)
        ok = EVP_MAC_update(ctx, parts[i], lens[i]);
    ok = ok && EVP_MAC_final(ctx, mac, &mac_len, 32) && mac_len == 32;
    EVP_MAC_CTX_free(ctx);
    EVP_MAC_free(alg);
    return ok ? 0 : -1;
}

int cc_webhook_hmac_hex(const void *key, size_t key_len, const void *data, size_t data_len,
                        char hex[65])
{
    const void *parts[] = {data};
    size_t lens[] = {data_len};
    unsigned char mac[32];
    if (hmac_parts(key, key_len, parts, lens, 1, mac))
        return -1;
    for (size_t i = 0; i < sizeof mac; i++)
        snprintf(hex + 2 * i, 3, "%02x", mac[i]);
    return 0;
}

int cc_webhook_secret_decode(const char *secret, unsigned char key[CC_WEBHOOK_SECRET_MAX])
{
    if (strncmp(secret, "whsec_", 6) == 0)
        secret += 6;
    size_t n = strlen(secret);
    if (n == 0 || n % 4 != 0 || n / 4 * 3 > CC_WEBHOOK_SECRET_MAX + 2)
        return -1;
    for (size_t i = 0; i < n; i++) {
        char c = secret[i];
        int ok = (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || (c >= '0' && c <= '9') ||
                 c == '+' || c == '/' || (c == '=' && i >= n - 2);
        if (!ok || (c != '=' && i > 0 && secret[i - 1] == '='))
            return -1;
    }
    unsigned char buf[CC_WEBHOOK_SECRET_MAX + 3];
    int len = EVP_DecodeBlock(buf, (const unsigned char *)secret, (int)n);
    if (len < 0)
        return -1;
    /* EVP_DecodeBlock counts padding as zero bytes */
    len -= (secret[n - 1] == '=') + (secret[n - 2] == '=');
    if (len <= 0 || len > CC_WEBHOOK_SECRET_MAX)
        return -1;
    memcpy(key, buf, (size_t)len);
    return len;
}

int cc_webhook_sign(const char *secret, const char *id, int64_t timestamp, const char *body,
                    size_t body_len, char out[48])
{
    unsigned char key[CC_WEBHOOK_SECRET_MAX], mac[32];
    int key_len = cc_webhook_secret_decode(secret, key);
    if (key_len < 0)
        return -1;
    char ts[32];
    int n = snprintf(ts, sizeof ts, ".%" PRId64 ".", timestamp);
    const void *parts[] = {id, ts, body};
    size_t lens[] = {strlen(id), (size_t)n, body_len};
    int rc = hmac_parts(key, (size_t)key_len, parts, lens, 3, mac);
    OPENSSL_cleanse(key, sizeof key);
    if (rc)
        return -1;
    memcpy(out, "v1,", 3);
    EVP_EncodeBlock((unsigned char *)out + 3, mac, 32);   /* 44 characters and a NUL */
    return 0;
}

int cc_webhook_global_init(void) { return curl_global_init(CURL_GLOBAL_DEFAULT) == 0 ? 0 : -1; }
void cc_webhook_global_cleanup(void) { curl_global_cleanup(); }

static int to_file(const char *path, const cc_webhook_request *req, cc_webhook_response *res)
{
    int fd = open(path, O_WRONLY | O_APPEND | O_CREAT | O_CLOEXEC, 0644);
    if (fd < 0) {
        snprintf(res->error, sizeof res->error, "%s: %s", path, strerror(errno));
        return -1;
    }
    size_t len = req->body_len + 1, done = 0;
    char *line = malloc(len);
    if (!line) {
        close(fd);
        snprintf(res->error, sizeof res->error, "out of memory");
        return -1;
    }
    memcpy(line, req->body, req->body_len);
    line[req->body_len] = '\n';
    while (done < len) {
        ssize_t w = write(fd, line + done, len - done);
        if (w < 0 && errno == EINTR)
            continue;
        if (w <= 0)
            break;
        done += (size_t)w;
    }
    free(line);
    if (done < len || fsync(fd) != 0) {
        snprintf(res->error, sizeof res->error, "%s: write failed: %s", path, strerror(errno));
        close(fd);
        return -1;
    }
    if (close(fd) != 0) {
        snprintf(res->error, sizeof res->error, "%s: %s", path, strerror(errno));
        return -1;
    }
    res->status = 200;
    return 0;
}

/* A header line "Name: value" with control characters in the value (a
 * model name from the logs can hold anything) replaced by '?'. */
static struct curl_slist *add_header(struct curl_slist *h, const char *name, const char *value)
{
    char line[1200];
    int n = snprintf(line, sizeof line, "%s: %s", name, value);
    for (int i = (int)strlen(name) + 2; i < n && i < (int)sizeof line - 1; i++)
        if ((unsigned char)line[i] < 0x20 || line[i] == 0x7f)
            line[i] = '?';
    return curl_slist_append(h, line);
}

/* The answer's body is not needed; read at most 64 KiB of it. */
static size_t discard(char *ptr, size_t size, size_t n, void *ud)
{
    size_t *seen = ud;
    (void)ptr;
    *seen += size * n;
    return *seen > 65536 ? 0 : size * n;
}

int cc_webhook_post(void *ctx, const cc_webhook_request *req, cc_webhook_response *res)
{
    (void)ctx;
    res->status = 0;
    res->error[0] = '\0';
    if (strncmp(req->url, "file://", 7) == 0)
        return to_file(req->url + 7, req, res);
    if (strncmp(req->url, "file:", 5) == 0)
        return to_file(req->url + 5, req, res);

    CURL *c = curl_easy_init();
    if (!c) {
        snprintf(res->error, sizeof res->error, "cannot start libcurl");
        return -1;
    }
    struct curl_slist *h = NULL;
    char line[1200], sig[48];
    const char *id = req->notice_id ? req->notice_id : "";
    h = curl_slist_append(h, "Content-Type: application/json");
    h = curl_slist_append(h, "Expect:");
    h = add_header(h, CC_WEBHOOK_ID_HEADER, id);
    snprintf(line, sizeof line, "%s: %" PRId64, CC_WEBHOOK_TIMESTAMP_HEADER, req->timestamp);
    h = curl_slist_append(h, line);
    if (req->secret) {
        if (cc_webhook_sign(req->secret, id, req->timestamp, req->body, req->body_len, sig)) {
            curl_slist_free_all(h);
            curl_easy_cleanup(c);
            snprintf(res->error, sizeof res->error, "the signing secret is not base64 (with "
                                                    "an optional whsec_ prefix)");
            return -1;
        }
        snprintf(line, sizeof line, "%s: %s", CC_WEBHOOK_SIGNATURE_HEADER, sig);
        h = curl_slist_append(h, line);
    }
    char errbuf[CURL_ERROR_SIZE] = "";
    size_t seen = 0;
    curl_easy_setopt(c, CURLOPT_URL, req->url);
    curl_easy_setopt(c, CURLOPT_PROTOCOLS_STR, "http,https");
    curl_easy_setopt(c, CURLOPT_POST, 1L);
    curl_easy_setopt(c, CURLOPT_POSTFIELDS, req->body);
    curl_easy_setopt(c, CURLOPT_POSTFIELDSIZE_LARGE, (curl_off_t)req->body_len);
    curl_easy_setopt(c, CURLOPT_HTTPHEADER, h);
    curl_easy_setopt(c, CURLOPT_USERAGENT, "concord/0.1.0");
    curl_easy_setopt(c, CURLOPT_CONNECTTIMEOUT_MS, (long)req->connect_timeout_ms);
    curl_easy_setopt(c, CURLOPT_TIMEOUT_MS, (long)req->timeout_ms);
    curl_easy_setopt(c, CURLOPT_NOSIGNAL, 1L);
    curl_easy_setopt(c, CURLOPT_SSL_VERIFYPEER, 1L);
    curl_easy_setopt(c, CURLOPT_SSL_VERIFYHOST, 2L);
    curl_easy_setopt(c, CURLOPT_FOLLOWLOCATION, 0L);
    curl_easy_setopt(c, CURLOPT_WRITEFUNCTION, discard);
    curl_easy_setopt(c, CURLOPT_WRITEDATA, &seen);
    curl_easy_setopt(c, CURLOPT_ERRORBUFFER, errbuf);
    CURLcode rc = curl_easy_perform(c);
    long status = 0;
    curl_easy_getinfo(c, CURLINFO_RESPONSE_CODE, &status);
    curl_slist_free_all(h);
    curl_easy_cleanup(c);
    res->status = status;
    if (rc == CURLE_WRITE_ERROR && status >= 200 && status < 300)
        rc = CURLE_OK;
    if (rc != CURLE_OK) {
        snprintf(res->error, sizeof res->error, "%s", errbuf[0] ? errbuf : curl_easy_strerror(rc));
        return -1;
    }
    if (status < 200 || status > 299) {
        snprintf(res->error, sizeof res->error, "HTTP %ld", status);
        return -1;
    }
    return 0;
}
