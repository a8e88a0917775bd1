/* event_view.h — the figures of one event derived from its members' float32
 * probability vectors: each member's class, the averaged output, the
 * ensemble's class and runner-up, the margin between them, the plurality
 * vote, the share of member pairs that disagree, the entropy split, and,
 * given a label, who was right. What `concord review` and `show` print.
 * Pure numbers; argmax ties go to the lowest index everywhere. */
#ifndef CC_METRICS_EVENT_VIEW_H
#define CC_METRICS_EVENT_VIEW_H

#include "summary.h"

typedef struct cc_event_view {
    int m, k;
    int member_class[CC_MAX_MEMBERS];   /* argmax of each member's vector */
    double avg[CC_MAX_CLASSES];         /* averaged output (1/M) sum_m p_m */
    int ens;                            /* argmax of avg */
    int second;                         /* highest class other than ens */
    double margin;                      /* avg[ens] - avg[second] */
    int votes[CC_MAX_CLASSES];          /* members whose argmax is each class */
    int vote;                           /* plurality class, ties to the lowest index */
    int vote_tie;                       /* another class has as many votes */
    int unanimous;                      /* every member's argmax is the same */
    double disagreement;                /* share of member pairs that differ; NAN for M = 1 */
    /* filled by cc_event_view_uncertainty, NAN before */
    double entropy, expected_entropy, mutual_information;
    /* given a label; -1 in all of them without one */
    int label;
    int ens_right;
    int member_right[CC_MAX_MEMBERS];
    int n_right;
} cc_event_view;

/* Fills *out from probs (m rows of k values). label is -1 when unknown.
 * Returns 0, or -1 when m, k or label is out of range. Does not compute the
 * entropies (they cost a logarithm per value). */
int cc_event_view_compute(cc_event_view *out, const float *probs, int m, int k, int label);

/* Sets the label-dependent fields (label, ens_right, member_right, n_right)
 * of a view whose label-free fields are filled; label -1 = none, else
 * 0..k-1. cc_event_view_compute ends with this call, so a view computed
 * without a label and labelled later is the same view. */
void cc_event_view_set_label(cc_event_view *v, int label);

/* Adds entropy, expected entropy and mutual information (nats) to a view
 * computed from the same probs. */
void cc_event_view_uncertainty(cc_event_view *v, const float *probs);

/* 1 when member i is the only one right (a lone correct voice), or the
 * only one wrong (a lone wrong voice); 0 otherwise or without a label. */
int cc_event_view_lone_right(const cc_event_view *v, int i);
int cc_event_view_lone_wrong(const cc_event_view *v, int i);

#endif
