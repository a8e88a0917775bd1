/* test_event_parse.c — validation of single log lines: every rule of the
 * input contract (README, "Input format") accepts its good case and refuses
 * its bad case with a reason that names the field. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "event_parse.h"
#include "json_scan.h"

static cc_parser *P;
static char why[256];

static int ev(const char *line, cc_event *e) { return cc_parse_event(P, line, strlen(line), e, why, sizeof why); }

static int refused(const char *line, const char *reason_part)
{
    cc_event e;
    if (ev(line, &e) == 0) {
        fprintf(stderr, "accepted but should not be: %s\n", line);
        return 0;
    }
    if (!strstr(why, reason_part)) {
        fprintf(stderr, "reason '%s' lacks '%s'\n", why, reason_part);
        return 0;
    }
    return 1;
}

int main(void)
{
    cc_event e;
    P = cc_parser_create();
    /* the shape checks below use small Unix times; the default range is
     * checked at the end */
    cc_parser_ts_range(P, 0, 253402300799LL);

    CHECK(ev("{\"id\":\"a\",\"ts\":\"2026-11-03T14:02:11Z\",\"probs\":[[0.9,0.1],[0.2,0.8]],"
             "\"segment\":\"cam-2\",\"label\":1,\"extra\":{\"ignored\":true}}", &e) == 0);
    CHECK(e.m == 2 && e.k == 2 && e.label == 1 && e.id_len == 1 && e.ts == 1793714531);
    CHECK(e.segment && e.segment_len == 5 && e.model == NULL);
    CHECK(fabs(e.probs[2] - 0.2) < 1e-12);

    CHECK(ev("{\"id\":\"b\",\"ts\":1793714531.7,\"model\":\"m\",\"probs\":[[0.5,0.5,0]],"
             "\"label\":\"ripe\"}", &e) == 0);
    CHECK(e.ts == 1793714531 && e.label == -1 && strcmp(e.label_name, "ripe") == 0);
    CHECK(strcmp(e.model, "m") == 0);

    /* logits: softmax, stable for large values (1000 would overflow exp) */
    CHECK(ev("{\"id\":\"c\",\"ts\":0,\"logits\":[[1000,1000,-1000]]}", &e) == 0);
    CHECK(fabs(e.probs[0] - 0.5) < 1e-12 && fabs(e.probs[1] - 0.5) < 1e-12 && e.probs[2] >= 0);
    /* sums within 1e-3 are accepted */
    CHECK(ev("{\"id\":\"d\",\"ts\":0,\"probs\":[[0.5004,0.5]]}", &e) == 0);

    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[0.5,0.5]]", "malformed JSON"));
    CHECK(refused("not json", "malformed JSON"));
    CHECK(refused("[1,2]", "one JSON object"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[0.5,0.5]]} x", "after the object"));
    CHECK(refused("{\"ts\":0,\"probs\":[[0.5,0.5]]}", "'id': missing"));
    CHECK(refused("{\"id\":\"\",\"ts\":0,\"probs\":[[0.5,0.5]]}", "'id': length"));
    CHECK(refused("{\"id\":7,\"ts\":0,\"probs\":[[0.5,0.5]]}", "'id': must be a string"));
    CHECK(refused("{\"id\":\"a\",\"probs\":[[0.5,0.5]]}", "'ts': missing"));
    CHECK(refused("{\"id\":\"a\",\"ts\":\"yesterday\",\"probs\":[[0.5,0.5]]}", "'ts'"));
    CHECK(refused("{\"id\":\"a\",\"ts\":-5,\"probs\":[[0.5,0.5]]}", "'ts'"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0}", "'probs': missing"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[0.5,0.5]],\"logits\":[[1,2]]}",
                  "give one, not both"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[0.5,0.5],[1]]}", "row 1 has 1 values"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[]}", "member rows"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[1]]}", "classes"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[-0.1,1.1]]}", "outside [0, 1]"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[1.5,-0.5]]}", "outside [0, 1]"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[NaN,0.5]]}", "malformed JSON"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[1e999,0.5]]}", "not a finite number"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[\"0.5\",0.5]]}", "not a finite number"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[0.6,0.6]]}", "sums to 1.2"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[0.5,0.5]],\"label\":1.5}", "'label'"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[0.5,0.5]],\"label\":-1}", "'label'"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[0.5,0.5]],\"segment\":3}", "'segment'"));

    char longid[200];
    memset(longid, 'x', sizeof longid);
    char line[400];
    snprintf(line, sizeof line, "{\"id\":\"%.*s\",\"ts\":0,\"probs\":[[0.5,0.5]]}", 129, longid);
    CHECK(refused(line, "'id': length 129"));

    /* escapes, duplicate keys (the first counts), unknown nested values, white space */
    CHECK(ev(" { \"id\" : \"caf\\u00e9-\\ud83c\\udf4e\\n\" , \"id\":\"second\", \"x\":[{\"a\":[1,{}]},null,true],"
             "\"ts\":1e3,\"probs\":[ [ 2.5e-1 , 75E-2 ] ] } ", &e) == 0);
    CHECK(e.id_len == 11 && memcmp(e.id, "caf\xc3\xa9-\xf0\x9f\x8d\x8e\n", 11) == 0);
    CHECK(e.ts == 1000 && e.probs[0] == 0.25 && e.probs[1] == 0.75);
    CHECK(refused("{\"id\":\"a\\u0000b\",\"ts\":0,\"probs\":[[0.5,0.5]]}", "NUL"));
    CHECK(refused("{\"id\":\"a\\ud83c\",\"ts\":0,\"probs\":[[0.5,0.5]]}", "malformed JSON"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[0.5,0.5]],}", "malformed JSON"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[01,0.5]]}", "malformed JSON"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[.5,0.5]]}", "malformed JSON"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[0.5,0.5]]}{}", "after the object"));
    CHECK(refused("{}", "'id': missing"));

    /* numbers: the fast path and the strtod fallback agree with strtod */
    const char *nums[] = {"0.1", "0.33333", "1e-300", "123456789012345678901234567890e-29",
                          "0.30000000000000004", "9007199254740993e-16", "4.9e-324",
                          "0.000000000000000000000000001", "1.7976931348623157e308", "-0.0"};
    for (size_t i = 0; i < sizeof nums / sizeof *nums; i++) {
        char buf[200];
        snprintf(buf, sizeof buf, "{\"id\":\"n\",\"ts\":0,\"logits\":[[%s,0]]}", nums[i]);
        CHECK(ev(buf, &e) == 0);
        double want = strtod(nums[i], NULL), got = log(e.probs[0] / e.probs[1]);
        CHECK(fabs(got - want) <= 1e-12 * (fabs(want) > 1 ? fabs(want) : 1) || fabs(want) > 700);
    }

    /* the scanner's numbers are bit-identical to glibc strtod (correctly rounded) */
    for (size_t i = 0; i < sizeof nums / sizeof *nums; i++) {
        cc_js js;
        double x;
        cc_js_init(&js, nums[i], strlen(nums[i]));
        CHECK(cc_js_number(&js, &x) == 0 && memcmp(&x, &(double){strtod(nums[i], NULL)}, 8) == 0);
    }
    unsigned long long r = 12345;
    for (int i = 0; i < 200000; i++) {
        char buf[64];
        r = r * 6364136223846793005ull + 1442695040888963407ull;
        int digits = 1 + (int)(r >> 60), scale = (int)((r >> 40) % 30) - 8;
        unsigned long long mant = (r >> 3) % 10000000000000000000ull;
        snprintf(buf, sizeof buf, "%.*llue%d", digits, mant, scale);
        cc_js js;
        double x, want = strtod(buf, NULL);
        cc_js_init(&js, buf, strlen(buf));
        if (cc_js_number(&js, &x) != 0 || memcmp(&x, &want, 8) != 0) {
            fprintf(stderr, "number %s: got %.17g want %.17g\n", buf, x, want);
            CHECK(0);
            break;
        }
        snprintf(buf, sizeof buf, "0.%05llu", mant % 100000);
        want = strtod(buf, NULL);
        cc_js_init(&js, buf, strlen(buf));
        CHECK(cc_js_number(&js, &x) == 0 && x == want);
    }

    /* limits on M and K */
    char big[8000];
    size_t at = (size_t)snprintf(big, sizeof big, "{\"id\":\"k\",\"ts\":0,\"logits\":[[");
    for (int c = 0; c < 257; c++)
        at += (size_t)snprintf(big + at, sizeof big - at, c ? ",0" : "0");
    snprintf(big + at, sizeof big - at, "]]}");
    CHECK(refused(big, "257 classes (allowed 2..256)"));
    at = (size_t)snprintf(big, sizeof big, "{\"id\":\"m\",\"ts\":0,\"probs\":[");
    for (int i = 0; i < 65; i++)
        at += (size_t)snprintf(big + at, sizeof big - at, i ? ",[0.5,0.5]" : "[0.5,0.5]");
    snprintf(big + at, sizeof big - at, "]}");
    CHECK(refused(big, "more than 64 member rows"));

    cc_label_line lab;
    CHECK(cc_parse_label(P, "{\"id\":\"x\",\"label\":3}", 20, &lab, why, sizeof why) == 0 &&
          lab.label == 3);
    const char *nolabel = "{\"id\":\"x\"}";
    CHECK(cc_parse_label(P, nolabel, strlen(nolabel), &lab, why, sizeof why) != 0 &&
          strstr(why, "'label': missing"));
    /* names must be UTF-8 (RFC 3629): overlong, surrogate, above U+10FFFF,
     * truncated, stray continuation byte; the reason names the field */
    CHECK(refused("{\"id\":\"a\xc0\xaf" "b\",\"ts\":0,\"probs\":[[0.5,0.5]]}", "'id': not valid UTF-8"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"segment\":\"\xed\xa0\x80\",\"probs\":[[0.5,0.5]]}",
                  "'segment': not valid UTF-8"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"model\":\"\xf4\x90\x80\x80\",\"probs\":[[0.5,0.5]]}",
                  "'model': not valid UTF-8"));
    CHECK(refused("{\"id\":\"a\xe2\x82\",\"ts\":0,\"probs\":[[0.5,0.5]]}", "'id': not valid UTF-8"));
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[0.5,0.5]],\"label\":\"\x80\"}",
                  "'label': not valid UTF-8"));
    CHECK(ev("{\"id\":\"\xe2\x82\xac\xf0\x9f\x8d\x8e" "\",\"ts\":0,\"probs\":[[0.5,0.5]]}", &e) == 0);
    /* a NUL in a class name is said to be one, whatever the length */
    const char *nul_label = "{\"id\":\"a\",\"label\":\"x\\u0000y\"}";
    CHECK(cc_parse_label(P, nul_label, strlen(nul_label), &lab, why, sizeof why) == -1 &&
          strstr(why, "NUL") && !strstr(why, "longer"));
    const char *bad_label = "{\"id\":\"a\",\"label\":\"\xff\"}";
    CHECK(cc_parse_label(P, bad_label, strlen(bad_label), &lab, why, sizeof why) == -1 &&
          strstr(why, "UTF-8"));

    /* the default time range: 2000-01-01 to 2099-12-31 UTC, strings and
     * numbers alike (946684800 = 2000-01-01, 4102444800 = 2100-01-01,
     * date -u +%s) */
    cc_parser_free(P);
    P = cc_parser_create();
    CHECK(refused("{\"id\":\"a\",\"ts\":0,\"probs\":[[0.5,0.5]]}", "outside the accepted range"));
    CHECK(refused("{\"id\":\"a\",\"ts\":-5,\"probs\":[[0.5,0.5]]}", "outside the accepted range"));
    CHECK(refused("{\"id\":\"a\",\"ts\":\"1969-07-20T20:17:00Z\",\"probs\":[[0.5,0.5]]}",
                  "outside the accepted range"));
    CHECK(refused("{\"id\":\"a\",\"ts\":1.7e15,\"probs\":[[0.5,0.5]]}", "1700000000000000 (Unix"));
    CHECK(refused("{\"id\":\"a\",\"ts\":1.7e11,\"probs\":[[0.5,0.5]]}", "outside the accepted range"));
    CHECK(refused("{\"id\":\"a\",\"ts\":4102444800,\"probs\":[[0.5,0.5]]}", "2000-01-01..2099-12-31"));
    CHECK(ev("{\"id\":\"a\",\"ts\":946684800,\"probs\":[[0.5,0.5]]}", &e) == 0);
    CHECK(ev("{\"id\":\"a\",\"ts\":4102444799,\"probs\":[[0.5,0.5]]}", &e) == 0);
    CHECK(ev("{\"id\":\"a\",\"ts\":\"2100-01-01T00:30:00+01:00\",\"probs\":[[0.5,0.5]]}", &e) == 0);
    /* a structural fault is reported before the range */
    CHECK(refused("{\"id\":\"a\",\"ts\":0}", "'probs': missing"));
    cc_parser_ts_range(P, 0, 86399);
    CHECK(ev("{\"id\":\"a\",\"ts\":0,\"probs\":[[0.5,0.5]]}", &e) == 0);
    CHECK(refused("{\"id\":\"a\",\"ts\":86400,\"probs\":[[0.5,0.5]]}", "1970-01-01..1970-01-01"));

    cc_parser_free(P);
    return CHECK_DONE("event_parse");
}
