/* test_state.c — the rule state machine, step by step on hand-written
 * sequences: persistence ("days"), clearing ("clear_days"), reminders only
 * while breaching, days that cannot be evaluated (not_evaluated unless
 * raised; the runs carry over them), building falling back. */
#include "state.h"
#include "tcheck.h"

typedef struct step {
    cc_eval_status in;
    cc_state_kind state;
    cc_transition tr;
} step;

static void run(const char *name, const cc_rule *rule, const step *steps, int n)
{
    cc_rule_state st = {0};
    st.last_day = st.fired_day = st.last_notified_day = -1;
    for (int i = 0; i < n; i++) {
        cc_transition tr = cc_state_step(&st, rule, 100 + i, steps[i].in);
        st.found = 1;
        T_CHECK(st.state == steps[i].state && tr == steps[i].tr,
                "%s, day %d: state %s/%s, transition %s/%s", name, i + 1,
                cc_state_name(st.state), cc_state_name(steps[i].state), cc_transition_name(tr),
                cc_transition_name(steps[i].tr));
        T_CHECK(st.last_day == 100 + i, "%s: last_day", name);
    }
}

#define B CC_EVAL_BREACH
#define C CC_EVAL_CLEAR
#define S CC_EVAL_SKIPPED
#define OK CC_STATE_QUIET
#define PE CC_STATE_BUILDING
#define FI CC_STATE_RAISED
#define RE CC_STATE_CLEARED
#define NE CC_STATE_NOT_EVALUATED
#define N CC_TR_NONE
#define F CC_TR_RAISED
#define R CC_TR_CLEARED
#define M CC_TR_REMINDER

int main(void)
{
    cc_rule r1 = {0};
    r1.raise_after = 1;
    r1.clear_after = 1;
    const step once[] = {{C, OK, N}, {B, FI, F}, {B, FI, N}, {B, FI, N}, {C, RE, R},
                         {C, OK, N}, {B, FI, F}, {C, RE, R}, {B, FI, F}};
    run("for 1, clear 1", &r1, once, 9);

    cc_rule r2 = {0};
    r2.raise_after = 2;
    r2.clear_after = 2;
    const step two[] = {{B, PE, N}, {C, OK, N}, {B, PE, N}, {S, NE, N}, {B, FI, F},
                        {C, FI, N}, {B, FI, N}, {C, FI, N}, {S, FI, N}, {C, RE, R},
                        {C, OK, N}};
    run("for 2, clear 2, skips in between", &r2, two, 11);

    cc_rule r3 = {0};
    r3.raise_after = 1;
    r3.clear_after = 2;
    r3.remind_after_days = 3;
    const step remind[] = {{B, FI, F}, {B, FI, N}, {B, FI, N}, {B, FI, M}, {C, FI, N},
                           {C, RE, R}};
    run("reminders every 3 days while breaching", &r3, remind, 6);
    /* skipped days: not_evaluated (never quiet), the breach run carries over
     * them, and a raised rule stays raised */
    const step skips[] = {{S, NE, N}, {S, NE, N}, {C, OK, N}, {S, NE, N}, {B, PE, N},
                          {S, NE, N}, {B, FI, F},  {S, FI, N}, {C, FI, N}, {S, FI, N},
                          {C, RE, R}, {S, NE, N}, {C, OK, N}};
    run("days 2, clear 2, with skipped days", &r2, skips, 13);
    const step remind_clear[] = {{B, FI, F}, {B, FI, N}, {C, FI, N}, {B, FI, M}, {S, FI, N},
                                 {B, FI, N}, {B, FI, M}, {B, FI, N}};
    run("no reminder on a clear day", &r3, remind_clear, 8);

    cc_rule_state st = {0};
    st.last_day = st.fired_day = st.last_notified_day = -1;
    cc_state_step(&st, &r1, 50, CC_EVAL_SKIPPED);
    T_CHECK(st.state == CC_STATE_NOT_EVALUATED && st.breach_run == 0 && st.clear_run == 0 &&
                st.since_day == 50,
            "a first skipped day is not evaluated, not quiet");
    cc_state_kind k;
    T_CHECK(cc_state_parse("raised", &k) == 0 && k == CC_STATE_RAISED &&
                cc_state_parse("not_evaluated", &k) == 0 && k == CC_STATE_NOT_EVALUATED &&
                cc_state_parse("firing", &k) == -1 &&
                cc_state_parse("nope", &k) == -1,
            "state names");
    return t_summary("alerts_state");
}
