/* label_shift.h — estimating the class mix of the truth in a window before
 * its labels arrive, under label shift (p(x|y) fixed, p(y) moves). Pure numbers. */
#ifndef CC_METRICS_LABEL_SHIFT_H
#define CC_METRICS_LABEL_SHIFT_H

#include <stdint.h>

#define CC_BBSE_MAX_COND 1e6   /* above: "not identifiable", truncated pseudo-inverse */

typedef struct cc_bbse {
    double *priors;          /* k, estimated target priors (clipped, renormalised); caller-sized */
    double condition_number; /* of the joint confusion matrix (sigma_max / sigma_min), INF if singular */
    int regularized;         /* 1 when singular values were truncated */
    int clipped;             /* 1 when negative weights were clipped to 0 */
    int ok;                  /* 0 when nothing could be estimated (empty inputs) */
} cc_bbse;

/* Black Box Shift Estimation (Lipton, Wang & Smola 2018). confusion[i*k+j]
 * = source (baseline) labelled events predicted i with true class j;
 * target_pred[i] = window events predicted i. Solves C w = mu with C the
 * joint confusion (fractions) and mu the predicted-class fractions, by SVD
 * (GSL); singular values below CC_BBSE_MAX_COND^-1 * sigma_max are dropped.
 * q_j = w_j p_j with p the source label fractions; negatives clipped, then
 * renormalised. Classes never seen as labels in the source get q_j = 0.
 * out->priors must hold k doubles. Returns 0, -1 on out of memory. */
int cc_bbse_estimate(cc_bbse *out, const int64_t *confusion, const int64_t *target_pred, int k);

/* The same estimate in two halves, for many targets against one source: the
 * plan holds the SVD of the source's confusion (the costly half, O(k^3)),
 * apply solves for one target (O(k^2)); the results equal cc_bbse_estimate's
 * bit for bit. create sets *out to NULL (and returns 0) when the confusion
 * cannot be used (no counts, a negative count); apply with a NULL plan gives
 * ok = 0. Both return 0, or -1 on out of memory. */
typedef struct cc_bbse_plan cc_bbse_plan;
int cc_bbse_plan_create(cc_bbse_plan **out, const int64_t *confusion, int k);
int cc_bbse_plan_apply(const cc_bbse_plan *plan, cc_bbse *out, const int64_t *target_pred);
void cc_bbse_plan_free(cc_bbse_plan *plan);

typedef struct cc_em {
    double *priors;     /* k, caller-sized */
    int iterations;
    int converged;
    int ok;
} cc_em;

/* EM prior adjustment (Saerens, Latinne & Decaestecker 2002). posteriors:
 * n rows of k source posteriors; weights: n row weights (NULL = 1 each);
 * source_priors: k. Iterates from q = source priors until max |dq| < tol or
 * max_iter. Classes with source prior 0 stay 0. Returns 0 or -1. */
int cc_em_estimate(cc_em *out, const double *posteriors, const double *weights, int n, int k,
                   const double *source_priors, double tol, int max_iter);

/* The same estimate, accelerated by SQUAREM (Varadhan & Roland 2008): two EM
 * steps give a direction, a longer step along it (in log coordinates) is
 * taken when it does not lower the log-likelihood, then one EM step. Same
 * inputs and outputs as cc_em_estimate; stops when one EM step changes no
 * prior by tol or more or, if ll_tol > 0, when three EM steps raised the
 * log-likelihood sum_r u_r ln sum_j (q_j/p_j) s_rj by less than ll_tol per
 * unit of row weight (both count as converged). out->iterations counts EM
 * steps evaluated, at most max_iter. Where plain EM is slow (priors tending to
 * 0, nearly uninformative rows) it needs far fewer steps. Returns 0 or -1 on
 * out of memory. */
int cc_em_estimate_squarem(cc_em *out, const double *posteriors, const double *weights, int n,
                           int k, const double *source_priors, double tol, double ll_tol,
                           int max_iter);

#endif
