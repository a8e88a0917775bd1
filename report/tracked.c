/* tracked.c — the list of tracked figures and how to read each one. */
#include "tracked.h"

#include <math.h>

typedef double (*getter)(const cc_window_metrics *w, const cc_comparison *c);

static double dis(const cc_window_metrics *w, const cc_comparison *c) { (void)c; return w->disagreement.mean; }
static double kap(const cc_window_metrics *w, const cc_comparison *c) { (void)c; return w->kappa.mean; }
static double fle(const cc_window_metrics *w, const cc_comparison *c) { (void)c; return w->fleiss_kappa; }
static double ent(const cc_window_metrics *w, const cc_comparison *c) { (void)c; return w->entropy; }
static double exe(const cc_window_metrics *w, const cc_comparison *c) { (void)c; return w->expected_entropy; }
static double mut(const cc_window_metrics *w, const cc_comparison *c) { (void)c; return w->mutual_information; }
static double acc(const cc_window_metrics *w, const cc_comparison *c) { (void)c; return w->has_labels ? w->ensemble_accuracy : NAN; }
static double vot(const cc_window_metrics *w, const cc_comparison *c) { (void)c; return w->has_labels ? w->vote_accuracy : NAN; }
static double bst(const cc_window_metrics *w, const cc_comparison *c)
{
    (void)c;
    return w->has_labels && w->best_member >= 0 ? w->member_accuracy[w->best_member] : NAN;
}
static double gain(const cc_window_metrics *w, const cc_comparison *c) { return acc(w, c) - bst(w, c); }
static double ece(const cc_window_metrics *w, const cc_comparison *c) { (void)w; return c->has_labels ? c->calibration.ece : NAN; }
static double bri(const cc_window_metrics *w, const cc_comparison *c) { (void)w; return c->has_labels ? c->calibration.brier : NAN; }
static double nll(const cc_window_metrics *w, const cc_comparison *c) { (void)w; return c->has_labels ? c->calibration.nll : NAN; }
static double psi(const cc_window_metrics *w, const cc_comparison *c) { (void)w; return c->class_mix_psi; }
static double ksp(const cc_window_metrics *w, const cc_comparison *c) { (void)w; return c->max_prob.d; }
static double ksm(const cc_window_metrics *w, const cc_comparison *c) { (void)w; return c->mutual_information.d; }
static double bl1(const cc_window_metrics *w, const cc_comparison *c) { (void)w; return c->bbse_l1; }
static double cov(const cc_window_metrics *w, const cc_comparison *c) { (void)w; return c->label_coverage; }

static const struct {
    const char *path;
    getter get;
} tracked[] = {
    {"diversity.disagreement.mean", dis},
    {"diversity.kappa.mean", kap},
    {"diversity.fleiss_kappa", fle},
    {"uncertainty.entropy", ent},
    {"uncertainty.expected_entropy", exe},
    {"uncertainty.mutual_information", mut},
    {"accuracy.ensemble", acc},
    {"accuracy.vote", vot},
    {"accuracy.best_member_accuracy", bst},
    {"accuracy.ensemble_gain", gain},
    {"calibration.ece", ece},
    {"calibration.brier", bri},
    {"calibration.nll", nll},
    {"drift.class_mix.psi", psi},
    {"drift.max_prob.ks", ksp},
    {"drift.mutual_information.ks", ksm},
    {"label_shift.bbse_l1", bl1},
    {"labels.coverage", cov},
};

int cc_tracked_count(void) { return (int)(sizeof tracked / sizeof *tracked); }
const char *cc_tracked_path(int i) { return tracked[i].path; }
double cc_tracked_value(int i, const cc_window_metrics *w, const cc_comparison *c)
{
    return tracked[i].get(w, c);
}
