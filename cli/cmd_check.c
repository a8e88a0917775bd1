/* cmd_check.c — `concord check`: evaluate the rules on a day, record state
 * changes and queue notifications, deliver, print, and exit with a status a
 * scheduler can act on. Also the printing shared with follow and demo. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <cjson/cJSON.h>

#include "check.h"
#include "ch_store.h"
#include "cli.h"
#include "date.h"
#include "deliver.h"
#include "report.h"
#include "rule.h"
#include "webhook.h"

const char help_check[] =
    "usage: concord check --db FILE [--store URL] --rules FILE [--model NAME]\n"
    "                     [--day DATE | --from DATE --to DATE] [--dry-run] [--webhook URL]\n"
    "                     [--no-deliver]\n"
    "                     [--format text|json]\n\n"
    "Evaluates every rule of the rules file on the latest complete UTC day (or --day) for\n"
    "every model (or --model), advances each rule's state (quiet, building, raised,\n"
    "cleared, or not_evaluated when the day cannot be judged) in the database and queues\n"
    "a notification for each transition only: raised, cleared, and the rule's reminder\n"
    "while it stays raised. Then delivers what is due to the rules file's webhooks and\n"
    "--webhook. A day already checked is not evaluated again.\n\n"
    "  --day DATE       check this day instead of yesterday (UTC)\n"
    "  --from DATE --to DATE\n"
    "                   replay: check every day of the range in order, each rule's state\n"
    "                   carried from day to day (with --dry-run: in memory only)\n"
    "  --dry-run        evaluate and print; change nothing, send nothing\n"
    "  --webhook URL    also notify this receiver (http://, https:// or file:PATH); give\n"
    "                   it once, list further receivers in the rules file\n"
    "  --no-deliver     queue only; 'concord deliver' sends later\n"
    "  --format json    rule, metric, value, bound, state and outcome per rule and day\n"
    "  --store URL      sqlite:FILE is --db FILE. With clickhouse://HOST:PORT/DATABASE the\n"
    "                   rules are evaluated on the cluster's merged figures, and the rule\n"
    "                   states, notifications and outbox stay in the local --db FILE\n"
    "                   (required beside it): run the cluster's check on one host\n\n"
    "exit: 0 healthy (no rule raised), 10 a rule was raised on a checked day, 11 rules are\n"
    "still raised (none newly), 1 invalid rules file, 2 usage, 3 file or database error,\n"
    "4 unknown model. Delivery failures do not change the exit status; they are retried.\n";

int64_t cli_now(void)
{
    const char *fixed = getenv("CONCORD_NOW"); /* a fixed clock for reproducible tests */
    return fixed && *fixed ? strtoll(fixed, NULL, 10) : (int64_t)time(NULL);
}

int cli_check_exit(const cc_check_result *r)
{
    return r->raised > 0 ? EXIT_FIRED : r->raised_now > 0 ? EXIT_FIRING : EXIT_OK;
}

static const char *label(cc_outcome o)
{
    switch (o) {
    case CC_OUT_RAISED: return "RAISED";
    case CC_OUT_CLEARED: return "CLEARED";
    case CC_OUT_REMINDER: return "REMINDER";
    case CC_OUT_STILL_RAISED: return "raised";
    case CC_OUT_BUILDING: return "building";
    case CC_OUT_NOT_EVALUATED: return "not-evaluated";
    case CC_OUT_ALREADY: return "checked";
    default: return "quiet";
    }
}

static void print_value(FILE *f, double x)
{
    if (isfinite(x))
        fprintf(f, "%.4g", x);
    else
        fputs("-", f);
}

static cJSON *jnum(double x) { return isfinite(x) ? cJSON_CreateNumber(x) : cJSON_CreateNull(); }

static cJSON *jdate(int64_t day)
{
    char s[11];
    if (day < 0)
        return cJSON_CreateNull();
    cc_format_date(day, s);
    return cJSON_CreateString(s);
}

