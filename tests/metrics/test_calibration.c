/* test_calibration.c — ECE, MCE, Brier score and log-loss from a summary's
 * calibration counters, against the worked example of METHODS section 6,
 * hand-derived edge cases and the reference values of
 * tests/reference/drift_reference.json (path in argv[1]). Counters are built
 * with cc_summary_add_labeled, the same path the collector uses. */
#include "calibration.h"
#include "checks.h"
#include "summary.h"

#define EX_N 8
#define EX_K 3

/* METHODS section 6: 8 items, 3 classes. */
static const double ex_rows[EX_N][EX_K] = {
    {.90, .05, .05}, {.60, .30, .10}, {.20, .70, .10}, {.10, .20, .70},
    {.34, .33, .33}, {.05, .90, .05}, {.50, .40, .10}, {.25, .25, .50},
};
static const int ex_labels[EX_N] = {0, 1, 1, 2, 0, 1, 0, 0};
static const char *const ex_source =
    "computed, METHODS section 6 (numpy; sklearn log_loss agrees): ECE_15 0.257500 = 2.06/8, "
    "Brier 0.389800, NLL 0.660787";

/* The counters of summary.c's add_calibration, computed here in double from
 * the decimal rows: bin = ceil(15 c) - 1 (edges to the lower bin), values in
 * fixed point rounded per event. */
static void counters_from_double_rows(int64_t *calib, int64_t *brier, int64_t *nll)
{
    int64_t conf[CC_CALIB_BINS] = {0}, bsum = 0, nsum = 0;
    memset(calib, 0, CC_CALIB_BINS * CC_CALIB_STRIDE * sizeof *calib);
    for (int i = 0; i < EX_N; i++) {
        const double *p = ex_rows[i];
        int top = cc_argmax_d(p, EX_K);
        int b = (int)ceil(p[top] * CC_CALIB_BINS) - 1;
        calib[b * CC_CALIB_STRIDE + 0] += 1;
        calib[b * CC_CALIB_STRIDE + 1] += top == ex_labels[i];
        conf[b] += llround(p[top] * CC_FIXED_SCALE);
        double bs = 0.0;
        for (int c = 0; c < EX_K; c++) {
            double d = p[c] - (c == ex_labels[i]);
            bs += d * d;
        }
        bsum += llround(bs * CC_FIXED_SCALE);
        nsum += llround(-log(p[ex_labels[i]]) * CC_FIXED_SCALE);
    }
    for (int b = 0; b < CC_CALIB_BINS; b++)
        cc_wide_set(calib + b * CC_CALIB_STRIDE + 2, conf[b]);
    cc_wide_set(brier, bsum);
    cc_wide_set(nll, nsum);
}

/* A wide sum (summary.h) holding x, for hand-made counters. */
static const int64_t *wide(int64_t *w, int64_t x)
{
    cc_wide_set(w, x);
    return w;
}

