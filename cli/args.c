/* args.c — option parsing, error printing and exit-code mapping for cli/. */
#include <ctype.h>
#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "date.h"
#include "out.h"
#include "store.h"
#include "utf8.h"

/* --wait SECONDS, accepted by every command; -1 when not given. */
static int64_t wait_option_ms = -1;

/* A whole number of seconds, 0..10^6, as milliseconds; -1 when invalid. */
static int64_t parse_wait(const char *text)
{
    char *end;
    errno = 0;
    long long v = strtoll(text, &end, 10);
    if (errno || end == text || *end || v < 0 || v > 1000000)
        return -1;
    return (int64_t)v * 1000;
}

int cli_exit_for(int code)
{
    switch (code) {
    case CC_OK: return EXIT_OK;
    case CC_EINPUT: return EXIT_REJECTED;
    case CC_EUSAGE: return EXIT_USAGE;
    case CC_ENOTFOUND: return EXIT_NOTFOUND;
    default: return EXIT_IO;
    }
}

int cli_fail(const cc_error *err)
{
    /* messages quote names from logs, rules files and the database */
    char *safe = cc_text_escape(err->msg, strlen(err->msg), 1);
    fprintf(stderr, "concord: %s\n", safe && safe[0] ? safe : err->msg[0] ? "(message lost)"
                                                                           : "unknown error");
    free(safe);
    return cli_exit_for(err->code);
}

int cli_check_name(const char *command, const char *opt, const char *text)
{
    size_t at, n = strlen(text);
    if (!cc_utf8_valid(text, n, &at)) {
        cli_usage(command, "--%s is not valid UTF-8 (byte %zu)", opt, at + 1);
        return -1;
    }
    if (cc_utf8_control(text, n, &at)) {
        cli_usage(command, "--%s holds a control character (byte %zu)", opt, at + 1);
        return -1;
    }
    return 0;
}

int cli_usage(const char *command, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fprintf(stderr, "concord %s: ", command);
    vfprintf(stderr, fmt, ap);
    fprintf(stderr, "\n(see 'concord %s --help')\n", command);
    va_end(ap);
    return EXIT_USAGE;
}

static cli_opt *find(cli_opt *opts, int n, const char *name, size_t len, char shortname)
{
    for (int i = 0; i < n; i++)
        if (shortname ? opts[i].shortname == shortname
                      : strlen(opts[i].name) == len && memcmp(opts[i].name, name, len) == 0)
            return &opts[i];
    return NULL;
}

int cli_parse(int argc, char **argv, cli_opt *opts, int n_opts, char **pos, int *n_pos,
              int *help, const char *command)
{
    int only_pos = 0;
    *n_pos = 0;
    *help = 0;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (only_pos || a[0] != '-' || strcmp(a, "-") == 0) {
            pos[(*n_pos)++] = argv[i];
            continue;
        }
        if (strcmp(a, "--") == 0) {
            only_pos = 1;
            continue;
        }
        if (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0) {
            *help = 1;
            continue;
        }
        cli_opt *o;
        const char *value = NULL;
        if (strcmp(a, "--wait") == 0 || strncmp(a, "--wait=", 7) == 0) {
            const char *v = a[6] == '=' ? a + 7 : i + 1 < argc ? argv[++i] : NULL;
            if (!v || (wait_option_ms = parse_wait(v)) < 0) {
                cli_usage(command, "--wait needs a whole number of seconds (0 to 1000000)");
                return -1;
            }
            continue;
        }
        if (a[1] == '-') {
            const char *eq = strchr(a + 2, '=');
            size_t len = eq ? (size_t)(eq - a - 2) : strlen(a + 2);
            o = find(opts, n_opts, a + 2, len, 0);
            if (eq)
                value = eq + 1;
        } else {
            o = a[2] == '\0' ? find(opts, n_opts, NULL, 0, a[1]) : NULL;
        }
        if (!o) {
            cli_usage(command, "unknown option '%s'", a);
            return -1;
        }
        if (o->value) {
            /* keeping only the last of two values would drop one silently */
            cli_usage(command, "option '--%s' given more than once", o->name);
            return -1;
        }
        if (o->takes_value) {
            if (!value) {
                if (i + 1 >= argc) {
                    cli_usage(command, "option '--%s' needs a value", o->name);
                    return -1;
                }
                value = argv[++i];
            }
            o->value = value;
        } else {
            if (value) {
                cli_usage(command, "option '--%s' takes no value", o->name);
                return -1;
            }
            o->value = "1";
        }
    }
    return 0;
}

const char *cli_get(const cli_opt *opts, int n_opts, const char *name)
{
    for (int i = 0; i < n_opts; i++)
        if (strcmp(opts[i].name, name) == 0)
            return opts[i].value;
    return NULL;
}

int cli_date(const char *command, const char *opt, const char *text, int64_t *day)
{
    if (cc_parse_date(text, day) == 0)
        return 0;
    cli_usage(command, "--%s '%s' is not a date of the form YYYY-MM-DD", opt, text);
    return -1;
}

