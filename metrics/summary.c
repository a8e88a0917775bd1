/* summary.c — layout, arithmetic and per-event contributions of the mergeable
 * per-day summary (see summary.h for the contract). */
#include "summary.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "event_view.h"
#include "uncertainty.h"

struct cc_summary {
    cc_layout lay;
    int64_t *v;
    int overflow;              /* sticky: an add or merge overflowed */
};

/* x += y, noting overflow in *ovf instead of wrapping. */
#define ADD(ovf, x, y) ((ovf) |= __builtin_add_overflow((x), (y), &(x)))

int cc_layout_init_version(cc_layout *out, int m, int k, int version)
{
    if (m < 1 || m > CC_MAX_MEMBERS || k < 2 || k > CC_MAX_CLASSES ||
        (version != 1 && version != CC_SUMMARY_VERSION))
        return -1;
    memset(out, 0, sizeof *out);
    out->m = m;
    out->k = k;
    out->pairs = m * (m - 1) / 2;
    out->version = version;
    /* W: counters per wide sum (version 1 kept one word per sum) */
    size_t M = (size_t)m, K = (size_t)k, P = (size_t)out->pairs, B = CC_HIST_BINS,
           C = CC_CALIB_BINS, W = version == 1 ? 1 : 2, CS = 2 + W, at = 0;
    out->em_stride = 1 + W * K;
#define SECTION(name, count) do { out->name = at; at += (count); } while (0)
    SECTION(n_events, 1);
    SECTION(vote_ties, 1);
    SECTION(pred_counts, K);
    SECTION(member_pred, M * K);
    SECTION(pair_agree, P);
    SECTION(fleiss_sumsq, 1);
    SECTION(tu_fx, W);
    SECTION(au_fx, W);
    SECTION(contested, K * K);
    SECTION(hist_maxprob, B);
    SECTION(hist_entropy, B);
    SECTION(hist_mi, B);
    SECTION(hist_class, K * B);
    SECTION(n_labeled, 1);
    SECTION(label_counts, K);
    SECTION(confusion, K * K);
    SECTION(member_correct, M);
    SECTION(ens_correct, 1);
    SECTION(vote_correct, 1);
    SECTION(vote_ties_labeled, 1);
    SECTION(oracle_correct, 1);
    SECTION(pair_oracle, P * 4);
    SECTION(n_right_hist, M + 1);
    SECTION(ens_only, M);
    SECTION(member_only, M);
    SECTION(calib, C * CS);
    SECTION(brier_fx, W);
    SECTION(nll_fx, W);
    SECTION(member_calib, M * C * CS);
    SECTION(member_brier_fx, M * W);
    SECTION(member_nll_fx, M * W);
    SECTION(em_cells, K * CC_EM_BINS * out->em_stride);
    SECTION(em_cell_labels, K * CC_EM_BINS * K);
    SECTION(delayed_labels, 1);
    SECTION(label_delay_s, W);
#undef SECTION
    out->len = at;
    if (version == 1)
        return 0;
    /* the wide sums, in the order of the layout */
    const cc_wide_run runs[] = {
        {out->tu_fx, 1, 0, 2},
        {out->calib + 2, C, CC_CALIB_STRIDE, 1},
        {out->brier_fx, 1, 0, 2},
        {out->member_calib + 2, M * C, CC_CALIB_STRIDE, 1},
        {out->member_brier_fx, 1, 0, 2 * M},
        {out->em_cells + 1, K * CC_EM_BINS, out->em_stride, K},
        {out->label_delay_s, 1, 0, 1},
    };
    out->n_runs = (int)(sizeof runs / sizeof *runs);
    for (int r = 0; r < out->n_runs; r++) {
        out->runs[r] = runs[r];
        out->n_wide += runs[r].outer * runs[r].inner;
    }
    return 0;
}

int cc_layout_init(cc_layout *out, int m, int k)
{
    return cc_layout_init_version(out, m, k, CC_SUMMARY_VERSION);
}

int cc_pair_index(int m, int i, int j)
{
    /* pairs before row i: sum_{r<i} (m-1-r) */
    return i * (2 * m - i - 1) / 2 + (j - i - 1);
}