static void worked_example(check_log *log)
{
    int64_t calib[CC_CALIB_BINS * CC_CALIB_STRIDE], brier[2], nll[2];
    cc_calibration r;
    counters_from_double_rows(calib, brier, nll);
    cc_calibration_compute(&r, calib, brier, nll);
    check_int(log, "n, METHODS 6 example (double rows)", r.n, 8, ex_source);
    check_close(log, "ECE, METHODS 6 example (double rows)", r.ece, 0.2575, 2e-9, 0, ex_source);
    check_close(log, "Brier, METHODS 6 example (double rows)", r.brier, 0.3898, 2e-9, 0,
                ex_source);
    check_close(log, "NLL, METHODS 6 example (double rows)", r.nll, 0.660787, 5e-7, 0,
                ex_source);
    check_close(log, "MCE, METHODS 6 example (double rows)", r.mce, 0.66, 2e-9, 0,
                "hand-computed from the METHODS 6 rows: bin (5/15, 6/15] holds only 0.34, "
                "right: |1 - 0.34|");
    /* 1-based bins 6, 8, 9, 11, 14 of METHODS = indexes 5, 7, 8, 10, 13 */
    const int64_t want_counts[CC_CALIB_BINS] = {0, 0, 0, 0, 0, 1, 0, 2, 1, 0, 2, 0, 0, 2, 0};
    char what[120];
    for (int b = 0; b < CC_CALIB_BINS; b++) {
        snprintf(what, sizeof what, "bin %d count, METHODS 6 example (double rows)", b);
        check_int(log, what, r.bins[b].count, want_counts[b],
                  "METHODS 6: non-empty bins 6, 8, 9, 11, 14 (1-based); 0.6 = 9/15 goes to "
                  "the lower bin");
    }
    check_close(log, "bin 8 accuracy (the 0.6 row, wrong)", r.bins[8].accuracy, 0.0, 0, 0,
                "hand-computed: row [.6,.3,.1], label 1");
    check_close(log, "bin 8 confidence", r.bins[8].confidence, 0.6, 1e-9, 0,
                "hand-computed");
    check_close(log, "empty bin 0 confidence", r.bins[0].confidence, NAN, 0, 0,
                "calibration.h: NAN when empty");

    /* The same rows stored as float32 and added through the summary (M = 1). */
    cc_summary *s = cc_summary_create(1, EX_K);
    if (!s) {
        log->failed++;
        return;
    }
    for (int i = 0; i < EX_N; i++) {
        float row[EX_K];
        for (int c = 0; c < EX_K; c++)
            row[c] = (float)ex_rows[i][c];
        cc_summary_add_labeled(s, row, ex_labels[i], +1);
    }
    const cc_layout *L = cc_summary_layout(s);
    const int64_t *v = cc_summary_data(s);
    cc_calibration_compute(&r, v + L->calib, v + L->brier_fx, v + L->nll_fx);
    check_int(log, "n, METHODS 6 example via cc_summary_add_labeled", r.n, 8, ex_source);
    check_close(log, "ECE, METHODS 6 example via cc_summary_add_labeled", r.ece, 0.2575, 1e-7, 0,
                "computed, METHODS section 6; float32 storage moves inputs by < 3e-8");
    check_close(log, "Brier, METHODS 6 example via cc_summary_add_labeled", r.brier, 0.3898,
                1e-7, 0, "computed, METHODS section 6; float32 storage moves inputs by < 3e-8");
    check_close(log, "NLL, METHODS 6 example via cc_summary_add_labeled", r.nll, 0.660787, 5e-7,
                0, ex_source);
    check_close(log, "MCE, METHODS 6 example via cc_summary_add_labeled", r.mce, 0.66, 1e-7, 0,
                "hand-computed from the METHODS 6 rows");
    /* float32(0.6) = 0.60000002384 > 9/15: stored, the 0.6 row is no longer
     * on the edge and lands in the bin above (index 9). The ECE does not
     * change here because that row is alone in either bin. */
    check_int(log, "float32(0.6) row lands in bin index 9 via the summary", r.bins[9].count, 1,
              "computed (numpy float32: 0.6f = 0.6000000238 > 9/15; summary.c bins by "
              "ceil(15 c) - 1)");
    check_int(log, "bin index 8 empty via the summary", r.bins[8].count, 0,
              "computed (numpy float32)");
    cc_summary_free(s);
}

