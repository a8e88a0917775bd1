/* test_json_print.c — report/json_print.c against outside references:
 * - layout: byte for byte what cJSON_Print (Debian's libcjson 1.7.15) gives
 *   for trees whose numbers cJSON prints exactly (integers, short dyadics);
 * - numbers: every text reads back with glibc's strtod (correctly rounded,
 *   ISO C 7.22.1.3 with IEEE 754 arithmetic) as the same double, bit for bit,
 *   uses no more significant digits than the shortest of printf's %.15g,
 *   %.16g, %.17g that reads back (printf is correctly rounded in glibc), and
 *   is a JSON number (RFC 8259, section 6);
 * - fixed strings: Python 3's repr() of the same doubles where it has 15 to
 *   17 digits (Python's repr is the shortest round trip: PEP 3101 / the
 *   float_repr_style 'short', David Gay's algorithm).
 * With a database and a model as arguments it writes instead the model's by-day
 * report windows (cc_report_window_json printed by cc_json_print) to argv[3]
 * and the bits of every number, in document order, as %a hex floats to
 * argv[4], for json_roundtrip.py. */
#include <cjson/cJSON.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "json_print.h"
#include "report.h"
#include "store.h"

static int failures;

#define CHECK(cond, ...)                                                                  \
    do {                                                                                  \
        if (!(cond)) {                                                                    \
            fprintf(stderr, "FAIL %s:%d: ", __FILE__, __LINE__);                          \
            fprintf(stderr, __VA_ARGS__);                                                 \
            fputc('\n', stderr);                                                          \
            failures++;                                                                   \
        }                                                                                 \
    } while (0)

/* RFC 8259, section 6: -? int frac? exp? */
static int json_number_grammar(const char *s)
{
    if (*s == '-')
        s++;
    if (*s == '0')
        s++;
    else if (*s >= '1' && *s <= '9')
        while (*s >= '0' && *s <= '9')
            s++;
    else
        return 0;
    if (*s == '.') {
        s++;
        if (!(*s >= '0' && *s <= '9'))
            return 0;
        while (*s >= '0' && *s <= '9')
            s++;
    }
    if (*s == 'e' || *s == 'E') {
        s++;
        if (*s == '+' || *s == '-')
            s++;
        if (!(*s >= '0' && *s <= '9'))
            return 0;
        while (*s >= '0' && *s <= '9')
            s++;
    }
    return *s == '\0';
}

static int significant_digits(const char *s)
{
    int n = 0, leading = 1;
    for (; *s && *s != 'e'; s++) {
        if (*s < '0' || *s > '9')
            continue;
        if (leading && *s == '0')
            continue;
        leading = 0;
        n++;
    }
    return n;
}

static uint64_t bits_of(double x)
{
    uint64_t u;
    memcpy(&u, &x, sizeof u);
    return u;
}

static long checked;

static void check_number(double x, long *shorter, long *same_text)
{
    checked++;
    char got[CC_JSON_NUMBER_MAX], ref[40];
    size_t len = cc_json_number(got, x);
    CHECK(len == strlen(got), "length of %s", got);
    if (!isfinite(x)) {
        CHECK(!strcmp(got, "null"), "%g printed as %s", x, got);
        return;
    }
    CHECK(json_number_grammar(got), "%.17g printed as %s: not a JSON number", x, got);
    const double back = strtod(got, NULL);
    CHECK(bits_of(back) == bits_of(x) || (x == 0.0 && back == 0.0),
          "%.17g printed as %s reads back as %.17g", x, got, back);
    if (x == (double)(int64_t)x && fabs(x) < 0x1p63)
        return; /* integers: digit by digit, checked above */
    int p;
    for (p = 15; p < 17; p++) {
        snprintf(ref, sizeof ref, "%.*g", p, x);
        if (strtod(ref, NULL) == x)
            break;
    }
    snprintf(ref, sizeof ref, "%.*g", p, x);
    CHECK(significant_digits(got) <= significant_digits(ref), "%.17g: %s longer than %s", x,
          got, ref);
    if (significant_digits(got) < significant_digits(ref))
        (*shorter)++;
    if (!strcmp(got, ref))
        (*same_text)++;
}

static uint64_t rng = 0x9E3779B97F4A7C15u;
static uint64_t next_u64(void)
{
    /* xorshift64* (Vigna 2016) */
    rng ^= rng >> 12;
    rng ^= rng << 25;
    rng ^= rng >> 27;
    return rng * 2685821657736338717u;
}

