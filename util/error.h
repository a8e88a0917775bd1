/* error.h — the one error struct every fallible concord function fills:
 * a code and a message carrying file/line/field context. Caller-owned,
 * optional (NULL is accepted everywhere). */
#ifndef CC_UTIL_ERROR_H
#define CC_UTIL_ERROR_H

enum cc_code {
    CC_OK = 0,
    CC_EINPUT = 1,    /* bad input data (a log line, a label, a date) */
    CC_EUSAGE = 2,    /* bad arguments */
    CC_EIO = 3,       /* file or database failure */
    CC_ENOTFOUND = 4, /* unknown model, no data in range */
    CC_ENOMEM = 5,
    CC_EBUSY = 6,     /* another writer held the database lock past the wait bound */
};

typedef struct cc_error {
    int code;
    char msg[768];
} cc_error;

#define CC_ERROR_INIT {0, {0}}

/* Sets code and a printf-style message; returns -code so callers can
 * `return cc_error_set(...)`. err may be NULL. */
int cc_error_set(cc_error *err, int code, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

#endif
