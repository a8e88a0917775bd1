/* figures.c — the registry of report figures and how each is computed from
 * a window's metrics and its comparison with the baseline. */
#include "figures.h"

#include <math.h>
#include <string.h>

#include "tracked.h"

#define W(name, expr)                                                                      \
    static double name(const cc_window_metrics *w, const cc_comparison *c, int i)          \
    {                                                                                      \
        (void)w;                                                                           \
        (void)c;                                                                           \
        (void)i;                                                                           \
        return (expr);                                                                     \
    }

static double share(int64_t a, int64_t n) { return n > 0 ? (double)a / (double)n : NAN; }

W(dis, w->disagreement.mean)
W(kap, w->kappa.mean)
W(fle, w->fleiss_kappa)
W(ent, w->entropy)
W(exe, w->expected_entropy)
W(mut, w->mutual_information)
W(acc, w->ensemble_accuracy)
W(vot, w->vote_accuracy)
W(bst, w->best_member >= 0 ? w->member_accuracy[w->best_member] : NAN)
W(gain, w->best_member >= 0 ? w->ensemble_accuracy - w->member_accuracy[w->best_member] : NAN)
W(ece, c->has_labels ? c->calibration.ece : NAN)
W(bri, c->has_labels ? c->calibration.brier : NAN)
W(nll, c->has_labels ? c->calibration.nll : NAN)
W(psi, c->has_baseline ? c->class_mix_psi : NAN)
W(ksp, c->has_baseline ? c->max_prob.d : NAN)
W(ksm, c->has_baseline ? c->mutual_information.d : NAN)
W(bl1, c->has_baseline ? c->bbse_l1 : NAN)
W(cov, c->label_coverage)
W(evn, (double)w->events)
W(lab, (double)w->labeled)
W(qm, w->q.mean)
W(rho, w->rho.mean)
W(dfm, w->double_fault.mean)
W(odm, w->oracle_disagreement.mean)
W(kwv, w->nonpairwise.kw_variance)
W(ene, w->nonpairwise.entropy_e)
W(irk, w->nonpairwise.interrater_kappa)
W(dif, w->nonpairwise.difficulty)
W(gdv, w->nonpairwise.generalized_diversity)
W(cfd, w->nonpairwise.coincident_failure)
W(ora, w->oracle_accuracy)
W(mcp, w->mcnemar_p)
W(tie, (double)w->vote_ties)
W(chi, c->has_baseline ? c->class_mix.stat : NAN)
W(chp, c->has_baseline ? c->class_mix.p_value : NAN)
W(g2, c->has_baseline ? c->class_mix.g_stat : NAN)
W(js, c->has_baseline ? c->class_mix_js_bits : NAN)
W(kspp, c->has_baseline ? c->max_prob.p_value : NAN)
W(kse, c->has_baseline ? c->entropy.d : NAN)
W(ksep, c->has_baseline ? c->entropy.p_value : NAN)
W(ksmp, c->has_baseline ? c->mutual_information.p_value : NAN)
W(pcb, c->has_baseline ? c->per_class_min_p_bonferroni : NAN)
W(el1, c->has_baseline ? c->em_l1 : NAN)
W(bcn, c->has_baseline ? c->bbse_condition_number : NAN)
W(mce, c->has_labels ? c->calibration.mce : NAN)
W(del, (double)c->delayed_labels)
W(dlh, c->mean_label_delay_hours)
/* member scope */
W(macc, w->member_accuracy[i])
W(mdis, w->member_disagreement[i])
W(mdep, w->member_departure[i])
W(mpsi, c->has_baseline && c->members_psi ? c->members_psi[i] : NAN)
/* class scope */
W(cshare, share(w->class_counts[i], w->events))
W(cprec, w->class_precision[i])
W(crec, w->class_recall[i])
W(cks, c->has_baseline && c->per_class ? c->per_class[i].d : NAN)

#define WIN CC_SCOPE_WINDOW
#define MEM CC_SCOPE_MEMBER
#define CLS CC_SCOPE_CLASS

