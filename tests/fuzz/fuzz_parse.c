/* fuzz_parse.c — libFuzzer entry for the line parser: any bytes, as an event
 * line and as a label line. Build with clang (-DCONCORD_FUZZ=ON, see
 * DEVELOPERS.md); not part of the test suite, which runs the deterministic
 * mutation test (tests/collector/test_parse_mutations.c) instead. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>

#include "event_parse.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static cc_parser *p;
    char why[256];
    if (!p && !(p = cc_parser_create()))
        abort();
    cc_event ev;
    if (cc_parse_event(p, (const char *)data, size, &ev, why, sizeof why) == 0) {
        if (ev.id_len < 1 || ev.id_len > CC_ID_MAX || ev.m < 1 || ev.k < 2)
            abort();
        for (int i = 0; i < ev.m * ev.k; i++)
            if (!(ev.probs[i] >= 0.0 && ev.probs[i] <= 1.0))
                abort();
    }
    cc_label_line lab;
    if (cc_parse_label(p, (const char *)data, size, &lab, why, sizeof why) == 0 &&
        lab.id_len < 1)
        abort();
    return 0;
}
