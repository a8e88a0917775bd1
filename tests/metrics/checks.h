/* checks.h — check rows and reference-file reading shared by the metrics
 * tests. A failing check prints what was checked, the value, the expected
 * value, the tolerance and where the expected value comes from. */
#ifndef CC_TESTS_METRICS_CHECKS_H
#define CC_TESTS_METRICS_CHECKS_H

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

typedef struct check_log {
    const char *program;
    int passed, failed;
} check_log;

/* Passes when both are NAN, or |got - want| <= abs_tol + rel_tol |want|. */
static inline int check_close(check_log *log, const char *what, double got, double want,
                              double abs_tol, double rel_tol, const char *source)
{
    int ok;
    if (isnan(want))
        ok = isnan(got);
    else
        ok = !isnan(got) && fabs(got - want) <= abs_tol + rel_tol * fabs(want);
    if (ok) {
        log->passed++;
    } else {
        log->failed++;
        fprintf(stderr,
                "FAIL %s: %s: got %.17g, expected %.17g (abs tol %g, rel tol %g) [source: %s]\n",
                log->program, what, got, want, abs_tol, rel_tol, source);
    }
    return ok;
}

static inline int check_int(check_log *log, const char *what, int64_t got, int64_t want,
                            const char *source)
{
    if (got == want) {
        log->passed++;
        return 1;
    }
    log->failed++;
    fprintf(stderr, "FAIL %s: %s: got %lld, expected %lld [source: %s]\n", log->program, what,
            (long long)got, (long long)want, source);
    return 0;
}

static inline int check_finish(const check_log *log)
{
    printf("%s: %d passed, %d failed\n", log->program, log->passed, log->failed);
    return log->failed == 0 && log->passed > 0 ? 0 : 1;
}

/* Whole file as a cJSON tree; NULL (after a message) if unreadable. */
static inline cJSON *load_reference(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f) {
        fprintf(stderr, "FAIL cannot open reference file %s\n", path);
        return NULL;
    }
    size_t cap = 1 << 16, len = 0;
    char *buf = malloc(cap);
    size_t got;
    while (buf && (got = fread(buf + len, 1, cap - len - 1, f)) > 0) {
        len += got;
        if (len + 1 == cap) {
            char *bigger = realloc(buf, cap * 2);
            if (!bigger) {
                free(buf);
                buf = NULL;
                break;
            }
            buf = bigger;
            cap *= 2;
        }
    }
    fclose(f);
    if (!buf) {
        fprintf(stderr, "FAIL out of memory reading %s\n", path);
        return NULL;
    }
    buf[len] = '\0';
    cJSON *root = cJSON_Parse(buf);
    free(buf);
    if (!root)
        fprintf(stderr, "FAIL %s is not valid JSON\n", path);
    return root;
}

/* A number from obj[key]; JSON null (undefined value) reads as NAN. A
 * missing or non-numeric key also reads as NAN and sets *bad. */
static inline double ref_num(const cJSON *obj, const char *key, int *bad)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
    if (cJSON_IsNull(v))
        return NAN;
    if (!cJSON_IsNumber(v)) {
        fprintf(stderr, "FAIL reference entry lacks number \"%s\"\n", key);
        *bad = 1;
        return NAN;
    }
    return v->valuedouble;
}

static inline const cJSON *ref_get(const cJSON *obj, const char *key)
{
    return cJSON_GetObjectItemCaseSensitive(obj, key);
}

/* The reference section `name`, an array of cases; NULL (after a message)
 * if absent or empty. */
static inline const cJSON *ref_section(const cJSON *root, const char *name)
{
    const cJSON *s = cJSON_GetObjectItemCaseSensitive(root, name);
    if (!cJSON_IsArray(s) || cJSON_GetArraySize(s) == 0) {
        fprintf(stderr, "FAIL reference file has no \"%s\" cases\n", name);
        return NULL;
    }
    return s;
}

/* Text of a case's function name for a key, for failure messages. */
static inline const char *ref_function(const cJSON *c, const char *key)
{
    const cJSON *f = cJSON_GetObjectItemCaseSensitive(ref_get(c, "function"), key);
    return cJSON_IsString(f) ? f->valuestring : "reference file";
}

/* Runs fn on the reference file named by argv[1], when one is given; a file
 * that cannot be read counts as a failure. */
static inline void reference_run(check_log *log, int argc, char **argv,
                                 void (*fn)(check_log *, const cJSON *))
{
    if (argc < 2)
        return;
    cJSON *root = load_reference(argv[1]);
    if (root)
        fn(log, root);
    else
        log->failed++;
    cJSON_Delete(root);
}

#endif
