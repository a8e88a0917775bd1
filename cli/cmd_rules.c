/* cmd_rules.c — `concord rules`: write the default rules file, check a
 * rules file (every error names the rule and the key), list metric paths. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "cli.h"
#include "date.h"
#include "out.h"
#include "paths.h"
#include "rule.h"

const char help_rules[] =
    "usage: concord rules init [-o FILE] [--force]\n"
    "       concord rules check FILE\n"
    "       concord rules validate [FILE] --db DB|--store URL [--model NAME]\n"
    "       concord rules paths\n\n"
    "init      writes the default rules (diversity collapse, mutual-information rise,\n"
    "          member departs, class-mix drift, score drift, label shift, accuracy drop,\n"
    "          ensemble gain lost, calibration drift, stale labels, no events), each with\n"
    "          its reasoning in a comment, to standard output or FILE (not over an\n"
    "          existing FILE without --force); name it *.jsonc (JSON with comments)\n"
    "check     parses and validates FILE and lists its rules and receivers\n"
    "validate  replays FILE (default: the default rules) over each model's baseline\n"
    "          days, from a fresh state and recording nothing, and warns about every\n"
    "          rule that would breach or be raised there, and every rule that could\n"
    "          not judge some of those days; --store takes sqlite:FILE or a\n"
    "          clickhouse://HOST:PORT/DATABASE cluster (its merged figures)\n"
    "paths     lists the figures a rule may name, their scope (window, member,\n"
    "          class) and whether sigma conditions work (tracked figures)\n\n"
    "exit: 0 ok, 1 invalid rules file, 2 usage, 3 file error, 4 unknown model,\n"
    "10 validate: a rule would breach on the baseline\n";

/* Replays the rules over one model's baseline days; *warned counts rules
 * that would breach there. */
static int validate_model(cc_store *store, const char *file, const char *model, int *warned)
{
    cc_error err = CC_ERROR_INIT;
    cc_model *m = NULL;
    int has = 0;
    int64_t from = 0, to = 0;
    if (cc_store_model_get(store, model, &m, &err) ||
        cc_store_baseline_get(store, m, &has, &from, &to, &err)) {
        cc_model_free(m);
        return cli_fail(&err);
    }
    cc_model_free(m);
    char a[11], b[11];
    if (!has) {
        printf("model %s: no baseline set ('concord baseline'); nothing to replay\n", model);
        return EXIT_OK;
    }
    cc_format_date(from, a);
    cc_format_date(to, b);
    cli_replay rp;
    int rc = cli_replay_run(store, file, model, from, to, &rp);
    if (rc)
        return rc;
    int n_days = (int)(to - from + 1), quiet = 0;
    printf("model %s: %d rule(s) replayed over the baseline %s..%s (%d days)\n", model,
           cc_rules_count(rp.rules), a, b, n_days);
    for (int r = 0; r < cc_rules_count(rp.rules); r++) {
        const cc_rule *rule = cc_rules_get(rp.rules, r);
        int breach = 0, skipped = 0, raised = 0;
        const cc_check_item *first = NULL, *skip = NULL;
        for (int i = 0; i < rp.res->n_items; i++) {
            const cc_check_item *it = &rp.res->items[i];
            /* a rule's items, or its per-slice copies' */
            if (strcmp(cc_rule_display_name(it->rule), rule->name) != 0)
                continue;
            if (it->ev.status == CC_EVAL_BREACH && !breach++)
                first = it;
            if (it->ev.status == CC_EVAL_SKIPPED && !skipped++)
                skip = it;
            raised += it->outcome == CC_OUT_RAISED;
        }
        if (breach) {
            char d[11];
            cc_format_date(first->day, d);
            printf("  warning: %s breaches on %d of %d baseline day(s)%s; first %s: %s%s%s = "
                   "%.4g, bound %.4g\n",
                   first->rule->name, breach, n_days, raised ? " and would be raised" : "", d,
                   rule->metric, first->ev.subject[0] ? " of " : "", first->ev.subject,
                   first->ev.value, first->ev.bound);
            (*warned)++;
        } else if (skipped) {
            printf("  note: %s could not judge %d of %d baseline day(s): %s\n", rule->name,
                   skipped, n_days, skip->ev.reason);
        } else {
            quiet++;
        }
    }
    printf("  %d rule(s) quiet on every baseline day\n", quiet);
    cli_replay_free(&rp);
    return EXIT_OK;
}

static int validate(const char *file, const char *db, const char *url, const char *model)
{
    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    char **models = NULL;
    int n = 0, rc = EXIT_OK, warned = 0;
    if (cli_store_open_named(db, url, 0, &store, &err))
        return cli_fail(&err);
    if (model) {
        rc = validate_model(store, file, model, &warned);
    } else if (cc_store_model_list(store, &models, &n, &err)) {
        rc = cli_fail(&err);
    }
    for (int i = 0; rc == EXIT_OK && i < n; i++)
        rc = validate_model(store, file, models[i], &warned);
    for (int i = 0; i < n; i++)
        free(models[i]);
    free(models);
    cc_store_close(store);
    if (rc == EXIT_OK && warned) {
        fprintf(stderr, "concord rules validate: %d rule(s) would breach on baseline days: "
                        "widen them, or check the baseline period\n", warned);
        return EXIT_FIRED;
    }
    return rc;
}

