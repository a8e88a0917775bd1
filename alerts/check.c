/* check.c — evaluating a rule set on a day and recording the transitions. */
#include "check.h"

#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "date.h"
#include "payload.h"

const char *cc_check_outcome_name(cc_outcome o)
{
    static const char *const names[] = {"ok",       "pending",  "fired",   "firing",
                                        "reminder", "resolved", "skipped", "already_checked"};
    return names[o];
}

void cc_check_result_free(cc_check_result *r)
{
    if (!r)
        return;
    for (int i = 0; i < r->n_items; i++) {
        free(r->items[i].model);
        free(r->items[i].dedupe_key);
        free(r->items[i].sentence);
    }
    free(r->items);
    free(r);
}

static cc_outcome outcome_of(cc_transition tr, cc_state_kind after)
{
    switch (tr) {
    case CC_TR_FIRED: return CC_OUT_FIRED;
    case CC_TR_RESOLVED: return CC_OUT_RESOLVED;
    case CC_TR_REMINDER: return CC_OUT_REMINDER;
    default:
        return after == CC_STATE_FIRING ? CC_OUT_FIRING
               : after == CC_STATE_PENDING ? CC_OUT_PENDING : CC_OUT_OK;
    }
}

/* Evaluates and records one model; items are appended to res. */
static int check_model(cc_store *s, const cc_ruleset *rs, const cc_check_opts *o,
                       const char *model, int64_t now, const cc_receiver *recv, int n_recv,
                       cc_check_result *res, cc_error *err)
{
    cc_evaluator *ev = NULL;
    /* the figures come from one snapshot; the write lock is taken only for
     * the state changes below */
    int rc = cc_store_snapshot_begin(s, err);
    if (!rc)
        rc = cc_eval_create(&ev, s, model, res->day, err);
    if (rc) {
        cc_store_snapshot_end(s);
        return rc;
    }
    int first = res->n_items;
    for (int i = 0; !rc && i < cc_rules_count(rs); i++) {
        const cc_rule *rule = cc_rules_get(rs, i);
        if (!cc_rules_applies(rule, model))
            continue;
        cc_check_item *it = &res->items[res->n_items];
        memset(it, 0, sizeof *it);
        if (!(it->model = strdup(model))) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            break;
        }
        res->n_items++;
        it->rule = rule;
        rc = cc_eval_rule(ev, rule, &it->ev, err);
    }
    cc_store_snapshot_end(s);
    if (!rc)
        rc = cc_store_begin(s, err);
    if (rc) {
        cc_eval_free(ev);
        return rc;
    }
    for (int i = first; !rc && i < res->n_items; i++) {
        cc_check_item *it = &res->items[i];
        cc_rule_state st;
        if ((rc = cc_state_load(s, model, it->rule->name, &st, err)))
            break;
        it->before = st.state;
        if (st.found && res->day <= st.last_day) {
            it->after = st.state;
            it->outcome = CC_OUT_ALREADY;
            it->since_day = st.since_day;
            it->fired_day = st.fired_day;
            it->last_day = st.last_day;
            continue;
        }
        cc_transition tr = cc_state_step(&st, it->rule, res->day, it->ev.status);
        it->after = st.state;
        it->since_day = st.since_day;
        it->fired_day = st.fired_day;
        it->last_day = st.last_day;
        it->outcome = it->ev.status == CC_EVAL_SKIPPED && tr == CC_TR_NONE
                          ? CC_OUT_SKIPPED
                          : outcome_of(tr, st.state);
        if ((rc = cc_state_save(s, model, it->rule, &st, &it->ev, now, err)))
            break;
        if (tr == CC_TR_NONE)
            continue;
        const cc_report *rep = NULL;
        if ((rc = cc_eval_report(ev, it->ev.window_day, &rep, err)))
            break;
        cc_payload_in pin = {model, it->rule, tr, res->day, &it->ev, &st, rep, now};
        char key[1024], sentence[1024];
        if (cc_payload_dedupe_key(key, sizeof key, model, it->rule->name, tr, res->day) < 0) {
            rc = cc_error_set(err, CC_EINPUT, "model name '%.100s...' is too long for a "
                                              "dedupe key", model);
            break;
        }
        cc_payload_sentence(sentence, sizeof sentence, &pin);
        char *body = cc_payload_build(&pin);
        it->dedupe_key = strdup(key);
        it->sentence = strdup(sentence);
        if (!body || !it->dedupe_key || !it->sentence) {
            free(body);
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            break;
        }
        cc_notification n = {key,
                             model,
                             it->rule->name,
                             cc_transition_name(tr),
                             cc_rules_severity_name(it->rule->severity),
                             res->day,
                             it->ev.window_day,
                             it->ev.value,
                             it->ev.bound,
                             body,
                             now};
        int queued = 0;
        rc = cc_state_queue(s, &n, recv, n_recv, cc_rules_backoff_s(rs),
                            cc_rules_max_backoff_s(rs), &queued, err);
        free(body);
        if (queued)
            res->queued += n_recv;
    }
    cc_eval_free(ev);
    if (rc || o->dry_run) {
        cc_store_rollback(s);
        return rc;
    }
    return cc_store_commit(s, err);
}

