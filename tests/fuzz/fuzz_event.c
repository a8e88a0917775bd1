/* fuzz_event.c — libFuzzer entry for the event line parser: any bytes as
 * one line. What is accepted must hold what ingest relies on: an id of 1..128
 * bytes, UTF-8 names, a time inside the accepted range, probabilities in
 * [0, 1]. Also built without libFuzzer to replay the corpus (replay.c). */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "event_parse.h"
#include "utf8.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static int bad_name(const char *s, size_t len) { return s && !cc_utf8_valid(s, len, NULL); }

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static cc_parser *p;
    char why[256];
    if (!p && !(p = cc_parser_create()))
        abort();
    cc_event ev;
    if (cc_parse_event(p, (const char *)data, size, &ev, why, sizeof why) != 0) {
        if (!memchr(why, '\0', sizeof why) || why[0] == '\0')
            abort(); /* a refusal always says why */
        return 0;
    }
    if (ev.id_len < 1 || ev.id_len > CC_ID_MAX || ev.m < 1 || ev.k < 2)
        abort();
    if (bad_name(ev.id, (size_t)ev.id_len) || bad_name(ev.segment, (size_t)ev.segment_len) ||
        bad_name(ev.model, ev.model ? strlen(ev.model) : 0) ||
        bad_name(ev.label_name, ev.label_name ? strlen(ev.label_name) : 0))
        abort();
    if (ev.ts < 946684800 || ev.ts > 4102444799) /* the default 2000..2099 */
        abort();
    for (int i = 0; i < ev.m * ev.k; i++)
        if (!(ev.probs[i] >= 0.0 && ev.probs[i] <= 1.0))
            abort();
    return 0;
}
