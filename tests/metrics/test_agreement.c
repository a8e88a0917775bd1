/* test_agreement.c — disagreement, Cohen's kappa and Fleiss' kappa against
 * published worked examples, hand-derived edge cases and the reference
 * values of tests/reference/metrics_reference.json (path in argv[1]). */
#include "agreement.h"
#include "checks.h"

#define MAXK 5

typedef struct cohen_row {
    const char *what;
    int k;
    int64_t table[MAXK * MAXK];
    double kappa, disagreement, tol;
    const char *source;
} cohen_row;

static const cohen_row cohen_rows[] = {
    {"Cohen 2x2 [[20,5],[10,15]]", 2, {20, 5, 10, 15}, 0.40, 0.30, 1e-12,
     "Wikipedia \"Cohen's kappa\" worked example (p_o 0.70, p_e 0.50); disagreement 15/50 derived"},
    {"Cohen 3x3 [[25,3,2],[4,30,6],[1,5,24]]", 3, {25, 3, 2, 4, 30, 6, 1, 5, 24}, 0.682779, 0.21,
     5e-7, "computed, METHODS.md section 2 (statsmodels cohens_kappa)"},
    {"perfect disagreement [[0,5],[5,0]]", 2, {0, 5, 5, 0}, -1.0, 1.0, 1e-12,
     "hand-computed from Cohen 1960: p_o 0, p_e 0.5"},
    {"perfect agreement over 3 classes", 3, {4, 0, 0, 0, 3, 0, 0, 0, 5}, 1.0, 0.0, 1e-12,
     "hand-computed from Cohen 1960"},
    {"a class nobody uses [[6,2,0],[1,7,0],[0,0,0]]", 3, {6, 2, 0, 1, 7, 0, 0, 0, 0},
     (13.0 / 16 - 0.5) / 0.5, 3.0 / 16, 1e-12,
     "hand-computed from Cohen 1960: p_o 13/16, p_e (8*7+8*9)/256 = 0.5"},
    {"empty table", 2, {0, 0, 0, 0}, NAN, NAN, 0,
     "METHODS.md section 2 edge case: n = 0 undefined"},
    {"both raters always class 0", 2, {10, 0, 0, 0}, NAN, 0.0, 1e-12,
     "METHODS.md section 2 edge case: p_e = 1 undefined"},
    {"both raters always class 2 of 3", 3, {0, 0, 0, 0, 0, 0, 0, 0, 9}, NAN, 0.0, 1e-12,
     "METHODS.md section 2 edge case: p_e = 1 undefined"},
};

typedef struct fleiss_row {
    const char *what;
    int64_t n;
    int m, k;
    int64_t sumsq;
    int64_t totals[MAXK];
    double kappa, tol;
    const char *source;
} fleiss_row;

static const fleiss_row fleiss_edge_rows[] = {
    {"no items", 0, 3, 2, 0, {0, 0}, NAN, 0, "METHODS.md section 2: n = 0 undefined"},
    {"one rater", 4, 1, 2, 4, {3, 1}, NAN, 0, "METHODS.md section 2: m < 2 undefined"},
    {"every rating in one class", 5, 3, 3, 45, {0, 15, 0}, NAN, 0,
     "METHODS.md section 2: P_e = 1 undefined"},
    {"class totals not n*m", 2, 3, 2, 10, {3, 2}, NAN, 0,
     "METHODS.md section 2: unequal row sums invalid"},
    {"unanimous items, two classes", 4, 3, 2, 36, {6, 6}, 1.0, 1e-12,
     "hand-computed from Fleiss 1971: P_bar 1, P_e 0.5"},
    {"m = 2, items (a,a),(a,b),(b,b),(b,a)", 4, 2, 2, 12, {4, 4}, 0.0, 1e-12,
     "hand-computed from Fleiss 1971: P_bar 0.5, P_e 0.5"},
    /* n m past int64: the totals cannot be checked, so no value (common practice:
     * undefined rather than computed from wrapped integers) */
    {"2^62 items of 5 raters (n m past int64)", INT64_C(1) << 62, 5, 2, INT64_MAX,
     {INT64_MAX, INT64_MAX}, NAN, 0, "n m = 5 * 2^62 > 2^63 - 1: not computed"},
    {"class totals whose sum passes int64", INT64_C(1) << 61, 3, 2, INT64_MAX,
     {INT64_MAX - 1, INT64_MAX - 1}, NAN, 0, "sum of totals > 2^63 - 1: not computed"},
};