cc_summary *cc_summary_create(int m, int k)
{
    cc_summary *s = malloc(sizeof *s);
    if (!s)
        return NULL;
    if (cc_layout_init(&s->lay, m, k) != 0) {
        free(s);
        return NULL;
    }
    s->v = calloc(s->lay.len, sizeof *s->v);
    if (!s->v) {
        free(s);
        return NULL;
    }
    s->overflow = 0;
    return s;
}

void cc_summary_free(cc_summary *s)
{
    if (!s)
        return;
    free(s->v);
    free(s);
}

void cc_summary_clear(cc_summary *s)
{
    memset(s->v, 0, s->lay.len * sizeof *s->v);
    s->overflow = 0;
}
const cc_layout *cc_summary_layout(const cc_summary *s) { return &s->lay; }
const int64_t *cc_summary_data(const cc_summary *s) { return s->v; }
int64_t *cc_summary_data_mut(cc_summary *s) { return s->v; }
int cc_summary_overflowed(const cc_summary *s) { return s->overflow; }

double cc_wide_value(const int64_t *w) { return (double)w[1] * CC_WIDE_BASE + (double)w[0]; }

/* Moves lo's multiples of 2^32 into hi (floor division, so a negative lo
 * borrows). lo - low is a multiple of 2^32 and cannot overflow. Returns 1 on
 * overflow of hi. */
static int carry(int64_t *w)
{
    int64_t low = (int64_t)((uint64_t)w[0] & 0xffffffffu);
    int64_t c = (w[0] - low) / (int64_t)4294967296;
    w[0] = low;
    return __builtin_add_overflow(w[1], c, &w[1]);
}

void cc_wide_set(int64_t *w, int64_t x)
{
    w[0] = x;
    w[1] = 0;
    carry(w);
}

/* Adds x (|x| < 2^62) to a wide sum. */
static void wide_add(cc_summary *s, int64_t *w, int64_t x)
{
    ADD(s->overflow, w[0], x);
    s->overflow |= carry(w);
}

int cc_layout_normalize(const cc_layout *L, int64_t *v)
{
    int ovf = 0;
    for (int r = 0; r < L->n_runs; r++) {
        const cc_wide_run *run = &L->runs[r];
        for (size_t o = 0; o < run->outer; o++) {
            int64_t *w = v + run->at + o * run->outer_stride;
            for (size_t i = 0; i < run->inner; i++, w += 2)
                if ((uint64_t)w[0] >> 32)
                    ovf |= carry(w);
        }
    }
    return ovf ? CC_SUMMARY_OVERFLOW : 0;
}

int cc_layout_is_normalized(const cc_layout *L, const int64_t *v)
{
    for (int r = 0; r < L->n_runs; r++) {
        const cc_wide_run *run = &L->runs[r];
        for (size_t o = 0; o < run->outer; o++) {
            const int64_t *w = v + run->at + o * run->outer_stride;
            for (size_t i = 0; i < run->inner; i++, w += 2)
                if ((uint64_t)w[0] >> 32)
                    return 0;
        }
    }
    return 1;
}

int cc_summary_normalize(cc_summary *s)
{
    if (cc_layout_normalize(&s->lay, s->v) != 0)
        s->overflow = 1;
    return s->overflow ? CC_SUMMARY_OVERFLOW : 0;
}

int cc_summary_merge_signed(cc_summary *dst, const cc_summary *src, int sign)
{
    if (dst->lay.m != src->lay.m || dst->lay.k != src->lay.k)
        return -1;
    int ovf = dst->overflow | src->overflow;
    const int64_t *b = src->v;
    int64_t *a = dst->v;
    const size_t n = dst->lay.len;
    /* element-wise: a count adds as it is, a wide sum's lo and hi words add
     * separately (lo then holds less than 2^33) and carry() settles it.
     * Most counters of a day's delta are zero (histogram bins, cells). */
    if (sign >= 0) {
        for (size_t i = 0; i < n; i++)
            if (b[i])
                ovf |= __builtin_add_overflow(a[i], b[i], &a[i]);
    } else {
        for (size_t i = 0; i < n; i++)
            if (b[i])
                ovf |= __builtin_sub_overflow(a[i], b[i], &a[i]);
    }
    ovf |= cc_layout_normalize(&dst->lay, a) != 0;
    dst->overflow = ovf;
    return ovf ? CC_SUMMARY_OVERFLOW : 0;
}

int cc_summary_merge(cc_summary *dst, const cc_summary *src)
{
    return cc_summary_merge_signed(dst, src, 1);
}

