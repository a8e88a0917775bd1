/* json_scan.h — a small JSON reader that allocates nothing, for the one shape
 * the hot path sees: a flat object per line whose values are strings,
 * numbers, null, or arrays of arrays of numbers. Anything else is still
 * syntax-checked and skipped. RFC 8259 grammar. */
#ifndef CC_COLLECTOR_JSON_SCAN_H
#define CC_COLLECTOR_JSON_SCAN_H

#include <stddef.h>

typedef struct cc_js {
    const char *start, *p, *end;
} cc_js;

void cc_js_init(cc_js *s, const char *text, size_t len);
void cc_js_ws(cc_js *s);

/* Checks that the whole text is one JSON value followed only by white
 * space. Returns 0, or -1 with the byte offset of the problem in *at. */
int cc_js_validate(const char *text, size_t len, long *at);

/* Skips one value (any type). -1 on a syntax error. */
int cc_js_skip(cc_js *s);

/* Reads a string at s->p (which must be '"'), decoding escapes into out
 * (cap bytes, NUL-terminated when it fits). *len = decoded length, which may
 * exceed cap - 1 (then out holds a truncated prefix). -1 on a syntax error. */
int cc_js_string(cc_js *s, char *out, size_t cap, size_t *len);

/* Reads a number at s->p. Correctly rounded: exact fast path for up to 19
 * significant digits and |exponent| <= 22, strtod otherwise. */
int cc_js_number(cc_js *s, double *out);

#endif
