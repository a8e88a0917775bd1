/* test_event_view.c — one event's derived figures (metrics/event_view.h)
 * against hand-computed values and the worked examples A and C of
 * METHODS.md section 3 (the same values as tests/metrics/test_uncertainty.c). */
#include <math.h>

#include "checks.h"
#include "event_view.h"

static void example_c(check_log *log)
{
    /* members [.7,.2,.1], [.1,.8,.1], [.3,.3,.4]: classes 0, 1, 2 */
    const float p[9] = {0.7f, 0.2f, 0.1f, 0.1f, 0.8f, 0.1f, 0.3f, 0.3f, 0.4f};
    cc_event_view v;
    check_int(log, "C: compute", cc_event_view_compute(&v, p, 3, 3, 1), 0, "valid input");
    cc_event_view_uncertainty(&v, p);
    const char *src = "hand-computed from the three vectors";
    check_int(log, "C: member 0 class", v.member_class[0], 0, src);
    check_int(log, "C: member 1 class", v.member_class[1], 1, src);
    check_int(log, "C: member 2 class", v.member_class[2], 2, src);
    check_close(log, "C: avg[0]", v.avg[0], 1.1 / 3, 1e-7, 0, src);
    check_close(log, "C: avg[1]", v.avg[1], 1.3 / 3, 1e-7, 0, src);
    check_close(log, "C: avg[2]", v.avg[2], 0.6 / 3, 1e-7, 0, src);
    check_int(log, "C: ensemble class", v.ens, 1, src);
    check_int(log, "C: runner-up", v.second, 0, src);
    check_close(log, "C: margin", v.margin, 0.2 / 3, 1e-7, 0, src);
    check_int(log, "C: vote (three-way tie to the lowest class)", v.vote, 0, src);
    check_int(log, "C: vote tie", v.vote_tie, 1, src);
    check_int(log, "C: unanimous", v.unanimous, 0, src);
    check_close(log, "C: disagreement (3 of 3 pairs)", v.disagreement, 1.0, 0, 0, src);
    check_close(log, "C: entropy", v.entropy, 1.052139, 5e-7, 0,
                "computed, METHODS.md section 3 example C");
    check_close(log, "C: expected entropy", v.expected_entropy, 0.843250, 5e-7, 0,
                "computed, METHODS.md section 3 example C");
    check_close(log, "C: mutual information", v.mutual_information, 0.208889, 5e-7, 0,
                "computed, METHODS.md section 3 example C");
    check_int(log, "C: ensemble right (label 1)", v.ens_right, 1, src);
    check_int(log, "C: members right", v.n_right, 1, src);
    check_int(log, "C: member 1 alone right", cc_event_view_lone_right(&v, 1), 1, src);
    check_int(log, "C: member 0 not alone right", cc_event_view_lone_right(&v, 0), 0, src);
    check_int(log, "C: nobody alone wrong", cc_event_view_lone_wrong(&v, 0) +
                                                cc_event_view_lone_wrong(&v, 2), 0, src);
}

static void example_a(check_log *log)
{
    /* [0.9, 0.1], [0.1, 0.9]: the averaged output is a tie */
    const float p[4] = {0.9f, 0.1f, 0.1f, 0.9f};
    cc_event_view v;
    cc_event_view_compute(&v, p, 2, 2, -1);
    cc_event_view_uncertainty(&v, p);
    const char *src = "hand-computed; ties go to the lowest index (README)";
    check_int(log, "A: ensemble class on a tie", v.ens, 0, src);
    check_int(log, "A: runner-up", v.second, 1, src);
    check_close(log, "A: margin of a tie", v.margin, 0.0, 0, 0, src);
    check_int(log, "A: vote tie", v.vote_tie, 1, src);
    check_close(log, "A: entropy", v.entropy, 0.693147, 5e-7, 0,
                "METHODS.md section 3 example A (hand-computable; scipy entropy)");
    check_close(log, "A: expected entropy", v.expected_entropy, 0.325083, 5e-7, 0,
                "METHODS.md section 3 example A");
    check_close(log, "A: mutual information", v.mutual_information, 0.368064, 5e-7, 0,
                "METHODS.md section 3 example A");
    check_int(log, "A: no label, ensemble right unknown", v.ens_right, -1, src);
    check_int(log, "A: no label, members right unknown", v.n_right, -1, src);
    check_int(log, "A: no label, no lone voice", cc_event_view_lone_right(&v, 0), 0, src);
}

static void four_members(check_log *log)
{
    const float p[12] = {0.6f, 0.3f, 0.1f, 0.5f, 0.4f, 0.1f, 0.2f, 0.7f, 0.1f, 0.6f, 0.2f, 0.2f};
    cc_event_view v;
    const char *src = "hand-computed: classes 0, 0, 1, 0; averaged [.475, .4, .125]";
    cc_event_view_compute(&v, p, 4, 3, 0);
    check_int(log, "4m: vote", v.vote, 0, src);
    check_int(log, "4m: votes for class 0", v.votes[0], 3, src);
    check_int(log, "4m: no vote tie", v.vote_tie, 0, src);
    check_close(log, "4m: margin", v.margin, 0.075, 1e-7, 0, src);
    check_close(log, "4m: disagreement, 3 of 6 pairs differ", v.disagreement, 0.5, 0, 0, src);
    check_int(log, "4m: entropies wait for cc_event_view_uncertainty", isnan(v.entropy), 1, src);
    check_int(log, "4m, label 0: member 2 alone wrong", cc_event_view_lone_wrong(&v, 2), 1, src);
    check_int(log, "4m, label 0: member 0 not alone wrong", cc_event_view_lone_wrong(&v, 0), 0,
              src);
    cc_event_view_compute(&v, p, 4, 3, 1);
    check_int(log, "4m, label 1: ensemble wrong", v.ens_right, 0, src);
    check_int(log, "4m, label 1: member 2 alone right", cc_event_view_lone_right(&v, 2), 1, src);
}

static void edges(check_log *log)
{
    const char *src = "definition (event_view.h)";
    const float one[4] = {0.2f, 0.4f, 0.2f, 0.2f};
    cc_event_view v;
    cc_event_view_compute(&v, one, 1, 4, 1);
    cc_event_view_uncertainty(&v, one);
    check_int(log, "M = 1: disagreement undefined", isnan(v.disagreement), 1, src);
    check_close(log, "M = 1: no mutual information", v.mutual_information, 0.0, 0, 0,
                "METHODS.md section 3 edge: M = 1 gives EU = 0");
    check_int(log, "M = 1: unanimous", v.unanimous, 1, src);
    check_int(log, "M = 1: no lone voice", cc_event_view_lone_right(&v, 0), 0, src);
    check_int(log, "second place ties to the lowest index", v.second, 0,
              "hand-computed: [.2,.4,.2,.2]");
    check_int(log, "label out of range refused", cc_event_view_compute(&v, one, 1, 4, 4), -1, src);
    check_int(log, "label below -1 refused", cc_event_view_compute(&v, one, 1, 4, -2), -1, src);
    check_int(log, "no members refused", cc_event_view_compute(&v, one, 0, 4, -1), -1, src);
    check_int(log, "one class refused", cc_event_view_compute(&v, one, 4, 1, -1), -1, src);
}

int main(void)
{
    check_log log = {"test_event_view", 0, 0};
    example_c(&log);
    example_a(&log);
    four_members(&log);
    edges(&log);
    return check_finish(&log);
}
