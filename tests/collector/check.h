/* check.h — the smallest possible test harness: each failed check prints its
 * place and expression, and main returns the failure count. */
#ifndef CC_TESTS_CHECK_H
#define CC_TESTS_CHECK_H

#include <stdio.h>

static int check_failures;

#define CHECK(cond)                                                                            \
    do {                                                                                       \
        if (!(cond)) {                                                                         \
            fprintf(stderr, "%s:%d: FAILED: %s\n", __FILE__, __LINE__, #cond);                 \
            check_failures++;                                                                  \
        }                                                                                      \
    } while (0)

#define CHECK_DONE(name)                                                                       \
    (fprintf(check_failures ? stderr : stdout, "%s: %s (%d failed checks)\n", name,            \
             check_failures ? "FAIL" : "ok", check_failures),                                  \
     check_failures ? 1 : 0)

#endif
