/* test_oracle.c — Kuncheva & Whitaker (2003) pairwise and non-pairwise
 * diversity measures and Partridge & Krzanowski (1997) GD / CFD: the 10 x 3
 * oracle example of METHODS.md section 1, edge cases, identities, and the
 * reference values of tests/reference/metrics_reference.json (argv[1]). */
#include "checks.h"
#include "oracle.h"

#define KW_SOURCE "computed, METHODS.md section 1 (no published numeric example)"

/* METHODS.md section 1: rows = items, columns = members, 1 = right. */
static const int kw_matrix[10][3] = {{1, 1, 1}, {1, 1, 1}, {1, 1, 1}, {1, 1, 0}, {1, 1, 0},
                                     {1, 0, 1}, {0, 1, 1}, {1, 0, 0}, {0, 0, 1}, {0, 0, 0}};

static cc_pair_counts count_pair(const int *y, int n, int L, int i, int j)
{
    cc_pair_counts c = {0, 0, 0, 0};
    for (int r = 0; r < n; r++) {
        int a = y[r * L + i], b = y[r * L + j];
        if (a && b)
            c.n11++;
        else if (a)
            c.n10++;
        else if (b)
            c.n01++;
        else
            c.n00++;
    }
    return c;
}

static void right_hist(const int *y, int n, int L, int64_t *hist)
{
    for (int l = 0; l <= L; l++)
        hist[l] = 0;
    for (int r = 0; r < n; r++) {
        int l = 0;
        for (int i = 0; i < L; i++)
            l += y[r * L + i];
        hist[l]++;
    }
}

typedef struct pair_row {
    const char *what;
    cc_pair_counts c;
    double q, rho, dis, df, tol;
    const char *source;
} pair_row;

static const pair_row pair_rows[] = {
    {"KW example members (1,2)", {5, 2, 1, 2}, 2.0 / 3, 0.356348, 0.3, 0.2, 5e-7, KW_SOURCE},
    {"KW example members (1,3)", {4, 3, 2, 1}, -0.2, -0.089087, 0.5, 0.1, 5e-7, KW_SOURCE},
    {"KW example members (2,3)", {4, 2, 2, 2}, 1.0 / 3, 0.166667, 0.4, 0.2, 5e-7, KW_SOURCE},
    {"Doll & Hill 2x2 [[647,2],[622,27]] as (N11,N10,N01,N00)", {647, 2, 622, 27},
     16225.0 / 18713, NAN, NAN, NAN, 5e-7,
     "METHODS.md section 2: Q 0.867044 derived from OR 14.0 published (Gerstman, SJSU)"},
    {"Cohen table [[20,5],[10,15]] as (N11,N10,N01,N00)", {20, 5, 10, 15}, 0.714286, NAN, NAN,
     NAN, 5e-7, "METHODS.md section 2 (computed)"},
    {"both members always right", {10, 0, 0, 0}, NAN, NAN, 0.0, 0.0, 1e-12,
     "METHODS.md section 1 edge: Q 0/0, rho zero marginal"},
    {"one member always right", {6, 4, 0, 0}, NAN, NAN, 0.4, 0.0, 1e-12,
     "METHODS.md section 1 edge: Q 0/0 (both products 0), rho zero marginal"},
    {"never wrong together, never right together", {0, 5, 5, 0}, -1.0, -1.0, 1.0, 0.0, 1e-12,
     "METHODS.md section 1: Q = -1 when N11 N00 = 0 and N01 N10 > 0"},
    {"identical members", {7, 0, 0, 3}, 1.0, 1.0, 0.0, 0.3, 1e-12,
     "hand-computed from Kuncheva & Whitaker 2003 definitions"},
    {"no items", {0, 0, 0, 0}, NAN, NAN, NAN, NAN, 0, "METHODS.md section 1 edge: N = 0"},
};

typedef struct nonpair_row {
    const char *what;
    int L;
    int64_t hist[8];
    double e, kw, kappa, theta, gd, cfd, p_bar, tol;
    const char *source;
} nonpair_row;

