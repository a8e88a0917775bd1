/* cli.h — what the command files share: the command table entry, exit
 * codes, option parsing and the single place that prints errors. Only cli/
 * prints to the terminal or decides the exit status. */
#ifndef CC_CLI_H
#define CC_CLI_H

#include <stdint.h>
#include <stdio.h>

#include "error.h"

/* Exit codes (documented in the README). */
enum {
    EXIT_OK = 0,
    EXIT_REJECTED = 1,   /* some input lines were refused (the rest is stored) */
    EXIT_USAGE = 2,      /* bad command line */
    EXIT_IO = 3,         /* file or database failure */
    EXIT_NOTFOUND = 4,   /* unknown model, or nothing in the range */
    EXIT_FIRED = 10,     /* check: a rule was raised on a checked day */
    EXIT_FIRING = 11,    /* check: rules are still raised, none newly */
    EXIT_UNDELIVERED = 12, /* deliver: some notifications failed (retried later) */
};

typedef struct cli_command {
    const char *name;
    int (*run)(int argc, char **argv);
    const char *summary;
    const char *help;
} cli_command;

/* Options: "--name VALUE", "--name=VALUE", or flags. Positional arguments
 * stay in order. A spec lists the options a command accepts. */
typedef struct cli_opt {
    const char *name;    /* without dashes */
    char shortname;      /* 0 for none */
    int takes_value;
    const char *value;   /* filled: last value given, or "1" for a flag */
} cli_opt;

/* Parses argv[1..]; on error prints a message and returns -1. "--help"/-h
 * sets *help. Positional arguments go to pos (caller-sized argc). */
int cli_parse(int argc, char **argv, cli_opt *opts, int n_opts, char **pos, int *n_pos,
              int *help, const char *command);
const char *cli_get(const cli_opt *opts, int n_opts, const char *name);

