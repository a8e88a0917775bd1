/* error.c — filling the error struct. */
#include "error.h"

#include <stdarg.h>
#include <stdio.h>

int cc_error_set(cc_error *err, int code, const char *fmt, ...)
{
    if (err) {
        va_list ap;
        va_start(ap, fmt);
        err->code = code;
        vsnprintf(err->msg, sizeof err->msg, fmt, ap);
        va_end(ap);
    }
    return -code;
}
