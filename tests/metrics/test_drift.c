/* test_drift.c — chi-square / G-test of homogeneity, PSI, Jensen-Shannon
 * divergence and two-sample KS from histograms, against published worked
 * examples, hand-derived edge cases and the reference values of
 * tests/reference/drift_reference.json (path in argv[1]). The ks_hist
 * section bins raw float32 samples the way a summary does and compares the
 * histogram KS statistic with the exact one on the raw values. */
#include "drift.h"
#include "checks.h"
#include "summary.h"

#include <gsl/gsl_cdf.h>

#define MAXK 16

/* Passes when lo <= got <= hi (both bounds inclusive). */
static int check_within(check_log *log, const char *what, double got, double lo, double hi,
                        const char *source)
{
    if (got >= lo && got <= hi) {
        log->passed++;
        return 1;
    }
    log->failed++;
    fprintf(stderr, "FAIL %s: %s: got %.17g, expected within [%.17g, %.17g] [source: %s]\n",
            log->program, what, got, lo, hi, source);
    return 0;
}

typedef struct chi2_row {
    const char *what;
    int k;
    int64_t a[MAXK], b[MAXK];
    double stat, p, g_stat, g_p;
    int dof;
    double tol;
    const char *source;
} chi2_row;

static const chi2_row chi2_rows[] = {
    {"dose groups x dropout, as 2 x 4 (yes row vs no row)", 4, {5, 6, 10, 12}, {35, 29, 28, 27},
     4.7831, 0.1884, 4.9008, 0.1792, 3, 5e-5,
     "SAS PROC FREQ output, Biostat Methods STAT 5820/6910 Handout #4, Example 1 "
     "(published 4 decimals; table transposed: the statistic is symmetric in rows and columns)"},
    {"dose groups x dropout, 2 x 4, full precision", 4, {5, 6, 10, 12}, {35, 29, 28, 27},
     4.783089179727835, 0.18838712131272414, 4.900830736634955, 0.17920450740236166, 3, 1e-9,
     "computed (scipy chi2_contingency(correction=False), lambda_='log-likelihood')"},
    {"Doll & Hill, cases [647,2] vs controls [622,27], published 2 decimals", 2, {647, 2},
     {622, 27}, 22.04, NAN, NAN, NAN, 1, 5e-3,
     "crosstabs.com worked example, uncorrected X^2 = 22.04 (METHODS 4.2)"},
    {"Doll & Hill, cases [647,2] vs controls [622,27]", 2, {647, 2}, {622, 27},
     22.044237928317166, 2.6643830561044546e-06, NAN, NAN, 1, 1e-9,
     "computed (scipy chi2_contingency(correction=False))"},
    {"Doll & Hill transposed, [647,622] vs [2,27]", 2, {647, 622}, {2, 27},
     22.044237928317166, 2.6643830561044546e-06, NAN, NAN, 1, 1e-9,
     "computed (scipy chi2_contingency(correction=False)); transpose gives the same X^2"},
    {"identical mixes [10,20,30] vs [20,40,60]", 3, {10, 20, 30}, {20, 40, 60}, 0.0, 1.0, 0.0,
     1.0, 2, 1e-12, "hand-computed: O = E everywhere"},
    {"column empty on both sides dropped: [10,0,30] vs [30,0,10]", 3, {10, 0, 30}, {30, 0, 10},
     20.0, NAN, NAN, NAN, 1, 1e-12,
     "hand-computed: E = 20 in every cell, X^2 = 4 x 100/20, df (2-1)(2-1) (METHODS 4.2 edge)"},
    {"one side empty", 3, {0, 0, 0}, {1, 2, 3}, NAN, NAN, NAN, NAN, 0, 0,
     "METHODS 4.2 edge: empty period, no test"},
    {"a single non-empty column", 3, {4, 0, 0}, {9, 0, 0}, NAN, NAN, NAN, NAN, 0, 0,
     "drift.h: fewer than two columns remain, no test"},
};