static const nonpair_row nonpair_rows[] = {
    {"KW example (hist 1,2,4,3)", 3, {1, 2, 4, 3}, 0.6, 0.133333, 0.138756, 0.098889,
     6.0 / 11, 5.0 / 7, 19.0 / 30, 5e-7, KW_SOURCE "; kappa = statsmodels fleiss_kappa"},
    {"no items", 3, {0, 0, 0, 0}, NAN, NAN, NAN, NAN, NAN, NAN, NAN, 0,
     "METHODS.md section 1 edge: N = 0 is no data, not 0"},
    {"L = 1", 1, {3, 5}, NAN, 0.0, NAN, 15.0 / 64, NAN, NAN, 5.0 / 8, 1e-12,
     "METHODS.md section 1 edge: L = 1 leaves E, kappa, GD, CFD undefined; KW, theta "
     "hand-computed"},
    {"all members always right", 3, {0, 0, 0, 6}, 0.0, 0.0, NAN, 0.0, NAN, 0.0, 1.0, 1e-12,
     "METHODS.md section 1 edge: p_bar = 1 (kappa), p(1) = 0 (GD), p_0 = 1 gives CFD 0"},
    {"all members always wrong", 2, {4, 0, 0}, 0.0, 0.0, NAN, 0.0, 0.0, 0.0, 0.0, 1e-12,
     "METHODS.md section 1 edge: p_bar = 0 (kappa); GD 1 - 1/1, CFD sum 0 hand-computed"},
    {"L = 2, exactly one right on every item", 2, {0, 6, 0}, 1.0, 0.25, -1.0, 0.0, 1.0, 1.0, 0.5,
     1e-12, "hand-computed from Kuncheva & Whitaker 2003; Partridge & Krzanowski 1997"},
};

static void published_checks(check_log *log)
{
    char what[200];
    for (size_t r = 0; r < sizeof pair_rows / sizeof pair_rows[0]; r++) {
        const pair_row *row = &pair_rows[r];
        snprintf(what, sizeof what, "cc_yule_q, %s", row->what);
        check_close(log, what, cc_yule_q(row->c), row->q, row->tol, 0, row->source);
        if (r == 3 || r == 4)
            continue; /* only Q is given for these tables */
        snprintf(what, sizeof what, "cc_oracle_rho, %s", row->what);
        check_close(log, what, cc_oracle_rho(row->c), row->rho, row->tol, 0, row->source);
        snprintf(what, sizeof what, "cc_oracle_disagreement, %s", row->what);
        check_close(log, what, cc_oracle_disagreement(row->c), row->dis, row->tol, 0,
                    row->source);
        snprintf(what, sizeof what, "cc_double_fault, %s", row->what);
        check_close(log, what, cc_double_fault(row->c), row->df, row->tol, 0, row->source);
    }

    for (size_t r = 0; r < sizeof nonpair_rows / sizeof nonpair_rows[0]; r++) {
        const nonpair_row *row = &nonpair_rows[r];
        cc_nonpairwise np;
        cc_nonpairwise_compute(&np, row->hist, row->L);
        struct {
            const char *name;
            double got, want;
        } v[] = {{"E", np.entropy_e, row->e},
                 {"KW variance", np.kw_variance, row->kw},
                 {"interrater kappa", np.interrater_kappa, row->kappa},
                 {"difficulty theta", np.difficulty, row->theta},
                 {"GD", np.generalized_diversity, row->gd},
                 {"CFD", np.coincident_failure, row->cfd},
                 {"p_bar", np.p_bar, row->p_bar}};
        for (size_t i = 0; i < sizeof v / sizeof v[0]; i++) {
            snprintf(what, sizeof what, "cc_nonpairwise_compute %s, %s", v[i].name, row->what);
            check_close(log, what, v[i].got, v[i].want, row->tol, 0, row->source);
        }
    }

    /* The example's averages, from the matrix itself. */
    const int *y = &kw_matrix[0][0];
    double q = 0, rho = 0, dis = 0, df = 0;
    for (int i = 0; i < 3; i++)
        for (int j = i + 1; j < 3; j++) {
            cc_pair_counts c = count_pair(y, 10, 3, i, j);
            q += cc_yule_q(c) / 3;
            rho += cc_oracle_rho(c) / 3;
            dis += cc_oracle_disagreement(c) / 3;
            df += cc_double_fault(c) / 3;
        }
    check_close(log, "KW example Q_av", q, 0.266667, 5e-7, 0, KW_SOURCE);
    check_close(log, "KW example rho_av", rho, 0.144643, 5e-7, 0, KW_SOURCE);
    check_close(log, "KW example Dis_av", dis, 0.4, 1e-12, 0, KW_SOURCE);
    check_close(log, "KW example DF_av", df, 0.166667, 5e-7, 0, KW_SOURCE);

    int64_t hist[4];
    cc_nonpairwise np;
    right_hist(y, 10, 3, hist);
    cc_nonpairwise_compute(&np, hist, 3);
    check_close(log, "identity KW = (L-1)/(2L) Dis_av (KW example)", np.kw_variance,
                (3.0 - 1) / (2 * 3.0) * dis, 1e-12, 0,
                "Kuncheva & Whitaker 2003 identity, METHODS.md section 1");
    check_close(log, "identity kappa = 1 - L KW / ((L-1) p_bar (1-p_bar)) (KW example)",
                np.interrater_kappa,
                1 - 3 * np.kw_variance / (2 * np.p_bar * (1 - np.p_bar)), 1e-12, 0,
                "Kuncheva & Whitaker 2003 identity, METHODS.md section 1");
}

