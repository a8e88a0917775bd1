/* main.c — concord's entry point: dispatches to one command per file. */
#include <errno.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>

#include "cli.h"

static const cli_command commands[] = {
    {"ingest", cmd_ingest, "read prediction events (JSON Lines) into the database", help_ingest},
    {"label", cmd_label, "attach delayed ground-truth labels to stored events", help_label},
    {"baseline", cmd_baseline, "mark the baseline period of a model", help_baseline},
    {"report", cmd_report, "diversity, uncertainty and accuracy per day, week or range",
     help_report},
    {"verify", cmd_verify, "check that stored summaries match the event rows", help_verify},
    {"models", cmd_models, "the models a database holds: days, events, slices, baseline",
     help_models},
    {"review", cmd_review, "the events behind an incident: wrong, helped, hurt, uncertain",
     help_review},
    {"show", cmd_show, "one stored event in full", help_show},
    {"prune", cmd_prune, "delete old event rows, keep their days' summaries", help_prune},
    {"backup", cmd_backup, "a consistent copy of the database, taken while writers run",
     help_backup},
    {"demo", cmd_demo, "run the whole job on an invented fruit-grading ensemble", help_demo},
    {"rules", cmd_rules, "write the default alert rules, check a rules file", help_rules},
    {"check", cmd_check, "evaluate alert rules on a day, notify on transitions", help_check},
    {"alerts", cmd_alerts, "list rule states and the notification history", help_alerts},
    {"deliver", cmd_deliver, "retry notifications waiting in the outbox", help_deliver},
    {"follow", cmd_follow, "tail growing log files, ingest, check when a day closes",
     help_follow},
    {"serve", cmd_serve, "serve the database over HTTP: ingest, reports, metrics", help_serve},
};

const char *cli_program = "concord";

static void usage(FILE *f)
{
    fprintf(f, "usage: concord COMMAND [OPTIONS] [FILE...]\n\n"
               "Monitors an ensemble of classifiers from the per-member predictions it logs.\n\n"
               "commands:\n");
    for (size_t i = 0; i < sizeof commands / sizeof *commands; i++)
        fprintf(f, "  %-9s %s\n", commands[i].name, commands[i].summary);
    fprintf(f, "\n'concord COMMAND --help' describes a command. Every command takes\n"
               "--wait SECONDS (or CONCORD_WAIT): how long a writer waits for another\n"
               "writer's lock before giving up with exit 3 (default 60; follow retries).\n"
               "exit codes: 0 ok, 1 some input lines rejected, 2 usage error,\n"
               "            3 file or database error, 4 unknown model or nothing to report;\n"
               "            check: 10 a rule raised, 11 rules still raised; deliver: 12 some\n"
               "            notifications not delivered yet\n");
}

/* Whatever a command printed on standard output must have arrived: a full
 * disk or a closed pipe behind it is a write failure (exit 3), not success. */
static int finish(int rc)
{
    errno = 0;
    if (fflush(stdout) != 0 || ferror(stdout) || fclose(stdout) != 0) {
        fprintf(stderr, "concord: standard output: write failed: %s\n",
                strerror(errno ? errno : EIO));
        return EXIT_IO;
    }
    return rc;
}

int main(int argc, char **argv)
{
    /* files concord creates (database, WAL, outputs, demo files) are the
     * owner's only; a stricter umask stays */
    umask(umask(0) | 077);
    if (argc > 0 && argv[0] && strchr(argv[0], '/'))
        cli_program = argv[0];
    if (argc < 2) {
        usage(stderr);
        return EXIT_USAGE;
    }
    if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
        strcmp(argv[1], "help") == 0) {
        usage(stdout);
        return EXIT_OK;
    }
    if (strcmp(argv[1], "--version") == 0) {
        printf("concord 0.1.0\n");
        return EXIT_OK;
    }
    for (size_t i = 0; i < sizeof commands / sizeof *commands; i++)
        if (strcmp(argv[1], commands[i].name) == 0)
            return finish(commands[i].run(argc - 1, argv + 1));
    fprintf(stderr, "concord: unknown command '%s'\n\n", argv[1]);
    usage(stderr);
    return EXIT_USAGE;
}
