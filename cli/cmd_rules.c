/* cmd_rules.c — `concord rules`: write the default rules file, check a
 * rules file (every error names the rule and the key), list metric paths. */
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"
#include "paths.h"
#include "rule.h"

const char help_rules[] =
    "usage: concord rules init [-o FILE] [--force]\n"
    "       concord rules check FILE\n"
    "       concord rules paths\n\n"
    "init   writes the default rules (diversity collapse, disagreement spike, class-mix\n"
    "       drift, score drift, label shift, accuracy drop, ensemble gain lost,\n"
    "       calibration drift, stale labels, no events), each with its reasoning in a\n"
    "       comment, to standard output or FILE (not over an existing FILE without --force)\n"
    "check  parses and validates FILE and lists its rules and receivers\n"
    "paths  lists the metric paths a rule may name; sigma conditions need a tracked one\n\n"
    "exit: 0 ok, 1 invalid rules file, 2 usage, 3 file error\n";

static int init(const char *out, int force)
{
    const char *text = cc_rules_default_text();
    if (!out) {
        fputs(text, stdout);
        return EXIT_OK;
    }
    int fd = open(out, O_WRONLY | O_CREAT | O_TRUNC | (force ? 0 : O_EXCL), 0644);
    if (fd < 0) {
        fprintf(stderr, "concord rules: %s: %s%s\n", out, strerror(errno),
                errno == EEXIST ? " (use --force to replace it)" : "");
        return EXIT_IO;
    }
    FILE *f = fdopen(fd, "w");
    if (!f || fputs(text, f) == EOF || fclose(f) != 0) {
        fprintf(stderr, "concord rules: %s: write failed: %s\n", out, strerror(errno));
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
        printf("  %-20s %-8s %-34s %-18s for %d, clear %d%s\n", r->name,
               cc_rules_urgency_name(r->urgency), r->metric, cond, r->raise_after,
               r->clear_after, r->remind_after_days ? ", reminders" : "");
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
    cli_opt opts[] = {{"output", 'o', 1, NULL}, {"force", 0, 0, NULL}};
    int n_opts = 2, n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "rules"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_rules, stdout);
        return EXIT_OK;
    }
    if (n_pos == 0)
        return cli_usage("rules", "say init, check FILE or paths");
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
            printf("%-42s %-9s %s\n", cc_paths_name(i),
                   pi.kind == CC_PATH_TRACKED ? "sigmas ok" : "bounds", pi.what);
        }
        return EXIT_OK;
    }
    return cli_usage("rules", "say init [-o FILE], check FILE or paths");
}
