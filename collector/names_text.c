/* names_text.c — the valid names for an error message, cut to a buffer. */
#include "names_text.h"

#include <stdio.h>
#include <string.h>

char *cc_names_text(char *buf, size_t cap, const char *const *names, int n)
{
    size_t len = 0;
    snprintf(buf, cap, "%s", n ? "" : "none");
    for (int i = 0; i < n; i++) {
        int w = snprintf(buf + len, cap - len, "%s'%s'", i ? ", " : "", names[i]);
        if (w < 0 || (size_t)w >= cap - len) {
            /* no room for this one: end with an ellipsis that fits */
            size_t at = len < cap - 5 ? len : cap - 5;
            snprintf(buf + at, cap - at, "%s...", at ? ", " : "");
            break;
        }
        len += (size_t)w;
    }
    return buf;
}
