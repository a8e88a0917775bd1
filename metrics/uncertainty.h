/* uncertainty.h — entropy of the averaged output and its split into expected
 * member entropy and mutual information (Houlsby et al. 2011; Depeweg et al.
 * 2018; ensemble average of Lakshminarayanan et al. 2017). Nats. Pure numbers. */
#ifndef CC_METRICS_UNCERTAINTY_H
#define CC_METRICS_UNCERTAINTY_H

/* H(p) = -sum p_k ln p_k with 0 ln 0 = 0. */
double cc_entropy_nats(const double *p, int k);

typedef struct cc_uncertainty {
    double total_nats;     /* H(mean_m p_m) */
    double expected_nats;  /* mean_m H(p_m) */
    double mutual_nats;    /* total - expected, clamped at 0 */
} cc_uncertainty;

/* probs: m rows of k probabilities. avg_out (k doubles) receives the
 * averaged output when non-NULL. */
void cc_uncertainty_split(cc_uncertainty *out, const float *probs, int m, int k, double *avg_out);

#endif