/* Tracked window figures first, in the order of the JSON's zscores. */
static const cc_figure registry[] = {
    {"diversity.disagreement.mean", WIN, 0, 1, "mean pairwise disagreement",
     "Share of events on which two members predict different classes, averaged over pairs.", dis},
    {"diversity.kappa.mean", WIN, 0, 1, "mean pairwise Cohen's kappa",
     "Agreement of two members beyond chance (Cohen's kappa), averaged over pairs.", kap},
    {"diversity.fleiss_kappa", WIN, 0, 1, "Fleiss' kappa",
     "Agreement of all members beyond chance, each event rated by every member.", fle},
    {"uncertainty.entropy", WIN, 0, 1, "entropy of the averaged output",
     "Mean entropy of the averaged probabilities (nats): total uncertainty.", ent},
    {"uncertainty.expected_entropy", WIN, 0, 1, "expected member entropy",
     "Mean of the members' own entropies (nats): the uncertainty they agree on.", exe},
    {"uncertainty.mutual_information", WIN, 0, 1, "mutual information",
     "Total minus expected entropy (nats): how much the members' probabilities differ.", mut},
    {"accuracy.ensemble", WIN, 1, 1, "ensemble accuracy",
     "Share of labelled events the averaged output gets right.", acc},
    {"accuracy.vote", WIN, 1, 1, "plurality-vote accuracy",
     "Share of labelled events the plurality vote gets right.", vot},
    {"accuracy.best_member_accuracy", WIN, 1, 1, "best member's accuracy",
     "Accuracy of the member that is right most often in this window.", bst},
    {"accuracy.ensemble_gain", WIN, 1, 1, "ensemble gain over the best member",
     "Ensemble accuracy minus the best member's accuracy.", gain},
    {"calibration.ece", WIN, 1, 1, "expected calibration error",
     "Mean gap between confidence and accuracy over 15 equal-width bins.", ece},
    {"calibration.brier", WIN, 1, 1, "Brier score",
     "Mean squared error of the averaged probabilities against the label.", bri},
    {"calibration.nll", WIN, 1, 1, "log loss",
     "Mean negative log-probability of the true class.", nll},
    {"drift.class_mix.psi", WIN, 0, 1, "class-mix PSI",
     "Population stability index of the predicted class mix against the baseline.", psi},
    {"drift.max_prob.ks", WIN, 0, 1, "KS distance of the maximum probability",
     "Kolmogorov-Smirnov distance of the top probability's distribution from the baseline's.",
     ksp},
    {"drift.mutual_information.ks", WIN, 0, 1, "KS distance of mutual information",
     "Kolmogorov-Smirnov distance of per-event mutual information from the baseline's.", ksm},
    {"label_shift.bbse_l1", WIN, 0, 1, "BBSE label-shift distance (L1)",
     "L1 distance of the estimated true class mix (BBSE) from the baseline's label mix.", bl1},
    {"labels.coverage", WIN, 0, 1, "label coverage", "Share of events with a label.", cov},
    {"events", WIN, 0, 1, "event count", "Events in the window.", evn},
    {"labeled", WIN, 0, 1, "labelled event count", "Events with a label in the window.", lab},
    /* window figures without baseline statistics */
    {"diversity.q.mean", WIN, 1, 0, "mean Yule's Q",
     "Yule's Q of two members' correctness, averaged over pairs.", qm},
    {"diversity.rho.mean", WIN, 1, 0, "mean correlation of members' errors",
     "Correlation of two members' correctness, averaged over pairs.", rho},
    {"diversity.double_fault.mean", WIN, 1, 0, "mean double fault",
     "Share of labelled events both members of a pair get wrong, averaged over pairs.", dfm},
    {"diversity.oracle_disagreement.mean", WIN, 1, 0, "mean oracle disagreement",
     "Share of labelled events exactly one member of a pair gets right, averaged.", odm},
    {"diversity.kw_variance", WIN, 1, 0, "Kohavi-Wolpert variance",
     "Kohavi-Wolpert variance of the members' correctness.", kwv},
    {"diversity.entropy_e", WIN, 1, 0, "entropy measure E",
     "Kuncheva and Whitaker's entropy measure of the members' correctness.", ene},
    {"diversity.interrater_kappa", WIN, 1, 0, "interrater agreement",
     "Interrater agreement kappa of the members' correctness.", irk},
    {"diversity.difficulty", WIN, 1, 0, "difficulty",
     "Variance of the share of members right per event.", dif},
    {"diversity.generalized_diversity", WIN, 1, 0, "generalized diversity",
     "Partridge and Krzanowski's generalized diversity.", gdv},
    {"diversity.coincident_failure_diversity", WIN, 1, 0, "coincident failure diversity",
     "Partridge and Krzanowski's coincident failure diversity.", cfd},
    {"accuracy.oracle", WIN, 1, 0, "oracle accuracy",
     "Share of labelled events at least one member gets right.", ora},
    {"accuracy.mcnemar.p_value", WIN, 1, 0, "McNemar p-value",
     "Exact McNemar p-value of the ensemble against the best member.", mcp},
    {"vote_ties_all", WIN, 0, 0, "tied votes", "Events on which the plurality vote tied.", tie},
    {"drift.class_mix.chi2", WIN, 0, 0, "class-mix chi-square",
     "Pearson chi-square of the predicted class mix against the baseline's.", chi},
    {"drift.class_mix.p_value", WIN, 0, 0, "class-mix chi-square p-value",
     "p-value of the class-mix chi-square.", chp},
    {"drift.class_mix.g2", WIN, 0, 0, "class-mix G-statistic",
     "Likelihood-ratio G statistic of the predicted class mix.", g2},
    {"drift.class_mix.js", WIN, 0, 0, "class-mix Jensen-Shannon divergence",
     "Jensen-Shannon divergence (bits) of the predicted class mix from the baseline's.", js},
    {"drift.max_prob.p_value", WIN, 0, 0, "KS p-value of the maximum probability",
     "p-value of the maximum probability's KS test.", kspp},
    {"drift.entropy.ks", WIN, 0, 0, "KS distance of the entropy",
     "Kolmogorov-Smirnov distance of per-event entropy from the baseline's.", kse},
    {"drift.entropy.p_value", WIN, 0, 0, "KS p-value of the entropy",
     "p-value of the entropy's KS test.", ksep},
    {"drift.mutual_information.p_value", WIN, 0, 0, "KS p-value of mutual information",
     "p-value of mutual information's KS test.", ksmp},
    {"drift.per_class.min_p_bonferroni", WIN, 0, 0,
     "smallest per-class score KS p-value (Bonferroni)",
     "Smallest p-value of the per-class score KS tests, times the number of classes.", pcb},
    {"label_shift.em_l1", WIN, 0, 0, "EM label-shift distance (L1)",
     "L1 distance of the EM estimate of the true class mix from the baseline's.", el1},
    {"label_shift.condition_number", WIN, 0, 0, "BBSE condition number",
     "Condition number of the confusion matrix BBSE inverts.", bcn},
    {"calibration.mce", WIN, 1, 0, "maximum calibration error",
     "Largest gap between confidence and accuracy over the bins.", mce},
    {"labels.delayed", WIN, 0, 0, "delayed labels",
     "Labels that arrived after their event was stored.", del},
    {"labels.mean_delay_hours", WIN, 0, 0, "mean label delay (hours)",
     "Mean time from an event to its delayed label.", dlh},
    /* one per member */
    {"accuracy.members", MEM, 1, 1, "accuracy", "Share of labelled events the member gets right.",
     macc},
    {"by_member.disagreement", MEM, 0, 1, "disagreement with the other members",
     "Share of events on which the member and another member differ, averaged over the others.",
     mdis},
    {"by_member.departure", MEM, 0, 1, "departure from the other members",
     "The member's disagreement with the others minus theirs among themselves: near 0 when "
     "all move together, high when one member goes its own way.", mdep},
    {"drift.members_psi", MEM, 0, 1, "class-mix PSI",
     "Population stability index of the member's own predicted class mix against its baseline.",
     mpsi},
    /* one per class */
    {"by_class.predicted_share", CLS, 0, 1, "predicted share",
     "Share of events the averaged output assigns to the class.", cshare},
    {"by_class.precision", CLS, 1, 1, "precision",
     "Of the labelled events predicted as the class, the share that are of it.", cprec},
    {"by_class.recall", CLS, 1, 1, "recall",
     "Of the labelled events of the class, the share predicted as it.", crec},
    {"drift.per_class.ks", CLS, 0, 0, "score KS distance",
     "Kolmogorov-Smirnov distance of the class's averaged probability from the baseline's.", cks},
};