static void chi2_published(check_log *log)
{
    char what[200];
    for (size_t r = 0; r < sizeof chi2_rows / sizeof chi2_rows[0]; r++) {
        const chi2_row *row = &chi2_rows[r];
        cc_chi2 c;
        cc_chi2_homogeneity(&c, row->a, row->b, row->k);
        snprintf(what, sizeof what, "cc_chi2_homogeneity X^2, %s", row->what);
        check_close(log, what, c.stat, row->stat, row->tol, 0, row->source);
        snprintf(what, sizeof what, "cc_chi2_homogeneity df, %s", row->what);
        check_int(log, what, c.dof, row->dof, row->source);
        if (!isnan(row->p) || isnan(row->stat)) {
            snprintf(what, sizeof what, "cc_chi2_homogeneity p, %s", row->what);
            check_close(log, what, c.p_value, row->p, row->tol, 0, row->source);
        }
        if (!isnan(row->g_stat) || isnan(row->stat)) {
            snprintf(what, sizeof what, "cc_chi2_homogeneity G^2, %s", row->what);
            check_close(log, what, c.g_stat, row->g_stat, row->tol, 0, row->source);
        }
        if (!isnan(row->g_p)) {
            snprintf(what, sizeof what, "G^2 p (gsl_cdf_chisq_Q(G^2, df)), %s", row->what);
            check_close(log, what, gsl_cdf_chisq_Q(c.g_stat, c.dof), row->g_p, row->tol, 0,
                        row->source);
        }
    }
}

static void psi_js_published(check_log *log)
{
    const int64_t base[3] = {500, 300, 200}, cur[3] = {400, 350, 250};
    check_close(log, "cc_psi [500,300,200] vs [400,350,250], eps = 0",
                cc_psi(base, cur, 3, 0.0), 0.041179, 5e-7, 0,
                "computed, METHODS 4.3 (KL(c||r) 0.020481 + KL(r||c) 0.020698)");
    check_close(log, "cc_psi [500,300,200] vs [400,350,250], eps = 1e-4",
                cc_psi(base, cur, 3, 1e-4), 0.041154343543513, 1e-12, 1e-9,
                "computed (numpy, same smoothing (f + eps)/(1 + k eps)); eps = 1e-4 moves "
                "PSI by -2.5e-5 here");
    check_close(log, "cc_psi [500,300,200] vs [400,350,250], default CC_PSI_EPSILON",
                cc_psi(base, cur, 3, CC_PSI_EPSILON), 0.041154343543513, 1e-12, 1e-9,
                "computed (numpy), CC_PSI_EPSILON = 1e-4");
    check_close(log, "cc_psi swapped sides (symmetric: Jeffreys divergence)",
                cc_psi(cur, base, 3, 0.0), 0.041179066688494366, 1e-12, 1e-9,
                "METHODS 4.3: PSI = KL(c||r) + KL(r||c) is symmetric; computed (numpy)");

    const int64_t zb[3] = {5000, 5000, 0}, zc[3] = {4000, 4000, 2000};
    check_close(log, "cc_psi zero bin [0.5,0.5,0] vs [0.4,0.4,0.2], eps = 1e-4",
                cc_psi(zb, zc, 3, 1e-4), 1.5644, 5e-5, 0, "computed, METHODS 4.3 / section 9");
    double inf = cc_psi(zb, zc, 3, 0.0);
    check_int(log, "cc_psi zero bin without smoothing is +infinity", isinf(inf) && inf > 0, 1,
              "METHODS 4.3: PSI infinite when a bin is empty in one period only");
    const int64_t same[3] = {2, 4, 6}, same2[3] = {1, 2, 3}, empty[3] = {0, 0, 0};
    check_close(log, "cc_psi same mix", cc_psi(same, same2, 3, 1e-4), 0.0, 1e-15, 0,
                "hand-computed: c = r in every bin");
    check_close(log, "cc_psi empty baseline", cc_psi(empty, same, 3, 1e-4), NAN, 0, 0,
                "drift.h: NAN when either side is empty");
    check_close(log, "cc_psi negative eps", cc_psi(same, same2, 3, -1.0), NAN, 0, 0,
                "drift.c: eps < 0 is not a smoothing");

    const int64_t a[2] = {9, 1}, b[2] = {1, 9};
    check_close(log, "cc_js_bits [0.9,0.1] vs [0.1,0.9]", cc_js_bits(a, b, 2), 0.531004, 5e-7,
                0, "METHODS 4.4 / section 9 (scipy jensenshannon(base=2)^2; = EU of example 3A)");
    check_close(log, "cc_js_bits [0.9,0.1] vs [0.1,0.9], full precision", cc_js_bits(a, b, 2),
                0.5310044064107188, 1e-13, 1e-9,
                "computed (scipy.spatial.distance.jensenshannon(base=2)**2)");
    check_close(log, "cc_js_bits PSI example", cc_js_bits(base, cur, 3), 0.007412, 5e-7, 0,
                "METHODS 4.4 (JSD 0.005138 nats = 0.007412 bits)");
    const int64_t d1[3] = {10, 0, 0}, d2[3] = {0, 0, 7};
    check_close(log, "cc_js_bits disjoint supports", cc_js_bits(d1, d2, 3), 1.0, 1e-15, 0,
                "hand-computed from Lin 1991: disjoint supports give ln 2 nats = 1 bit");
    check_close(log, "cc_js_bits same mix", cc_js_bits(same, same2, 3), 0.0, 1e-15, 0,
                "hand-computed: p = q");
    check_close(log, "cc_js_bits empty side", cc_js_bits(same, empty, 3), NAN, 0, 0,
                "drift.h: NAN when either side is empty");
}