int cc_summary_equal(const cc_summary *a, const cc_summary *b)
{
    return a->lay.m == b->lay.m && a->lay.k == b->lay.k &&
           memcmp(a->v, b->v, a->lay.len * sizeof *a->v) == 0;
}

int cc_summary_convert(cc_summary *out, const int64_t *v_old, size_t n_old, int version)
{
    const cc_layout *L = &out->lay;
    cc_layout old;
    if (version == CC_SUMMARY_VERSION) {
        if (n_old != L->len)
            return -1;
        memcpy(out->v, v_old, n_old * sizeof *v_old);
        out->overflow = 0;
        return cc_summary_normalize(out) ? -1 : 0;
    }
    if (cc_layout_init_version(&old, L->m, L->k, version) != 0 || n_old != old.len ||
        old.len + L->n_wide != L->len)
        return -1;
    /* version 1 is version 2 with each wide sum one word: walk the wide
     * sums in order, copying the counts between them as they are */
    size_t from = 0, to = 0;
    for (int r = 0; r < L->n_runs; r++) {
        const cc_wide_run *run = &L->runs[r];
        for (size_t o = 0; o < run->outer; o++) {
            size_t w = run->at + o * run->outer_stride;
            for (size_t i = 0; i < run->inner; i++, w += 2) {
                size_t gap = w - to;
                memcpy(out->v + to, v_old + from, gap * sizeof *v_old);
                from += gap;
                cc_wide_set(out->v + w, v_old[from++]);
                to = w + 2;
            }
        }
    }
    memcpy(out->v + to, v_old + from, (L->len - to) * sizeof *v_old);
    out->overflow = 0;
    return 0;
}

int cc_argmax_f(const float *x, int n)
{
    int best = 0;
    for (int i = 1; i < n; i++)
        if (x[i] > x[best])
            best = i;
    return best;
}

int cc_argmax_d(const double *x, int n)
{
    int best = 0;
    for (int i = 1; i < n; i++)
        if (x[i] > x[best])
            best = i;
    return best;
}

/* Histogram scales, chosen so a KS statistic from the bins stays within 0.01
 * of the exact one on raw values from about 1,000 events per side (checked
 * against scipy.stats.ks_2samp in tests/metrics/test_drift.c).
 * Probabilities: logit(p) clamped to [-48, 21] in CC_HIST_BINS equal steps
 * (0.034 logit units: about 0.0085 wide at p = 0.5, 0.0003 at p = 0.99).
 * The lower end keeps confident ensembles' tiny class probabilities apart;
 * 21 is just above logit(1 - 2^-24/64), the largest average below 1 of
 * float32 members (M <= 64). Nats: bin 0 holds [0, 1e-15); bins 1..B-1
 * split log10 h over [-15, log10 16] equally (about 1.9 % of the value). */
#define LOGIT_LO (-48.0)
#define LOGIT_HI 21.0
#define NATS_LO_LOG10 (-15.0)
#define NATS_HI_LOG10 1.2041199826559248 /* log10(16) */

int cc_hist_bin_prob(double p)
{
    double l;
    if (!(p > 0.0))
        return 0;
    if (p >= 1.0)
        return CC_HIST_BINS - 1;
    l = log(p / (1.0 - p));
    int b = (int)floor((l - LOGIT_LO) / (LOGIT_HI - LOGIT_LO) * CC_HIST_BINS);
    return b < 0 ? 0 : b >= CC_HIST_BINS ? CC_HIST_BINS - 1 : b;
}

double cc_hist_edge_prob(int b)
{
    if (b >= CC_HIST_BINS - 1)
        return 1.0;
    double l = LOGIT_LO + (LOGIT_HI - LOGIT_LO) * (b + 1) / CC_HIST_BINS;
    return 1.0 / (1.0 + exp(-l));
}

int cc_hist_bin_nats(double h)
{
    if (!(h >= 1e-15))
        return 0;
    double t = (log10(h) - NATS_LO_LOG10) / (NATS_HI_LOG10 - NATS_LO_LOG10);
    int b = 1 + (int)floor(t * (CC_HIST_BINS - 1));
    return b < 1 ? 1 : b >= CC_HIST_BINS ? CC_HIST_BINS - 1 : b;
}

