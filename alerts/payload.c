/* payload.c — building a notification's JSON body with cJSON. */
#include "payload.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "date.h"
#include "evidence.h"
#include "paths.h"

int cc_payload_notice_id(char *out, size_t cap, const char *model, const char *rule,
                          cc_transition kind, int64_t day)
{
    char d[11];
    cc_format_date(day, d);
    int n = snprintf(out, cap, "%s/%s/%s/%s", model, rule, cc_transition_name(kind), d);
    return n < 0 || (size_t)n >= cap ? -1 : n;
}

static cJSON *num(double x) { return isfinite(x) ? cJSON_CreateNumber(x) : cJSON_CreateNull(); }

static cJSON *date(int64_t day)
{
    char s[11];
    if (day < 0)
        return cJSON_CreateNull();
    cc_format_date(day, s);
    return cJSON_CreateString(s);
}

static void fmt_num(char *out, size_t cap, double x)
{
    if (!isfinite(x))
        snprintf(out, cap, "undefined");
    else
        snprintf(out, cap, "%.4g", x);
}

void cc_payload_sentence(char *out, size_t cap, const cc_payload_in *in)
{
    const cc_rule *r = in->rule;
    const cc_eval_result *ev = in->ev;
    cc_path_info pi = {0};
    cc_paths_lookup(r->metric, &pi);
    char what[200];
    const char *w0 = pi.what ? pi.what : r->metric;
    if (ev->subject[0])
        snprintf(what, sizeof what, "%s %s's %s",
                 pi.scope == CC_SCOPE_MEMBER ? "member" : "class", ev->subject, w0);
    else
        snprintf(what, sizeof what, "%s", w0);
    char v[32], b[32], m[32], s[32], day[11], fired[11], base[128] = "", who[640];
    /* a slice's rule names the slice after the model */
    if (r->slice)
        snprintf(who, sizeof who, "%.250s, segment '%.250s'", in->model, r->slice);
    else
        snprintf(who, sizeof who, "%s", in->model);
    fmt_num(v, sizeof v, ev->value);
    fmt_num(b, sizeof b, ev->bound);
    cc_format_date(ev->window_day, day);
    cc_format_date(in->st->fired_day >= 0 ? in->st->fired_day : in->day, fired);
    int above = r->cond == CC_COND_ABOVE || r->cond == CC_COND_SIGMAS_ABOVE;
    if (ev->has_baseline && isfinite(ev->mean)) {
        fmt_num(m, sizeof m, ev->mean);
        fmt_num(s, sizeof s, ev->sd);
        if (isfinite(ev->z))
            snprintf(base, sizeof base, " (baseline %s, sd %s; %.1f sd %s)", m, s, fabs(ev->z),
                     ev->z >= 0 ? "above" : "below");
        else
            snprintf(base, sizeof base, " (baseline %s, sd %s)", m, s);
    }
    if (in->kind == CC_TR_CLEARED && r->each && ev->subject[0]) {
        snprintf(out, cap, "%s: every %s's %s is back %s its bound for %d day(s) (closest: %s, "
                           "%s on %s, bound %s); the alert was raised on %s.",
                 who, pi.scope == CC_SCOPE_MEMBER ? "member" : "class", w0,
                 above ? "below" : "above", r->clear_after, ev->subject, v, day, b, fired);
        return;
    }
    switch (in->kind) {
    case CC_TR_CLEARED:
        snprintf(out, cap, "%s: %s is back %s %s (%s on %s) for %d day(s); the alert was raised on %s.",
                 who, what, above ? "below" : "above", b, v, day, r->clear_after, fired);
        break;
    case CC_TR_REMINDER:
        snprintf(out, cap, "%s: still raised since %s: %s %s on %s is %s %s%s.", who,
                 fired, what, v, day, above ? "above" : "below", b, base);
        break;
    default:
        snprintf(out, cap, "%s: %s %s on %s is %s %s%s.", who, what, v, day,
                 above ? "above" : "below", b, base);
        break;
    }
}

static const char *default_advice(const char *action)
{
    if (strcmp(action, "consider_retraining") == 0)
        return "Review the evidence; if it persists, consider retraining.";
    if (strcmp(action, "review_inputs") == 0)
        return "Review the inputs behind this window for a fault upstream.";
    if (strcmp(action, "review_members") == 0)
        return "Review how the members were last trained and deployed.";
    if (strcmp(action, "recalibrate") == 0)
        return "Review calibration; consider recalibrating.";
    if (strcmp(action, "check_labels") == 0)
        return "Check the labelling pipeline.";
    return "Review the evidence in 'concord report' for this window.";
}

