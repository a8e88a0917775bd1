/* test_parse_mutations.c — the line parser never reads outside the line and
 * never accepts what it should refuse: valid lines are mutated at random
 * (bytes flipped, inserted, deleted, truncated) and parsed; the test itself
 * only checks that parsing returns and that accepted events are well formed.
 * Its real teeth are AddressSanitizer/UBSan in the sanitizer build, where the
 * line is copied into a buffer of exactly its length. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "event_parse.h"

static unsigned long long state = 0x9E3779B97F4A7C15ull;
static unsigned next(void)
{
    state ^= state << 13;
    state ^= state >> 7;
    state ^= state << 17;
    return (unsigned)(state >> 32);
}

static const char *const seeds[] = {
    "{\"id\":\"a-1\",\"ts\":\"2026-11-03T14:02:11+02:00\",\"probs\":[[0.7,0.2,0.1],[0.6,0.3,0.1]],"
    "\"label\":\"ripe\",\"segment\":\"cam \\u00e9\"}",
    "{\"id\":\"b\",\"ts\":1793714531.5,\"logits\":[[1e2,-3.5E-1,0],[0,0,0]],\"label\":2,"
    "\"x\":[{\"y\":null},true,false,\"\\\"\"]}",
    "{\"id\":\"c\",\"model\":\"m\",\"ts\":0,\"probs\":[[1,0],[0.5,0.5],[0,1]]}",
    "{\"id\":\"l\",\"label\":\"a\\ud83c\\udf4e\"}",
};

static const char alphabet[] = "{}[]\",:0123456789.-+eE \\untrfalsx";

int main(void)
{
    cc_parser *p = cc_parser_create();
    char why[256], work[512];
    int accepted = 0;
    for (int round = 0; round < 200000; round++) {
        const char *seed = seeds[round % (sizeof seeds / sizeof *seeds)];
        size_t len = strlen(seed);
        memcpy(work, seed, len);
        int edits = 1 + (int)(next() % 4);
        for (int e = 0; e < edits && len > 0; e++) {
            size_t at = next() % len;
            switch (next() % 4) {
            case 0: work[at] = alphabet[next() % (sizeof alphabet - 1)]; break;
            case 1:
                if (len + 1 < sizeof work) {
                    memmove(work + at + 1, work + at, len - at);
                    work[at] = alphabet[next() % (sizeof alphabet - 1)];
                    len++;
                }
                break;
            case 2: memmove(work + at, work + at + 1, len - at - 1); len--; break;
            default: len = at; break;
            }
        }
        char *line = malloc(len ? len : 1); /* exactly the line: ASan sees any overread */
        memcpy(line, work, len);
        cc_event ev;
        if (cc_parse_event(p, line, len, &ev, why, sizeof why) == 0) {
            accepted++;
            CHECK(ev.id_len >= 1 && ev.id_len <= CC_ID_MAX);
            CHECK(ev.m >= 1 && ev.k >= 2);
            for (int i = 0; i < ev.m * ev.k; i++)
                CHECK(isfinite(ev.probs[i]) && ev.probs[i] >= 0 && ev.probs[i] <= 1);
        } else {
            CHECK(why[0] != '\0');
        }
        cc_label_line lab;
        if (cc_parse_label(p, line, len, &lab, why, sizeof why) == 0)
            CHECK(lab.id_len >= 1 && (lab.label >= 0 || lab.label_name));
        free(line);
        if (check_failures > 10)
            break;
    }
    printf("parse_mutations: %d of 200000 mutated lines accepted\n", accepted);
    cc_parser_free(p);
    return CHECK_DONE("parse_mutations");
}
