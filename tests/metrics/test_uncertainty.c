/* test_uncertainty.c — entropy and the total / expected / mutual-information
 * split against the worked examples of METHODS.md section 3, edge cases, and
 * the scipy reference values of tests/reference/metrics_reference.json. */
#include "checks.h"
#include "uncertainty.h"

#define LN2 0.69314718055994530942

typedef struct split_row {
    const char *what;
    int m, k;
    float probs[12];
    double total, expected, mutual, tol;
    const char *source;
} split_row;

static const split_row split_rows[] = {
    {"A: [0.9,0.1], [0.1,0.9]", 2, 2, {0.9f, 0.1f, 0.1f, 0.9f}, 0.693147, 0.325083, 0.368064,
     5e-7, "METHODS.md section 3 example A (hand-computable; scipy entropy)"},
    {"B: two identical [0.9,0.1]", 2, 2, {0.9f, 0.1f, 0.9f, 0.1f}, 0.325083, 0.325083, 0.0,
     5e-7, "METHODS.md section 3 example B"},
    {"C: [.7,.2,.1], [.1,.8,.1], [.3,.3,.4]", 3, 3,
     {0.7f, 0.2f, 0.1f, 0.1f, 0.8f, 0.1f, 0.3f, 0.3f, 0.4f}, 1.052139, 0.843250, 0.208889, 5e-7,
     "computed, METHODS.md section 3 example C"},
    {"one member (M = 1): no mutual information", 1, 3, {0.5f, 0.25f, 0.25f},
     1.0397207708399179, 1.0397207708399179, 0.0, 1e-12,
     "METHODS.md section 3 edge: M = 1 gives EU = 0; H = 1.5 ln 2 hand-computed"},
    {"one-hot members that disagree", 2, 2, {1.0f, 0.0f, 0.0f, 1.0f}, LN2, 0.0, LN2, 1e-12,
     "hand-computed: 0 ln 0 = 0, total ln 2 = upper bound ln M"},
    {"uniform over 4 classes", 2, 4, {0.25f, 0.25f, 0.25f, 0.25f, 0.25f, 0.25f, 0.25f, 0.25f},
     2 * LN2, 2 * LN2, 0.0, 1e-12, "hand-computed: H(uniform) = ln K"},
};

static void published_checks(check_log *log)
{
    char what[200];
    for (size_t r = 0; r < sizeof split_rows / sizeof split_rows[0]; r++) {
        const split_row *row = &split_rows[r];
        cc_uncertainty u;
        double avg[4];
        cc_uncertainty_split(&u, row->probs, row->m, row->k, avg);
        snprintf(what, sizeof what, "total_nats, %s", row->what);
        check_close(log, what, u.total_nats, row->total, row->tol, 0, row->source);
        snprintf(what, sizeof what, "expected_nats, %s", row->what);
        check_close(log, what, u.expected_nats, row->expected, row->tol, 0, row->source);
        snprintf(what, sizeof what, "mutual_nats, %s", row->what);
        check_close(log, what, u.mutual_nats, row->mutual, row->tol, 0, row->source);
        snprintf(what, sizeof what, "avg_out[0], %s", row->what);
        double want = 0;
        for (int i = 0; i < row->m; i++)
            want += (double)row->probs[i * row->k] / row->m;
        check_close(log, what, avg[0], want, 1e-15, 0, "mean of the members (definition)");
    }

    cc_uncertainty a;
    const float ex_a[4] = {0.9f, 0.1f, 0.1f, 0.9f};
    cc_uncertainty_split(&a, ex_a, 2, 2, NULL);
    check_close(log, "example A total in bits", a.total_nats / LN2, 1.0, 5e-7, 0,
                "METHODS.md section 3 example A (1 bit)");
    check_close(log, "example A expected in bits", a.expected_nats / LN2, 0.468996, 5e-7, 0,
                "METHODS.md section 3 example A");
    check_close(log, "example A mutual in bits", a.mutual_nats / LN2, 0.531004, 5e-7, 0,
                "METHODS.md section 3 example A");

    const double zero_one[2] = {1.0, 0.0}, three[3] = {0.0, 0.0, 1.0};
    const double half[2] = {0.5, 0.5};
    check_close(log, "cc_entropy_nats [1,0]", cc_entropy_nats(zero_one, 2), 0.0, 0, 0,
                "0 ln 0 = 0 convention");
    check_close(log, "cc_entropy_nats [0,0,1]", cc_entropy_nats(three, 3), 0.0, 0, 0,
                "0 ln 0 = 0 convention");
    check_close(log, "cc_entropy_nats [0.5,0.5]", cc_entropy_nats(half, 2), LN2, 1e-15, 0,
                "hand-computed: ln 2");
}

static void reference_checks(check_log *log, const cJSON *root)
{
    const double rel = 1e-9, abs_tol = 1e-12;
    char what[200];
    int bad = 0, idx = 0;
    const cJSON *c, *sec = ref_section(root, "uncertainty");
    if (!sec) {
        log->failed++;
        return;
    }
    cJSON_ArrayForEach(c, sec)
    {
        const cJSON *in = ref_get(c, "inputs"), *ex = ref_get(c, "expected");
        int m = (int)ref_num(in, "m", &bad), k = (int)ref_num(in, "k", &bad);
        const cJSON *probs = ref_get(in, "probs");
        float p[16 * 16];
        if (m < 1 || m > 16 || k < 1 || k > 16 || cJSON_GetArraySize(probs) != m) {
            fprintf(stderr, "FAIL uncertainty case %d: bad inputs\n", idx);
            log->failed++;
            continue;
        }
        for (int i = 0; i < m; i++)
            for (int j = 0; j < k; j++)
                p[i * k + j] =
                    (float)cJSON_GetArrayItem(cJSON_GetArrayItem(probs, i), j)->valuedouble;
        cc_uncertainty u;
        cc_uncertainty_split(&u, p, m, k, NULL);
        snprintf(what, sizeof what, "uncertainty[%d] total_nats", idx);
        check_close(log, what, u.total_nats, ref_num(ex, "total", &bad), abs_tol, rel,
                    ref_function(c, "total"));
        snprintf(what, sizeof what, "uncertainty[%d] expected_nats", idx);
        check_close(log, what, u.expected_nats, ref_num(ex, "expected", &bad), abs_tol, rel,
                    ref_function(c, "expected"));
        snprintf(what, sizeof what, "uncertainty[%d] mutual_nats", idx);
        check_close(log, what, u.mutual_nats, ref_num(ex, "mutual", &bad), abs_tol, rel,
                    ref_function(c, "mutual"));
        snprintf(what, sizeof what, "uncertainty[%d] mutual_nats vs KL form", idx);
        check_close(log, what, u.mutual_nats, ref_num(ex, "mutual_kl", &bad), abs_tol, rel,
                    ref_function(c, "mutual_kl"));
        idx++;
    }
    if (bad)
        log->failed++;
}

int main(int argc, char **argv)
{
    check_log log = {"test_uncertainty", 0, 0};
    published_checks(&log);
    reference_run(&log, argc, argv, reference_checks);
    return check_finish(&log);
}
