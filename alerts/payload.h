/* payload.h — the JSON body of a notification (schema "concord.notice/2",
 * the README, section Alerts) and its notice id, which names the transition:
 * the same model, rule, kind and checked day always give the same id. It is
 * also the webhook-id header, so receivers deduplicate retries by it. */
#ifndef CC_ALERTS_PAYLOAD_H
#define CC_ALERTS_PAYLOAD_H

#include <stddef.h>
#include <stdint.h>

#include "evaluate.h"
#include "report.h"
#include "rule.h"
#include "state.h"

#define CC_PAYLOAD_SCHEMA "concord.notice/2"

typedef struct cc_payload_in {
    const char *model;
    const cc_rule *rule;
    cc_transition kind;
    int64_t day;                /* checked day */
    const cc_eval_result *ev;
    const cc_rule_state *st;    /* state after the transition */
    const cc_report *report;    /* the window's one-day report; NULL without events */
    int64_t now;                /* Unix time, for created_at */
} cc_payload_in;

/* "<model>/<rule>/<kind>/<YYYY-MM-DD>"; rule names cannot hold '/', so the
 * key reads unambiguously from the right. Returns the length, or -1 if it
 * does not fit. */
int cc_payload_notice_id(char *out, size_t cap, const char *model, const char *rule,
                          cc_transition kind, int64_t day);

/* The human sentence of the body, for printing too. */
void cc_payload_sentence(char *out, size_t cap, const cc_payload_in *in);

/* The body as compact JSON (caller frees); NULL on out of memory. */
char *cc_payload_build(const cc_payload_in *in);

#endif