/* x = 0, 1, ..., 99 and y = x + 10.5 in bins of width 1/2 (bin of v = 2v),
 * so that 10 and 10.5 fall in different bins. */
static void ks_published(check_log *log)
{
    enum { BINS = 240 };
    int64_t hx[BINS] = {0}, hy[BINS] = {0}, n = 0, m = 0;
    for (int i = 0; i < 100; i++) {
        hx[2 * i]++;
        hy[2 * i + 21]++;
    }
    double d = cc_ks_hist(hx, hy, BINS, &n, &m);
    check_close(log, "cc_ks_hist x = 0..99 vs x + 10.5 (half-unit bins)", d, 0.11, 1e-15, 0,
                "computed (scipy ks_2samp statistic 0.11), METHODS 4.1 / section 9");
    check_int(log, "cc_ks_hist n_a", n, 100, "hand-counted");
    check_int(log, "cc_ks_hist n_b", m, 100, "hand-counted");
    check_close(log, "cc_ks_pvalue(0.11, 100, 100), Kolmogorov limit", cc_ks_pvalue(d, n, m),
                0.580618, 5e-7, 0,
                "computed, METHODS 4.1 (scipy.stats.kstwobign.sf(sqrt(50) 0.11))");
    check_close(log, "cc_ks_pvalue(0.11, 100, 100) near the exact p", cc_ks_pvalue(d, n, m),
                1.0 - 0.41699, 3e-3, 0,
                "published exact P(D_100,100 <= 0.10) = 0.41699 (T. Ferguson, UCLA KS "
                "two-sample calculator), so exact P(D >= 0.11) = 0.58301; the asymptotic "
                "value may differ by the stated tolerance");

    /* unequal sizes; b's last event in bin 3 and a's in bin 4, so the scan
     * stops at bin 4 of 8: F_a = 0, 0, 3/4, 3/4, 1; F_b = 1/3, 1/3, 1/3, 1, 1 */
    const int64_t ua[8] = {0, 0, 3, 0, 1, 0, 0, 0}, ub[8] = {1, 0, 0, 2, 0, 0, 0, 0};
    check_close(log, "cc_ks_hist n_a = 4, n_b = 3", cc_ks_hist(ua, ub, 8, NULL, NULL),
                5.0 / 12.0, 1e-15, 0, "hand-computed: |3/4 - 1/3| at bin 2");
    check_close(log, "cc_ks_hist n_b = 3, n_a = 4 (swapped)", cc_ks_hist(ub, ua, 8, NULL, NULL),
                5.0 / 12.0, 1e-15, 0, "hand-computed: D is symmetric");

    int64_t hz[BINS] = {0};
    check_close(log, "cc_ks_hist empty histogram", cc_ks_hist(hx, hz, BINS, &n, &m), NAN, 0, 0,
                "METHODS 4.1 edge: empty window, no test");
    check_int(log, "cc_ks_hist empty histogram n_b", m, 0, "hand-counted");
    check_close(log, "cc_ks_hist identical histograms", cc_ks_hist(hx, hx, BINS, NULL, NULL),
                0.0, 0, 0, "hand-computed: same CDF");
    check_close(log, "cc_ks_pvalue n = 29", cc_ks_pvalue(0.3, 29, 100), NAN, 0, 0,
                "drift.h: below CC_DRIFT_MIN_EVENTS = 30, no test (common practice)");
    check_close(log, "cc_ks_pvalue m = 29", cc_ks_pvalue(0.3, 100, 29), NAN, 0, 0,
                "drift.h: below CC_DRIFT_MIN_EVENTS = 30, no test (common practice)");
    check_close(log, "cc_ks_pvalue d = 0", cc_ks_pvalue(0.0, 100, 100), 1.0, 0, 0,
                "hand-computed: Q_KS(0) = 1");
    check_close(log, "cc_ks_pvalue d = NAN", cc_ks_pvalue(NAN, 100, 100), NAN, 0, 0,
                "undefined statistic, undefined p");
}