static void numbers(void)
{
    /* fixed cases: Python 3 repr() (shortest round trip) where it has 15-17
     * digits, and printf's %g forms cJSON also writes */
    static const struct {
        double x;
        const char *text, *source;
    } fixed[] = {
        {0.0, "0", "cJSON_Print"},
        {-0.0, "0", "cJSON_Print (prints -0 as 0)"},
        {3e9, "3000000000", "integer"},
        {9007199254740992.0, "9007199254740992", "2^53"},
        {-123456789012.0, "-123456789012", "integer"},
        {0.5, "0.5", "printf %.15g"},
        {0.1, "0.1", "Python repr(0.1)"},
        {1e-05, "1e-05", "printf %.15g"},
        {1.0 / 3.0, "0.3333333333333333", "Python repr(1/3)"},
        {2.0 / 3.0, "0.6666666666666666", "Python repr(2/3)"},
        {0.1 + 0.2, "0.30000000000000004", "Python repr(0.1+0.2)"},
        {-1.0 / 7.0, "-0.14285714285714285", "Python repr(-1/7)"},
        {1e300 / 7.0, "1.4285714285714286e+299", "Python repr(1e300/7) (e+299 in C)"},
        {123456.789, "123456.789", "Python repr(123456.789)"},
        {4.179432937141436e16, "41794329371414360", "integral, below 2^63"},
        {1e22 * 3.0, "3e+22", "printf %.15g"},
        {2.2250738585072014e-308, "2.2250738585072014e-308", "Python repr(DBL_MIN)"},
        {NAN, "null", "README: undefined values are null"},
        {INFINITY, "null", "README: undefined values are null"},
    };
    for (size_t i = 0; i < sizeof fixed / sizeof *fixed; i++) {
        char got[CC_JSON_NUMBER_MAX];
        cc_json_number(got, fixed[i].x);
        CHECK(!strcmp(got, fixed[i].text), "%.17g: got %s, %s gives %s", fixed[i].x, got,
              fixed[i].source, fixed[i].text);
    }
    long shorter = 0, same = 0;
    /* any bit pattern (every exponent, subnormals, NaNs) */
    for (int i = 0; i < 100000; i++) {
        uint64_t u = next_u64();
        double x;
        memcpy(&x, &u, sizeof x);
        check_number(x, &shorter, &same);
    }
    /* what reports hold: probabilities, p-values, ratios, small statistics */
    for (int i = 0; i < 100000; i++) {
        const double unit = (double)(next_u64() >> 11) * 0x1p-53;
        const int scale = (int)(next_u64() % 25) - 12;
        check_number(unit * pow(10.0, scale), &shorter, &same);
        check_number(-unit, &shorter, &same);
        check_number((double)(next_u64() % 100000) / (double)(1 + next_u64() % 9999), &shorter,
                     &same);
    }
    /* neighbours of decimal values with few digits, where 15 and 16 digits
     * fall close to a tie */
    for (int i = 0; i < 50000; i++) {
        double x = (double)(next_u64() % 1000000000) * 1e-9;
        check_number(nextafter(x, 1.0), &shorter, &same);
        check_number(nextafter(x, 0.0), &shorter, &same);
    }
    printf("numbers: %ld checked, %ld texts equal to printf's shortest of %%.15g..%%.17g, %ld "
           "shorter\n", checked, same, shorter);
}

/* cc_json_print against cJSON_Print on a tree it prints exactly */
static void layout(void)
{
    cJSON *root = cJSON_CreateObject();
    cJSON_AddStringToObject(root, "name", "tab\there \"quoted\" back\\slash \x01\x1f nl\n é");
    cJSON_AddNullToObject(root, "nothing");
    cJSON_AddTrueToObject(root, "yes");
    cJSON_AddFalseToObject(root, "no");
    cJSON_AddNumberToObject(root, "count", 12345);
    cJSON_AddNumberToObject(root, "half", -0.5);
    cJSON_AddArrayToObject(root, "empty_array");
    cJSON_AddObjectToObject(root, "empty_object");
    cJSON *a = cJSON_AddArrayToObject(root, "rows");
    for (int i = 0; i < 3; i++) {
        cJSON *row = cJSON_CreateArray();
        for (int j = 0; j < 4; j++)
            cJSON_AddItemToArray(row, i == j ? cJSON_CreateNull() : cJSON_CreateNumber(i * 4 + j));
        cJSON_AddItemToArray(a, row);
    }
    cJSON *objs = cJSON_AddArrayToObject(root, "objects");
    for (int i = 0; i < 2; i++) {
        cJSON *o = cJSON_CreateObject();
        cJSON_AddNumberToObject(o, "a", i);
        cJSON *in = cJSON_AddObjectToObject(o, "inner");
        cJSON_AddStringToObject(in, "", "empty key");
        cJSON_AddItemToArray(objs, o);
    }
    cJSON_AddItemToArray(objs, cJSON_CreateArray());
    cJSON_AddItemToArray(objs, cJSON_CreateObject());

    char *want = cJSON_Print(root), *got = cc_json_print(root, 0);
    CHECK(got && !strcmp(want, got), "layout at depth 0 differs:\n%s\n---\n%s", want,
          got ? got : "(null)");
    /* depth 2: cJSON_Print's text with two tabs after every line break */
    size_t extra = 0;
    for (const char *p = want; *p; p++)
        extra += *p == '\n';
    char *want2 = malloc(strlen(want) + 2 * extra + 1), *d = want2;
    for (const char *p = want; *p; p++) {
        *d++ = *p;
        if (*p == '\n') {
            *d++ = '\t';
            *d++ = '\t';
        }
    }
    *d = '\0';
    char *got2 = cc_json_print(root, 2);
    CHECK(got2 && !strcmp(want2, got2), "layout at depth 2 differs:\n%s\n---\n%s", want2,
          got2 ? got2 : "(null)");
    free(want);
    free(got);
    free(want2);
    free(got2);
    cJSON_Delete(root);
}

