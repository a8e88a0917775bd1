/* history.c — queries behind `concord alerts`. */
#include "history.h"

#include "state.h"

static int found_one(void *ctx, const cc_rule_state_rec *r)
{
    (void)r;
    *(int *)ctx = 1;
    return 1;
}

int cc_history_evaluated(cc_store *s, const char *model)
{
    int yes = 0;
    if (cc_store_rule_states(s, model, NULL, NULL, found_one, &yes, NULL))
        return 0;
    return yes;
}

typedef struct state_ctx {
    cc_state_row_fn fn;
    void *ctx;
} state_ctx;

static int state_row(void *ctx, const cc_rule_state_rec *r)
{
    const state_ctx *c = ctx;
    cc_state_row row = {r->model,     r->rule,       r->state,      r->metric,
                        r->urgency,   r->since_day,  r->last_day,   r->fired_day,
                        r->breach_run, r->clear_run, r->last_value, r->last_bound};
    return c->fn(c->ctx, &row);
}

int cc_history_states(cc_store *s, const char *model, const char *state, cc_state_row_fn fn,
                      void *ctx, cc_error *err)
{
    state_ctx c = {fn, ctx};
    return cc_store_rule_states(s, model, NULL, state, state_row, &c, err);
}

int cc_history_notifications(cc_store *s, const char *model, const char *delivery, int limit,
                             cc_history_row_fn fn, void *ctx, cc_error *err)
{
    return cc_store_notices(s, model, delivery, limit, fn, ctx, err);
}
