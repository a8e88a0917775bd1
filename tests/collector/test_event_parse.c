/* test_event_parse.c — validation of single log lines: every rule of the
 * input contract (README, "Input format") accepts its good case and refuses
 * its bad case with a reason that names the field. */
#include <math.h>
#include <string.h>

#include "check.h"
#include "event_parse.h"

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

    cc_label_line lab;
    CHECK(cc_parse_label(P, "{\"id\":\"x\",\"label\":3}", 20, &lab, why, sizeof why) == 0 &&
          lab.label == 3);
    const char *nolabel = "{\"id\":\"x\"}";
    CHECK(cc_parse_label(P, nolabel, strlen(nolabel), &lab, why, sizeof why) != 0 &&
          strstr(why, "'label': missing"));
    cc_parser_free(P);
    return CHECK_DONE("event_parse");
}
