/* names_text.h — lists of names (models, classes, slices) for error
 * messages that say what the valid choices are. */
#ifndef CC_COLLECTOR_NAMES_TEXT_H
#define CC_COLLECTOR_NAMES_TEXT_H

#include <stddef.h>

/* Writes 'a', 'b', 'c' into buf (cap > 8 bytes), cut with "..." when the
 * names do not fit; "none" when n = 0. Returns buf. */
char *cc_names_text(char *buf, size_t cap, const char *const *names, int n);

#endif