static void edge_cases(check_log *log)
{
    int64_t calib[CC_CALIB_BINS * CC_CALIB_STRIDE] = {0}, w1[2], w2[2];
    const int64_t zero[2] = {0, 0};
    cc_calibration r;
    cc_calibration_compute(&r, calib, zero, zero);
    check_int(log, "n = 0: n", r.n, 0, "METHODS 6 edge: n = 0 undefined");
    check_close(log, "n = 0: ECE", r.ece, NAN, 0, 0, "METHODS 6 edge: n = 0 undefined");
    check_close(log, "n = 0: MCE", r.mce, NAN, 0, 0, "METHODS 6 edge: n = 0 undefined");
    check_close(log, "n = 0: Brier", r.brier, NAN, 0, 0, "METHODS 6 edge: n = 0 undefined");
    check_close(log, "n = 0: NLL", r.nll, NAN, 0, 0, "METHODS 6 edge: n = 0 undefined");

    /* 4 events at confidence 0.75 (bin 11), 3 right: perfectly calibrated. */
    calib[11 * CC_CALIB_STRIDE + 0] = 4;
    calib[11 * CC_CALIB_STRIDE + 1] = 3;
    cc_wide_set(calib + 11 * CC_CALIB_STRIDE + 2, 3000000000);
    cc_calibration_compute(&r, calib, wide(w1, 4 * 125000000), wide(w2, 4 * 287682072));
    check_close(log, "calibrated bin: ECE", r.ece, 0.0, 1e-15, 0,
                "hand-computed: accuracy 3/4 = mean confidence 0.75");
    check_close(log, "calibrated bin: Brier from its fixed-point sum", r.brier, 0.125, 1e-15, 0,
                "hand-computed: sum 4 x 0.125 / 4");
    check_close(log, "calibrated bin: NLL from its fixed-point sum", r.nll, 0.287682072, 1e-15,
                0, "hand-computed: sum 4 x 0.287682072 / 4");

    /* Two bins: 10 events at 0.95 all right, 10 at 0.55 with 2 right. */
    memset(calib, 0, sizeof calib);
    calib[14 * CC_CALIB_STRIDE + 0] = 10;
    calib[14 * CC_CALIB_STRIDE + 1] = 10;
    cc_wide_set(calib + 14 * CC_CALIB_STRIDE + 2, 9500000000);
    calib[8 * CC_CALIB_STRIDE + 0] = 10;
    calib[8 * CC_CALIB_STRIDE + 1] = 2;
    cc_wide_set(calib + 8 * CC_CALIB_STRIDE + 2, 5500000000);
    cc_calibration_compute(&r, calib, zero, zero);
    check_close(log, "two bins: ECE", r.ece, 0.5 * 0.05 + 0.5 * 0.35, 1e-12, 0,
                "hand-computed: (10/20) |1 - 0.95| + (10/20) |0.2 - 0.55|");
    check_close(log, "two bins: MCE", r.mce, 0.35, 1e-12, 0, "hand-computed: max(0.05, 0.35)");

    calib[8 * CC_CALIB_STRIDE + 1] = 11;
    cc_calibration_compute(&r, calib, zero, zero);
    check_close(log, "correct > count: ECE undefined", r.ece, NAN, 0, 0,
                "calibration.c: counters that cannot come from events");
    calib[8 * CC_CALIB_STRIDE + 1] = 2;
    calib[14 * CC_CALIB_STRIDE + 0] = -1;
    cc_calibration_compute(&r, calib, zero, zero);
    check_close(log, "negative count: ECE undefined", r.ece, NAN, 0, 0,
                "calibration.c: counters that cannot come from events");
}