#define N_FIGURES ((int)(sizeof registry / sizeof *registry))

int cc_figures_count(void) { return N_FIGURES; }
const cc_figure *cc_figures_get(int i) { return &registry[i]; }

const cc_figure *cc_figures_find(const char *path)
{
    for (int i = 0; i < N_FIGURES; i++)
        if (strcmp(registry[i].path, path) == 0)
            return &registry[i];
    return NULL;
}

int cc_figures_width(const cc_figure *f, int m, int k)
{
    return f->scope == CC_SCOPE_MEMBER ? m : f->scope == CC_SCOPE_CLASS ? k : 1;
}

const char *cc_figures_scope_name(cc_figure_scope s)
{
    return s == CC_SCOPE_MEMBER ? "member" : s == CC_SCOPE_CLASS ? "class" : "window";
}

double cc_figures_value(const cc_figure *f, const cc_window_metrics *w, const cc_comparison *c,
                        int index)
{
    if (index < 0 || index >= cc_figures_width(f, w->m, w->k))
        return NAN;
    if (f->needs_labels && !w->has_labels)
        return NAN;
    return f->value(w, c, index);
}

void cc_figures_range(const cc_figure *f, double *lo, double *hi)
{
    static const struct {
        const char *prefix;
        double lo, hi;
    } ranges[] = {
        /* first match wins */
        {"diversity.kappa", -1, 1},          {"diversity.fleiss_kappa", -1, 1},
        {"diversity.q", -1, 1},              {"diversity.rho", -1, 1},
        {"diversity.interrater_kappa", -1, 1}, {"accuracy.ensemble_gain", -1, 1},
        {"by_member.departure", -1, 1},      {"diversity.", 0, 1},
        {"accuracy.", 0, 1},                 {"calibration.ece", 0, 1},
        {"calibration.mce", 0, 1},           {"calibration.brier", 0, 2},
        {"labels.coverage", 0, 1},           {"by_class.", 0, 1},
        {"by_member.", 0, 1},                {"drift.max_prob.ks", 0, 1},
        {"drift.entropy.ks", 0, 1},          {"drift.mutual_information.ks", 0, 1},
        {"drift.per_class.ks", 0, 1},        {"label_shift.bbse_l1", 0, 2},
        {"label_shift.em_l1", 0, 2},         {"drift.class_mix.js", 0, 1},
        {"drift.", 0, INFINITY},             {"uncertainty.", 0, INFINITY},
        {"calibration.nll", 0, INFINITY},    {"events", 0, INFINITY},
        {"labeled", 0, INFINITY},            {"vote_ties_all", 0, INFINITY},
        {"labels.", 0, INFINITY},
    };
    *lo = -INFINITY;
    *hi = INFINITY;
    if (strstr(f->path, "p_value") || strstr(f->path, "min_p_bonferroni")) {
        *lo = 0;
        *hi = 1;
        return;
    }
    for (size_t i = 0; i < sizeof ranges / sizeof *ranges; i++)
        if (strncmp(f->path, ranges[i].prefix, strlen(ranges[i].prefix)) == 0) {
            *lo = ranges[i].lo;
            *hi = ranges[i].hi;
            return;
        }
}

