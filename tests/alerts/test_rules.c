/* test_rules.c — the rules file: defaults, the default file of `rules init`,
 * comments, every kind of error naming its rule and key, and the metric
 * path catalogue against the report's tracked figures. */
#include <math.h>
#include <stdlib.h>

#include "paths.h"
#include "rule.h"
#include "tcheck.h"
#include "figures.h"

static void expect_error(const char *text, const char *part1, const char *part2)
{
    cc_ruleset *rs = NULL;
    cc_error err = CC_ERROR_INIT;
    int rc = cc_rules_parse(&rs, text, "t.json", &err);
    T_CHECK(rc == -CC_EINPUT && rs == NULL, "expected an input error for %s", text);
    T_CONTAINS(err.msg, part1);
    if (part2)
        T_CONTAINS(err.msg, part2);
    cc_rules_free(rs);
}

#define RULE(body) "{\"rules\": [" body "]}"

int main(void)
{
    cc_ruleset *rs = NULL;
    cc_error err = CC_ERROR_INIT;

    /* "scope": "each-slice" and "model" (the default); anything else names the choices */
    T_CHECK(cc_rules_parse(&rs, "{\"rules\": [{\"name\": \"a\", \"metric\": \"events\", "
                                "\"below\": 1, \"scope\": \"each-slice\"}, {\"name\": \"b\", "
                                "\"metric\": \"events\", \"below\": 1, \"scope\": \"model\"}, "
                                "{\"name\": \"c\", \"metric\": \"events\", \"below\": 1}]}",
                            "s", &err) == 0, "%s", err.msg);
    T_CHECK(rs && cc_rules_get(rs, 0)->each_slice && !cc_rules_get(rs, 1)->each_slice &&
                !cc_rules_get(rs, 2)->each_slice, "scope parsed");
    T_CHECK(rs && strcmp(cc_rule_display_name(cc_rules_get(rs, 0)), "a") == 0, "display name");
    cc_rules_free(rs);
    rs = NULL;
    expect_error("{\"rules\": [{\"name\": \"a\", \"metric\": \"events\", \"below\": 1, "
                 "\"scope\": \"all\"}]}", "key 'scope'", "each-slice");
    expect_error("{\"rules\": [{\"name\": \"a\", \"metric\": \"events\", \"below\": 1, "
                 "\"scope\": 1}]}", "key 'scope'", "\"model\"");
    expect_error("{\"rules\": [{\"name\": \"a\", \"metric\": \"labels.age_days\", "
                 "\"above\": 3, \"scope\": \"each-slice\"}]}", "key 'scope'", "whole model only");

    /* the default file parses and holds the documented rules */
    T_CHECK(cc_rules_parse(&rs, cc_rules_default_text(), "default", &err) == 0, "%s", err.msg);
    const char *names[] = {"diversity-collapse", "mutual-information-rise", "member-departs",
                           "class-mix-drift",    "score-drift",        "label-shift",
                           "accuracy-drop",      "ensemble-gain-lost", "calibration-drift",
                           "stale-labels",       "no-events",
                           "slice-mutual-information-rise", "slice-diversity-collapse",
                           "slice-class-mix-drift"};
    T_CHECK(rs && cc_rules_count(rs) == 14, "default rule count");
    for (int i = 0; rs && i < 14 && i < cc_rules_count(rs); i++) {
        T_CHECK(strcmp(cc_rules_get(rs, i)->name, names[i]) == 0, "default rule %d", i);
        /* the last three watch every slice alone; the others the whole model */
        T_CHECK(cc_rules_get(rs, i)->each_slice == (i >= 11), "default rule %d scope", i);
        T_CHECK(!cc_rules_get(rs, i)->slice && !cc_rules_get(rs, i)->rule_name,
                "default rule %d is no per-slice copy", i);
    }
    if (rs) {
        const cc_rule *r = cc_rules_get(rs, 0);
        T_CHECK(r->cond == CC_COND_SIGMAS_BELOW && r->threshold == 4 &&
                    r->min_relative_shift == 0.25 && r->raise_after == 1 && r->clear_after == 2 &&
                    r->urgency == CC_URGENCY_HIGH && r->remind_after_days == 3,
                "diversity-collapse fields");
        T_CHECK(cc_rules_backoff_s(rs) == 60 && cc_rules_max_backoff_s(rs) == 21600,
                "delivery defaults");
        const cc_rule *md = cc_rules_get(rs, 2);
        T_CHECK(md->each && !md->subject && md->cond == CC_COND_SIGMAS_ABOVE,
                "member-departs watches each member against its own baseline");
        /* every default rule is baseline-relative except the documented fixed bounds */
        for (int i = 0; i < cc_rules_count(rs); i++) {
            const cc_rule *x = cc_rules_get(rs, i);
            int fixed = x->cond == CC_COND_ABOVE || x->cond == CC_COND_BELOW;
            int allowed = !strcmp(x->name, "score-drift") || !strcmp(x->name, "stale-labels") ||
                          !strcmp(x->name, "no-events");
            T_CHECK(fixed == allowed, "rule %s: fixed bound only where documented", x->name);
            T_CHECK(fixed || x->min_shift > 0 || x->min_relative_shift > 0,
                    "rule %s: a minimum absolute change", x->name);
            T_CHECK(x->min_events == CC_RULE_MIN_AUTO && x->min_labels == CC_RULE_MIN_AUTO,
                    "rule %s: minimum counts scale with traffic", x->name);
        }
        cc_receiver rc;
        T_CHECK(cc_rules_receiver_for(rs, "http://127.0.0.1:9/x", &rc, &err) == 0, "receiver");
        T_CHECK(rc.secret_env && strcmp(rc.secret_env, "CONCORD_WEBHOOK_SECRET") == 0 &&
                    rc.max_attempts == 10 && rc.timeout_ms == 15000 &&
                    rc.connect_timeout_ms == 5000,
                "receiver inherits the delivery section");
        cc_rules_receiver_clear(&rc);
        T_CHECK(cc_rules_receiver_for(rs, "ftp://x", &rc, &err) == -CC_EINPUT, "bad url");
    }
    cc_rules_free(rs);

    /* defaults of a minimal rule; comments and a disabled rule */
    const char *minimal = "// a comment\n{\"rules\": [ /* block\n comment */\n"
                          "{\"name\": \"a\", \"metric\": \"events\", \"below\": 1},\n"
                          "{\"name\": \"b\", \"metric\": \"events\", \"below\": 1, "
                          "\"enabled\": false},\n"
                          "{\"name\": \"c\", \"metric\": \"drift.class_mix.js\", \"above\": 0.1,"
                          " \"about\": \"has // inside a string\", \"models\": [\"m1\"]}]}";
    rs = NULL;
    T_CHECK(cc_rules_parse(&rs, minimal, "m", &err) == 0, "%s", err.msg);
    T_CHECK(rs && cc_rules_count(rs) == 2, "disabled rule left out");
    if (rs && cc_rules_count(rs) == 2) {
        const cc_rule *a = cc_rules_get(rs, 0), *c = cc_rules_get(rs, 1);
        T_CHECK(a->min_events == CC_RULE_MIN_AUTO && a->min_labels == CC_RULE_MIN_AUTO &&
                    a->raise_after == 1 &&
                    a->clear_after == 1 && a->remind_after_days == 0 && a->lag_days == 0 &&
                    a->urgency == CC_URGENCY_MEDIUM && strcmp(a->action, "review") == 0,
                "rule defaults");
        T_CHECK(strcmp(c->description, "has // inside a string") == 0, "string kept whole");
        T_CHECK(cc_rules_applies(c, "m1") && !cc_rules_applies(c, "m2") &&
                    cc_rules_applies(a, "anything"),
                "models filter");
    }
    cc_rules_free(rs);

    /* errors name the rule and the key */
    expect_error("{\"rules\": [\n{\"name\": \"x\",}\n]}", "t.json:2:", "not valid JSON");
    expect_error("[]", "key 'rules'", "one JSON object");
    expect_error("{\"rule\": []}", "key 'rule'", "unknown key");
    expect_error("{}", "key 'rules'", "missing");
    expect_error(RULE("{\"metric\": \"events\", \"below\": 1}"), "rule #1: key 'name'",
                 "missing");
    expect_error(RULE("{\"name\": \"a b\", \"metric\": \"events\", \"below\": 1}"),
                 "key 'name'", "letters, digits");
    expect_error(RULE("{\"name\": \"s\", \"metric\": \"events\", \"sigma_above\": 3}"),
                 "rule 's': key 'sigma_above'", "unknown key");
    expect_error(RULE("{\"name\": \"p\", \"metric\": \"diversity.disagreement\", "
                      "\"below\": 1}"),
                 "rule 'p': key 'metric'", "unknown metric path 'diversity.disagreement'");
    expect_error(RULE("{\"name\": \"two\", \"metric\": \"events\", \"below\": 1, "
                      "\"above\": 5}"),
                 "rule 'two': key 'below'", "exactly one");
    expect_error(RULE("{\"name\": \"none\", \"metric\": \"events\"}"), "rule 'none'",
                 "missing: give one of");
    expect_error(RULE("{\"name\": \"sg\", \"metric\": \"drift.class_mix.p_value\", "
                      "\"sigmas_below\": 3}"),
                 "rule 'sg': key 'sigmas_below'", "no baseline spread");
    expect_error(RULE("{\"name\": \"neg\", \"metric\": \"accuracy.ensemble\", "
                      "\"sigmas_below\": -3}"),
                 "rule 'neg': key 'sigmas_below'", "above 0");
    expect_error(RULE("{\"name\": \"f\", \"metric\": \"events\", \"below\": 1, \"days\": 0}"),
                 "rule 'f': key 'days'", "whole number from 1");
    expect_error(RULE("{\"name\": \"f\", \"metric\": \"events\", \"below\": 1, "
                      "\"days\": 1.5}"),
                 "rule 'f': key 'days'", "whole number");
    expect_error(RULE("{\"name\": \"sev\", \"metric\": \"events\", \"below\": 1, "
                      "\"urgency\": \"critical\"}"),
                 "rule 'sev': key 'urgency'", "\"high\"");
    expect_error(RULE("{\"name\": \"d\", \"metric\": \"events\", \"below\": 1},"
                      "{\"name\": \"d\", \"metric\": \"labeled\", \"below\": 1}"),
                 "rule 'd': key 'name'", "unique");
    expect_error(RULE("{\"name\": \"ms\", \"metric\": \"events\", \"below\": 1, "
                      "\"min_shift\": 2}"),
                 "rule 'ms': key 'min_shift'", "sigmas_above or sigmas_below");
    expect_error(RULE("{\"name\": \"str\", \"metric\": \"events\", \"below\": \"1\"}"),
                 "rule 'str': key 'below'", "must be a number");
    expect_error(RULE("{\"name\": \"mo\", \"metric\": \"events\", \"below\": 1, "
                      "\"models\": []}"),
                 "rule 'mo': key 'models'", "non-empty");
    expect_error("{\"webhooks\": [{\"url\": \"ftp://x\"}], \"rules\": []}",
                 "key 'webhooks[0].url'", "not an http://");
    expect_error("{\"webhooks\": [{\"url\": \"http://x\", \"secret_env\": \"s3cr3t!\"}], "
                 "\"rules\": []}",
                 "key 'webhooks[0].secret_env'", "name an environment variable");
    expect_error("{\"delivery\": {\"timeout_seconds\": 0}, \"rules\": []}",
                 "key 'delivery.timeout_seconds'", "0.1 to 600");
    expect_error("{\"delivery\": {\"backoff_seconds\": 100, \"max_backoff_seconds\": 10}, "
                 "\"rules\": []}",
                 "key 'delivery.max_backoff_seconds'", "below backoff_seconds");
    expect_error("{\"version\": 2, \"rules\": []}", "key 'version'", "version 1");

    /* every registered figure is a path; tracked ones allow sigma conditions */
    for (int i = 0; i < cc_figures_count(); i++) {
        cc_path_info pi;
        const cc_figure *f = cc_figures_get(i);
        T_CHECK(cc_paths_lookup(f->path, &pi) == 0 && pi.fig == f &&
                    (pi.kind == CC_PATH_TRACKED) == (f->tracked != 0) && pi.scope == f->scope,
                "figure path %s", f->path);
    }
    /* scopes: a member rule on a member figure, by name or each */
    rs = NULL;
    T_CHECK(cc_rules_parse(&rs, "{\"rules\": [{\"name\": \"m\", \"metric\": "
                                "\"accuracy.members\", \"member\": \"tree\", \"below\": 0.5},"
                                "{\"name\": \"c\", \"metric\": \"by_class.recall\", "
                                "\"below\": 0.5}]}",
                           "scope", &err) == 0,
            "%s", err.msg);
    if (rs) {
        T_CHECK(!cc_rules_get(rs, 0)->each && strcmp(cc_rules_get(rs, 0)->subject, "tree") == 0,
                "one member by name");
        T_CHECK(cc_rules_get(rs, 1)->each, "a class figure without a class watches each");
    }
    cc_rules_free(rs);
    expect_error("{\"rules\": [{\"name\": \"w\", \"metric\": \"events\", \"member\": "
                 "\"a\", \"below\": 1}]}",
                 "rule 'w': key 'member'", "not a per-member figure");
    expect_error("{\"rules\": [{\"name\": \"f\", \"metric\": \"events\", \"below\": 1, "
                 "\"for\": 2}]}",
                 "rule 'f': key 'for'", "unknown key");
    cc_path_info pi;
    T_CHECK(cc_paths_lookup("drift.per_class.min_p_bonferroni", &pi) == 0 &&
                pi.kind == CC_PATH_REPORT,
            "report path");
    T_CHECK(cc_paths_lookup("labels.age_days", &pi) == 0 && pi.kind == CC_PATH_DERIVED,
            "derived path");
    T_CHECK(cc_paths_lookup("diversity", &pi) == -1, "a section is not a number");
    return t_summary("alerts_rules");
}
