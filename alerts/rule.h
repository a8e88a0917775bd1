/* rule.h — the rules file: alert rules, webhook receivers and the delivery
 * policy, parsed and validated with cJSON (the README, section Alerts describes the
 * format). Every error names the rule (or the top-level key) and the key.
 * Also holds the commented default set that `concord rules init` writes. */
#ifndef CC_ALERTS_RULE_H
#define CC_ALERTS_RULE_H

#include <stdint.h>

#include "error.h"

typedef enum cc_condition {
    CC_COND_ABOVE,          /* value > bound */
    CC_COND_BELOW,          /* value < bound */
    CC_COND_SIGMAS_ABOVE,   /* value > mean + max(k sd, min_shift, min_relative_shift |mean|) */
    CC_COND_SIGMAS_BELOW,   /* value < mean - the same */
} cc_condition;

typedef enum cc_urgency { CC_URGENCY_LOW, CC_URGENCY_MEDIUM, CC_URGENCY_HIGH } cc_urgency;

/* min_events / min_labels not set: scaled to the model's traffic, a share
 * of the baseline's mean daily count (the README, section Alerts). */
#define CC_RULE_MIN_AUTO (-1)
#define CC_RULE_AUTO_SHARE 0.25      /* of the baseline's mean daily events or labels */
#define CC_RULE_AUTO_FLOOR 30        /* never fewer (the drift tests' own minimum) */
#define CC_RULE_AUTO_NO_BASELINE 100 /* without a baseline */

typedef struct cc_rule {
    char *name;
    char *metric;
    cc_condition cond;
    double threshold;            /* the bound, or k for sigma conditions */
    double min_shift;            /* sigma conditions: smallest |value - mean| that counts */
    double min_relative_shift;   /* sigma conditions: the same as a fraction of |mean| */
    int each;                    /* member/class figure: every member or class */
    char *subject;               /* member/class figure: one member or class by name */
    int64_t min_events, min_labels;  /* CC_RULE_MIN_AUTO: scaled to traffic */
    int raise_after;             /* "days": breaching days in a row before it is raised */
    int clear_after;             /* "clear_days": clear days in a row before it clears */
    int remind_after_days;       /* 0: no reminders */
    int lag_days;                /* evaluate the window this many days before the checked day */
    cc_urgency urgency;
    char *action;                /* short code, e.g. "review" */
    char *advice;                /* "what_to_do": a sentence for people; may be NULL */
    char *description;           /* "about": may be NULL */
    char **models;               /* NULL: every model */
    int n_models;
    int each_slice;              /* "scope": "each-slice": the rule is evaluated on every
                                    slice (segment) of the model alone, each slice with
                                    its own state; 0 ("model"): on the whole model */
    /* Set only on the per-slice copies of an each-slice rule that a check
     * makes (alerts/check.c): the slice's name (cc_slice_name), and the
     * rule's own name; name is then the copy's state key, "<rule>@<slice>"
     * with '/' and '%' in the slice written %2F and %25. */
    const char *slice;
    const char *rule_name;
} cc_rule;

/* The name of the rule a result belongs to: rule_name on a per-slice copy,
 * name otherwise. */
const char *cc_rule_display_name(const cc_rule *r);

/* Where notifications go, and how. */
typedef struct cc_receiver {
    char *url;                   /* http://, https:// or file:PATH */
    char *secret_env;            /* environment variable holding the HMAC secret; NULL = unsigned */
    int connect_timeout_ms, timeout_ms;
    int max_attempts;
} cc_receiver;

/* Defaults of the "delivery" section (the README, section Alerts, "Delivery"). */
#define CC_DELIVERY_MAX_ATTEMPTS 10
#define CC_DELIVERY_BACKOFF_S 60
#define CC_DELIVERY_MAX_BACKOFF_S 21600
#define CC_DELIVERY_CONNECT_TIMEOUT_MS 5000
#define CC_DELIVERY_TIMEOUT_MS 15000

typedef struct cc_ruleset cc_ruleset;

/* Parses text (JSON with // and block comments: the README calls it a
 * rules file, *.jsonc); source names it in errors.
 * Invalid input is -CC_EINPUT with a message naming rule and key. */
int cc_rules_parse(cc_ruleset **out, const char *text, const char *source, cc_error *err);
/* Reads and parses a file. */
int cc_rules_load(cc_ruleset **out, const char *path, cc_error *err);
void cc_rules_free(cc_ruleset *rs);

int cc_rules_count(const cc_ruleset *rs);
const cc_rule *cc_rules_get(const cc_ruleset *rs, int i);
int cc_rules_receiver_count(const cc_ruleset *rs);
const cc_receiver *cc_rules_receiver(const cc_ruleset *rs, int i);
/* A receiver for a URL given on the command line, with the file's delivery
 * defaults (secret variable, timeouts, attempts). Caller frees with
 * cc_rules_receiver_clear. Returns 0, or -CC_EINPUT for a bad URL. */
int cc_rules_receiver_for(const cc_ruleset *rs, const char *url, cc_receiver *out,
                          cc_error *err);
void cc_rules_receiver_clear(cc_receiver *r);
int cc_rules_backoff_s(const cc_ruleset *rs);
int cc_rules_max_backoff_s(const cc_ruleset *rs);
/* Whether the rule applies to the model. */
int cc_rules_applies(const cc_rule *r, const char *model);

const char *cc_rules_condition_name(cc_condition c);
const char *cc_rules_urgency_name(cc_urgency s);

/* The commented default rules file (static text). */
const char *cc_rules_default_text(void);

#endif
