/* oracle.h — diversity measures on oracle outputs (member right/wrong), which
 * need labels: Kuncheva & Whitaker (2003), Machine Learning 51:181-207, and
 * generalized diversity of Partridge & Krzanowski (1997).
 * Inputs are the mergeable counts kept in a summary. NAN = undefined. */
#ifndef CC_METRICS_ORACLE_H
#define CC_METRICS_ORACLE_H

#include <stdint.h>

/* One member pair's 2x2 table: n11 both right, n10 first right only,
 * n01 second right only, n00 both wrong. */
typedef struct cc_pair_counts { int64_t n11, n10, n01, n00; } cc_pair_counts;

double cc_yule_q(cc_pair_counts c);          /* (n11 n00 - n01 n10)/(n11 n00 + n01 n10) */
double cc_oracle_rho(cc_pair_counts c);      /* phi coefficient of the 2x2 table */
double cc_oracle_disagreement(cc_pair_counts c); /* (n01 + n10)/N */
double cc_double_fault(cc_pair_counts c);    /* n00/N */

/* Non-pairwise measures from hist[l] = number of items on which exactly l
 * of the L members are right, l = 0..L. */
typedef struct cc_nonpairwise {
    double entropy_e;          /* E, 0..1 */
    double kw_variance;        /* Kohavi-Wolpert variance */
    double interrater_kappa;   /* kappa of KW 2003 (= Fleiss on right/wrong) */
    double difficulty;         /* theta = Var(l/L) */
    double generalized_diversity; /* GD, Partridge & Krzanowski 1997 */
    double coincident_failure; /* CFD, same source */
    double p_bar;              /* mean individual accuracy */
} cc_nonpairwise;

void cc_nonpairwise_compute(cc_nonpairwise *out, const int64_t *hist, int L);

#endif
