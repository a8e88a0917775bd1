/* check.c — evaluating a rule set on a day, or a range of days in order,
 * and recording the transitions. */
#include "check.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "date.h"
#include "payload.h"
#include "store_slices.h"

const char *cc_check_outcome_name(cc_outcome o)
{
    static const char *const names[] = {"quiet",   "building", "raised",        "still_raised",
                                        "reminder", "cleared", "not_evaluated", "already_checked"};
    return names[o];
}

void cc_check_result_free(cc_check_result *r)
{
    if (!r)
        return;
    for (int i = 0; i < r->n_items; i++) {
        free(r->items[i].model);
        free(r->items[i].notice_id);
        free(r->items[i].sentence);
    }
    free(r->items);
    for (int b = 0; b < r->n_blocks; b++) {
        for (int i = 0; i < r->block_len[b]; i++)
            if (r->blocks[b][i].slice)
                free(r->blocks[b][i].name); /* the key; the slice's name shares its buffer */
        free(r->blocks[b]);
    }
    free(r->blocks);
    free(r->block_len);
    free(r);
}

/* The state key of a rule's copy for one slice, "<rule>@<slice>" ('/' and
 * '%' in the slice as %2F and %25, so notice ids stay readable from the
 * right), followed in the same buffer by the slice's name. */
static char *slice_key(const char *rule, const char *slice, const char **slice_out)
{
    size_t rl = strlen(rule), sl = strlen(slice), n = 0;
    for (size_t i = 0; i < sl; i++)
        n += slice[i] == '/' || slice[i] == '%' ? 3 : 1;
    char *buf = malloc(rl + 1 + n + 1 + sl + 1);
    if (!buf)
        return NULL;
    char *p = buf;
    memcpy(p, rule, rl);
    p += rl;
    *p++ = '@';
    for (size_t i = 0; i < sl; i++) {
        if (slice[i] == '/' || slice[i] == '%') {
            memcpy(p, slice[i] == '/' ? "%2F" : "%25", 3);
            p += 3;
        } else {
            *p++ = slice[i];
        }
    }
    *p++ = '\0';
    memcpy(p, slice, sl + 1);
    *slice_out = p;
    return buf;
}

/* The rules that apply to model, as evaluated: a new block in res holding
 * the model-scope rules (shallow copies), then for each slice of the model
 * (the "pruned, unsliced" part excepted) a copy of every each-slice rule.
 * Slice-major order, so each (day, slice) report is built once a day. A
 * file without slices (schema 3, read as it is) gets no slice copies. */