static void print_json(const cc_check_result *r, int dry_run, const cc_deliver_stats *ds,
                       FILE *f)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "day", jdate(r->day));
    cJSON_AddItemToObject(o, "last_day", jdate(r->last_day));
    cJSON_AddBoolToObject(o, "dry_run", dry_run);
    cJSON_AddNumberToObject(o, "exit_code", cli_check_exit(r));
    cJSON *n = cJSON_AddObjectToObject(o, "counts");
    cJSON_AddNumberToObject(n, "raised", r->raised);
    cJSON_AddNumberToObject(n, "cleared", r->cleared);
    cJSON_AddNumberToObject(n, "reminders", r->reminders);
    cJSON_AddNumberToObject(n, "still_raised", r->raised_now);
    cJSON_AddNumberToObject(n, "building", r->building);
    cJSON_AddNumberToObject(n, "not_evaluated", r->not_evaluated);
    cJSON_AddNumberToObject(n, "already_checked", r->already);
    cJSON_AddNumberToObject(n, "queued", r->queued);
    cJSON *a = cJSON_AddArrayToObject(o, "results");
    for (int i = 0; i < r->n_items; i++) {
        const cc_check_item *it = &r->items[i];
        cJSON *e = cJSON_CreateObject();
        cJSON_AddItemToObject(e, "day", jdate(it->day));
        cJSON_AddStringToObject(e, "model", it->model);
        cJSON_AddStringToObject(e, "rule", cc_rule_display_name(it->rule));
        if (it->rule->slice) {
            cJSON_AddStringToObject(e, "slice", it->rule->slice);
            cJSON_AddStringToObject(e, "state_key", it->rule->name);
        }
        cJSON_AddStringToObject(e, "metric", it->rule->metric);
        cJSON_AddStringToObject(e, "urgency", cc_rules_urgency_name(it->rule->urgency));
        cJSON_AddStringToObject(e, "condition", cc_rules_condition_name(it->rule->cond));
        if (it->ev.subject[0])
            cJSON_AddStringToObject(e, "subject", it->ev.subject);
        cJSON_AddItemToObject(e, "window", jdate(it->ev.window_day));
        cJSON_AddItemToObject(e, "value", jnum(it->ev.value));
        cJSON_AddItemToObject(e, "bound", jnum(it->ev.bound));
        if (it->ev.has_baseline) {
            cJSON *b = cJSON_AddObjectToObject(e, "baseline");
            cJSON_AddItemToObject(b, "mean", jnum(it->ev.mean));
            cJSON_AddItemToObject(b, "sd", jnum(it->ev.sd));
            cJSON_AddNumberToObject(b, "days", it->ev.baseline_days);
            cJSON_AddItemToObject(b, "z", jnum(it->ev.z));
        } else {
            cJSON_AddNullToObject(e, "baseline");
        }
        cJSON_AddNumberToObject(e, "events", (double)it->ev.events);
        cJSON_AddNumberToObject(e, "labeled", (double)it->ev.labeled);
        cJSON_AddNumberToObject(e, "min_events", (double)it->ev.min_events);
        cJSON_AddNumberToObject(e, "min_labels", (double)it->ev.min_labels);
        cJSON_AddStringToObject(e, "previous_state", cc_state_name(it->before));
        cJSON_AddStringToObject(e, "state", cc_state_name(it->after));
        cJSON_AddStringToObject(e, "outcome", cc_check_outcome_name(it->outcome));
        cJSON_AddItemToObject(e, "since", jdate(it->since_day));
        if (it->ev.status == CC_EVAL_SKIPPED && it->outcome != CC_OUT_ALREADY)
            cJSON_AddStringToObject(e, "reason", it->ev.reason);
        if (it->notice_id)
            cJSON_AddStringToObject(e, "notice_id", it->notice_id);
        if (it->sentence)
            cJSON_AddStringToObject(e, "sentence", it->sentence);
        cJSON_AddItemToArray(a, e);
    }
    if (ds) {
        cJSON *d = cJSON_AddObjectToObject(o, "delivery");
        cJSON_AddNumberToObject(d, "sent", ds->sent);
        cJSON_AddNumberToObject(d, "failed", ds->failed);
        cJSON_AddNumberToObject(d, "dead", ds->dead);
        cJSON_AddNumberToObject(d, "deferred", ds->deferred);
        cJSON_AddNumberToObject(d, "pending_in_outbox", (double)ds->pending);
        cJSON_AddNumberToObject(d, "dead_letters_in_outbox", (double)ds->dead_total);
    } else {
        cJSON_AddNullToObject(o, "delivery");
    }
    char *text = cJSON_Print(o);
    if (text)
        fprintf(f, "%s\n", text);
    free(text);
    cJSON_Delete(o);
}

