/* test_summary.c — the summary's wide sums (layout version 2, summary.h):
 * 2^40 events of the worst-case log-loss read back exactly, overflow
 * detected instead of wrapped (merge, retraction, per-event add), exact
 * retraction across carries and borrows, and vectors summed element-wise
 * elsewhere (a cluster's sumForEach) brought back by normalizing. */
#include "calibration.h"
#include "checks.h"
#include "summary.h"

/* -ln(1e-15), python3: -math.log(1e-15) */
#define NLL_AT_EPS 34.538776394910684

/* One event that a member (M = 1, K = 2) gets as wrong as it can: p = (1, 0),
 * label 1, so the log-loss is taken at CC_NLL_EPS. */
static cc_summary *worst_event(int64_t delay_s)
{
    static const float p[2] = {1.0f, 0.0f};
    cc_summary *s = cc_summary_create(1, 2);
    if (!s)
        return NULL;
    cc_summary_add_unlabeled(s, p, 1);
    cc_summary_add_labeled(s, p, 1, 1);
    cc_summary_add_label_delay(s, delay_s, 1);
    return s;
}

static void doubling(check_log *log)
{
    /* 1e7 s (about 116 days) of label delay per event: 2^40 of them sum to
     * 1.1e19 s, past INT64_MAX (9.2e18), so the seconds need two words too */
    cc_summary *s = worst_event(10000000);
    if (!s) {
        log->failed++;
        return;
    }
    int rc = 0;
    for (int i = 0; i < 40 && !rc; i++)
        rc = cc_summary_merge(s, s);
    check_int(log, "40 self-merges succeed", rc, 0, "summary.h: 1e12 events per window hold");
    const cc_layout *L = cc_summary_layout(s);
    const int64_t *v = cc_summary_data(s);
    const int64_t n = INT64_C(1) << 40;
    check_int(log, "events after 40 doublings", v[L->n_events], n, "2^40 = 1099511627776");
    check_int(log, "labelled after 40 doublings", v[L->n_labeled], n, "2^40");
    cc_calibration c;
    cc_calibration_compute(&c, v + L->calib, v + L->brier_fx, v + L->nll_fx);
    check_close(log, "mean log-loss of 2^40 worst-case events", c.nll, NLL_AT_EPS, 0, 1e-9,
                "python3 -math.log(1e-15) = 34.538776394910684 (the per-event value is "
                "rounded to 1e-9 nats once, 2.6e-12 relative)");
    check_close(log, "Brier of 2^40 events", c.brier, 2.0, 0, 1e-12,
                "hand-computed: (1 - 0)^2 + (0 - 1)^2 = 2 per event");
    check_close(log, "ECE of 2^40 events", c.ece, 1.0, 0, 1e-12,
                "hand-computed: confidence 1, accuracy 0");
    check_close(log, "mean label delay of 2^40 events", cc_wide_value(v + L->label_delay_s) / n,
                1e7, 0, 1e-12, "the delay each event was given");
    check_close(log, "the nll sum is past one int64", cc_wide_value(v + L->nll_fx) > 9.3e18, 1,
                0, 0, "2^40 x 34538776395 units = 3.8e22 > INT64_MAX");

    /* doubling on: the hi word of the log-loss sum overflows first, when
     * 2^60 events x 34538776395 units / 2^32 = 9.27e18 passes INT64_MAX
     * (2^59 events give 4.6e18), before the counts do at 2^63 */
    int first_fail = 0;
    for (int i = 41; i <= 63 && !first_fail; i++)
        if (cc_summary_merge(s, s) == CC_SUMMARY_OVERFLOW)
            first_fail = i;
    check_int(log, "the doubling that overflows", first_fail, 60,
              "hand-computed: 2^28 x 34538776395 = 9.27e18 > 2^63 - 1 = 9.22e18");
    check_int(log, "overflowed summary is marked", cc_summary_overflowed(s), 1, "summary.h");
    cc_summary *t = cc_summary_create(1, 2);
    check_int(log, "a merge with an overflowed summary fails", t ? cc_summary_merge(t, s) : 0,
              CC_SUMMARY_OVERFLOW, "summary.h: the mark passes on");
    cc_summary_free(t);
    cc_summary_free(s);
}