static int rule_block(cc_store *s, const cc_ruleset *rs, const char *model,
                      cc_check_result *res, cc_rule **out, int *n_out, cc_error *err)
{
    cc_model *m = NULL;
    cc_slice *slices = NULL;
    int n_slices = 0, n_rules = cc_rules_count(rs), n = 0, rc = 0;
    *out = NULL;
    *n_out = 0;
    int sliced = 0;
    for (int i = 0; i < n_rules; i++)
        sliced += cc_rules_get(rs, i)->each_slice && cc_rules_applies(cc_rules_get(rs, i), model);
    if (sliced && cc_store_slices_kept(s) &&
        ((rc = cc_store_model_get(s, model, &m, err)) ||
         (rc = cc_store_slice_list(s, m, &slices, &n_slices, err))))
        goto done;
    cc_rule **blocks = realloc(res->blocks, (size_t)(res->n_blocks + 1) * sizeof *blocks);
    if (blocks)
        res->blocks = blocks;
    int *lens = realloc(res->block_len, (size_t)(res->n_blocks + 1) * sizeof *lens);
    if (lens)
        res->block_len = lens;
    /* one slice is the whole model again: slice copies only from two slices on */
    int n_live = 0;
    for (int j = 0; j < n_slices; j++)
        n_live += slices[j].kind != CC_SLICE_PRUNED;
    int n_use = n_live < 2 ? 0 : n_slices;
    cc_rule *b = calloc((size_t)n_rules * (size_t)(n_use + 1) + 1, sizeof *b);
    if (!blocks || !lens || !b) {
        free(b);
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    res->blocks[res->n_blocks] = b;
    res->block_len[res->n_blocks++] = 0;
    for (int i = 0; i < n_rules; i++) {
        const cc_rule *r = cc_rules_get(rs, i);
        if (!r->each_slice && cc_rules_applies(r, model))
            b[n++] = *r;
    }
    for (int j = 0; j < n_use; j++) {
        if (slices[j].kind == CC_SLICE_PRUNED)
            continue;
        for (int i = 0; i < n_rules; i++) {
            const cc_rule *r = cc_rules_get(rs, i);
            if (!r->each_slice || !cc_rules_applies(r, model))
                continue;
            b[n] = *r;
            b[n].rule_name = r->name;
            if (!(b[n].name = slice_key(r->name, cc_slice_name(&slices[j]), &b[n].slice))) {
                rc = cc_error_set(err, CC_ENOMEM, "out of memory");
                goto done;
            }
            res->block_len[res->n_blocks - 1] = ++n;
        }
    }
    res->block_len[res->n_blocks - 1] = n;
    *out = b;
    *n_out = n;
done:
    cc_slice_list_free(slices, n_slices);
    cc_model_free(m);
    return rc;
}

static cc_outcome outcome_of(cc_transition tr, cc_state_kind after, cc_eval_status status)
{
    switch (tr) {
    case CC_TR_RAISED: return CC_OUT_RAISED;
    case CC_TR_CLEARED: return CC_OUT_CLEARED;
    case CC_TR_REMINDER: return CC_OUT_REMINDER;
    default:
        if (status == CC_EVAL_SKIPPED)
            return CC_OUT_NOT_EVALUATED;
        return after == CC_STATE_RAISED     ? CC_OUT_STILL_RAISED
               : after == CC_STATE_BUILDING ? CC_OUT_BUILDING
                                            : CC_OUT_QUIET;
    }
}

/* Builds, records and queues the notification of one transition. */
static int notify(cc_store *s, const cc_ruleset *rs, int dry_run, cc_evaluator *ev,
                  cc_check_item *it, const cc_rule_state *st, cc_transition tr, int64_t now,
                  const cc_receiver *recv, int n_recv, cc_check_result *res, cc_error *err)
{
    const cc_report *rep = NULL;
    int rc = cc_eval_report_slice(ev, it->ev.window_day, it->rule->slice, &rep, err);
    if (rc)
        return rc;
    cc_payload_in pin = {it->model, it->rule, tr, it->day, &it->ev, st, rep, now};
    char key[1024], sentence[1024];
    if (cc_payload_notice_id(key, sizeof key, it->model, it->rule->name, tr, it->day) < 0)
        return cc_error_set(err, CC_EINPUT, "model name '%.100s...' is too long for a "
                                            "notice id", it->model);
    cc_payload_sentence(sentence, sizeof sentence, &pin);
    char *body = cc_payload_build(&pin);
    it->notice_id = strdup(key);
    it->sentence = strdup(sentence);
    if (!body || !it->notice_id || !it->sentence) {
        free(body);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    cc_notification n = {key,
                         it->model,
                         it->rule->name,
                         cc_transition_name(tr),
                         cc_rules_urgency_name(it->rule->urgency),
                         it->day,
                         it->ev.window_day,
                         it->ev.value,
                         it->ev.bound,
                         body,
                         now};
    int queued = 0;
    if (!dry_run)
        rc = cc_state_queue(s, &n, recv, n_recv, cc_rules_backoff_s(rs),
                            cc_rules_max_backoff_s(rs), &queued, err);
    free(body);
    if (queued)
        res->queued += n_recv;
    return rc;
}

/* Evaluates and records one model over the days; items are appended to
 * res. The rules' states are loaded once and carried from day to day. */
static int check_model(cc_store *s, const cc_ruleset *rs, const cc_check_opts *o,
                       const char *model, int64_t now, const cc_receiver *recv, int n_recv,
                       cc_check_result *res, cc_error *err)
{
    cc_evaluator *ev = NULL;
    cc_rule *rules = NULL;
    int n_rules = 0;
    cc_rule_state *states = NULL;
    cc_store *fig = o->figures ? o->figures : s;
    int rc = rule_block(fig, rs, model, res, &rules, &n_rules, err);
    if (!rc) {
        /* room for every item of this model */
        int64_t want = res->n_items + (int64_t)n_rules * (res->last_day - res->day + 1);
        if (want > res->cap_items) {
            cc_check_item *grown = realloc(res->items, (size_t)want * sizeof *grown);
            if (grown) {
                res->items = grown;
                res->cap_items = (int)want;
            }
        }
        states = calloc((size_t)(n_rules ? n_rules : 1), sizeof *states);
        rc = states && res->cap_items >= want ? cc_eval_create(&ev, fig, model, res->day, err)
                                              : cc_error_set(err, CC_ENOMEM, "out of memory");
        int max_lag = 0;
        for (int i = 0; !rc && i < n_rules; i++)
            max_lag = rules[i].lag_days > max_lag ? rules[i].lag_days : max_lag;
        if (!rc)
            cc_eval_set_horizon(ev, max_lag);
    }
    /* a dry run (a replay, `report --rules`, `rules validate`) only reads:
     * one snapshot, no write lock, so it works on a read-only store */
    if (!rc)
        rc = o->dry_run ? cc_store_snapshot_begin(s, err) : cc_store_work_begin(s, err);
    if (rc) {
        free(states);
        cc_eval_free(ev);
        return rc;
    }
    for (int i = 0; !rc && i < n_rules; i++) {
        if (!o->fresh) {
            rc = cc_state_load(s, model, rules[i].name, &states[i], err);
            continue;
        }
        memset(&states[i], 0, sizeof states[i]);
        states[i].last_day = states[i].fired_day = states[i].last_notified_day = -1;
    }
    for (int64_t day = res->day; !rc && day <= res->last_day; day++) {
        cc_eval_set_day(ev, day);
        for (int i = 0; !rc && i < n_rules; i++) {
            const cc_rule *rule = &rules[i];
            cc_check_item *it = &res->items[res->n_items];
            memset(it, 0, sizeof *it);
            if (!(it->model = strdup(model))) {
                rc = cc_error_set(err, CC_ENOMEM, "out of memory");
                break;
            }
            res->n_items++;
            it->rule = rule;
            it->day = day;
            cc_rule_state *st = &states[i];
            it->before = st->state;
            if (st->found && day <= st->last_day) {
                it->after = st->state;
                it->outcome = CC_OUT_ALREADY;
                it->since_day = st->since_day;
                it->fired_day = st->fired_day;
                it->last_day = st->last_day;
                it->ev.value = it->ev.bound = it->ev.mean = it->ev.sd = it->ev.z = NAN;
                it->ev.subject_index = -1;
                continue;
            }
            if ((rc = cc_eval_rule(ev, rule, &it->ev, err)))
                break;
            cc_transition tr = cc_state_step(st, rule, day, it->ev.status);
            st->found = 1;
            it->after = st->state;
            it->since_day = st->since_day;
            it->fired_day = st->fired_day;
            it->last_day = st->last_day;
            it->outcome = outcome_of(tr, st->state, it->ev.status);
            if (!o->dry_run && (rc = cc_state_save(s, model, rule, st, &it->ev, now, err)))
                break;
            if (tr != CC_TR_NONE)
                rc = notify(s, rs, o->dry_run, ev, it, st, tr, now, recv, n_recv, res, err);
        }
    }
    cc_eval_free(ev);
    free(states);
    if (o->dry_run) {
        cc_store_snapshot_end(s);
        return rc;
    }
    if (rc) {
        cc_store_work_abort(s);
        return rc;
    }
    return cc_store_work_commit(s, err);
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
    res->last_day = o->has_to ? o->to : res->day;
    if (res->last_day < res->day || res->last_day - res->day > 3660) {
        rc = cc_error_set(err, CC_EINPUT, "the range of days to check must run forward and "
                                          "span at most ten years");
        goto done;
    }
    if (!(o->dry_run && o->fresh) && (rc = cc_state_prepare(s, err)))
        goto done;
    if (o->model) {
        cc_model *m = NULL;
        if ((rc = cc_store_model_get(o->figures ? o->figures : s, o->model, &m, err)))
            goto done;
        cc_model_free(m);
        models = calloc(1, sizeof *models);
        if (!models || !(models[0] = strdup(o->model))) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            goto done;
        }
        n_models = 1;
    } else if ((rc = cc_store_model_list(o->figures ? o->figures : s, &models, &n_models,
                                         err))) {
        goto done;
    }
    int n_recv = cc_rules_receiver_count(rs) + o->n_extra;
    recv = calloc((size_t)(n_recv ? n_recv : 1), sizeof *recv);
    if (!recv) {
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
        res->raised += it->outcome == CC_OUT_RAISED;
        res->cleared += it->outcome == CC_OUT_CLEARED;
        res->reminders += it->outcome == CC_OUT_REMINDER;
        res->not_evaluated += it->outcome == CC_OUT_NOT_EVALUATED && it->day == res->last_day;
        res->already += it->outcome == CC_OUT_ALREADY;
        if (it->day == res->last_day) {
            res->raised_now += it->after == CC_STATE_RAISED;
            res->building += it->after == CC_STATE_BUILDING;
        }
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