void cli_print_check(const cc_check_result *r, int json, int dry_run,
                     const cc_deliver_stats *ds, FILE *f)
{
    if (json) {
        print_json(r, dry_run, ds, f);
        return;
    }
    char day[11], last[11];
    cc_format_date(r->day, day);
    cc_format_date(r->last_day, last);
    if (r->last_day > r->day)
        fprintf(f, "concord check %s to %s, day by day%s\n", day, last,
                dry_run ? " (dry run: nothing recorded or sent)" : "");
    else
        fprintf(f, "concord check %s%s\n", day,
                dry_run ? " (dry run: nothing recorded or sent)" : "");
    for (int i = 0; i < r->n_items; i++) {
        const cc_check_item *it = &r->items[i];
        char d[11], who[200];
        /* a replay prints what changed or cannot be judged, and the last day in full */
        if (r->last_day > r->day && it->day < r->last_day &&
            (it->outcome == CC_OUT_QUIET || it->outcome == CC_OUT_STILL_RAISED ||
             it->outcome == CC_OUT_NOT_EVALUATED || it->outcome == CC_OUT_ALREADY))
            continue;
        cc_format_date(it->day, d);
        snprintf(who, sizeof who, "%s%s%s", it->rule->metric, it->ev.subject[0] ? "[" : "",
                 it->ev.subject);
        if (it->ev.subject[0])
            strncat(who, "]", sizeof who - strlen(who) - 1);
        fprintf(f, "  %s %-13s %-6s %-16s %-22s %s = ", d, label(it->outcome),
                cc_rules_urgency_name(it->rule->urgency), it->model, it->rule->name, who);
        print_value(f, it->ev.value);
        if (it->outcome == CC_OUT_ALREADY) {
            char lastc[11];
            cc_format_date(it->last_day, lastc);
            fprintf(f, "  [already checked up to %s; %s now]\n", lastc, cc_state_name(it->after));
            continue;
        }
        if (it->ev.status == CC_EVAL_SKIPPED) {
            fprintf(f, "  (not evaluated: %s)\n", it->ev.reason);
            continue;
        }
        fputs(" (bound ", f);
        print_value(f, it->ev.bound);
        fputs(")\n", f);
        if (it->sentence)
            fprintf(f, "             %s\n", it->sentence);
    }
    fprintf(f, "summary: %d raised, %d cleared, %d reminders; now %d raised, %d building, %d "
               "not evaluated", r->raised, r->cleared, r->reminders, r->raised_now, r->building,
            r->not_evaluated);
    if (r->already)
        fprintf(f, ", %d already checked", r->already);
    if (!dry_run)
        fprintf(f, "; %d notification(s) queued for %d receiver(s)", r->queued, r->receivers);
    fputc('\n', f);
    if (ds)
        fprintf(f, "delivery: %d sent, %d failed (retried later), %d became dead letters; "
                   "%lld pending, %lld dead letters in the outbox\n",
                ds->sent, ds->failed, ds->dead, (long long)ds->pending,
                (long long)ds->dead_total);
}

void cli_replay_free(cli_replay *r)
{
    cc_check_result_free(r->res);
    cc_rules_free(r->rules);
    free(r->items);
    free(r->raised);
    memset(r, 0, sizeof *r);
}

int cli_replay_run(cc_store *store, const char *rules_path, const char *model, int64_t from,
                   int64_t to, cli_replay *out)
{
    cc_error err = CC_ERROR_INIT;
    memset(out, 0, sizeof *out);
    int rc = rules_path ? cc_rules_load(&out->rules, rules_path, &err)
                        : cc_rules_parse(&out->rules, cc_rules_default_text(), "default rules",
                                         &err);
    if (rc)
        return cli_fail(&err);
    cc_check_opts co = {.model = model, .has_day = 1, .day = from, .has_to = 1, .to = to,
                        .dry_run = 1, .fresh = 1, .now = cli_now()};
    if (cc_check_run(store, out->rules, &co, &out->res, &err)) {
        cli_replay_free(out);
        return cli_fail(&err);
    }
    const cc_check_result *res = out->res;
    out->items = calloc((size_t)res->n_items + 1, sizeof *out->items);
    out->raised = calloc((size_t)res->n_items + 1, sizeof *out->raised);
    if (!out->items || !out->raised) {
        cli_replay_free(out);
        fprintf(stderr, "concord: out of memory\n");
        return EXIT_IO;
    }
    for (int i = 0; i < res->n_items; i++) {
        const cc_check_item *it = &res->items[i];
        cc_report_alert a = {it->day,
                             it->rule->name,
                             "",
                             cc_rules_urgency_name(it->rule->urgency),
                             it->ev.subject,
                             it->sentence,
                             it->rule->metric,
                             it->ev.value,
                             it->ev.bound,
                             it->fired_day,
                             it->rule->slice,
                             it->rule->rule_name};
        if (it->outcome == CC_OUT_RAISED || it->outcome == CC_OUT_CLEARED ||
            it->outcome == CC_OUT_REMINDER) {
            a.kind = cc_check_outcome_name(it->outcome);
            out->items[out->n_items++] = a;
        }
        if (it->day == res->last_day && it->after == CC_STATE_RAISED) {
            a.kind = "raised";
            out->raised[out->n_raised++] = a;
        }
        out->not_evaluated += it->day == res->last_day && it->outcome == CC_OUT_NOT_EVALUATED;
    }
    return EXIT_OK;
}

static void on_delivery(void *ctx, const cc_deliver_event *e)
{
    (void)ctx;
    if (!e->ok)
        fprintf(stderr, "concord: delivery of %s to %s failed (attempt %d): %s%s\n",
                e->notice_id, e->receiver, e->attempts, e->error,
                e->dead ? "; kept as a dead letter" : "; will retry");
}