void cli_free_names(char **names, int n)
{
    for (int i = 0; names && i < n; i++)
        free(names[i]);
    free(names);
}

char **cli_split_names(const char *text, int *n)
{
    int count = 1;
    for (const char *p = text; *p; p++)
        count += *p == ',';
    char **out = calloc((size_t)count, sizeof *out);
    const char *start = text;
    *n = 0;
    for (int i = 0; out && i < count; i++) {
        const char *end = strchr(start, ',');
        size_t len = end ? (size_t)(end - start) : strlen(start);
        if (len == 0 || len > 64 || !(out[i] = strndup(start, len))) {
            cli_free_names(out, i);
            return NULL;
        }
        (*n)++;
        start = end ? end + 1 : start + len;
    }
    for (int i = 0; out && i < count; i++)
        for (int j = i + 1; j < count; j++)
            if (strcmp(out[i], out[j]) == 0) {
                cli_free_names(out, count);
                return NULL;
            }
    return out;
}

int cli_wait_ms(int64_t dflt_ms)
{
    if (wait_option_ms >= 0)
        return (int)wait_option_ms;
    const char *env = getenv("CONCORD_WAIT");
    if (env && *env) {
        int64_t v = parse_wait(env);
        if (v >= 0)
            return (int)v;
        fprintf(stderr, "concord: CONCORD_WAIT='%s' is not a whole number of seconds; "
                        "waiting the default %lld s\n", env, (long long)(dflt_ms / 1000));
    }
    return (int)dflt_ms;
}

static void note_wait(void *ctx, const char *path)
{
    const int *wait_ms = ctx;
    fprintf(stderr, "concord: waiting for the database lock held by another writer on %s "
                    "(up to %d s; see --wait)\n", path, *wait_ms / 1000);
}

static void note_upgrade(void *ctx, const char *path, const char *model, int64_t done_days,
                         int64_t total_days)
{
    (void)ctx;
    if (!model) /* the schema 5 step: rows whose id hash is written */
        fprintf(stderr, "concord: upgrading %s to find ids by hash: row %lld of %lld\n", path,
                (long long)done_days, (long long)total_days);
    else
        fprintf(stderr, "concord: upgrading %s: model '%s', day %lld of %lld\n",
                path, model, (long long)done_days, (long long)total_days);
}

int cli_store_open(struct cc_store **out, const char *path, int flags, cc_error *err)
{
    static int wait_ms;
    cc_store_opts o = CC_STORE_OPTS_INIT;
    wait_ms = cli_wait_ms(CC_STORE_WAIT_DEFAULT_MS);
    o.flags = flags;
    o.wait_ms = wait_ms;
    o.on_wait = note_wait;
    o.ctx = &wait_ms;
    o.on_progress = note_upgrade;
    return cc_store_open_with(out, path, &o, err);
}

void cli_note_pruned(struct cc_store *store, const struct cc_model *m, int64_t from_day,
                     int64_t to_day, const char *command)
{
    cc_pruned_range pr;
    if (cc_store_pruned_range(store, m, from_day, to_day, &pr, NULL) || pr.days == 0)
        return;
    char first[11], last[11];
    cc_format_date(pr.first, first);
    cc_format_date(pr.last, last);
    fprintf(stderr, "concord %s: note: %d day%s from %s to %s %s pruned: the event rows of "
                    "%lld events are gone, only their summaries remain (concord report "
                    "still counts them); nothing from those days can be listed\n",
            command, pr.days, pr.days == 1 ? "" : "s", first, last,
            pr.days == 1 ? "was" : "were", (long long)pr.events);
}

int cli_write_output(const char *command, const char *path, const char *text, int flags)
{
    cc_error err = CC_ERROR_INIT;
    char *safe = NULL;
    if (flags & CLI_OUT_TEXT) {
        /* text for people: names from the logs cannot drive the terminal */
        if (!(safe = cc_text_escape(text, strlen(text), 1))) {
            fprintf(stderr, "concord %s: out of memory\n", command);
            return EXIT_IO;
        }
        text = safe;
    }
    cc_out *o;
    int rc = EXIT_IO;
    if (cc_out_open(&o, path, 0, &err) == 0) {
        cc_out_write(o, text, strlen(text));
        if (flags & CLI_OUT_NEWLINE)
            cc_out_write(o, "\n", 1);
        if (cc_out_commit(o, &err) == 0)
            rc = EXIT_OK;
    }
    free(safe);
    if (rc != EXIT_OK)
        fprintf(stderr, "concord %s: %s\n", command, err.msg);
    return rc;
}

int cli_int(const char *command, const char *opt, const char *text, long long min,
            long long max, long long *out)
{
    char *end;
    errno = 0;
    long long v = strtoll(text, &end, 10);
    if (!(isdigit((unsigned char)text[0]) || (text[0] == '-' && isdigit((unsigned char)text[1]))) ||
        errno || *end || v < min || v > max) {
        cli_usage(command, "--%s must be a whole number from %lld to %lld, not '%s'", opt, min,
                  max, text);
        return -1;
    }
    *out = v;
    return 0;
}
