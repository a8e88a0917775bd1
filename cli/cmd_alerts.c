/* cmd_alerts.c — `concord alerts`: rule states and the notification history
 * with each delivery's status; and the demo's alert timeline (the default
 * rules run over every demo day into a file receiver). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "check.h"
#include "cli.h"
#include "date.h"
#include "deliver.h"
#include "history.h"
#include "rule.h"
#include "state.h"

const char help_alerts[] =
    "usage: concord alerts --db FILE|--store URL [--model NAME] [--state STATE]\n"
    "                      [--delivery pending|sent|dead] [--limit N] [--format text|json]\n\n"
    "Lists each rule's state per model (since when, last checked day, last value and\n"
    "bound) and the latest notifications (default 50) with their delivery to each\n"
    "receiver: sent, pending (attempts so far, next try, last error) or dead letter\n"
    "(gave up after the receiver's max_attempts; 'concord deliver --requeue-dead').\n"
    "STATE: quiet, building, raised, cleared or not_evaluated (the last checked day\n"
    "could not be judged: too few events or labels, or no baseline spread).\n\n"
    CLI_HELP_STORE_LOCAL "\n"
    "exit: 0 ok, 2 usage, 3 file or database error\n";

static void day_text(int64_t day, char out[11])
{
    if (day < 0)
        strcpy(out, "-");
    else
        cc_format_date(day, out);
}

static void time_text(int64_t t, char *out, size_t cap)
{
    if (t < 0) {
        snprintf(out, cap, "-");
        return;
    }
    char d[11];
    cc_format_date(cc_day_of_unix(t), d);
    int64_t s = t - cc_day_of_unix(t) * 86400;
    snprintf(out, cap, "%sT%02d:%02d:%02dZ", d, (int)(s / 3600), (int)(s / 60 % 60),
             (int)(s % 60));
}

static cJSON *jnum(double x) { return isfinite(x) ? cJSON_CreateNumber(x) : cJSON_CreateNull(); }

static cJSON *jday(int64_t day)
{
    char s[11];
    day_text(day, s);
    return day < 0 ? cJSON_CreateNull() : cJSON_CreateString(s);
}

typedef struct listing {
    int json;
    cJSON *arr;
    int64_t last_id;
    int count;
} listing;

static int state_row(void *ctx, const cc_state_row *r)
{
    listing *l = ctx;
    l->count++;
    if (l->json) {
        cJSON *o = cJSON_CreateObject();
        cJSON_AddStringToObject(o, "model", r->model);
        cJSON_AddStringToObject(o, "rule", r->rule);
        cJSON_AddStringToObject(o, "state", r->state);
        cJSON_AddStringToObject(o, "metric", r->metric);
        cJSON_AddStringToObject(o, "urgency", r->urgency);
        cJSON_AddItemToObject(o, "since", jday(r->since_day));
        cJSON_AddItemToObject(o, "last_checked", jday(r->last_day));
        cJSON_AddItemToObject(o, "raised_on", jday(r->fired_day));
        cJSON_AddNumberToObject(o, "breaching_days", r->breach_run);
        cJSON_AddNumberToObject(o, "clear_days", r->clear_run);
        cJSON_AddItemToObject(o, "last_value", jnum(r->last_value));
        cJSON_AddItemToObject(o, "last_bound", jnum(r->last_bound));
        cJSON_AddItemToArray(l->arr, o);
        return 0;
    }
    char since[11], last[11], fired[11], v[32] = "-", b[32] = "-";
    day_text(r->since_day, since);
    day_text(r->last_day, last);
    day_text(r->fired_day, fired);
    if (isfinite(r->last_value))
        snprintf(v, sizeof v, "%.4g", r->last_value);
    if (isfinite(r->last_bound))
        snprintf(b, sizeof b, "%.4g", r->last_bound);
    printf("  %-16s %-20s %-13s %-10s %-10s %-10s %-9s %-10s %s\n", r->model, r->rule, r->state,
           since, last, fired, v, b, r->urgency);
    return 0;
}

static int history_row(void *ctx, const cc_history_row *r)
{
    listing *l = ctx;
    if (l->json) {
        cJSON *o = NULL;
        if (r->id != l->last_id) {
            o = cJSON_CreateObject();
            cJSON_AddNumberToObject(o, "id", (double)r->id);
            cJSON_AddStringToObject(o, "notice_id", r->notice_id);
            cJSON_AddStringToObject(o, "model", r->model);
            cJSON_AddStringToObject(o, "rule", r->rule);
            cJSON_AddStringToObject(o, "kind", r->kind);
            cJSON_AddStringToObject(o, "urgency", r->urgency);
            cJSON_AddItemToObject(o, "day", jday(r->day));
            cJSON_AddItemToObject(o, "window", jday(r->window_day));
            cJSON_AddItemToObject(o, "value", jnum(r->value));
            cJSON_AddItemToObject(o, "bound", jnum(r->bound));
            cJSON_AddArrayToObject(o, "deliveries");
            cJSON_AddItemToArray(l->arr, o);
            l->last_id = r->id;
            l->count++;
        } else {
            o = cJSON_GetArrayItem(l->arr, cJSON_GetArraySize(l->arr) - 1);
        }
        if (r->receiver) {
            cJSON *d = cJSON_CreateObject();
            char next[32];
            cJSON_AddStringToObject(d, "receiver", r->receiver);
            cJSON_AddStringToObject(d, "status", r->status);
            cJSON_AddNumberToObject(d, "attempts", r->attempts);
            if (r->last_status)
                cJSON_AddNumberToObject(d, "last_http_status", (double)r->last_status);
            if (r->last_error)
                cJSON_AddStringToObject(d, "last_error", r->last_error);
            if (strcmp(r->status, "pending") == 0) {
                time_text(r->next_at, next, sizeof next);
                cJSON_AddStringToObject(d, "next_attempt", next);
            }
            cJSON_AddItemToArray(cJSON_GetObjectItem(o, "deliveries"), d);
        }
        return 0;
    }
    if (r->id != l->last_id) {
        char day[11], v[32] = "-";
        day_text(r->day, day);
        if (isfinite(r->value))
            snprintf(v, sizeof v, "%.4g", r->value);
        printf("  %5lld %-10s %-16s %-20s %-9s %-8s %s%s\n", (long long)r->id, day, r->model,
               r->rule, r->kind, r->urgency, v, r->receiver ? "" : "  (no receiver)");
        l->last_id = r->id;
        l->count++;
    }
    if (r->receiver) {
        char next[32];
        time_text(r->next_at, next, sizeof next);
        printf("        -> %-7s %s, %d attempt(s)", r->status, r->receiver, r->attempts);
        if (strcmp(r->status, "pending") == 0 && r->attempts > 0)
            printf(", next %s", next);
        if (strcmp(r->status, "sent") != 0 && r->last_error)
            printf(", last error: %s", r->last_error);
        putchar('\n');
    }
    return 0;
}

int cmd_alerts(int argc, char **argv)
{
    cli_opt opts[] = {CLI_STORE_OPTS,       {"model", 0, 1, NULL}, {"state", 0, 1, NULL},
                      {"delivery", 0, 1, NULL}, {"limit", 0, 1, NULL}, {"format", 0, 1, NULL}};
    int n_opts = (int)(sizeof opts / sizeof *opts), n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "alerts"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_alerts, stdout);
        return EXIT_OK;
    }
    const char *db, *url, *state = cli_get(opts, n_opts, "state");
    const char *delivery = cli_get(opts, n_opts, "delivery");
    const char *format = cli_get(opts, n_opts, "format"), *lim = cli_get(opts, n_opts, "limit");
    cc_state_kind k;
    if (cli_store_name("alerts", opts, n_opts, CLI_STORE_LOCAL, &db, &url))
        return EXIT_USAGE;
    if (n_pos)
        return cli_usage("alerts", "unexpected argument '%s'", pos[0]);
    if (state && cc_state_parse(state, &k))
        return cli_usage("alerts", "--state must be quiet, building, raised, cleared or not_evaluated");
    if (delivery && strcmp(delivery, "pending") && strcmp(delivery, "sent") &&
        strcmp(delivery, "dead"))
        return cli_usage("alerts", "--delivery must be pending, sent or dead");
    long long limit_ll = 50;
    if (lim && cli_int("alerts", "limit", lim, 1, 1000000, &limit_ll))
        return EXIT_USAGE;
    int limit = (int)limit_ll;
    int json = format && strcmp(format, "json") == 0;
    if (format && !json && strcmp(format, "text") != 0)
        return cli_usage("alerts", "--format must be text or json, not '%s'", format);

    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    int rc = EXIT_OK;
    listing st = {json, json ? cJSON_CreateArray() : NULL, -1, 0};
    listing hi = {json, json ? cJSON_CreateArray() : NULL, -1, 0};
    if (cli_store_open(&store, db, CC_STORE_READONLY, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    const char *model = cli_get(opts, n_opts, "model");
    if (!json)
        printf("rule states%s%s\n  %-16s %-20s %-13s %-10s %-10s %-10s %-9s %-10s %s\n",
               state ? ": " : "", state ? state : "", "model", "rule", "state", "since",
               "checked", "raised on", "value", "bound", "urgency");
    if (cc_history_states(store, model, state, state_row, &st, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    if (!json && st.count == 0)
        printf("  (none: run 'concord check')\n");
    if (!json)
        printf("\nnotifications, newest first (at most %d)\n  %5s %-10s %-16s %-20s %-9s %-8s "
               "%s\n", limit, "id", "day", "model", "rule", "kind", "urgency", "value");
    if (cc_history_notifications(store, model, delivery, limit, history_row, &hi, &err)) {
        rc = cli_fail(&err);
        goto done;
    }
    if (!json && hi.count == 0)
        printf("  (none)\n");
    if (json) {
        cJSON *o = cJSON_CreateObject();
        cJSON_AddItemToObject(o, "rule_states", st.arr);
        cJSON_AddItemToObject(o, "notifications", hi.arr);
        st.arr = hi.arr = NULL;
        char *text = cJSON_Print(o);
        if (text)
            printf("%s\n", text);
        free(text);
        cJSON_Delete(o);
    }
done:
    cJSON_Delete(st.arr);
    cJSON_Delete(hi.arr);
    cc_store_close(store);
    return rc;
}

/* The demo's alert timeline: default rules, each day in order, a file
 * receiver in the demo folder; deterministic times (10 minutes after each
 * day closes). */