double cc_hist_edge_nats(int b)
{
    if (b <= 0)
        return 1e-15;
    if (b >= CC_HIST_BINS - 1)
        return INFINITY;
    double t = (double)b / (CC_HIST_BINS - 1);
    return pow(10.0, NATS_LO_LOG10 + t * (NATS_HI_LOG10 - NATS_LO_LOG10));
}

static int64_t fx(double x) { return llround(x * CC_FIXED_SCALE); }

/* Calibration bin of a confidence in (0, 1]: B_b = (b/C, (b+1)/C], so a
 * value on an edge goes to the lower bin (Guo et al. 2017). */
static int calib_bin(double conf)
{
    int b = (int)ceil(conf * CC_CALIB_BINS) - 1;
    return b < 0 ? 0 : b >= CC_CALIB_BINS ? CC_CALIB_BINS - 1 : b;
}

void cc_summary_add_unlabeled(cc_summary *s, const float *probs, int sign)
{
    cc_event_view e;
    if (cc_event_view_compute(&e, probs, s->lay.m, s->lay.k, -1) == 0)
        cc_summary_add_unlabeled_view(s, &e, probs, sign);
}

void cc_summary_add_unlabeled_view(cc_summary *s, const cc_event_view *e, const float *probs,
                                   int sign)
{
    const cc_layout *L = &s->lay;
    int64_t *v = s->v;
    const int m = L->m, k = L->k;

    int ovf = 0;

    ADD(ovf, v[L->n_events], sign);
    ADD(ovf, v[L->vote_ties], sign * e->vote_tie);
    ADD(ovf, v[L->pred_counts + e->ens], sign);
    for (int i = 0; i < m; i++)
        ADD(ovf, v[L->member_pred + (size_t)i * k + e->member_class[i]], sign);
    int64_t sumsq = 0;
    for (int c = 0; c < k; c++)
        sumsq += (int64_t)e->votes[c] * e->votes[c];
    ADD(ovf, v[L->fleiss_sumsq], sign * sumsq);

    for (int i = 0; i < m; i++)
        for (int j = i + 1; j < m; j++)
            ADD(ovf, v[L->pair_agree + (size_t)cc_pair_index(m, i, j)],
                sign * (e->member_class[i] == e->member_class[j]));

    cc_uncertainty u;
    if (isnan(e->entropy)) {
        cc_uncertainty_split(&u, probs, m, k, NULL);
    } else { /* cc_event_view_uncertainty ran the same split on the same probs */
        u.total_nats = e->entropy;
        u.expected_nats = e->expected_entropy;
        u.mutual_nats = e->mutual_information;
    }
    s->overflow |= ovf;
    wide_add(s, v + L->tu_fx, sign * fx(u.total_nats));
    wide_add(s, v + L->au_fx, sign * fx(u.expected_nats));
    ovf = 0;

    if (!e->unanimous) {
        /* the averaged output's top two, as an unordered pair */
        int lo = e->ens < e->second ? e->ens : e->second, hi = e->ens < e->second ? e->second : e->ens;
        ADD(ovf, v[L->contested + (size_t)lo * k + hi], sign);
    }

    int64_t *cell = v + L->em_cells + (size_t)cc_em_cell(e->avg, k) * L->em_stride;
    ADD(ovf, cell[0], sign);
    for (int c = 0; c < k; c++)
        if (e->avg[c] != 0.0)
            wide_add(s, cell + 1 + 2 * c, sign * fx(e->avg[c]));

    ADD(ovf, v[L->hist_maxprob + cc_hist_bin_prob(e->avg[e->ens])], sign);
    ADD(ovf, v[L->hist_entropy + cc_hist_bin_nats(u.total_nats)], sign);
    ADD(ovf, v[L->hist_mi + cc_hist_bin_nats(u.mutual_nats)], sign);
    for (int c = 0; c < k; c++)
        ADD(ovf, v[L->hist_class + (size_t)c * CC_HIST_BINS + cc_hist_bin_prob(e->avg[c])], sign);
    s->overflow |= ovf;
}

int cc_em_cell(const double *avg, int k)
{
    int top = cc_argmax_d(avg, k);
    int b = (int)ceil(avg[top] * CC_EM_BINS) - 1;
    b = b < 0 ? 0 : b >= CC_EM_BINS ? CC_EM_BINS - 1 : b;
    return top * CC_EM_BINS + b;
}

