/* test_webhook.c — HMAC-SHA256 against the published test vectors of
 * RFC 4231 (cases 1, 2, 3 and 6), the signed string "<timestamp>.<body>",
 * the file: sink, and a refused connection reported as a failure. */
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

    /* the signature covers "<timestamp>.<body>" */
    char joined[64], direct[65];
    const char *body = "{\"a\":1}";
    snprintf(joined, sizeof joined, "1700000000.%s", body);
    cc_webhook_hmac_hex("k", 1, joined, strlen(joined), direct);
    cc_webhook_sign("k", 1, 1700000000, body, strlen(body), hex);
    T_CHECK(strcmp(hex, direct) == 0, "sign = HMAC of timestamp, '.', body");
    T_CHECK(strcmp(hex, "1b6ad1bc9bf48c52ce01939866d5877c6cc4e87ddad27e16673cb8c4964394a3") == 0,
            "sign: python3 hmac.new(b'k', b'1700000000.{\"a\":1}', sha256): %s", hex);

    /* the file sink appends one body per line */
    char dir[] = "/tmp/cc-webhook-XXXXXX", path[128], url[160];
    T_CHECK(mkdtemp(dir) != NULL, "mkdtemp");
    snprintf(path, sizeof path, "%s/sink.jsonl", dir);
    snprintf(url, sizeof url, "file:%s", path);
    cc_webhook_request req = {url, body, strlen(body), NULL, 0, 1, "k1", "fired", 1000, 1000};
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
