/* ch_vector.c — the publisher's bound on each summary vector and the
 * reader's proof that the cluster's element-wise sum did not wrap
 * (ch_vector.h). */
#include "ch_vector.h"

#include <stdio.h>

#include "date.h"

int cc_ch_vector_check(const cc_summary *sum, const char *model, int64_t day, const char *slice,
                       cc_error *err)
{
    const cc_layout *l = cc_summary_layout(sum);
    const int64_t *v = cc_summary_data(sum);
    char date[11];
    const char *why = NULL;
    size_t at = 0;
    if (cc_summary_overflowed(sum))
        why = "a counter overflowed";
    else if (!cc_layout_is_normalized(l, v))
        why = "a fixed-point sum is not normalized";
    for (size_t i = 0; !why && i < l->len; i++)
        if (v[i] > CC_CH_ROW_BOUND || v[i] < -CC_CH_ROW_BOUND) {
            why = "a counter is past the cluster's per-row bound of 2^47";
            at = i;
        }
    if (!why)
        return 0;
    cc_format_date(day, date);
    return cc_error_set(err, CC_EIO,
                        "summary counter overflow at model '%s', %s%s%s: %s (counter %zu); "
                        "nothing of it was published",
                        model, date, slice && *slice ? ", slice " : "",
                        slice && *slice ? slice : "", why, at);
}

int cc_ch_vector_read(cc_rb *rb, const cc_layout *l, int64_t *v, const char *what, int64_t day,
                      cc_error *err)
{
    uint64_t n, rows;
    int64_t hi, lo;
    if (cc_rb_varint(rb, &n) || n != l->len)
        return -1;
    for (size_t i = 0; i < l->len; i++)
        if (cc_rb_i64(rb, &v[i]))
            return -1;
    if (cc_rb_u64(rb, &rows) || cc_rb_i64(rb, &hi) || cc_rb_i64(rb, &lo))
        return -1;
    char date[11];
    cc_format_date(day, date);
    /* each row within +-2^47 and fewer than 2^16 rows: every element-wise
     * sum stays within +-2^63, so sumForEach cannot have wrapped */
    if (rows >= (UINT64_C(1) << 16) || hi > CC_CH_ROW_BOUND || lo < -CC_CH_ROW_BOUND)
        return cc_error_set(err, CC_EIO,
                            "cluster: %s, %s: the summed vectors cannot be proven free of "
                            "overflow (%llu rows, counters from %lld to %lld; the bound is "
                            "65535 rows of +-2^47)",
                            what, date, (unsigned long long)rows, (long long)lo, (long long)hi);
    if (cc_layout_normalize(l, v) != 0)
        return cc_error_set(err, CC_EIO, "cluster: %s, %s: summary counter overflow", what,
                            date);
    return 0;
}
