/* event_view.c — one event's derived figures (see event_view.h). */
#include "event_view.h"

#include <math.h>
#include <string.h>

#include "uncertainty.h"

int cc_event_view_compute(cc_event_view *out, const float *probs, int m, int k, int label)
{
    if (m < 1 || m > CC_MAX_MEMBERS || k < 2 || k > CC_MAX_CLASSES || label < -1 ||
        label >= k)
        return -1;
    out->m = m;
    out->k = k;
    memset(out->votes, 0, (size_t)k * sizeof *out->votes);
    for (int c = 0; c < k; c++)
        out->avg[c] = 0.0;
    /* summed member by member, as cc_uncertainty_split and the summary do,
     * so the ensemble class equals the stored one bit for bit */
    for (int i = 0; i < m; i++) {
        const float *row = probs + (size_t)i * (size_t)k;
        out->member_class[i] = cc_argmax_f(row, k);
        out->votes[out->member_class[i]]++;
        for (int c = 0; c < k; c++)
            out->avg[c] += row[c];
    }
    for (int c = 0; c < k; c++)
        out->avg[c] /= m;
    out->ens = cc_argmax_d(out->avg, k);
    out->second = -1;
    for (int c = 0; c < k; c++)
        if (c != out->ens && (out->second < 0 || out->avg[c] > out->avg[out->second]))
            out->second = c;
    out->margin = out->avg[out->ens] - out->avg[out->second];

    out->vote = 0;
    for (int c = 1; c < k; c++)
        if (out->votes[c] > out->votes[out->vote])
            out->vote = c;
    out->vote_tie = 0;
    for (int c = out->vote + 1; c < k; c++)
        if (out->votes[c] == out->votes[out->vote])
            out->vote_tie = 1;
    out->unanimous = out->votes[out->vote] == m;

    /* pairs that agree = sum_c C(n_c, 2) with n_c the votes for class c */
    if (m < 2) {
        out->disagreement = NAN;
    } else {
        long agree = 0, pairs = (long)m * (m - 1) / 2;
        for (int c = 0; c < k; c++)
            agree += (long)out->votes[c] * (out->votes[c] - 1) / 2;
        out->disagreement = (double)(pairs - agree) / (double)pairs;
    }

    out->entropy = out->expected_entropy = out->mutual_information = NAN;
    cc_event_view_set_label(out, label);
    return 0;
}

void cc_event_view_set_label(cc_event_view *v, int label)
{
    v->label = label;
    v->ens_right = label < 0 ? -1 : v->ens == label;
    v->n_right = label < 0 ? -1 : 0;
    for (int i = 0; i < v->m; i++) {
        v->member_right[i] = label < 0 ? -1 : v->member_class[i] == label;
        if (label >= 0)
            v->n_right += v->member_right[i];
    }
}

void cc_event_view_uncertainty(cc_event_view *v, const float *probs)
{
    cc_uncertainty u;
    cc_uncertainty_split(&u, probs, v->m, v->k, NULL);
    v->entropy = u.total_nats;
    v->expected_entropy = u.expected_nats;
    v->mutual_information = u.mutual_nats;
}

int cc_event_view_lone_right(const cc_event_view *v, int i)
{
    return v->label >= 0 && v->m >= 2 && v->member_right[i] == 1 && v->n_right == 1;
}

int cc_event_view_lone_wrong(const cc_event_view *v, int i)
{
    return v->label >= 0 && v->m >= 2 && v->member_right[i] == 0 && v->n_right == v->m - 1;
}