static void counters_at_the_edge(check_log *log)
{
    cc_summary *one = worst_event(60), *big = cc_summary_create(1, 2);
    if (!one || !big) {
        log->failed++;
        cc_summary_free(one);
        cc_summary_free(big);
        return;
    }
    const cc_layout *L = cc_summary_layout(big);
    int64_t *v = cc_summary_data_mut(big);

    v[L->n_events] = INT64_MAX;
    check_int(log, "count at INT64_MAX + 1 event: merge", cc_summary_merge(big, one),
              CC_SUMMARY_OVERFLOW, "C11 6.5p5: signed overflow is undefined; refused instead");
    check_int(log, "count at INT64_MAX + 1 event: marked", cc_summary_overflowed(big), 1,
              "summary.h");

    cc_summary_clear(big);
    check_int(log, "clear drops the mark", cc_summary_overflowed(big), 0, "summary.h");
    v[L->nll_fx + 1] = INT64_MAX; /* hi word of the log-loss sum */
    v[L->nll_fx] = 4294967295;    /* lo at its top: any positive amount carries */
    check_int(log, "hi word at INT64_MAX, carry: merge", cc_summary_merge(big, one),
              CC_SUMMARY_OVERFLOW, "summary.h: a carry into a full hi word");

    cc_summary_clear(big);
    v[L->n_events] = INT64_MIN;
    check_int(log, "count at INT64_MIN, retraction: merge", cc_summary_merge_signed(big, one, -1),
              CC_SUMMARY_OVERFLOW, "summary.h: retractions are checked too");

    cc_summary_clear(big);
    v[L->n_labeled] = INT64_MAX;
    static const float p[2] = {0.3f, 0.7f};
    cc_summary_add_labeled(big, p, 0, 1);
    check_int(log, "count at INT64_MAX, per-event add: marked", cc_summary_overflowed(big), 1,
              "summary.h: every add is checked");

    cc_summary_clear(big);
    v[L->n_events] = INT64_MAX - 1;
    check_int(log, "count at INT64_MAX - 1 + 1 event: fits", cc_summary_merge(big, one), 0,
              "INT64_MAX itself is representable");
    check_int(log, "count reaches INT64_MAX", v[L->n_events], INT64_MAX, "2^63 - 1");
    cc_summary_free(one);
    cc_summary_free(big);
}

/* A fixed list of events (M = 3, K = 4), with labels and delays. */
static void add_event(cc_summary *s, int e, int sign)
{
    float p[12];
    unsigned x = 2654435761u * (unsigned)(e + 1);
    for (int i = 0; i < 3; i++) {
        float sum = 0.0f;
        for (int c = 0; c < 4; c++) {
            x = x * 1103515245u + 12345u;
            p[i * 4 + c] = (float)((x >> 8) % 1000 + 1);
            sum += p[i * 4 + c];
        }
        for (int c = 0; c < 4; c++)
            p[i * 4 + c] /= sum;
    }
    if (e % 7 == 3) /* a confident miss: large log-loss */
        for (int i = 0; i < 3; i++)
            for (int c = 0; c < 4; c++)
                p[i * 4 + c] = c == 0 ? 1.0f : 0.0f;
    cc_summary_add_unlabeled(s, p, sign);
    if (e % 5 != 4) {
        cc_summary_add_labeled(s, p, e % 7 == 3 ? 2 : e % 4, sign);
        cc_summary_add_label_delay(s, 1000003 * (int64_t)(e % 11), sign);
    }
}