void cc_summary_add_label_delay(cc_summary *s, int64_t delay_s, int sign)
{
    int64_t d = delay_s > 0 ? delay_s : 0;
    ADD(s->overflow, s->v[s->lay.delayed_labels], sign);
    /* a delay past 2^62 s is no real delay: refused as an overflow */
    if (d >= (INT64_C(1) << 62))
        s->overflow = 1;
    else
        wide_add(s, s->v + s->lay.label_delay_s, sign * d);
}

/* Adds a probability vector's calibration terms to (calib, brier, nll);
 * calib holds CC_CALIB_BINS bins of CC_CALIB_STRIDE, brier and nll are wide. */
static void add_calibration(cc_summary *s, int64_t *calib, int64_t *brier, int64_t *nll,
                            const double *p, int k, int label, int sign)
{
    int top = cc_argmax_d(p, k);
    int64_t *bin = calib + calib_bin(p[top]) * CC_CALIB_STRIDE;
    ADD(s->overflow, bin[0], sign);
    ADD(s->overflow, bin[1], sign * (top == label));
    wide_add(s, bin + 2, sign * fx(p[top]));
    double bs = 0.0;
    for (int c = 0; c < k; c++) {
        double d = p[c] - (c == label ? 1.0 : 0.0);
        bs += d * d;
    }
    wide_add(s, brier, sign * fx(bs));
    double py = p[label];
    if (py < CC_NLL_EPS)
        py = CC_NLL_EPS;
    if (py > 1.0 - CC_NLL_EPS)
        py = 1.0 - CC_NLL_EPS;
    wide_add(s, nll, sign * fx(-log(py)));
}

void cc_summary_add_labeled(cc_summary *s, const float *probs, int label, int sign)
{
    cc_event_view e;
    if (label >= 0 && cc_event_view_compute(&e, probs, s->lay.m, s->lay.k, label) == 0)
        cc_summary_add_labeled_view(s, &e, probs, sign);
}

void cc_summary_add_labeled_view(cc_summary *s, const cc_event_view *e, const float *probs,
                                 int sign)
{
    const cc_layout *L = &s->lay;
    int64_t *v = s->v;
    const int m = L->m, k = L->k, label = e->label;
    int ovf = 0;

    if (label < 0 || label >= k)
        return;
    ADD(ovf, v[L->n_labeled], sign);
    ADD(ovf, v[L->label_counts + label], sign);
    ADD(ovf, v[L->confusion + (size_t)e->ens * k + label], sign);
    ADD(ovf, v[L->ens_correct], sign * e->ens_right);
    ADD(ovf, v[L->vote_correct], sign * (e->vote == label));
    ADD(ovf, v[L->vote_ties_labeled], sign * e->vote_tie);
    for (int i = 0; i < m; i++) {
        int right = e->member_right[i];
        ADD(ovf, v[L->member_correct + i], sign * right);
        ADD(ovf, v[L->ens_only + i], sign * (e->ens_right && !right));
        ADD(ovf, v[L->member_only + i], sign * (!e->ens_right && right));
    }
    ADD(ovf, v[L->oracle_correct], sign * (e->n_right > 0));
    ADD(ovf, v[L->n_right_hist + e->n_right], sign);
    for (int i = 0; i < m; i++)
        for (int j = i + 1; j < m; j++) {
            size_t p = (size_t)cc_pair_index(m, i, j);
            int ri = e->member_right[i], rj = e->member_right[j];
            int cell = ri ? (rj ? 0 : 1) : (rj ? 2 : 3);
            ADD(ovf, v[L->pair_oracle + p * 4 + cell], sign);
        }

    ADD(ovf, v[L->em_cell_labels + (size_t)cc_em_cell(e->avg, k) * k + label], sign);
    s->overflow |= ovf;
    add_calibration(s, v + L->calib, v + L->brier_fx, v + L->nll_fx, e->avg, k, label, sign);
    double row[CC_MAX_CLASSES];
    for (int i = 0; i < m; i++) {
        for (int c = 0; c < k; c++)
            row[c] = probs[(size_t)i * k + c];
        add_calibration(s, v + L->member_calib + (size_t)i * CC_CALIB_BINS * CC_CALIB_STRIDE,
                        v + L->member_brier_fx + 2 * (size_t)i, v + L->member_nll_fx + 2 * (size_t)i,
                        row, k, label, sign);
    }
}