static void reference_checks(check_log *log, const cJSON *root)
{
    const double rel = 1e-9, abs_tol = 1e-12;
    char what[200];
    int bad = 0, idx = 0;
    const cJSON *c, *oracle = ref_section(root, "oracle");
    if (!oracle) {
        log->failed++;
        return;
    }
    cJSON_ArrayForEach(c, oracle)
    {
        const cJSON *in = ref_get(c, "inputs"), *ex = ref_get(c, "expected");
        const cJSON *mat = ref_get(in, "matrix");
        int L = (int)ref_num(in, "L", &bad), n = cJSON_GetArraySize(mat);
        if (L < 1 || L > 8 || n < 1 || n > 200) {
            fprintf(stderr, "FAIL oracle case %d: bad inputs\n", idx);
            log->failed++;
            continue;
        }
        int y[200 * 8];
        for (int r = 0; r < n; r++)
            for (int i = 0; i < L; i++)
                y[r * L + i] = (int)cJSON_GetArrayItem(cJSON_GetArrayItem(mat, r), i)->valuedouble;

        const cJSON *pairs = ref_get(ex, "pairs"), *p;
        double sum[4] = {0, 0, 0, 0};
        int defined[4] = {0, 0, 0, 0};
        cJSON_ArrayForEach(p, pairs)
        {
            int i = (int)ref_num(p, "i", &bad), j = (int)ref_num(p, "j", &bad);
            cc_pair_counts cnt = count_pair(y, n, L, i, j);
            const cJSON *rc = ref_get(p, "counts");
            snprintf(what, sizeof what, "oracle[%d] pair (%d,%d) N11", idx, i, j);
            check_int(log, what, cnt.n11, (int64_t)cJSON_GetArrayItem(rc, 0)->valuedouble,
                      "numpy counts");
            snprintf(what, sizeof what, "oracle[%d] pair (%d,%d) N00", idx, i, j);
            check_int(log, what, cnt.n00, (int64_t)cJSON_GetArrayItem(rc, 3)->valuedouble,
                      "numpy counts");
            double got[4] = {cc_yule_q(cnt), cc_oracle_rho(cnt), cc_oracle_disagreement(cnt),
                             cc_double_fault(cnt)};
            const char *keys[4] = {"q", "rho", "dis", "df"};
            for (int t = 0; t < 4; t++) {
                snprintf(what, sizeof what, "oracle[%d] pair (%d,%d) %s", idx, i, j, keys[t]);
                check_close(log, what, got[t], ref_num(p, keys[t], &bad), abs_tol, rel,
                            ref_function(c, "pairs"));
                if (!isnan(got[t])) {
                    sum[t] += got[t];
                    defined[t]++;
                }
            }
        }
        const char *avg_keys[4] = {"q_av", "rho_av", "dis_av", "df_av"};
        for (int t = 0; t < 4; t++) {
            snprintf(what, sizeof what, "oracle[%d] %s over defined pairs", idx, avg_keys[t]);
            check_close(log, what, defined[t] ? sum[t] / defined[t] : NAN,
                        ref_num(ex, avg_keys[t], &bad), abs_tol, rel, ref_function(c, "pairs"));
        }

        int64_t hist[9];
        right_hist(y, n, L, hist);
        const cJSON *rh = ref_get(ex, "hist");
        for (int l = 0; l <= L; l++) {
            snprintf(what, sizeof what, "oracle[%d] hist[%d]", idx, l);
            check_int(log, what, hist[l], (int64_t)cJSON_GetArrayItem(rh, l)->valuedouble,
                      "numpy counts");
        }
        cc_nonpairwise np;
        cc_nonpairwise_compute(&np, hist, L);
        struct {
            const char *key, *fn;
            double got;
        } v[] = {{"p_bar", "nonpairwise", np.p_bar},
                 {"entropy_e", "nonpairwise", np.entropy_e},
                 {"kw_variance", "nonpairwise", np.kw_variance},
                 {"interrater_kappa", "interrater_kappa", np.interrater_kappa},
                 {"difficulty", "difficulty", np.difficulty},
                 {"generalized_diversity", "nonpairwise", np.generalized_diversity},
                 {"coincident_failure", "nonpairwise", np.coincident_failure}};
        for (size_t t = 0; t < sizeof v / sizeof v[0]; t++) {
            snprintf(what, sizeof what, "oracle[%d] %s", idx, v[t].key);
            check_close(log, what, v[t].got, ref_num(ex, v[t].key, &bad), abs_tol, rel,
                        ref_function(c, v[t].fn));
        }
        idx++;
    }
    if (bad)
        log->failed++;
}

int main(int argc, char **argv)
{
    check_log log = {"test_oracle", 0, 0};
    published_checks(&log);
    reference_run(&log, argc, argv, reference_checks);
    return check_finish(&log);
}