int cc_tracked_count(void)
{
    int n = 0;
    while (n < N_FIGURES && registry[n].tracked && registry[n].scope == CC_SCOPE_WINDOW)
        n++;
    return n;
}

int cc_tracked_slots(int m, int k)
{
    int n = 0;
    for (int i = 0; i < N_FIGURES; i++)
        if (registry[i].tracked)
            n += cc_figures_width(&registry[i], m, k);
    return n;
}

int cc_tracked_slot(const cc_figure *f, int index, int m, int k)
{
    int n = 0;
    for (int i = 0; i < N_FIGURES; i++) {
        if (!registry[i].tracked)
            continue;
        if (&registry[i] == f)
            return index >= 0 && index < cc_figures_width(f, m, k) ? n + index : -1;
        n += cc_figures_width(&registry[i], m, k);
    }
    return -1;
}

const cc_figure *cc_tracked_figure(int t, int m, int k, int *index)
{
    for (int i = 0; i < N_FIGURES; i++) {
        if (!registry[i].tracked)
            continue;
        int wd = cc_figures_width(&registry[i], m, k);
        if (t < wd) {
            *index = t;
            return &registry[i];
        }
        t -= wd;
    }
    *index = -1;
    return NULL;
}

const char *cc_tracked_path(int t)
{
    int index;
    const cc_figure *f = cc_tracked_figure(t, 1, 2, &index);
    return f ? f->path : "";
}

double cc_tracked_value(int t, const cc_window_metrics *w, const cc_comparison *c)
{
    int index;
    const cc_figure *f = cc_tracked_figure(t, w->m, w->k, &index);
    return f ? cc_figures_value(f, w, c, index) : NAN;
}