static int read_counts(const cJSON *arr, int64_t *out, int max)
{
    int n = cJSON_GetArraySize(arr);
    if (n < 1 || n > max)
        return -1;
    for (int i = 0; i < n; i++)
        out[i] = (int64_t)cJSON_GetArrayItem(arr, i)->valuedouble;
    return n;
}

static void reference_counts(check_log *log, const cJSON *root)
{
    const double rel = 1e-9, abs_tol = 1e-13;
    char what[160];
    int bad = 0, idx;
    const cJSON *c, *chi2 = ref_section(root, "chi2"), *psi = ref_section(root, "psi"),
                    *js = ref_section(root, "js"), *ksp = ref_section(root, "ks_pvalue");
    if (!chi2 || !psi || !js || !ksp) {
        log->failed++;
        return;
    }
    int64_t a[MAXK], b[MAXK];

    idx = 0;
    cJSON_ArrayForEach(c, chi2)
    {
        const cJSON *in = ref_get(c, "inputs"), *ex = ref_get(c, "expected");
        int k = read_counts(ref_get(in, "a"), a, MAXK);
        if (k < 0 || read_counts(ref_get(in, "b"), b, MAXK) != k) {
            fprintf(stderr, "FAIL chi2 case %d: bad inputs\n", idx);
            log->failed++;
            continue;
        }
        cc_chi2 r;
        cc_chi2_homogeneity(&r, a, b, k);
        snprintf(what, sizeof what, "cc_chi2_homogeneity, reference chi2[%d]", idx);
        check_close(log, what, r.stat, ref_num(ex, "stat", &bad), abs_tol, rel,
                    ref_function(c, "stat"));
        check_int(log, what, r.dof, (int64_t)ref_num(ex, "dof", &bad), ref_function(c, "stat"));
        check_close(log, what, r.p_value, ref_num(ex, "p_value", &bad), abs_tol, rel,
                    ref_function(c, "stat"));
        snprintf(what, sizeof what, "cc_chi2_homogeneity G^2, reference chi2[%d]", idx);
        check_close(log, what, r.g_stat, ref_num(ex, "g_stat", &bad), abs_tol, rel,
                    ref_function(c, "g_stat"));
        double gp = r.dof > 0 ? gsl_cdf_chisq_Q(r.g_stat, r.dof) : NAN;
        check_close(log, what, gp, ref_num(ex, "g_p_value", &bad), abs_tol, rel,
                    ref_function(c, "g_stat"));
        idx++;
    }

    idx = 0;
    cJSON_ArrayForEach(c, psi)
    {
        const cJSON *in = ref_get(c, "inputs"), *ex = ref_get(c, "expected");
        int k = read_counts(ref_get(in, "baseline"), a, MAXK);
        if (k < 0 || read_counts(ref_get(in, "current"), b, MAXK) != k) {
            fprintf(stderr, "FAIL psi case %d: bad inputs\n", idx);
            log->failed++;
            continue;
        }
        snprintf(what, sizeof what, "cc_psi, reference psi[%d]", idx);
        check_close(log, what, cc_psi(a, b, k, ref_num(in, "eps", &bad)),
                    ref_num(ex, "psi", &bad), abs_tol, rel, ref_function(c, "psi"));
        idx++;
    }

    idx = 0;
    cJSON_ArrayForEach(c, js)
    {
        const cJSON *in = ref_get(c, "inputs"), *ex = ref_get(c, "expected");
        int k = read_counts(ref_get(in, "a"), a, MAXK);
        if (k < 0 || read_counts(ref_get(in, "b"), b, MAXK) != k) {
            fprintf(stderr, "FAIL js case %d: bad inputs\n", idx);
            log->failed++;
            continue;
        }
        snprintf(what, sizeof what, "cc_js_bits, reference js[%d]", idx);
        check_close(log, what, cc_js_bits(a, b, k), ref_num(ex, "js_bits", &bad), abs_tol, rel,
                    ref_function(c, "js_bits"));
        idx++;
    }

    idx = 0;
    cJSON_ArrayForEach(c, ksp)
    {
        const cJSON *in = ref_get(c, "inputs"), *ex = ref_get(c, "expected");
        double d = ref_num(in, "d", &bad);
        int64_t n = (int64_t)ref_num(in, "n", &bad), m = (int64_t)ref_num(in, "m", &bad);
        snprintf(what, sizeof what, "cc_ks_pvalue(%g, %lld, %lld), reference ks_pvalue[%d]", d,
                 (long long)n, (long long)m, idx);
        check_close(log, what, cc_ks_pvalue(d, n, m), ref_num(ex, "p_value", &bad), 1e-14,
                    rel, ref_function(c, "p_value"));
        idx++;
    }
    if (bad)
        log->failed++;
}