static int init(const char *out, int force)
{
    const char *text = cc_rules_default_text();
    if (!out)
        return cli_write_output("rules", NULL, text, 0);
    cc_error err = CC_ERROR_INIT;
    if (cc_out_save(out, force ? 0 : CC_OUT_NO_REPLACE, text, strlen(text), &err)) {
        fprintf(stderr, "concord rules: %s%s\n", err.msg,
                strstr(err.msg, strerror(EEXIST)) ? " (use --force to replace it)" : "");
        return EXIT_IO;
    }
    fprintf(stderr, "concord rules: wrote %s\n", out);
    return EXIT_OK;
}

static int check(const char *path)
{
    cc_error err = CC_ERROR_INIT;
    cc_ruleset *rs = NULL;
    if (cc_rules_load(&rs, path, &err))
        return cli_fail(&err);
    printf("%s: %d rule(s), %d webhook(s)\n", path, cc_rules_count(rs),
           cc_rules_receiver_count(rs));
    for (int i = 0; i < cc_rules_count(rs); i++) {
        const cc_rule *r = cc_rules_get(rs, i);
        char cond[96];
        if (r->cond == CC_COND_ABOVE || r->cond == CC_COND_BELOW)
            snprintf(cond, sizeof cond, "%s %g", cc_rules_condition_name(r->cond), r->threshold);
        else
            snprintf(cond, sizeof cond, "%g sd %s", r->threshold,
                     r->cond == CC_COND_SIGMAS_ABOVE ? "above" : "below");
        char scope[80] = "";
        if (r->each || r->subject) {
            cc_path_info pi;
            cc_paths_lookup(r->metric, &pi);
            snprintf(scope, sizeof scope, " (%s %s)", r->each ? "each" : cc_figures_scope_name(pi.scope),
                     r->each ? cc_figures_scope_name(pi.scope) : r->subject);
        }
        printf("  %-24s %-6s %s%s, %s; days %d, clear_days %d%s%s\n", r->name,
               cc_rules_urgency_name(r->urgency), r->metric, scope, cond, r->raise_after,
               r->clear_after, r->remind_after_days ? ", reminders" : "",
               r->each_slice ? "; each slice" : "");
    }
    for (int i = 0; i < cc_rules_receiver_count(rs); i++) {
        const cc_receiver *w = cc_rules_receiver(rs, i);
        printf("  webhook %s (%s, timeouts %d/%d ms, %d attempts)\n", w->url,
               w->secret_env ? "signed" : "unsigned", w->connect_timeout_ms, w->timeout_ms,
               w->max_attempts);
    }
    cc_rules_free(rs);
    return EXIT_OK;
}

int cmd_rules(int argc, char **argv)
{
    cli_opt opts[] = {{"output", 'o', 1, NULL}, {"force", 0, 0, NULL}, CLI_STORE_OPTS,
                      {"model", 0, 1, NULL}};
    int n_opts = (int)(sizeof opts / sizeof *opts), n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "rules"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_rules, stdout);
        return EXIT_OK;
    }
    if (n_pos == 0)
        return cli_usage("rules", "say init, check FILE, validate [FILE] --db DB or paths");
    if (strcmp(pos[0], "validate") == 0 && n_pos <= 2) {
        const char *db, *url;
        if (cli_store_name("rules", opts, n_opts, CLI_STORE_CLUSTER, &db, &url))
            return EXIT_USAGE;
        return validate(n_pos == 2 ? pos[1] : NULL, db, url, cli_get(opts, n_opts, "model"));
    }
    if (cli_get(opts, n_opts, "db") || cli_get(opts, n_opts, "store") ||
        cli_get(opts, n_opts, "model"))
        return cli_usage("rules", "--db, --store and --model belong to 'rules validate'");
    if (strcmp(pos[0], "init") == 0 && n_pos == 1)
        return init(cli_get(opts, n_opts, "output"), cli_get(opts, n_opts, "force") != NULL);
    if (cli_get(opts, n_opts, "output") || cli_get(opts, n_opts, "force"))
        return cli_usage("rules", "-o and --force belong to 'rules init'");
    if (strcmp(pos[0], "check") == 0 && n_pos == 2)
        return check(pos[1]);
    if (strcmp(pos[0], "paths") == 0 && n_pos == 1) {
        for (int i = 0; i < cc_paths_count(); i++) {
            cc_path_info pi;
            cc_paths_lookup(cc_paths_name(i), &pi);
            printf("%-36s %-7s %-9s %s%s\n", cc_paths_name(i), cc_figures_scope_name(pi.scope),
                   pi.kind == CC_PATH_TRACKED ? "sigmas ok" : "bounds", pi.what,
                   pi.needs_labels ? " (needs labels)" : "");
        }
        return EXIT_OK;
    }
    return cli_usage("rules", "say init [-o FILE], check FILE or paths");
}
