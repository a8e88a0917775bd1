/* test_mcnemar.c — McNemar exact, chi-square and mid-p tests against the
 * published examples of METHODS.md section 7, edge cases, and statsmodels /
 * scipy reference values of tests/reference/metrics_reference.json. */
#include "checks.h"
#include "mcnemar.h"

typedef struct mc_row {
    const char *what;
    int64_t b, c;
    double exact, chi2, chi2_p, mid_p; /* NAN chi2_p / mid_p beside a defined chi2: not checked */
    double rel_tol;                    /* half a unit of the last published digit */
    const char *source;
} mc_row;

static const mc_row mc_rows[] = {
    {"Fagerland et al. 2013 (Bentur et al.) b = 1, c = 7", 1, 7, 0.0703125, 4.5, 0.0338949,
     0.0390625, 2e-6,
     "data published in Fagerland, Lydersen & Laake 2013; p-values computed (statsmodels "
     "mcnemar), METHODS.md section 7"},
    {"Wikipedia drug example [[101,121],[59,33]] b = 121, c = 59", 121, 59, 4.43e-6, 21.3556,
     3.8e-6, NAN, 1.5e-2,
     "Wikipedia \"McNemar's test\" (chi2 21.35); statsmodels 21.3556, p 3.8e-6, exact 4.43e-6"},
    {"no discordant items", 0, 0, 1.0, NAN, NAN, 1.0, 0,
     "METHODS.md section 7 edge: b + c = 0, no test, p = 1"},
    {"b = c = 1", 1, 1, 1.0, 0.0, 1.0, 0.75, 1e-12,
     "METHODS.md section 7 edge: b = c gives exact 1, mid-p 1 - P(X=b)/2 (Fagerland "
     "supplement, not re-checked); P(X=1 | n=2) = 1/2"},
    {"b = 0, c = 9", 0, 9, 2.0 / 512, 9.0, NAN, 1.0 / 512, 1e-12,
     "hand-computed: 2 * 2^-9, mid-p 2^-9, chi2 81/9"},
};

static void published_checks(check_log *log)
{
    char what[200];
    for (size_t r = 0; r < sizeof mc_rows / sizeof mc_rows[0]; r++) {
        const mc_row *row = &mc_rows[r];
        snprintf(what, sizeof what, "cc_mcnemar_exact_p, %s", row->what);
        check_close(log, what, cc_mcnemar_exact_p(row->b, row->c), row->exact, 0, row->rel_tol,
                    row->source);
        snprintf(what, sizeof what, "cc_mcnemar_chi2, %s", row->what);
        check_close(log, what, cc_mcnemar_chi2(row->b, row->c), row->chi2, 0, row->rel_tol,
                    row->source);
        if (!isnan(row->chi2_p) || isnan(row->chi2)) {
            snprintf(what, sizeof what, "cc_mcnemar_chi2_p, %s", row->what);
            check_close(log, what, cc_mcnemar_chi2_p(row->b, row->c), row->chi2_p, 0,
                        row->rel_tol, row->source);
        }
        if (!isnan(row->mid_p)) {
            snprintf(what, sizeof what, "cc_mcnemar_mid_p, %s", row->what);
            check_close(log, what, cc_mcnemar_mid_p(row->b, row->c), row->mid_p, 0,
                        row->rel_tol, row->source);
        }
    }
    check_close(log, "Wikipedia drug example chi2 = 62^2/180", cc_mcnemar_chi2(121, 59),
                3844.0 / 180, 1e-12, 0, "hand-computed from McNemar 1947");
    check_close(log, "Fagerland example, chi2 p at 7 digits", cc_mcnemar_chi2_p(1, 7), 0.0338949,
                5e-8, 0, "computed (statsmodels mcnemar), METHODS.md section 7");
    check_close(log, "exact p symmetric in b, c", cc_mcnemar_exact_p(7, 1),
                cc_mcnemar_exact_p(1, 7), 0, 0, "definition");
    check_close(log, "mid-p symmetric in b, c", cc_mcnemar_mid_p(59, 121),
                cc_mcnemar_mid_p(121, 59), 0, 0, "definition");
    check_close(log, "negative count", cc_mcnemar_exact_p(-1, 3), NAN, 0, 0,
                "invalid input (common practice)");
}

static void reference_checks(check_log *log, const cJSON *root)
{
    const double rel = 1e-9, abs_tol = 1e-300;
    char what[200];
    int bad = 0, idx = 0;
    const cJSON *c, *sec = ref_section(root, "mcnemar");
    if (!sec) {
        log->failed++;
        return;
    }
    cJSON_ArrayForEach(c, sec)
    {
        const cJSON *in = ref_get(c, "inputs"), *ex = ref_get(c, "expected");
        int64_t b = (int64_t)ref_num(in, "b", &bad), cc = (int64_t)ref_num(in, "c", &bad);
        const cJSON *case_tol = ref_get(c, "rel_tol");
        double tol = cJSON_IsNumber(case_tol) ? case_tol->valuedouble : rel;
        struct {
            const char *key;
            double got;
        } v[] = {{"exact_p", cc_mcnemar_exact_p(b, cc)},
                 {"chi2", cc_mcnemar_chi2(b, cc)},
                 {"chi2_p", cc_mcnemar_chi2_p(b, cc)},
                 {"mid_p", cc_mcnemar_mid_p(b, cc)}};
        for (size_t t = 0; t < sizeof v / sizeof v[0]; t++) {
            snprintf(what, sizeof what, "mcnemar[%d] b = %lld, c = %lld: %s", idx, (long long)b,
                     (long long)cc, v[t].key);
            check_close(log, what, v[t].got, ref_num(ex, v[t].key, &bad), abs_tol, tol,
                        ref_function(c, v[t].key));
        }
        idx++;
    }
    if (bad)
        log->failed++;
}

int main(int argc, char **argv)
{
    check_log log = {"test_mcnemar", 0, 0};
    published_checks(&log);
    reference_run(&log, argc, argv, reference_checks);
    return check_finish(&log);
}