/* Fleiss (1971) count table: rows = items, columns = classes. */
static double fleiss_from_rows(const int64_t *rows, int n, int k, int m)
{
    int64_t sumsq = 0, totals[16] = {0};
    for (int i = 0; i < n; i++)
        for (int j = 0; j < k; j++) {
            int64_t x = rows[(size_t)i * k + j];
            sumsq += x * x;
            totals[j] += x;
        }
    return cc_fleiss_kappa(n, m, sumsq, totals, k);
}

static const int64_t fleiss_wikipedia[10 * 5] = {
    0, 0, 0, 0, 14, 0, 2, 6, 4, 2, 0, 0, 3, 5, 6, 0, 3, 9, 2, 0, 2, 2, 8, 1, 1,
    7, 7, 0, 0, 0,  3, 2, 6, 3, 0, 2, 5, 3, 2, 2, 6, 5, 2, 1, 0, 0, 2, 2, 3, 7,
};

/* Fleiss (1971): 30 patients x 6 psychiatrists x 5 diagnoses, as per-patient
 * counts. Taken from the rater-level table `diagnoses` in statsmodels' test
 * suite (stats/tests/test_inter_rater.py, kappa 0.4302445 there); the
 * generator script checks this copy against it. */
static const int64_t fleiss_1971[30 * 5] = {
    0, 0, 0, 6, 0, 0, 3, 0, 0, 3, 0, 1, 4, 0, 1, 0, 0, 0, 0, 6, 0, 3, 0, 3, 0,
    2, 0, 4, 0, 0, 0, 0, 4, 0, 2, 2, 0, 3, 1, 0, 2, 0, 0, 4, 0, 0, 0, 0, 0, 6,
    1, 0, 0, 5, 0, 1, 1, 0, 4, 0, 0, 3, 3, 0, 0, 1, 0, 0, 5, 0, 0, 2, 0, 3, 1,
    0, 0, 5, 0, 1, 3, 0, 0, 1, 2, 5, 1, 0, 0, 0, 0, 2, 0, 4, 0, 1, 0, 2, 0, 3,
    0, 0, 0, 0, 6, 0, 1, 0, 5, 0, 0, 2, 0, 1, 3, 2, 0, 0, 4, 0, 1, 0, 0, 4, 1,
    0, 5, 0, 1, 0, 4, 0, 0, 0, 2, 0, 2, 0, 4, 0, 1, 0, 5, 0, 0, 0, 0, 0, 0, 6,
};

static void published_checks(check_log *log)
{
    char what[160];
    for (size_t r = 0; r < sizeof cohen_rows / sizeof cohen_rows[0]; r++) {
        const cohen_row *row = &cohen_rows[r];
        snprintf(what, sizeof what, "cc_cohen_kappa, %s", row->what);
        check_close(log, what, cc_cohen_kappa(row->table, row->k), row->kappa, row->tol, 0,
                    row->source);
        snprintf(what, sizeof what, "cc_disagreement, %s", row->what);
        check_close(log, what, cc_disagreement(row->table, row->k), row->disagreement, row->tol,
                    0, row->source);
    }

    check_close(log, "cc_fleiss_kappa, Wikipedia 10x5 table, m = 14",
                fleiss_from_rows(fleiss_wikipedia, 10, 5, 14), 0.209931, 5e-7, 0,
                "Wikipedia \"Fleiss' kappa\" worked example (0.210); statsmodels fleiss_kappa "
                "0.209931");
    check_close(log, "cc_fleiss_kappa, Fleiss 1971 30x5 table, m = 6 (published 3 digits)",
                fleiss_from_rows(fleiss_1971, 30, 5, 6), 0.430, 5e-4, 0,
                "Fleiss 1971, Psych. Bull. 76:378-382 (kappa 0.430)");
    check_close(log, "cc_fleiss_kappa, Fleiss 1971 30x5 table, m = 6",
                fleiss_from_rows(fleiss_1971, 30, 5, 6), 0.4302445, 5e-8, 0,
                "statsmodels fleiss_kappa / R irr kappam.fleiss value in statsmodels' tests");

    for (size_t r = 0; r < sizeof fleiss_edge_rows / sizeof fleiss_edge_rows[0]; r++) {
        const fleiss_row *row = &fleiss_edge_rows[r];
        snprintf(what, sizeof what, "cc_fleiss_kappa, %s", row->what);
        check_close(log, what, cc_fleiss_kappa(row->n, row->m, row->sumsq, row->totals, row->k),
                    row->kappa, row->tol, 0, row->source);
    }
}

