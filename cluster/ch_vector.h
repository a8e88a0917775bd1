/* ch_vector.h — summary vectors on the cluster, summed without wrapping.
 *
 * ClickHouse 18.16's sumForEach over Array(Int64) wraps silently on
 * overflow, and it cannot carry a wide sum's lo word into its hi word
 * (metrics/summary.h). So each published vector is normalized and every
 * counter lies within +-CC_CH_ROW_BOUND (2^47: 1.4e14 events of a day, or
 * the hi word of 1e12 worst-case events, 8e12), checked by the publisher;
 * a reader asks for the number of rows summed and their extreme counters
 * beside the sum and proves rows x bound < 2^63 before it uses the sum
 * (at most 65,535 rows per sum: sources of one (model, day, slice)), then
 * normalizes the lo words (each < rows x 2^32). Anything else, including
 * rows written past the bound by another publisher, fails loudly. */
#ifndef CC_CLUSTER_CH_VECTOR_H
#define CC_CLUSTER_CH_VECTOR_H

#include <stdint.h>

#include "ch_client.h"
#include "error.h"
#include "summary.h"

#define CC_CH_ROW_BOUND (INT64_C(1) << 47)

/* The select list replacing sumForEach(counters): the sum, then what
 * cc_ch_vector_read needs to prove it did not wrap. */
#define CC_CH_VECTOR_SUM \
    "sumForEach(counters), count(), max(arrayReduce('max', counters)), " \
    "min(arrayReduce('min', counters))"

/* 0 when sum may be published (normalized, not overflowed, every counter
 * within the bound); otherwise an error naming model, day and slice. */
int cc_ch_vector_check(const cc_summary *sum, const char *model, int64_t day, const char *slice,
                       cc_error *err);

/* Reads the columns of CC_CH_VECTOR_SUM for layout l into v (l->len
 * counters), proves the sum exact and normalizes it. Returns 0; -1 when
 * the row is truncated or of another length (the caller names it); a
 * CC_EIO error naming what (model, day) when the sum cannot be proven. */
int cc_ch_vector_read(cc_rb *rb, const cc_layout *l, int64_t *v, const char *what, int64_t day,
                      cc_error *err);

#endif