static void dump_one(FILE *f, double x)
{
    if (isfinite(x))
        fprintf(f, "%a\n", x);
}

/* The doubles behind a raw matrix item (report_json.c writes the diversity
 * pairs and the confusion matrix as raw text), from the report's window. */
static int dump_raw(FILE *f, const cJSON *raw, const char *parent, const cc_window_metrics *x,
                    int m, int k)
{
    if (!strcmp(raw->string, "confusion")) {
        for (int t = 0; t < k; t++)
            for (int p = 0; p < k; p++)
                dump_one(f, (double)x->confusion[p * k + t]);
        return 0;
    }
    static const char *const names[] = {"disagreement", "kappa", "q", "rho", "double_fault",
                                        "oracle_disagreement"};
    const cc_pair_matrix *pm[] = {&x->disagreement, &x->kappa, &x->q, &x->rho, &x->double_fault,
                                  &x->oracle_disagreement};
    for (size_t n = 0; n < sizeof names / sizeof *names; n++) {
        if (strcmp(parent, names[n]) || strcmp(raw->string, "pairs"))
            continue;
        for (int i = 0; i < m; i++)
            for (int j = 0; j < m; j++)
                if (pm[n]->pairs && i != j)
                    dump_one(f, pm[n]->pairs[i * m + j]);
        return 0;
    }
    fprintf(stderr, "FAIL: raw item %s in %s not known to the test\n", raw->string, parent);
    return 1;
}

static int dump_bits(FILE *f, const cJSON *item, const char *parent, const cc_window_metrics *x,
                     int m, int k)
{
    int bad = 0;
    for (const cJSON *c = item; c; c = c->next) {
        if (cJSON_IsNumber(c))
            dump_one(f, c->valuedouble);
        if (cJSON_IsRaw(c))
            bad |= dump_raw(f, c, parent, x, m, k);
        if (c->child)
            bad |= dump_bits(f, c->child, c->string ? c->string : parent, x, m, k);
    }
    return bad;
}

static int report_windows(const char *db, const char *model, const char *json_path,
                          const char *bits_path)
{
    cc_store *store = NULL;
    cc_report *r = NULL;
    cc_error err = CC_ERROR_INIT;
    cc_report_opts o = {0};
    o.model = model;
    o.by = CC_BY_DAY;
    if (cc_store_open(&store, db, CC_STORE_READONLY, &err) ||
        cc_report_build(&r, store, &o, &err)) {
        fprintf(stderr, "FAIL: report of %s in %s: %s\n", model, db, err.msg);
        cc_store_close(store);
        return 1;
    }
    FILE *jf = fopen(json_path, "w"), *bf = fopen(bits_path, "w");
    int rc = !jf || !bf;
    if (!rc)
        fputs("[", jf);
    for (int i = 0; !rc && i < r->n_windows; i++) {
        cJSON *w = cc_report_window_json(r, i);
        char *text = cc_json_print(w, 0);
        rc = !text;
        if (text)
            fprintf(jf, "%s%s", i ? ",\n" : "", text);
        if (dump_bits(bf, w, "", &r->windows[i].metrics, r->model->m, r->model->k))
            rc = 1;
        free(text);
        cJSON_Delete(w);
    }
    if (!rc)
        fputs("]\n", jf);
    if (jf && fclose(jf))
        rc = 1;
    if (bf && fclose(bf))
        rc = 1;
    printf("report: %d windows of %s written\n", r->n_windows, model);
    cc_report_free(r);
    cc_store_close(store);
    return rc;
}

int main(int argc, char **argv)
{
    if (argc == 5) {
        if (report_windows(argv[1], argv[2], argv[3], argv[4]))
            failures++;
    } else {
        layout();
        numbers();
    }
    if (failures) {
        fprintf(stderr, "%d failure(s)\n", failures);
        return 1;
    }
    puts("ok");
    return 0;
}