int cli_demo_alerts(struct cc_store *store, const char *dir, int64_t first_day, int days)
{
    char rules_path[4200], sink[4200];
    snprintf(rules_path, sizeof rules_path, "%s/rules.jsonc", dir);
    snprintf(sink, sizeof sink, "%s/alerts.jsonl", dir);
    if (cli_write_output("demo", rules_path, cc_rules_default_text(), 0) != EXIT_OK)
        return EXIT_IO;
    remove(sink);
    cc_error err = CC_ERROR_INIT;
    cc_ruleset *rs = NULL;
    cc_receiver recv = {0};
    char url[4300];
    snprintf(url, sizeof url, "file:%s", sink);
    if (cc_rules_load(&rs, rules_path, &err) || cc_rules_receiver_for(rs, url, &recv, &err))
        return cli_fail(&err);
    int rc = EXIT_OK, n = 0, sent = 0;
    printf("\nalert timeline: the default rules ('concord rules init', written to %s)\n"
           "checked day by day; notifications appended to %s\n", rules_path, sink);
    printf("  %-3s %-10s %-30s %-9s %-8s %s\n", "day", "date", "rule", "kind", "urgency",
           "value (bound)");
    for (int d = 0; d < days; d++) {
        int64_t now = (first_day + d + 1) * 86400 + 600;
        cc_check_opts co = {.has_day = 1, .day = first_day + d, .now = now, .extra = &recv,
                            .n_extra = 1};
        cc_check_result *res = NULL;
        cc_deliver_opts dopt = CC_DELIVER_OPTS_INIT;
        cc_deliver_stats ds;
        dopt.now = now;
        dopt.seed = 1;
        if (cc_check_run(store, rs, &co, &res, &err) || cc_deliver_run(store, &dopt, &ds, &err)) {
            cc_check_result_free(res);
            rc = cli_fail(&err);
            break;
        }
        sent += ds.sent;
        for (int i = 0; i < res->n_items; i++) {
            const cc_check_item *it = &res->items[i];
            if (!it->notice_id)
                continue;
            char what[120];
            snprintf(what, sizeof what, "%s%s%s%s", it->rule->name, it->ev.subject[0] ? " [" : "",
                     it->ev.subject, it->ev.subject[0] ? "]" : "");
            char date[11];
            cc_format_date(res->day, date);
            printf("  %-3d %-10s %-30s %-9s %-8s %.4g (%.4g)\n", d + 1, date, what,
                   cc_check_outcome_name(it->outcome),
                   cc_rules_urgency_name(it->rule->urgency), it->ev.value, it->ev.bound);
            n++;
        }
        cc_check_result_free(res);
    }
    if (rc == EXIT_OK)
        printf("%d notifications, %d delivered to %s. Rule states: concord alerts --db "
               "%s/demo.db\n", n, sent, sink, dir);
    cc_rules_receiver_clear(&recv);
    cc_rules_free(rs);
    return rc;
}
