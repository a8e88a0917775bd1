/* utf8.h — UTF-8 validation (RFC 3629, section 4's byte sequences) and the
 * escaping of control characters for text written to a terminal, shared by
 * the collector (names are checked at ingest), the renderers and cli/. */
#ifndef CC_UTIL_UTF8_H
#define CC_UTIL_UTF8_H

#include <stddef.h>
#include <stdio.h>

/* 1 when s[0..len) is well-formed UTF-8: no overlong forms, no surrogates
 * (U+D800..U+DFFF), nothing above U+10FFFF, no truncated sequence. Else 0
 * and *bad_at (when not NULL) is the offset of the first bad byte. */
int cc_utf8_valid(const char *s, size_t len, size_t *bad_at);

/* 1 when s[0..len) (UTF-8) holds a control character: C0, DEL or C1;
 * *at (when not NULL) is its byte offset. */
int cc_utf8_control(const char *s, size_t len, size_t *at);

/* Writes s (NUL-terminated) to f with the C0 controls, DEL and the C1
 * controls (U+0080..U+009F) replaced by a visible "\xHH" (the C1 ones as
 * "\u00HH"), and a backslash doubled, so text from the logs cannot move the
 * cursor, retitle or clear a terminal; bytes that are not UTF-8 come out as
 * "\xHH" too. Returns what fputs would (EOF on a write error). */
int cc_text_put(FILE *f, const char *s);

/* The same into a buffer: a malloc'd, NUL-terminated copy of s[0..len)
 * escaped as above; NULL on out of memory. multiline (for a whole text
 * document) keeps line feeds and tabs and leaves backslashes as they are. */
char *cc_text_escape(const char *s, size_t len, int multiline);

/* 1 when s (NUL-terminated) holds nothing cc_text_put would change. */
int cc_text_plain(const char *s);

#endif