/* Histogram of a JSON array of float32 values on the summary's scale;
 * returns the count or -1. */
static int64_t bin_sample(const cJSON *arr, int nats, int64_t *hist)
{
    const cJSON *v;
    int64_t n = 0;
    memset(hist, 0, CC_HIST_BINS * sizeof *hist);
    cJSON_ArrayForEach(v, arr)
    {
        if (!cJSON_IsNumber(v))
            return -1;
        double x = (double)(float)v->valuedouble;
        hist[nats ? cc_hist_bin_nats(x) : cc_hist_bin_prob(x)]++;
        n++;
    }
    return n;
}

typedef struct shape_worst {
    char name[40];
    double worst;
    int cases;
} shape_worst;

/* The KS requirement: |D_hist - D_exact| <= 0.01 (project requirement). One event
 * moves an ECDF by 1/n, so for n < 100 a single event of the other sample
 * sharing a bin at the supremum already costs more than 0.01: there the
 * tolerance is one event, 1/min(n, m). */
#define KS_REQUIREMENT 0.01

/* Cases known to miss the requirement with the present binning of
 * summary.c, checked as such (an unexpected pass fails, so an entry must be
 * removed once the binning improves). None at present: the range was widened
 * to logit [-48, 21] and nats [1e-15, 16] with 2048 bins. */
typedef struct known_gap {
    const char *name;
    int shifted;
    const char *why;
} known_gap;

static const known_gap known_gaps[] = {{NULL, 0, NULL}};

static const known_gap *find_known_gap(const char *name, int shifted)
{
    for (size_t i = 0; i < sizeof known_gaps / sizeof known_gaps[0]; i++)
        if (known_gaps[i].name && strcmp(known_gaps[i].name, name) == 0 &&
            known_gaps[i].shifted == shifted)
            return &known_gaps[i];
    return NULL;
}