int cc_check_run(cc_store *s, const cc_ruleset *rs, const cc_check_opts *o,
                 cc_check_result **out, cc_error *err)
{
    *out = NULL;
    int64_t now = o->now > 0 ? o->now : (int64_t)time(NULL);
    cc_check_result *res = calloc(1, sizeof *res);
    char **models = NULL;
    int n_models = 0, rc;
    cc_receiver *recv = NULL;
    if (!res)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    res->day = o->has_day ? o->day : cc_day_of_unix(now) - 1;
    if ((rc = cc_state_prepare(s, err)))
        goto done;
    if (o->model) {
        cc_model *m = NULL;
        if ((rc = cc_store_model_get(s, o->model, &m, err)))
            goto done;
        cc_model_free(m);
        models = calloc(1, sizeof *models);
        if (!models || !(models[0] = strdup(o->model))) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            goto done;
        }
        n_models = 1;
    } else if ((rc = cc_store_model_list(s, &models, &n_models, err))) {
        goto done;
    }
    int n_recv = cc_rules_receiver_count(rs) + o->n_extra;
    recv = calloc((size_t)(n_recv ? n_recv : 1), sizeof *recv);
    res->items = calloc((size_t)(n_models * cc_rules_count(rs) + 1), sizeof *res->items);
    if (!recv || !res->items) {
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    for (int i = 0; i < cc_rules_receiver_count(rs); i++)
        recv[i] = *cc_rules_receiver(rs, i);
    for (int i = 0; i < o->n_extra; i++)
        recv[cc_rules_receiver_count(rs) + i] = o->extra[i];
    res->receivers = n_recv;
    for (int m = 0; !rc && m < n_models; m++)
        rc = check_model(s, rs, o, models[m], now, recv, n_recv, res, err);
    for (int i = 0; !rc && i < res->n_items; i++) {
        const cc_check_item *it = &res->items[i];
        res->fired += it->outcome == CC_OUT_FIRED;
        res->resolved += it->outcome == CC_OUT_RESOLVED;
        res->reminders += it->outcome == CC_OUT_REMINDER;
        res->pending += it->outcome == CC_OUT_PENDING;
        res->skipped += it->outcome == CC_OUT_SKIPPED;
        res->already += it->outcome == CC_OUT_ALREADY;
        res->firing += it->after == CC_STATE_FIRING;
    }
    if (o->dry_run)
        res->queued = 0;
done:
    for (int i = 0; i < n_models; i++)
        free(models[i]);
    free(models);
    free(recv);
    if (rc) {
        cc_check_result_free(res);
        return rc;
    }
    *out = res;
    return 0;
}
