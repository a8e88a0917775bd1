/* tcheck.h — the few assertion helpers the alerts' C tests share: each
 * check prints on failure and counts; main returns the failure count. */
#ifndef CC_TESTS_ALERTS_TCHECK_H
#define CC_TESTS_ALERTS_TCHECK_H

#include <stdio.h>
#include <string.h>

static int t_failed, t_passed;

#define T_CHECK(cond, ...)                                                                 \
    do {                                                                                   \
        if (cond) {                                                                        \
            t_passed++;                                                                    \
        } else {                                                                           \
            t_failed++;                                                                    \
            fprintf(stderr, "FAIL %s:%d: ", __FILE__, __LINE__);                           \
            fprintf(stderr, __VA_ARGS__);                                                  \
            fputc('\n', stderr);                                                           \
        }                                                                                  \
    } while (0)

#define T_CONTAINS(text, part)                                                             \
    T_CHECK(strstr((text), (part)) != NULL, "'%s' lacks '%s'", (text), (part))

static inline int t_summary(const char *name)
{
    printf("%s: %d passed, %d failed\n", name, t_passed, t_failed);
    return t_failed ? 1 : 0;
}

#endif
