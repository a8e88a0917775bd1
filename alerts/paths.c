/* paths.c — the catalogue of metric paths rules may name, and a human name
 * for each. */
#include "paths.h"

#include <string.h>

#include "tracked.h"

typedef struct entry {
    const char *path;
    cc_path_kind kind;
    int needs_labels;
    const char *what;
} entry;

static const entry catalogue[] = {
    /* tracked figures (report/tracked.c), in that file's order */
    {"diversity.disagreement.mean", CC_PATH_TRACKED, 0, "mean pairwise disagreement"},
    {"diversity.kappa.mean", CC_PATH_TRACKED, 0, "mean pairwise Cohen's kappa"},
    {"diversity.fleiss_kappa", CC_PATH_TRACKED, 0, "Fleiss' kappa"},
    {"uncertainty.entropy", CC_PATH_TRACKED, 0, "entropy of the averaged output"},
    {"uncertainty.expected_entropy", CC_PATH_TRACKED, 0, "expected member entropy"},
    {"uncertainty.mutual_information", CC_PATH_TRACKED, 0, "mutual information"},
    {"accuracy.ensemble", CC_PATH_TRACKED, 1, "ensemble accuracy"},
    {"accuracy.vote", CC_PATH_TRACKED, 1, "plurality-vote accuracy"},
    {"accuracy.best_member_accuracy", CC_PATH_TRACKED, 1, "best member's accuracy"},
    {"accuracy.ensemble_gain", CC_PATH_TRACKED, 1, "ensemble gain over the best member"},
    {"calibration.ece", CC_PATH_TRACKED, 1, "expected calibration error"},
    {"calibration.brier", CC_PATH_TRACKED, 1, "Brier score"},
    {"calibration.nll", CC_PATH_TRACKED, 1, "log loss"},
    {"drift.class_mix.psi", CC_PATH_TRACKED, 0, "class-mix PSI"},
    {"drift.max_prob.ks", CC_PATH_TRACKED, 0, "KS distance of the maximum probability"},
    {"drift.mutual_information.ks", CC_PATH_TRACKED, 0, "KS distance of mutual information"},
    {"label_shift.bbse_l1", CC_PATH_TRACKED, 0, "BBSE label-shift distance (L1)"},
    {"labels.coverage", CC_PATH_TRACKED, 0, "label coverage"},
    /* other numbers of a report window */
    {"diversity.q.mean", CC_PATH_REPORT, 1, "mean Yule's Q"},
    {"diversity.rho.mean", CC_PATH_REPORT, 1, "mean correlation of members' errors"},
    {"diversity.double_fault.mean", CC_PATH_REPORT, 1, "mean double fault"},
    {"diversity.oracle_disagreement.mean", CC_PATH_REPORT, 1, "mean oracle disagreement"},
    {"diversity.kw_variance", CC_PATH_REPORT, 1, "Kohavi-Wolpert variance"},
    {"diversity.entropy_e", CC_PATH_REPORT, 1, "entropy measure E"},
    {"diversity.interrater_kappa", CC_PATH_REPORT, 1, "interrater agreement"},
    {"diversity.difficulty", CC_PATH_REPORT, 1, "difficulty"},
    {"diversity.generalized_diversity", CC_PATH_REPORT, 1, "generalized diversity"},
    {"diversity.coincident_failure_diversity", CC_PATH_REPORT, 1,
     "coincident failure diversity"},
    {"accuracy.oracle", CC_PATH_REPORT, 1, "oracle accuracy"},
    {"accuracy.mcnemar.p_value", CC_PATH_REPORT, 1, "McNemar p-value"},
    {"vote_ties_all", CC_PATH_REPORT, 0, "tied votes"},
    {"drift.class_mix.chi2", CC_PATH_REPORT, 0, "class-mix chi-square"},
    {"drift.class_mix.p_value", CC_PATH_REPORT, 0, "class-mix chi-square p-value"},
    {"drift.class_mix.g2", CC_PATH_REPORT, 0, "class-mix G-statistic"},
    {"drift.class_mix.js", CC_PATH_REPORT, 0, "class-mix Jensen-Shannon divergence"},
    {"drift.max_prob.p_value", CC_PATH_REPORT, 0, "KS p-value of the maximum probability"},
    {"drift.entropy.ks", CC_PATH_REPORT, 0, "KS distance of the entropy"},
    {"drift.entropy.p_value", CC_PATH_REPORT, 0, "KS p-value of the entropy"},
    {"drift.mutual_information.p_value", CC_PATH_REPORT, 0,
     "KS p-value of mutual information"},
    {"drift.per_class.min_p_bonferroni", CC_PATH_REPORT, 0,
     "smallest per-class score KS p-value (Bonferroni)"},
    {"label_shift.em_l1", CC_PATH_REPORT, 0, "EM label-shift distance (L1)"},
    {"label_shift.condition_number", CC_PATH_REPORT, 0, "BBSE condition number"},
    {"calibration.mce", CC_PATH_REPORT, 1, "maximum calibration error"},
    {"labels.delayed", CC_PATH_REPORT, 0, "delayed labels"},
    {"labels.mean_delay_hours", CC_PATH_REPORT, 0, "mean label delay (hours)"},
    /* derived for alerts */
    {"events", CC_PATH_DERIVED, 0, "event count"},
    {"labeled", CC_PATH_DERIVED, 0, "labelled event count"},
    {"labels.age_days", CC_PATH_DERIVED, 0, "label age in days"},
};

int cc_paths_count(void) { return (int)(sizeof catalogue / sizeof *catalogue); }
const char *cc_paths_name(int i) { return catalogue[i].path; }

int cc_paths_lookup(const char *path, cc_path_info *out)
{
    for (int i = 0; i < cc_paths_count(); i++) {
        if (strcmp(catalogue[i].path, path) != 0)
            continue;
        out->kind = catalogue[i].kind;
        out->needs_labels = catalogue[i].needs_labels;
        out->what = catalogue[i].what;
        out->tracked = -1;
        if (out->kind == CC_PATH_TRACKED)
            for (int t = 0; t < cc_tracked_count(); t++)
                if (strcmp(cc_tracked_path(t), path) == 0)
                    out->tracked = t;
        return out->kind == CC_PATH_TRACKED && out->tracked < 0 ? -1 : 0;
    }
    return -1;
}