/* Prints "concord: message" to stderr and maps the error code to an exit code. */
int cli_fail(const cc_error *err);
int cli_usage(const char *command, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
int cli_exit_for(int code);

/* Opens the store as cc_store_open_with does (flags CC_STORE_*), waiting for
 * a writer's lock up to --wait / CONCORD_WAIT seconds (default 60) and
 * saying so once on stderr when it has to wait. */
struct cc_store;
int cli_store_open(struct cc_store **out, const char *path, int flags, cc_error *err);
/* The store a reading command names (store_url.c): --db PATH, or --store
 * sqlite:PATH or clickhouse://HOST:PORT/DATABASE (the cluster's read-only
 * backend, which reads summaries and rows as each call asks). model, events
 * and event_id are what the command will read; no backend needs them now.
 * Close it with cli_store_url_close. */
int cli_store_url_open(const char *command, const char *db, const char *url, const char *model,
                       int events, const char *event_id, struct cc_store **out, cc_error *err);
void cli_store_url_close(struct cc_store *s);
/* --db FILE and --store URL: every command that takes a store lists both
 * in its option spec and resolves them with cli_store_name. */
#define CLI_STORE_OPTS {"db", 0, 1, NULL}, {"store", 0, 1, NULL}
/* The --store line of the commands' --help, by what they do with a cluster. */
#define CLI_HELP_STORE_WRITES                                                               \
    "  --store URL      sqlite:FILE is --db FILE; clickhouse://HOST:PORT/DATABASE is\n"     \
    "                   refused (exit 2): a host writes its local store and publishes it\n"
#define CLI_HELP_STORE_LOCAL                                                                \
    "  --store URL      sqlite:FILE is --db FILE; a clickhouse:// cluster is refused\n"     \
    "                   (exit 2): what this command reads lives in a host's local store\n"
#define CLI_HELP_STORE_CLUSTER                                                              \
    "  --store URL      sqlite:FILE (the same as --db FILE) or\n"                           \
    "                   clickhouse://HOST:PORT/DATABASE (read through the cluster; user and\n" \
    "                   password from CONCORD_CH_USER and CONCORD_CH_PASSWORD)\n"
/* What a command may do with a clickhouse:// store (use, for cli_store_name). */
enum {
    CLI_STORE_WRITES = 0,   /* it writes: a cluster is refused (exit 2, names publish) */
    CLI_STORE_LOCAL = 1,    /* it reads what only a host's SQLite store keeps */
    CLI_STORE_CLUSTER = 2,  /* it reads through the cluster backend too */
    CLI_STORE_OPTIONAL = 4, /* flag: neither option given is fine (both left NULL) */
    CLI_STORE_BESIDE = 8,   /* flag: --db FILE may come with --store clickhouse:// */
};
/* The store named by --db PATH or --store URL in opts (sqlite:PATH is
 * --db PATH): *path is the local file or NULL, *url the clickhouse:// URL
 * or NULL (only with CLI_STORE_CLUSTER). Prints the usage error and returns
 * EXIT_USAGE for a missing store, both options, an unknown scheme or a
 * cluster the command cannot use; else EXIT_OK. */
int cli_store_name(const char *command, const cli_opt *opts, int n_opts, int use,
                   const char **path, const char **url);
/* Opens what cli_store_name named: the cluster's store backend for url
 * (read-only), else path as cli_store_open does with flags. */
int cli_store_open_named(const char *path, const char *url, int flags, struct cc_store **out,
                         cc_error *err);
int cmd_publish(int argc, char **argv);
/* Publishes an open writable store (cmd_publish.c), printing what was sent;
 * source NULL: the host name. Returns an exit code. */
int cli_publish_store(struct cc_store *store, const char *db, const char *url,
                      const char *source, const char *command);
extern const char help_publish[];
/* --publish URL [--source NAME] of follow and serve: the publishing thread's
 * hook (serve/publisher.h). cli_publish_hook_init checks the URL and the
 * source (default: the host name), printing a usage error (EXIT_USAGE);
 * cli_publish_hook_run is one publish run of s, each statement tried once
 * (the thread's pauses stand for publish's retries), telling on stderr what
 * it sent. */
typedef struct cli_publish_hook {
    const char *url, *source, *command;
    char host[256];
} cli_publish_hook;
int cli_publish_hook_init(cli_publish_hook *h, const char *url, const char *source,
                          const char *command);
int cli_publish_hook_run(void *ctx, struct cc_store *s, cc_error *err);

/* The wait bound in ms: --wait (any command accepts it), else CONCORD_WAIT,
 * else dflt_ms. */
int cli_wait_ms(int64_t dflt_ms);

/* Tells on stderr when days in [from_day, to_day] were pruned (their rows
 * are gone), for the commands that list rows. */
struct cc_model;
void cli_note_pruned(struct cc_store *store, const struct cc_model *m, int64_t from_day,
                     int64_t to_day, const char *command);

/* Writes text to path, or standard output for NULL or "-", through
 * util/out.h: a failed write or close is reported with the file named and
 * returns EXIT_IO, and leaves no partial file. flags: CLI_OUT_NEWLINE adds
 * a final newline; CLI_OUT_TEXT (text meant for a terminal) shows control
 * characters as \xHH (util/utf8.h), keeping line feeds and tabs. */
enum { CLI_OUT_NEWLINE = 1, CLI_OUT_TEXT = 2 };
int cli_write_output(const char *command, const char *path, const char *text, int flags);

/* A name given on the command line (model, classes, members) must be valid
 * UTF-8 without control characters; prints a usage error and returns -1
 * otherwise. */
int cli_check_name(const char *command, const char *opt, const char *text);

/* The one integer parser for options: decimal digits only (an optional
 * leading '-'), within [min, max], no overflow; prints a usage error naming
 * --opt and the range otherwise and returns -1. */
int cli_int(const char *command, const char *opt, const char *text, long long min,
            long long max, long long *out);

/* "YYYY-MM-DD" -> day; prints a usage error on failure. */
int cli_date(const char *command, const char *opt, const char *text, int64_t *day);

/* Splits "a,b,c" into a malloc'd array of malloc'd strings; NULL on empty names. */
char **cli_split_names(const char *text, int *n);
void cli_free_names(char **names, int n);

int cmd_ingest(int argc, char **argv);
int cmd_label(int argc, char **argv);
int cmd_baseline(int argc, char **argv);
int cmd_report(int argc, char **argv);
int cmd_verify(int argc, char **argv);
int cmd_demo(int argc, char **argv);
/* The report as an HTML page in *out, with the review lists of its range
 * (cmd_report.c): review_max 0 leaves them out, CLI_REVIEW_ALL reads every
 * event of the range, N > 0 reads about N of them when the range has more
 * (one in ceil(events / N) by arrival order; the page says so). Returns an
 * exit code. */
#define CLI_REVIEW_ALL (-1)
#define CLI_REVIEW_MAX_DEFAULT 100000
struct cc_store;
struct cc_report;
int cli_report_html(struct cc_store *store, const struct cc_report *r, long long review_max,
                    const char *note, char **out);
/* The same with the status line from these rules (NULL: the default rules). */
int cli_report_html_rules(struct cc_store *store, const struct cc_report *r,
                          long long review_max, const char *note, const char *rules_path,
                          char **out);
int cmd_review(int argc, char **argv);
int cmd_show(int argc, char **argv);
int cmd_prune(int argc, char **argv);
int cmd_backup(int argc, char **argv);
extern const char help_prune[], help_backup[];

/* How the user invoked concord (argv[0] when it holds a '/', else "concord"),
 * so printed hints such as the demo's can be pasted as they are (main.c). */
extern const char *cli_program;

extern const char help_ingest[], help_label[], help_baseline[], help_report[], help_verify[],
    help_demo[];
extern const char help_review[], help_show[];

/* Alerts: commands, and (cmd_check.c) the clock (CONCORD_NOW when set), the
 * check's exit status and its printing, shared by check, follow and demo. */
int cmd_check(int argc, char **argv);
int cmd_alerts(int argc, char **argv);
int cmd_deliver(int argc, char **argv);
int cmd_rules(int argc, char **argv);
int cmd_follow(int argc, char **argv);
int cmd_models(int argc, char **argv);
extern const char help_models[];
extern const char help_check[], help_alerts[], help_deliver[], help_rules[], help_follow[];
int cmd_serve(int argc, char **argv);
extern const char help_serve[];
/* The clock of the long-running commands (cmd_follow.c): CONCORD_NOW, when
 * set, is the time at start, and it runs forward from there. */
#include <time.h>
typedef struct cli_clock {
    int64_t start_now;
    struct timespec start;
} cli_clock;
void cli_clock_start(cli_clock *c);
int64_t cli_clock_now(void *ctx); /* ctx: a cli_clock, or a struct that begins with one */
/* What follow and serve print after a day-close check and a delivery. */
struct cc_check_result;
struct cc_deliver_stats;
void cli_on_check(void *ctx, const struct cc_check_result *r);
void cli_on_deliver(void *ctx, const struct cc_deliver_stats *st);
struct cc_check_result;
struct cc_deliver_stats;
int64_t cli_now(void);
int cli_check_exit(const struct cc_check_result *r);
void cli_print_check(const struct cc_check_result *r, int json, int dry_run,
                     const struct cc_deliver_stats *ds, FILE *f);
/* A rule set replayed over days without recording anything (cmd_check.c):
 * every rule starts fresh on the first day, its state carried day to day.
 * rules_path NULL: the default rules. Used by rules validate and report. */
struct cc_ruleset;
typedef struct cli_replay {
    struct cc_ruleset *rules;
    struct cc_check_result *res;
    struct cc_report_alert *items, *raised;
    int n_items, n_raised, not_evaluated;
} cli_replay;
int cli_replay_run(struct cc_store *store, const char *rules_path, const char *model,
                   int64_t from, int64_t to, cli_replay *out);
void cli_replay_free(cli_replay *r);
/* The demo's alert timeline (cmd_alerts.c). Returns an exit code. */
struct cc_store;
int cli_demo_alerts(struct cc_store *store, const char *dir, int64_t first_day, int days);

#endif