int cmd_check(int argc, char **argv)
{
    cli_opt opts[] = {CLI_STORE_OPTS,             {"rules", 0, 1, NULL},
                      {"model", 0, 1, NULL},      {"day", 0, 1, NULL},
                      {"from", 0, 1, NULL},       {"to", 0, 1, NULL},
                      {"dry-run", 0, 0, NULL},    {"webhook", 0, 1, NULL},
                      {"no-deliver", 0, 0, NULL}, {"format", 0, 1, NULL}};
    int n_opts = (int)(sizeof opts / sizeof *opts), n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "check"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_check, stdout);
        return EXIT_OK;
    }
    const char *db, *url, *rules = cli_get(opts, n_opts, "rules");
    const char *format = cli_get(opts, n_opts, "format");
    if (cli_store_name("check", opts, n_opts, CLI_STORE_CLUSTER | CLI_STORE_BESIDE, &db, &url))
        return EXIT_USAGE;
    if (url && !db)
        return cli_usage("check", "--store %s: the rule states, notifications and outbox "
                                  "of a check on the cluster live in a local store: give "
                                  "--db FILE beside it", url);
    if (!rules)
        return cli_usage("check", "--rules is required");
    if (n_pos)
        return cli_usage("check", "unexpected argument '%s'", pos[0]);
    int json = format && strcmp(format, "json") == 0;
    if (format && !json && strcmp(format, "text") != 0)
        return cli_usage("check", "--format must be text or json, not '%s'", format);
    cc_check_opts co = {0};
    co.model = cli_get(opts, n_opts, "model");
    co.dry_run = cli_get(opts, n_opts, "dry-run") != NULL;
    co.now = cli_now();
    const char *from = cli_get(opts, n_opts, "from"), *to = cli_get(opts, n_opts, "to");
    if (cli_get(opts, n_opts, "day") && (from || to))
        return cli_usage("check", "give --day, or --from and --to, not both");
    if ((from != NULL) != (to != NULL))
        return cli_usage("check", "--from and --to go together");
    if (cli_get(opts, n_opts, "day")) {
        co.has_day = 1;
        if (cli_date("check", "day", cli_get(opts, n_opts, "day"), &co.day))
            return EXIT_USAGE;
    }
    if (from) {
        co.has_day = co.has_to = 1;
        if (cli_date("check", "from", from, &co.day) || cli_date("check", "to", to, &co.to))
            return EXIT_USAGE;
        if (co.to < co.day)
            return cli_usage("check", "--to is before --from");
    }

    cc_error err = CC_ERROR_INIT;
    cc_ruleset *rs = NULL;
    cc_store *store = NULL, *figures = NULL;
    cc_check_result *res = NULL;
    cc_receiver extra = {0};
    int rc;
    if (cc_rules_load(&rs, rules, &err))
        return cli_fail(&err);
    const char *hook = cli_get(opts, n_opts, "webhook");
    if (hook) {
        if (cc_rules_receiver_for(rs, hook, &extra, &err)) {
            cc_rules_free(rs);
            return cli_usage("check", "%s", err.msg);
        }
        co.extra = &extra;
        co.n_extra = 1;
    }
    if ((url && cc_ch_store_open(&figures, url, &err)) ||
        cli_store_open(&store, db, url ? CC_STORE_CREATE : 0, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    co.figures = figures;
    if (cc_check_run(store, rs, &co, &res, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    cc_deliver_stats ds;
    int delivered = 0;
    if (!co.dry_run && !cli_get(opts, n_opts, "no-deliver")) {
        cc_deliver_opts d = CC_DELIVER_OPTS_INIT;
        d.now = co.now;
        d.on_event = on_delivery;
        cc_webhook_global_init();
        int e = cc_deliver_run(store, &d, &ds, &err);
        cc_webhook_global_cleanup();
        if (e) {
            rc = cli_fail(&err);
            goto done;
        }
        delivered = 1;
    }
    cli_print_check(res, json, co.dry_run, delivered ? &ds : NULL, stdout);
    if (res->receivers == 0 && (res->raised || res->cleared || res->reminders) && !co.dry_run)
        fprintf(stderr, "concord check: warning: %d alert(s) raised, %d cleared, but no "
                        "receiver is configured: recorded ('concord alerts') and sent nowhere; "
                        "add a \"webhooks\" entry to %s or pass --webhook URL\n",
                res->raised, res->cleared, rules);
    rc = cli_check_exit(res);
done:
    cc_check_result_free(res);
    cc_store_close(store);
    cc_store_close(figures);
    cc_rules_receiver_clear(&extra);
    cc_rules_free(rs);
    return rc;
}
