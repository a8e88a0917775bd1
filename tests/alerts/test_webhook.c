/* test_webhook.c — HMAC-SHA256 against the published test vectors of
 * RFC 4231 (cases 1, 2, 3 and 6), the signature of the Standard Webhooks
 * specification 1.0 against its published example, secrets in base64 with
 * and without the whsec_ prefix, the file: sink, and a refused connection
 * reported as a failure. */
#include <stdlib.h>
#include <unistd.h>

#include "tcheck.h"
#include "webhook.h"

int main(void)
{
    char hex[65];
    unsigned char k1[20], k3[20], d3[50], k6[131];
    memset(k1, 0x0b, sizeof k1);
    memset(k3, 0xaa, sizeof k3);
    memset(d3, 0xdd, sizeof d3);
    memset(k6, 0xaa, sizeof k6);
    cc_webhook_hmac_hex(k1, sizeof k1, "Hi There", 8, hex);
    T_CHECK(strcmp(hex, "b0344c61d8db38535ca8afceaf0bf12b881dc200c9833da726e9376c2e32cff7") == 0,
            "RFC 4231 case 1: %s", hex);
    const char *d2 = "what do ya want for nothing?";
    cc_webhook_hmac_hex("Jefe", 4, d2, strlen(d2), hex);
    T_CHECK(strcmp(hex, "5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843") == 0,
            "RFC 4231 case 2: %s", hex);
    cc_webhook_hmac_hex(k3, sizeof k3, d3, sizeof d3, hex);
    T_CHECK(strcmp(hex, "773ea91e36800e46854db8ebd09181a72959098b3ef8c122d9635514ced565fe") == 0,
            "RFC 4231 case 3: %s", hex);
    const char *d6 = "Test Using Larger Than Block-Size Key - Hash Key First";
    cc_webhook_hmac_hex(k6, sizeof k6, d6, strlen(d6), hex);
    T_CHECK(strcmp(hex, "60e431591ee0b67f0d8a26aacbf5b77f8e0bc6213728c5140546040f0ee37f54") == 0,
            "RFC 4231 case 6 (key longer than a block): %s", hex);

    /* Standard Webhooks 1.0, the specification's example: HMAC-SHA256 of
     * "<id>.<timestamp>.<body>" with the base64-decoded secret, "v1," + base64 */
    char sig[48];
    const char *sw_body = "{\"test\": 2432232314}";
    T_CHECK(cc_webhook_sign("whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw", "msg_p5jXN8AQM9LWM0D4loKWxJek",
                            1614265330, sw_body, strlen(sw_body), sig) == 0 &&
                strcmp(sig, "v1,g0hM9SsE+OTPJTGt/tmIKtSyZlE3uFJELVlNIOLJ1OE=") == 0,
            "Standard Webhooks 1.0 example signature: %s", sig);
    T_CHECK(cc_webhook_sign("MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw", "msg_p5jXN8AQM9LWM0D4loKWxJek",
                            1614265330, sw_body, strlen(sw_body), sig) == 0 &&
                strcmp(sig, "v1,g0hM9SsE+OTPJTGt/tmIKtSyZlE3uFJELVlNIOLJ1OE=") == 0,
            "the whsec_ prefix is optional: %s", sig);
    /* the signature is the HMAC of id, '.', timestamp, '.', body */
    unsigned char key[CC_WEBHOOK_SECRET_MAX];
    T_CHECK(cc_webhook_secret_decode("whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw", key) == 24,
            "32 base64 characters are 24 key bytes");
    T_CHECK(cc_webhook_secret_decode("aGk=", key) == 2 && key[0] == 'h' && key[1] == 'i',
            "padding: base64 'aGk=' is 'hi' (RFC 4648)");
    T_CHECK(cc_webhook_secret_decode("not base64!", key) == -1 &&
                cc_webhook_secret_decode("abc", key) == -1 && cc_webhook_secret_decode("", key) == -1,
            "a secret that is not base64 is refused");
    T_CHECK(cc_webhook_sign("not base64!", "i", 1, "b", 1, sig) == -1, "no signature without a key");
    /* python3: base64.b64encode(hmac.new(b"hi", b"n1.1700000000.{\"a\":1}",
     * hashlib.sha256).digest()) */
    const char *body = "{\"a\":1}";
    T_CHECK(cc_webhook_sign("aGk=", "n1", 1700000000, body, strlen(body), sig) == 0,
            "sign with a short key");
    char joined[64], hex_direct[65];
    snprintf(joined, sizeof joined, "n1.1700000000.%s", body);
    cc_webhook_hmac_hex("hi", 2, joined, strlen(joined), hex_direct);
    T_CHECK(strcmp(sig, "v1,ttSUh8BUaflSMKs8k9yD376oMAwBHMFxo+Le/sVKa6I=") == 0, "python3 hmac: %s",
            sig);
    T_CHECK(strcmp(hex_direct, "b6d49487c05469f95230ab3c93dc83dfbea8300c011cc171a3e2defec54a6ba2") ==
                0,
            "the same HMAC in hex (python3 hmac.hexdigest): %s", hex_direct);

    /* the file sink appends one body per line */
    char dir[] = "/tmp/cc-webhook-XXXXXX", path[128], url[160];
    T_CHECK(mkdtemp(dir) != NULL, "mkdtemp");
    snprintf(path, sizeof path, "%s/sink.jsonl", dir);
    snprintf(url, sizeof url, "file:%s", path);
    cc_webhook_request req = {url, body, strlen(body), NULL, 1, "k1", 1000, 1000};
    cc_webhook_response res;
    T_CHECK(cc_webhook_post(NULL, &req, &res) == 0 && res.status == 200, "file sink");
    T_CHECK(cc_webhook_post(NULL, &req, &res) == 0, "file sink, second line");
    FILE *f = fopen(path, "r");
    char line[64];
    int lines = 0;
    while (f && fgets(line, sizeof line, f))
        lines += strcmp(line, "{\"a\":1}\n") == 0;
    if (f)
        fclose(f);
    T_CHECK(lines == 2, "two lines in the sink, got %d", lines);
    remove(path);
    rmdir(dir);
    req.url = "file:/nonexistent-dir/x.jsonl";
    T_CHECK(cc_webhook_post(NULL, &req, &res) == -1 && res.error[0], "unwritable sink fails");

    /* nothing listens on port 1 of loopback: refused, reported, no status */
    cc_webhook_global_init();
    req.url = "http://127.0.0.1:1/hook";
    T_CHECK(cc_webhook_post(NULL, &req, &res) == -1 && res.status == 0 && res.error[0],
            "refused connection is a failure: %s", res.error);
    cc_webhook_global_cleanup();
    return t_summary("alerts_webhook");
}
