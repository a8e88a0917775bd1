/* fuzz_codec.c — libFuzzer entry for the summary decoder: a damaged blob in
 * the database must be refused, never read or written out of bounds; what
 * decodes must encode back to a blob that decodes to the same counters.
 * The same bytes as a stored summary of a 2 x 2 model, layout 1 (converted)
 * or 2: refused, or read into a normalized summary that merges. */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "summary_codec.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size < 2)
        return 0;
    size_t n = ((size_t)data[0] << 8 | data[1]) % 5000; /* counters expected */
    int64_t *v = malloc((n ? n : 1) * sizeof *v), *w = malloc((n ? n : 1) * sizeof *w);
    if (!v || !w)
        abort();
    if (cc_codec_decode(data + 2, size - 2, v, n) == 0) {
        size_t len;
        unsigned char *blob = cc_codec_encode(v, n, &len);
        if (!blob || cc_codec_decode(blob, len, w, n) != 0 || memcmp(v, w, n * sizeof *v) != 0)
            abort();
        free(blob);
    }
    free(v);
    free(w);
    cc_summary *s = cc_summary_create(2, 2), *t = cc_summary_create(2, 2);
    if (!s || !t)
        abort();
    int version = 1 + (data[0] & 1);
    if (cc_codec_decode_summary(data + 2, size - 2, version, s) == 0 &&
        (!cc_layout_is_normalized(cc_summary_layout(s), cc_summary_data(s)) ||
         cc_summary_merge(t, s) == -1))
        abort();
    cc_summary_free(s);
    cc_summary_free(t);
    return 0;
}