char *cc_payload_build(const cc_payload_in *in)
{
    const cc_rule *r = in->rule;
    const cc_eval_result *ev = in->ev;
    char key[1024], text[1024], created[32];
    cc_payload_notice_id(key, sizeof key, in->model, r->name, in->kind, in->day);
    cc_payload_sentence(text, sizeof text, in);
    cJSON *o = cJSON_CreateObject();
    if (!o)
        return NULL;
    cJSON_AddStringToObject(o, "schema", CC_PAYLOAD_SCHEMA);
    cJSON_AddStringToObject(o, "kind", cc_transition_name(in->kind));
    cJSON_AddStringToObject(o, "notice_id", key);
    int64_t since = in->st->fired_day >= 0 ? in->st->fired_day : in->day;
    char episode[1024], sd[11];
    cc_format_date(since, sd);
    snprintf(episode, sizeof episode, "%s/%s/%s", in->model, r->name, sd);
    cJSON_AddStringToObject(o, "episode", episode);
    cJSON_AddStringToObject(o, "rule", cc_rule_display_name(r));
    cJSON_AddStringToObject(o, "urgency", cc_rules_urgency_name(r->urgency));
    cJSON_AddStringToObject(o, "model", in->model);
    if (r->slice) {
        /* an each-slice rule: the slice judged alone, and its own state */
        cJSON_AddStringToObject(o, "scope", "each-slice");
        cJSON_AddStringToObject(o, "slice", r->slice);
        cJSON_AddStringToObject(o, "state_key", r->name);
    }
    if (ev->subject[0]) {
        cc_path_info pi;
        cc_paths_lookup(r->metric, &pi);
        cJSON_AddStringToObject(o, cc_figures_scope_name(pi.scope), ev->subject);
    }
    cJSON_AddItemToObject(o, "checked_day", date(in->day));
    cJSON *win = cJSON_AddObjectToObject(o, "window");
    cJSON_AddItemToObject(win, "from", date(ev->window_day));
    cJSON_AddItemToObject(win, "to", date(ev->window_day));
    cJSON_AddNumberToObject(win, "events", (double)ev->events);
    cJSON_AddNumberToObject(win, "labeled", (double)ev->labeled);
    cJSON_AddStringToObject(o, "metric", r->metric);
    cJSON_AddItemToObject(o, "value", num(ev->value));
    cJSON *cond = cJSON_AddObjectToObject(o, "condition");
    cJSON_AddStringToObject(cond, "type", cc_rules_condition_name(r->cond));
    cJSON_AddNumberToObject(cond, "threshold", r->threshold);
    cJSON_AddItemToObject(cond, "bound", num(ev->bound));
    if (r->cond == CC_COND_SIGMAS_ABOVE || r->cond == CC_COND_SIGMAS_BELOW) {
        cJSON_AddNumberToObject(cond, "min_shift", r->min_shift);
        cJSON_AddNumberToObject(cond, "min_relative_shift", r->min_relative_shift);
    }
    cJSON_AddNumberToObject(cond, "days", r->raise_after);
    cJSON_AddNumberToObject(cond, "clear_days", r->clear_after);
    if (ev->has_baseline && in->report) {
        cJSON *b = cJSON_AddObjectToObject(o, "baseline");
        cJSON_AddItemToObject(b, "from", date(in->report->baseline_from));
        cJSON_AddItemToObject(b, "to", date(in->report->baseline_to));
        cJSON_AddItemToObject(b, "mean", num(ev->mean));
        cJSON_AddItemToObject(b, "sd", num(ev->sd));
        cJSON_AddNumberToObject(b, "days", ev->baseline_days);
        cJSON_AddItemToObject(b, "z", num(ev->z));
    } else {
        cJSON_AddNullToObject(o, "baseline");
    }
    cJSON *st = cJSON_AddObjectToObject(o, "state");
    cJSON_AddStringToObject(st, "state", cc_state_name(in->st->state));
    cJSON_AddItemToObject(st, "since", date(in->st->since_day));
    cJSON_AddItemToObject(st, "raised_on", date(in->st->fired_day));
    cJSON_AddNumberToObject(st, "breaching_days", in->st->breach_run);
    cJSON_AddNumberToObject(st, "clear_days", in->st->clear_run);
    cJSON_AddStringToObject(o, "sentence", text);
    cJSON *evid = cc_evidence_build(in->report, r);
    cJSON_AddItemToObject(o, "evidence", evid ? evid : cJSON_CreateArray());
    cJSON *act = cJSON_AddObjectToObject(o, "action");
    cJSON_AddStringToObject(act, "code", in->kind == CC_TR_CLEARED ? "none" : r->action);
    cJSON_AddStringToObject(act, "text", in->kind == CC_TR_CLEARED
                                             ? "No action needed; keep an eye on the next days."
                                             : r->advice ? r->advice : default_advice(r->action));
    if (r->description)
        cJSON_AddStringToObject(o, "about", r->description);
    time_t t = (time_t)in->now;
    struct tm tm;
    gmtime_r(&t, &tm);
    strftime(created, sizeof created, "%Y-%m-%dT%H:%M:%SZ", &tm);
    cJSON_AddStringToObject(o, "created_at", created);
    cJSON_AddStringToObject(o, "sender", "concord " "0.1.0");
    char *body = cJSON_PrintUnformatted(o);
    cJSON_Delete(o);
    return body;
}