static void reference_ks_hist(check_log *log, const cJSON *root)
{
    const cJSON *c, *sec = ref_section(root, "ks_hist");
    if (!sec) {
        log->failed++;
        return;
    }
    static int64_t ha[CC_HIST_BINS], hb[CC_HIST_BINS];
    shape_worst worst[16];
    int nshapes = 0, idx = 0, bad = 0;
    char what[200];

    cJSON_ArrayForEach(c, sec)
    {
        const cJSON *in = ref_get(c, "inputs"), *ex = ref_get(c, "expected");
        const cJSON *name = ref_get(c, "name"), *scale = ref_get(c, "scale");
        if (!cJSON_IsString(name) || !cJSON_IsString(scale)) {
            fprintf(stderr, "FAIL ks_hist case %d: no name or scale\n", idx);
            log->failed++;
            idx++;
            continue;
        }
        int nats = strcmp(scale->valuestring, "nats") == 0;
        int64_t n = bin_sample(ref_get(in, "a"), nats, ha);
        int64_t m = bin_sample(ref_get(in, "b"), nats, hb);
        double exact = ref_num(ex, "d", &bad);
        if (n <= 0 || m <= 0 || isnan(exact)) {
            fprintf(stderr, "FAIL ks_hist case %d: bad inputs\n", idx);
            log->failed++;
            idx++;
            continue;
        }
        int64_t na, nb;
        double d = cc_ks_hist(ha, hb, CC_HIST_BINS, &na, &nb);
        check_int(log, "cc_ks_hist n_a", na, n, "count of the reference sample");
        check_int(log, "cc_ks_hist n_b", nb, m, "count of the reference sample");

        /* Bound (derived): inside bin b each ECDF rises by at most that
         * bin's share, so D_hist <= D_exact <= D_hist + max_b share_b. */
        double share = 0.0;
        for (int i = 0; i < CC_HIST_BINS; i++) {
            double s = fmax((double)ha[i] / (double)n, (double)hb[i] / (double)m);
            share = fmax(share, s);
        }
        snprintf(what, sizeof what, "D_exact - D_hist in [0, max bin share %.4g], ks_hist[%d] %s",
                 share, idx, name->valuestring);
        check_within(log, what, exact - d, -1e-12, share + 1e-12,
                     "derived: edges are a subset of all x; within a bin each ECDF moves by at "
                     "most the bin's share; D_exact from scipy ks_2samp");

        int64_t small = n < m ? n : m;
        double tol = small < 100 ? fmax(KS_REQUIREMENT, 1.0 / (double)small) : KS_REQUIREMENT;
        const known_gap *gap = find_known_gap(name->valuestring,
                                              cJSON_IsTrue(ref_get(c, "shifted")));
        if (gap) {
            snprintf(what, sizeof what,
                     "D_exact - D_hist still above %.4g, ks_hist[%d] %s (n %lld, m %lld)", tol,
                     idx, name->valuestring, (long long)n, (long long)m);
            if (check_within(log, what, exact - d, tol, 1.0, gap->why))
                printf("KNOWN GAP ks_hist[%d] %s: D_hist %.6f, D_exact %.6f, miss %.6f (%s)\n",
                       idx, name->valuestring, d, exact, exact - d, gap->why);
        } else {
            snprintf(what, sizeof what,
                     "|D_hist - D_exact| <= %.4g, ks_hist[%d] %s (n %lld, m %lld)", tol, idx,
                     name->valuestring, (long long)n, (long long)m);
            check_close(log, what, d, exact, tol + 1e-12, 0,
                        "requirement 0.01 (one event, 1/min(n, m), when min(n, m) < 100); "
                        "D_exact: scipy.stats.ks_2samp(a, b).statistic on the raw float32 "
                        "values");
        }

        int s = 0;
        while (s < nshapes && strcmp(worst[s].name, name->valuestring) != 0)
            s++;
        if (s == nshapes && nshapes < 16) {
            snprintf(worst[s].name, sizeof worst[s].name, "%s", name->valuestring);
            worst[s].worst = 0.0;
            worst[s].cases = 0;
            nshapes++;
        }
        if (s < nshapes) {
            worst[s].worst = fmax(worst[s].worst, fabs(d - exact));
            worst[s].cases++;
        }
        idx++;
    }
    for (int s = 0; s < nshapes; s++)
        printf("ks_hist %-18s largest |D_hist - D_exact| = %.6f over %d cases\n", worst[s].name,
               worst[s].worst, worst[s].cases);
    if (bad)
        log->failed++;
}

int main(int argc, char **argv)
{
    check_log log = {"test_drift", 0, 0};
    chi2_published(&log);
    psi_js_published(&log);
    ks_published(&log);
    if (argc > 1) {
        cJSON *root = load_reference(argv[1]);
        if (root) {
            reference_counts(&log, root);
            reference_ks_hist(&log, root);
        } else {
            log.failed++;
        }
        cJSON_Delete(root);
    }
    return check_finish(&log);
}