static void retraction(check_log *log)
{
    enum { N = 400 };
    cc_summary *all = cc_summary_create(3, 4), *rest = cc_summary_create(3, 4),
               *part = cc_summary_create(3, 4), *raw = cc_summary_create(3, 4);
    if (!all || !rest || !part || !raw) {
        log->failed++;
        goto done;
    }
    for (int e = 0; e < N; e++) {
        add_event(all, e, 1);
        if (e % 3)
            add_event(rest, e, 1);
        else
            add_event(part, e, 1);
    }
    const cc_layout *L = cc_summary_layout(all);
    check_close(log, "the log-loss sum spans several 2^32 units",
                cc_summary_data(all)[L->nll_fx + 1] >= 2, 1, 0, 0,
                "about 46 labelled confident misses x 34.5e9 units: hundreds of 2^32");

    /* retract the events of part one by one: borrows from hi */
    cc_summary *x = cc_summary_create(3, 4);
    if (x) {
        cc_summary_merge(x, all);
        for (int e = 0; e < N; e += 3)
            add_event(x, e, -1);
        check_int(log, "per-event retraction equals the rest exactly", cc_summary_equal(x, rest),
                  1, "integer arithmetic: exact (summary.h)");
        check_int(log, "no overflow on the way", cc_summary_overflowed(x), 0, "summary.h");
        cc_summary_free(x);
    }
    check_int(log, "merge_signed(-1) of part", cc_summary_merge_signed(all, part, -1), 0,
              "summary.h");
    check_int(log, "all - part equals the rest exactly", cc_summary_equal(all, rest), 1,
              "integer arithmetic: exact (summary.h)");

    /* 3000 copies summed element-wise without carrying (a cluster's
     * sumForEach), then normalized, equal 3000 merges */
    int64_t *r = cc_summary_data_mut(raw);
    const int64_t *pv = cc_summary_data(part);
    for (int c = 0; c < 3000; c++)
        for (size_t i = 0; i < L->len; i++)
            r[i] += pv[i];
    check_int(log, "element-wise sum is not normalized", cc_layout_is_normalized(L, r), 0,
              "lo words past 2^32");
    cc_summary_clear(rest);
    for (int c = 0; c < 3000; c++)
        cc_summary_merge(rest, part);
    check_int(log, "normalize element-wise sum", cc_summary_normalize(raw), 0, "summary.h");
    check_int(log, "normalized sum equals 3000 merges", cc_summary_equal(raw, rest), 1,
              "summary.h: value hi * 2^32 + lo is kept by the carry");
done:
    cc_summary_free(all);
    cc_summary_free(rest);
    cc_summary_free(part);
    cc_summary_free(raw);
}

/* Layout 1 (one word per sum) converted into layout 2 keeps each value. */
static void conversion(check_log *log)
{
    cc_layout l1, l2;
    cc_summary *s = cc_summary_create(3, 4);
    if (!s || cc_layout_init_version(&l1, 3, 4, 1) || cc_layout_init(&l2, 3, 4)) {
        log->failed++;
        cc_summary_free(s);
        return;
    }
    check_int(log, "layout 2 length = layout 1 + one word per wide sum", (int64_t)l2.len,
              (int64_t)(l1.len + l2.n_wide), "summary.h");
    int64_t *v1 = calloc(l1.len, sizeof *v1);
    if (v1) {
        v1[l1.n_events] = 5;
        v1[l1.nll_fx] = INT64_C(123456789012345);
        v1[l1.calib + 3 * 14 + 2] = -INT64_C(5000000000); /* a negative sum: floor split */
        v1[l1.em_cells + l1.em_stride * 3 + 1 + 2] = 77;
        v1[l1.label_delay_s] = 42;
        v1[l1.len - 3] = 9; /* the em_cell_labels section, after the converted cells */
        check_int(log, "convert layout 1", cc_summary_convert(s, v1, l1.len, 1), 0, "summary.h");
        const int64_t *v = cc_summary_data(s);
        check_int(log, "count kept", v[l2.n_events], 5, "summary.h");
        check_close(log, "nll sum kept", cc_wide_value(v + l2.nll_fx), 123456789012345.0, 0, 0,
                    "summary.h");
        check_close(log, "negative confidence sum kept",
                    cc_wide_value(v + l2.calib + CC_CALIB_STRIDE * 14 + 2), -5000000000.0, 0, 0,
                    "summary.h: floor division");
        check_int(log, "negative sum lo in [0, 2^32)",
                  v[l2.calib + CC_CALIB_STRIDE * 14 + 2] >= 0, 1, "summary.h");
        check_close(log, "em cell sum kept",
                    cc_wide_value(v + l2.em_cells + l2.em_stride * 3 + 1 + 2 * 2), 77, 0, 0,
                    "summary.h");
        check_close(log, "delay sum kept", cc_wide_value(v + l2.label_delay_s), 42, 0, 0,
                    "summary.h");
        check_int(log, "last counts kept", v[l2.len - 4], 9, "summary.h");
        check_int(log, "wrong length refused", cc_summary_convert(s, v1, l1.len - 1, 1), -1,
                  "summary.h");
        free(v1);
    }
    cc_summary_free(s);
}

int main(void)
{
    check_log log = {"test_summary", 0, 0};
    doubling(&log);
    counters_at_the_edge(&log);
    retraction(&log);
    conversion(&log);
    return check_finish(&log);
}