static void reference_checks(check_log *log, const cJSON *root)
{
    const double tol = 2e-9; /* per-event fixed-point rounding, 0.5e-9 each */
    char what[160];
    int bad = 0, idx = 0;
    const cJSON *c, *sec = ref_section(root, "calibration");
    if (!sec) {
        log->failed++;
        return;
    }
    cJSON_ArrayForEach(c, sec)
    {
        const cJSON *in = ref_get(c, "inputs"), *ex = ref_get(c, "expected");
        int m = (int)ref_num(in, "m", &bad), k = (int)ref_num(in, "k", &bad);
        const cJSON *rows = ref_get(in, "probs"), *labels = ref_get(in, "labels");
        int n = cJSON_GetArraySize(rows);
        cc_summary *s = cc_summary_create(m, k);
        if (!s || n < 1 || cJSON_GetArraySize(labels) != n) {
            fprintf(stderr, "FAIL calibration case %d: bad inputs\n", idx);
            log->failed++;
            cc_summary_free(s);
            idx++;
            continue;
        }
        float probs[CC_MAX_MEMBERS * 16];
        int ok = m * k <= (int)(sizeof probs / sizeof probs[0]);
        for (int i = 0; ok && i < n; i++) {
            const cJSON *row = cJSON_GetArrayItem(rows, i);
            if (cJSON_GetArraySize(row) != m * k) {
                ok = 0;
                break;
            }
            for (int j = 0; j < m * k; j++)
                probs[j] = (float)cJSON_GetArrayItem(row, j)->valuedouble;
            cc_summary_add_labeled(s, probs, (int)cJSON_GetArrayItem(labels, i)->valuedouble,
                                   +1);
        }
        if (!ok) {
            fprintf(stderr, "FAIL calibration case %d: bad rows\n", idx);
            log->failed++;
            cc_summary_free(s);
            idx++;
            continue;
        }
        const cc_layout *L = cc_summary_layout(s);
        const int64_t *v = cc_summary_data(s);
        cc_calibration r;
        cc_calibration_compute(&r, v + L->calib, v + L->brier_fx, v + L->nll_fx);

        snprintf(what, sizeof what, "calibration[%d] (M %d, K %d, n %d) n", idx, m, k, n);
        check_int(log, what, r.n, n, "count of reference rows");
        snprintf(what, sizeof what, "calibration[%d] (M %d, K %d, n %d) ECE", idx, m, k, n);
        check_close(log, what, r.ece, ref_num(ex, "ece", &bad), tol, 0, ref_function(c, "ece"));
        snprintf(what, sizeof what, "calibration[%d] (M %d, K %d, n %d) MCE", idx, m, k, n);
        check_close(log, what, r.mce, ref_num(ex, "mce", &bad), tol, 0, ref_function(c, "ece"));
        snprintf(what, sizeof what, "calibration[%d] (M %d, K %d, n %d) Brier", idx, m, k, n);
        check_close(log, what, r.brier, ref_num(ex, "brier", &bad), tol, 1e-12,
                    ref_function(c, "brier"));
        snprintf(what, sizeof what, "calibration[%d] (M %d, K %d, n %d) NLL", idx, m, k, n);
        check_close(log, what, r.nll, ref_num(ex, "nll", &bad), tol, 1e-12,
                    ref_function(c, "nll"));
        if (ref_get(ex, "nll_sklearn")) {
            snprintf(what, sizeof what, "calibration[%d] (M %d, K %d, n %d) NLL vs sklearn", idx,
                     m, k, n);
            check_close(log, what, r.nll, ref_num(ex, "nll_sklearn", &bad), tol, 1e-12,
                        ref_function(c, "nll_sklearn"));
        }
        const cJSON *occ = ref_get(ex, "occupied_bins"), *b;
        int occupied[CC_CALIB_BINS] = {0};
        cJSON_ArrayForEach(b, occ)
        {
            int bi = (int)b->valuedouble;
            if (bi >= 0 && bi < CC_CALIB_BINS)
                occupied[bi] = 1;
        }
        for (int bi = 0; bi < CC_CALIB_BINS; bi++) {
            snprintf(what, sizeof what, "calibration[%d] bin %d occupied", idx, bi);
            check_int(log, what, r.bins[bi].count > 0, occupied[bi],
                      "numpy: bins (b/15, (b+1)/15] of max_k p_k");
        }
        cc_summary_free(s);
        idx++;
    }
    if (bad)
        log->failed++;
}

int main(int argc, char **argv)
{
    check_log log = {"test_calibration", 0, 0};
    worked_example(&log);
    edge_cases(&log);
    reference_run(&log, argc, argv, reference_checks);
    return check_finish(&log);
}
