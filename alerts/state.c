/* state.c — the rule state machine and the alert tables. */
#include "state.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* The tables live in the store's versioned schema since version 4 (the
 * store also converts alert tables of the older vocabulary when it
 * upgrades a file): nothing is left to prepare here. */
int cc_state_prepare(cc_store *s, cc_error *err)
{
    (void)s;
    (void)err;
    return 0;
}

static const char *const state_names[] = {"quiet", "building", "raised", "cleared",
                                          "not_evaluated"};

const char *cc_state_name(cc_state_kind k) { return state_names[k]; }

int cc_state_parse(const char *name, cc_state_kind *out)
{
    for (int i = 0; i < 5; i++)
        if (strcmp(name, state_names[i]) == 0) {
            *out = (cc_state_kind)i;
            return 0;
        }
    return -1;
}

const char *cc_transition_name(cc_transition t)
{
    return t == CC_TR_RAISED ? "raised" : t == CC_TR_CLEARED ? "cleared"
                                        : t == CC_TR_REMINDER ? "reminder" : "none";
}

/* Copies the one stored row of a (model, rule) into the cc_rule_state. */
static int load_row(void *ctx, const cc_rule_state_rec *r)
{
    cc_rule_state *out = ctx;
    cc_state_kind k = CC_STATE_NOT_EVALUATED;
    cc_state_parse(r->state, &k);
    out->found = 1;
    out->state = k;
    out->breach_run = r->breach_run;
    out->clear_run = r->clear_run;
    out->last_day = r->last_day;
    out->since_day = r->since_day;
    out->fired_day = r->fired_day;
    out->last_notified_day = r->last_notified_day;
    return 1;
}

int cc_state_load(cc_store *s, const char *model, const char *rule, cc_rule_state *out,
                  cc_error *err)
{
    memset(out, 0, sizeof *out);
    out->last_day = out->fired_day = out->last_notified_day = -1;
    return cc_store_rule_states(s, model, rule, NULL, load_row, out, err);
}

static void enter(cc_rule_state *st, cc_state_kind k, int64_t day)
{
    if (st->state != k)
        st->since_day = day;
    st->state = k;
}

cc_transition cc_state_step(cc_rule_state *st, const cc_rule *rule, int64_t day,
                            cc_eval_status status)
{
    cc_transition tr = CC_TR_NONE;
    if (!st->found)
        st->since_day = day;
    st->last_day = day;
    if (status == CC_EVAL_SKIPPED) {
        if (st->state != CC_STATE_RAISED)
            enter(st, CC_STATE_NOT_EVALUATED, day);
        return tr;
    }
    if (status == CC_EVAL_BREACH) {
        st->breach_run++;
        st->clear_run = 0;
        if (st->state == CC_STATE_RAISED) {
            if (rule->remind_after_days > 0 &&
                day - st->last_notified_day >= rule->remind_after_days) {
                st->last_notified_day = day;
                tr = CC_TR_REMINDER;
            }
        } else if (st->breach_run >= rule->raise_after) {
            enter(st, CC_STATE_RAISED, day);
            st->fired_day = st->last_notified_day = day;
            tr = CC_TR_RAISED;
        } else {
            enter(st, CC_STATE_BUILDING, day);
        }
    } else {
        st->clear_run++;
        st->breach_run = 0;
        if (st->state == CC_STATE_RAISED) {
            if (st->clear_run >= rule->clear_after) {
                enter(st, CC_STATE_CLEARED, day);
                tr = CC_TR_CLEARED;
            }
        } else {
            enter(st, CC_STATE_QUIET, day);
        }
    }
    return tr;
}

int cc_state_save(cc_store *s, const char *model, const cc_rule *rule, const cc_rule_state *st,
                  const cc_eval_result *ev, int64_t now, cc_error *err)
{
    cc_rule_state_rec r = {model,
                           rule->name,
                           cc_state_name(st->state),
                           rule->metric,
                           cc_rules_urgency_name(rule->urgency),
                           st->since_day,
                           st->last_day,
                           st->fired_day,
                           st->breach_run,
                           st->clear_run,
                           ev ? ev->value : NAN,
                           ev ? ev->bound : NAN,
                           st->last_notified_day,
                           now};
    return cc_store_rule_state_put(s, &r, err);
}

int cc_state_queue(cc_store *s, const cc_notification *n, const cc_receiver *receivers,
                   int n_receivers, int backoff_s, int max_backoff_s, int *queued,
                   cc_error *err)
{
    cc_outbox_target *t = calloc((size_t)(n_receivers > 0 ? n_receivers : 1), sizeof *t);
    if (!t)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    for (int i = 0; i < n_receivers; i++)
        t[i] = (cc_outbox_target){receivers[i].url,          receivers[i].secret_env,
                                  receivers[i].connect_timeout_ms, receivers[i].timeout_ms,
                                  receivers[i].max_attempts, backoff_s,
                                  max_backoff_s};
    int rc = cc_store_notice_add(s, n, t, n_receivers, queued, err);
    free(t);
    return rc;
}
