/* fuzz_ts.c — libFuzzer entry for the RFC 3339 and date parsers: an accepted
 * time lies in the years 0001..9999, and its day formats to a date that
 * parses back to the same day. */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > 64)
        return 0;
    char text[65];
    memcpy(text, data, size);
    text[size] = '\0';
    int64_t t, day, back;
    const char *why = NULL;
    if (cc_parse_rfc3339(text, (int)size, &t, &why) == 0) {
        if (t < -62135596800LL || t > 253402300799LL)
            abort();
        char d[11];
        day = cc_day_of_unix(t);
        cc_format_date(day, d);
        if (cc_parse_date(d, &back) != 0 || back != day)
            abort();
    } else if (!why || !why[0]) {
        abort();
    }
    if (cc_parse_date(text, &day) == 0) {
        char d[11];
        cc_format_date(day, d);
        if (strcmp(d, text) != 0)
            abort();
    }
    return 0;
}
