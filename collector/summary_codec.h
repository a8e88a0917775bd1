/* summary_codec.h — the on-disk form of a summary's counters: runs of zeros
 * and zigzag varints, so sparse summaries (large K) stay small. */
#ifndef CC_COLLECTOR_SUMMARY_CODEC_H
#define CC_COLLECTOR_SUMMARY_CODEC_H

#include <stddef.h>
#include <stdint.h>

#include "summary.h"

/* Encodes n counters. Returns a malloc'd buffer (caller frees) and its size
 * in *out_len, or NULL on out of memory. Format: repeated
 * (varint zero_run, zigzag-varint value) pairs; a final run may have no value. */
unsigned char *cc_codec_encode(const int64_t *v, size_t n, size_t *out_len);

/* Decodes into v[0..n-1] (overwritten). Returns 0, or -1 if the bytes are
 * malformed or do not describe exactly n counters. */
int cc_codec_decode(const unsigned char *buf, size_t len, int64_t *v, size_t n);

/* Decodes a stored summary of layout `version` into out (whose shape is the
 * model's). The current version must be normalized (summary.h); a version 1
 * vector (one word per fixed-point sum) is converted. Returns 0, -1 if the
 * bytes are malformed or not of out's layout, -2 for an unknown version,
 * -3 when out of memory. */
int cc_codec_decode_summary(const unsigned char *buf, size_t len, int64_t version,
                            cc_summary *out);

#endif
