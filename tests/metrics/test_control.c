/* test_control.c — baseline mean and sd, z-scores and the EWMA recursion on
 * hand-computed examples, and the undefined (NAN) paths. */
#include "control.h"
#include "checks.h"

static void baseline_checks(check_log *log)
{
    cc_baseline_stat b;
    const double x1[5] = {1, 2, 3, 4, 5};
    cc_baseline_stat_compute(&b, x1, 5);
    check_int(log, "baseline 1..5: n", b.n, 5, "hand-counted");
    check_close(log, "baseline 1..5: mean", b.mean, 3.0, 1e-15, 0, "hand-computed");
    check_close(log, "baseline 1..5: population sd", b.sd, sqrt(2.0), 1e-15, 0,
                "hand-computed: sqrt((4+1+0+1+4)/5) = sqrt(2) (divides by n, METHODS 8)");
    check_close(log, "z(6) against 1..5", cc_zscore(6.0, &b), 3.0 / sqrt(2.0), 1e-15, 0,
                "hand-computed: (6 - 3)/sqrt(2) = 2.1213203");
    check_close(log, "z(3) against 1..5", cc_zscore(3.0, &b), 0.0, 0, 0, "hand-computed");
    check_close(log, "z(1) against 1..5", cc_zscore(1.0, &b), -sqrt(2.0), 1e-15, 0,
                "hand-computed: (1 - 3)/sqrt(2)");
    check_close(log, "z(NAN) against 1..5", cc_zscore(NAN, &b), NAN, 0, 0,
                "control.h: a missing day has no z-score");

    const double x2[5] = {2, NAN, 4, NAN, 6};
    cc_baseline_stat_compute(&b, x2, 5);
    check_int(log, "baseline with missing days: n", b.n, 3, "hand-counted: NAN days skipped");
    check_close(log, "baseline with missing days: mean", b.mean, 4.0, 1e-15, 0, "hand-computed");
    check_close(log, "baseline with missing days: sd", b.sd, sqrt(8.0 / 3.0), 1e-15, 0,
                "hand-computed: sqrt((4+0+4)/3)");
    check_close(log, "z(8) against {2,4,6}", cc_zscore(8.0, &b), sqrt(6.0), 1e-14, 0,
                "hand-computed: 4/sqrt(8/3) = sqrt(6)");

    const double x3[2] = {1, 2};
    cc_baseline_stat_compute(&b, x3, 2);
    check_close(log, "two baseline days: mean", b.mean, 1.5, 1e-15, 0, "hand-computed");
    check_close(log, "two baseline days: sd", b.sd, 0.5, 1e-15, 0, "hand-computed");
    check_close(log, "two baseline days: no z-score", cc_zscore(3.0, &b), NAN, 0, 0,
                "control.h: n < CC_BASELINE_MIN_DAYS = 3 (common practice)");

    const double x4[4] = {1, NAN, 2, NAN};
    cc_baseline_stat_compute(&b, x4, 4);
    check_int(log, "four days, two defined: n", b.n, 2, "hand-counted");
    check_close(log, "four days, two defined: no z-score", cc_zscore(3.0, &b), NAN, 0, 0,
                "control.h: defined days count, 2 < CC_BASELINE_MIN_DAYS");

    const double x5[4] = {0.1, 0.1, 0.1, 0.1};
    cc_baseline_stat_compute(&b, x5, 4);
    check_close(log, "flat baseline 0.1 x 4: sd", b.sd, 0.0, 0, 0,
                "hand-computed: equal values, sd 0 (rounding noise of the mean cleared)");
    check_close(log, "flat baseline: no z-score", cc_zscore(0.2, &b), NAN, 0, 0,
                "METHODS 8: sigma = 0, do not chart");
    const double x6[3] = {0.7, 0.7, 0.7};
    cc_baseline_stat_compute(&b, x6, 3);
    check_close(log, "flat baseline 0.7 x 3: no z-score", cc_zscore(0.7, &b), NAN, 0, 0,
                "METHODS 8: sigma = 0, do not chart");

    const double x7[3] = {NAN, NAN, NAN};
    cc_baseline_stat_compute(&b, x7, 3);
    check_int(log, "no defined day: n", b.n, 0, "hand-counted");
    check_close(log, "no defined day: mean", b.mean, NAN, 0, 0, "undefined");
    check_close(log, "no defined day: sd", b.sd, NAN, 0, 0, "undefined");
    check_close(log, "no defined day: no z-score", cc_zscore(1.0, &b), NAN, 0, 0, "undefined");
    cc_baseline_stat_compute(&b, NULL, 0);
    check_int(log, "empty baseline: n", b.n, 0, "hand-counted");
}

static void ewma_checks(check_log *log)
{
    double z = 10.0; /* z_0 = mu_0 */
    z = cc_ewma_step(z, 12.0, 0.2);
    check_close(log, "EWMA step 1: 0.2 x 12 + 0.8 x 10", z, 10.4, 1e-14, 0, "hand-computed");
    z = cc_ewma_step(z, 12.0, 0.2);
    check_close(log, "EWMA step 2: 0.2 x 12 + 0.8 x 10.4", z, 10.72, 1e-14, 0, "hand-computed");
    z = cc_ewma_step(z, NAN, 0.2);
    check_close(log, "EWMA missing day keeps z", z, 10.72, 1e-14, 0,
                "control.h: a NAN x_t leaves z unchanged");
    z = cc_ewma_step(z, 8.0, 0.2);
    check_close(log, "EWMA step 3: 0.2 x 8 + 0.8 x 10.72", z, 10.176, 1e-14, 0,
                "hand-computed");

    z = 0.0;
    for (int t = 0; t < 10; t++)
        z = cc_ewma_step(z, 1.0, 0.2);
    check_close(log, "EWMA of a constant 1 from 0 after 10 steps", z, 1.0 - pow(0.8, 10), 1e-14,
                0, "hand-computed: z_t = 1 - (1 - lambda)^t = 0.8926258176");

    check_close(log, "EWMA lambda = 1 follows x", cc_ewma_step(5.0, 7.0, 1.0), 7.0, 0, 0,
                "hand-computed from Roberts 1959 recursion");
    check_close(log, "EWMA lambda = 0 undefined", cc_ewma_step(5.0, 7.0, 0.0), NAN, 0, 0,
                "control.c: lambda outside (0, 1]");
    check_close(log, "EWMA lambda = 1.5 undefined", cc_ewma_step(5.0, 7.0, 1.5), NAN, 0, 0,
                "control.c: lambda outside (0, 1]");
    check_close(log, "EWMA without a start value starts at x", cc_ewma_step(NAN, 7.0, 0.2), 7.0,
                0, 0, "control.c: a NAN z_{t-1} starts the recursion at x_t");
    check_close(log, "EWMA missing day and no start value", cc_ewma_step(NAN, NAN, 0.2), NAN, 0,
                0, "control.h: a NAN x_t leaves z unchanged");
}

int main(void)
{
    check_log log = {"test_control", 0, 0};
    baseline_checks(&log);
    ewma_checks(&log);
    return check_finish(&log);
}