static int read_table(const cJSON *rows, int64_t *out, int max_rows, int k, int *n_rows)
{
    int n = cJSON_GetArraySize(rows);
    if (n > max_rows)
        return -1;
    for (int i = 0; i < n; i++) {
        const cJSON *row = cJSON_GetArrayItem(rows, i);
        if (cJSON_GetArraySize(row) != k)
            return -1;
        for (int j = 0; j < k; j++)
            out[(size_t)i * k + j] = (int64_t)cJSON_GetArrayItem(row, j)->valuedouble;
    }
    *n_rows = n;
    return 0;
}

static void reference_checks(check_log *log, const cJSON *root)
{
    const double rel = 1e-9, abs_tol = 1e-12;
    char what[160];
    int bad = 0;
    const cJSON *c, *cohen = ref_section(root, "cohen"), *fleiss = ref_section(root, "fleiss");
    if (!cohen || !fleiss) {
        log->failed++;
        return;
    }

    int idx = 0;
    cJSON_ArrayForEach(c, cohen)
    {
        const cJSON *in = ref_get(c, "inputs"), *ex = ref_get(c, "expected");
        int k = (int)ref_num(in, "k", &bad), n;
        int64_t table[MAXK * MAXK];
        if (k < 2 || k > MAXK || read_table(ref_get(in, "table"), table, k, k, &n) || n != k) {
            fprintf(stderr, "FAIL cohen case %d: bad inputs\n", idx);
            log->failed++;
            continue;
        }
        double kappa = cc_cohen_kappa(table, k);
        snprintf(what, sizeof what, "cc_cohen_kappa, reference cohen[%d]", idx);
        check_close(log, what, kappa, ref_num(ex, "kappa", &bad), abs_tol, rel,
                    ref_function(c, "kappa"));
        check_close(log, what, kappa, ref_num(ex, "kappa_statsmodels", &bad), abs_tol, rel,
                    ref_function(c, "kappa_statsmodels"));
        snprintf(what, sizeof what, "cc_disagreement, reference cohen[%d]", idx);
        check_close(log, what, cc_disagreement(table, k), ref_num(ex, "disagreement", &bad),
                    abs_tol, rel, ref_function(c, "disagreement"));
        idx++;
    }

    idx = 0;
    cJSON_ArrayForEach(c, fleiss)
    {
        const cJSON *in = ref_get(c, "inputs"), *ex = ref_get(c, "expected");
        const cJSON *rows = ref_get(in, "table");
        int m = (int)ref_num(in, "m", &bad), n;
        int k = cJSON_GetArraySize(cJSON_GetArrayItem(rows, 0));
        int64_t table[64 * 16];
        if (k < 2 || k > 16 || read_table(rows, table, 64, k, &n)) {
            fprintf(stderr, "FAIL fleiss case %d: bad inputs\n", idx);
            log->failed++;
            continue;
        }
        snprintf(what, sizeof what, "cc_fleiss_kappa, reference fleiss[%d]", idx);
        check_close(log, what, fleiss_from_rows(table, n, k, m), ref_num(ex, "kappa", &bad),
                    abs_tol, rel, ref_function(c, "kappa"));
        idx++;
    }
    if (bad)
        log->failed++;
}

int main(int argc, char **argv)
{
    check_log log = {"test_agreement", 0, 0};
    published_checks(&log);
    reference_run(&log, argc, argv, reference_checks);
    return check_finish(&log);
}
