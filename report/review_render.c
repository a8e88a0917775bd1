/* review_render.c — text, JSON and CSV of a review and of one event. */
#include "review_render.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"

void cc_review_format_time(int64_t ts, char out[21])
{
    int64_t day = cc_day_of_unix(ts), sec = ts - day * 86400;
    char d[11], t[64];
    cc_format_date(day, d);
    snprintf(t, sizeof t, "%.10sT%02d:%02d:%02dZ", d, (int)(sec / 3600), (int)(sec / 60 % 60),
             (int)(sec % 60));
    memcpy(out, t, 20);
    out[20] = '\0';
}

static const char *list_title(cc_review_where w)
{
    switch (w) {
    case CC_REVIEW_WRONG: return "the ensemble was wrong (largest margin first)";
    case CC_REVIEW_HELPED: return "the ensemble was right, the best member wrong (largest margin first)";
    case CC_REVIEW_HURT: return "the best member was right, the ensemble wrong (largest margin first)";
    case CC_REVIEW_TOP_MI: return "highest mutual information among the members";
    case CC_REVIEW_TOP_DISAGREEMENT: return "most member pairs disagreeing (then smallest margin)";
    case CC_REVIEW_PAIR: return "the averaged output's top two classes are the given pair (smallest margin first)";
    case CC_REVIEW_LOW_MARGIN: return "unlabelled, smallest margin first (candidates for labelling)";
    default: return "?";
    }
}

static int name_width(char *const *names, int n)
{
    int w = 5;
    for (int i = 0; i < n; i++)
        if ((int)strlen(names[i]) > w)
            w = (int)strlen(names[i]);
    return w;
}

/* ---- text ---- */

static void text_event(FILE *f, const cc_review_event *e, const cc_model *m, int rank)
{
    const cc_event_view *v = &e->view;
    char t[21];
    cc_review_format_time(e->ts, t);
    int cw = name_width(m->classes, m->k), mw = name_width(m->members, m->m);
    if (rank > 0)
        fprintf(f, "#%d ", rank);
    fprintf(f, "%s  %s  segment %s  label %s\n", e->id, t, e->segment ? e->segment : "-",
            e->label >= 0 ? m->classes[e->label] : "-");
    fprintf(f, "   ensemble %s %.3f, runner-up %s %.3f, margin %.3f; vote %s %d of %d%s;\n"
               "   mutual information %.3f nats, entropy %.3f nats, disagreement %.2f\n",
            m->classes[v->ens], v->avg[v->ens], m->classes[v->second], v->avg[v->second],
            v->margin, m->classes[v->vote], v->votes[v->vote], m->m, v->vote_tie ? " (tied)" : "",
            v->mutual_information, v->entropy, isnan(v->disagreement) ? 0.0 : v->disagreement);
    char h1[80], h2[80];
    snprintf(h1, sizeof h1, "p(%.60s)", m->classes[v->ens]);
    snprintf(h2, sizeof h2, "p(%.60s)", m->classes[v->second]);
    fprintf(f, "   %-*s  %-*s  %6s  %*s  %*s  right\n", mw, "member", cw, "class", "p", cw + 3,
            h1, cw + 3, h2);
    for (int i = 0; i < m->m; i++) {
        const float *row = e->probs + (size_t)i * (size_t)m->k;
        int c = v->member_class[i];
        fprintf(f, "   %-*s  %-*s  %6.3f  %*.3f  %*.3f  %s\n", mw, m->members[i], cw,
                m->classes[c], row[c], cw + 3, row[v->ens], cw + 3, row[v->second],
                v->member_right[i] < 0 ? "-" : v->member_right[i] ? "yes" : "no");
    }
}

static void text_summary(FILE *f, const cc_review *rv, const cc_model *m)
{
    const cc_review_opts *o = cc_review_get_opts(rv);
    const cc_review_summary *s = cc_review_get_summary(rv);
    char a[21], b[21];
    cc_review_format_time(o->from, a);
    cc_review_format_time(o->to, b);
    fprintf(f, "review of %s, %s .. %s", m->name, a, b);
    if (o->segment)
        fprintf(f, ", segment %s", o->segment);
    fprintf(f, "\n%lld events, %lld labelled", (long long)s->events, (long long)s->labeled);
    if (s->labeled > 0)
        fprintf(f, "; ensemble accuracy %.3f; best member of the range: %s (accuracy %.3f)\n",
                s->ensemble_accuracy, m->members[s->best_member],
                (double)s->member_correct[s->best_member] / (double)s->labeled);
    else
        fprintf(f, "; no labels, so no accuracy and no best member\n");
    if (s->events == 0)
        return;
    const char *best = s->best_member >= 0 ? m->members[s->best_member] : "best member";
    fprintf(f, "\ncounts\n");
    fprintf(f, "  %-44s %9lld\n", "wrong: the ensemble wrong", (long long)s->wrong);
    char line[200];
    snprintf(line, sizeof line, "helped: the ensemble right, %.64s wrong", best);
    fprintf(f, "  %-44s %9lld\n", line, (long long)s->helped);
    snprintf(line, sizeof line, "hurt: %.64s right, the ensemble wrong", best);
    fprintf(f, "  %-44s %9lld\n", line, (long long)s->hurt);
    fprintf(f, "  %-44s %9lld\n", "members not unanimous", (long long)s->split_events);
    fprintf(f, "  %-44s %9lld\n", "low-margin: unlabelled events", (long long)s->low_margin);
    if (o->lists & (1u << CC_REVIEW_PAIR))
        fprintf(f, "  pair: top two are %s and %s%*s %9lld\n", m->classes[o->pair_a],
                m->classes[o->pair_b], 0, "", (long long)s->pair_events);

    int cw = name_width(m->classes, m->k);
    if (s->labeled > 0) {
        fprintf(f, "\nconfusion of the ensemble on labelled events (rows: label, columns: the "
                   "ensemble's class)\n  %-*s", cw, "");
        for (int c = 0; c < m->k; c++)
            fprintf(f, " %*s", cw, m->classes[c]);
        fputc('\n', f);
        for (int t = 0; t < m->k; t++) {
            fprintf(f, "  %-*s", cw, m->classes[t]);
            for (int c = 0; c < m->k; c++)
                fprintf(f, " %*lld", cw, (long long)s->confusion[(size_t)t * m->k + c]);
            fputc('\n', f);
        }
        int mw = name_width(m->members, m->m);
        fprintf(f, "\nmembers on labelled events: accuracy, and how often each was the lone "
                   "right or lone wrong voice\n  %-*s %9s %12s %12s %9s %9s\n",
                mw, "member", "accuracy", "alone right", "alone wrong", "helped", "hurt");
        for (int i = 0; i < m->m; i++)
            fprintf(f, "  %-*s %9.3f %12lld %12lld %9lld %9lld%s\n", mw, m->members[i],
                    (double)s->member_correct[i] / (double)s->labeled,
                    (long long)s->lone_right[i], (long long)s->lone_wrong[i],
                    (long long)s->helped_by[i], (long long)s->hurt_by[i],
                    i == s->best_member ? "  (best)" : "");
        fprintf(f, "  (helped/hurt per member: the ensemble right and that member wrong, "
                   "and the reverse)\n");
    }
    if (s->n_contested > 0) {
        fprintf(f, "\ncontested class pairs (members not unanimous; the averaged output's "
                   "top two)\n");
        for (int i = 0; i < s->n_contested && i < 10; i++)
            fprintf(f, "  %-*s %-*s %9lld\n", cw, m->classes[s->contested[i].a], cw,
                    m->classes[s->contested[i].b], (long long)s->contested[i].count);
    }
}

typedef struct event_sink {
    FILE *f;
    const cc_model *m;
    cc_review_where w;
    int depth;  /* JSON: tabs added to each line of an event printed alone */
    int n;
} event_sink;

static int text_one(void *payload, int rank, const cc_review_event *e)
{
    event_sink *k = payload;
    fputc('\n', k->f);
    text_event(k->f, e, k->m, rank);
    return ferror(k->f);
}

int cc_review_write_text(FILE *f, cc_review *rv, const cc_model *m, cc_error *err)
{
    text_summary(f, rv, m);
    for (int w = 0; w < CC_REVIEW_KINDS; w++) {
        int n;
        int64_t matched;
        cc_review_get_list(rv, (cc_review_where)w, &n, &matched);
        if (!(cc_review_get_opts(rv)->lists & (1u << w)))
            continue;
        fprintf(f, "\n%s: %s: %d of %lld shown\n", cc_review_where_name((cc_review_where)w),
                list_title((cc_review_where)w), n, (long long)matched);
        event_sink k = {f, m, (cc_review_where)w, 0, 0};
        int rc = cc_review_each(rv, (cc_review_where)w, text_one, &k, err);
        if (rc)
            return rc;
    }
    return 0;
}

char *cc_review_event_text(const cc_review_event *e, const cc_model *m)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    if (!f)
        return NULL;
    const cc_event_view *v = &e->view;
    char t[21];
    cc_review_format_time(e->ts, t);
    int cw = name_width(m->classes, m->k), mw = name_width(m->members, m->m);
    if (cw < 7)
        cw = 7;
    fprintf(f, "event %s of %s\ntime %s, segment %s, label %s", e->id, m->name, t,
            e->segment ? e->segment : "-", e->label >= 0 ? m->classes[e->label] : "-");
    if (e->label >= 0 && e->label_at >= 0) {
        char la[21];
        cc_review_format_time(e->label_at, la);
        fprintf(f, " (arrived %s)", la);
    }
    fprintf(f, "\n\n%-*s", mw, "");
    for (int c = 0; c < m->k; c++)
        fprintf(f, " %*s", cw, m->classes[c]);
    fprintf(f, "   %-*s %-6s %s\n", cw, "class", "agrees", "right");
    for (int i = 0; i < m->m; i++) {
        const float *row = e->probs + (size_t)i * (size_t)m->k;
        fprintf(f, "%-*s", mw, m->members[i]);
        for (int c = 0; c < m->k; c++)
            fprintf(f, " %*.4f", cw, row[c]);
        fprintf(f, "   %-*s %-6s %s\n", cw, m->classes[v->member_class[i]],
                v->member_class[i] == v->ens ? "yes" : "no",
                v->member_right[i] < 0 ? "-" : v->member_right[i] ? "yes" : "no");
    }
    fprintf(f, "%-*s", mw, "average");
    for (int c = 0; c < m->k; c++)
        fprintf(f, " %*.4f", cw, v->avg[c]);
    fprintf(f, "   %-*s %-6s %s\n", cw, m->classes[v->ens], "",
            v->ens_right < 0 ? "-" : v->ens_right ? "yes" : "no");
    fprintf(f, "%-*s", mw, "votes");
    for (int c = 0; c < m->k; c++)
        fprintf(f, " %*d", cw, v->votes[c]);
    fprintf(f, "   %-*s%s\n", cw, m->classes[v->vote], v->vote_tie ? " (tied)" : "");
    fprintf(f, "\nensemble %s %.4f, runner-up %s %.4f, margin %.4f\n", m->classes[v->ens],
            v->avg[v->ens], m->classes[v->second], v->avg[v->second], v->margin);
    fprintf(f, "entropy %.4f nats = expected entropy %.4f + mutual information %.4f\n",
            v->entropy, v->expected_entropy, v->mutual_information);
    if (isnan(v->disagreement))
        fprintf(f, "disagreement: undefined (one member)\n");
    else
        fprintf(f, "disagreement %.3f (share of the %d member pairs whose classes differ)\n",
                v->disagreement, m->m * (m->m - 1) / 2);
    if (e->label >= 0)
        fprintf(f, "members right: %d of %d\n", v->n_right, m->m);
    if (fclose(f) != 0) {
        free(buf);
        return NULL;
    }
    return buf;
}

/* ---- JSON ---- */

static cJSON *num(double x) { return isfinite(x) ? cJSON_CreateNumber(x) : cJSON_CreateNull(); }

static cJSON *tri(int x) { return x < 0 ? cJSON_CreateNull() : cJSON_CreateBool(x); }

static cJSON *str_or_null(const char *s) { return s ? cJSON_CreateString(s) : cJSON_CreateNull(); }

static cJSON *event_json(const cc_review_event *e, const cc_model *m, int full)
{
    const cc_event_view *v = &e->view;
    char t[21];
    cc_review_format_time(e->ts, t);
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "id", e->id);
    cJSON_AddStringToObject(o, "time", t);
    cJSON_AddItemToObject(o, "segment", str_or_null(e->segment));
    cJSON_AddItemToObject(o, "label", str_or_null(e->label >= 0 ? m->classes[e->label] : NULL));
    if (e->label >= 0 && e->label_at >= 0) {
        cc_review_format_time(e->label_at, t);
        cJSON_AddStringToObject(o, "label_arrived", t);
    } else {
        cJSON_AddNullToObject(o, "label_arrived");
    }
    cJSON *en = cJSON_AddObjectToObject(o, "ensemble");
    cJSON_AddStringToObject(en, "class", m->classes[v->ens]);
    cJSON_AddItemToObject(en, "p", num(v->avg[v->ens]));
    cJSON_AddStringToObject(en, "runner_up", m->classes[v->second]);
    cJSON_AddItemToObject(en, "p_runner_up", num(v->avg[v->second]));
    cJSON_AddItemToObject(en, "margin", num(v->margin));
    cJSON_AddItemToObject(en, "right", tri(v->ens_right));
    cJSON *vo = cJSON_AddObjectToObject(o, "vote");
    cJSON_AddStringToObject(vo, "class", m->classes[v->vote]);
    cJSON_AddNumberToObject(vo, "count", v->votes[v->vote]);
    cJSON_AddBoolToObject(vo, "tie", v->vote_tie);
    cJSON_AddItemToObject(o, "entropy", num(v->entropy));
    cJSON_AddItemToObject(o, "expected_entropy", num(v->expected_entropy));
    cJSON_AddItemToObject(o, "mutual_information", num(v->mutual_information));
    cJSON_AddItemToObject(o, "disagreement", num(v->disagreement));
    if (e->label >= 0)
        cJSON_AddNumberToObject(o, "members_right", v->n_right);
    else
        cJSON_AddNullToObject(o, "members_right");
    if (full) {
        cJSON *avg = cJSON_AddArrayToObject(o, "averaged");
        cJSON *votes = cJSON_AddArrayToObject(o, "votes");
        for (int c = 0; c < m->k; c++) {
            cJSON_AddItemToArray(avg, num(v->avg[c]));
            cJSON_AddItemToArray(votes, cJSON_CreateNumber(v->votes[c]));
        }
    }
    cJSON *mem = cJSON_AddArrayToObject(o, "members");
    for (int i = 0; i < m->m; i++) {
        const float *row = e->probs + (size_t)i * (size_t)m->k;
        cJSON *x = cJSON_CreateObject();
        cJSON_AddStringToObject(x, "name", m->members[i]);
        cJSON_AddStringToObject(x, "class", m->classes[v->member_class[i]]);
        cJSON_AddItemToObject(x, "p", num(row[v->member_class[i]]));
        cJSON_AddItemToObject(x, "p_ensemble_class", num(row[v->ens]));
        cJSON_AddItemToObject(x, "p_runner_up", num(row[v->second]));
        cJSON_AddBoolToObject(x, "agrees", v->member_class[i] == v->ens);
        cJSON_AddItemToObject(x, "right", tri(v->member_right[i]));
        if (full) {
            cJSON *p = cJSON_AddArrayToObject(x, "probs");
            for (int c = 0; c < m->k; c++)
                cJSON_AddItemToArray(p, num(row[c]));
        }
        cJSON_AddItemToArray(mem, x);
    }
    return o;
}

static cJSON *names(char *const *v, int n)
{
    cJSON *a = cJSON_CreateArray();
    for (int i = 0; i < n; i++)
        cJSON_AddItemToArray(a, cJSON_CreateString(v[i]));
    return a;
}

static char *print_json(cJSON *root)
{
    char *text = root ? cJSON_Print(root) : NULL;
    cJSON_Delete(root);
    return text;
}

/* The root is printed with every list's "events" array empty; the text is
 * then written up to each of those arrays, whose events are printed one at
 * a time with the indentation cJSON_Print gives elements at that depth. */
static int json_one(void *payload, int rank, const cc_review_event *e)
{
    event_sink *k = payload;
    (void)rank;
    cJSON *tree = event_json(e, k->m, 0);
    char *text = tree ? cJSON_Print(tree) : NULL;
    cJSON_Delete(tree);
    if (!text)
        return 1;
    if (k->n++)
        fputs(", ", k->f);
    const char *p = text, *nl;
    while ((nl = strchr(p, '\n')) != NULL) {
        fwrite(p, 1, (size_t)(nl - p) + 1, k->f);
        for (int t = 0; t < k->depth; t++)
            fputc('\t', k->f);
        p = nl + 1;
    }
    fputs(p, k->f);
    free(text);
    return ferror(k->f);
}

int cc_review_write_json(FILE *f, cc_review *rv, const cc_model *m, cc_error *err)
{
    const cc_review_opts *o = cc_review_get_opts(rv);
    const cc_review_summary *s = cc_review_get_summary(rv);
    cJSON *root = cJSON_CreateObject();
    char t[21];
    cJSON_AddStringToObject(root, "model", m->name);
    cJSON_AddItemToObject(root, "members", names(m->members, m->m));
    cJSON_AddItemToObject(root, "classes", names(m->classes, m->k));
    cc_review_format_time(o->from, t);
    cJSON_AddStringToObject(root, "from", t);
    cc_review_format_time(o->to, t);
    cJSON_AddStringToObject(root, "to", t);
    cJSON_AddItemToObject(root, "segment", str_or_null(o->segment));
    cJSON_AddNumberToObject(root, "limit", o->limit);

    cJSON *su = cJSON_AddObjectToObject(root, "summary");
    cJSON_AddNumberToObject(su, "events", (double)s->events);
    cJSON_AddNumberToObject(su, "labeled", (double)s->labeled);
    cJSON_AddItemToObject(su, "ensemble_accuracy", num(s->ensemble_accuracy));
    cJSON_AddItemToObject(su, "best_member",
                          str_or_null(s->best_member >= 0 ? m->members[s->best_member] : NULL));
    cJSON_AddItemToObject(su, "best_member_accuracy",
                          num(s->best_member >= 0 ? (double)s->member_correct[s->best_member] /
                                                        (double)s->labeled
                                                  : NAN));
    cJSON *cnt = cJSON_AddObjectToObject(su, "counts");
    cJSON_AddNumberToObject(cnt, "wrong", (double)s->wrong);
    cJSON_AddNumberToObject(cnt, "helped", (double)s->helped);
    cJSON_AddNumberToObject(cnt, "hurt", (double)s->hurt);
    cJSON_AddNumberToObject(cnt, "not_unanimous", (double)s->split_events);
    cJSON_AddNumberToObject(cnt, "low_margin", (double)s->low_margin);
    if (o->lists & (1u << CC_REVIEW_PAIR))
        cJSON_AddNumberToObject(cnt, "pair", (double)s->pair_events);
    if (s->labeled > 0) {
        cJSON *cm = cJSON_AddArrayToObject(su, "confusion");
        for (int a = 0; a < m->k; a++) {
            cJSON *row = cJSON_CreateArray();
            for (int b = 0; b < m->k; b++)
                cJSON_AddItemToArray(row,
                                     cJSON_CreateNumber((double)s->confusion[(size_t)a * m->k + b]));
            cJSON_AddItemToArray(cm, row);
        }
    } else {
        cJSON_AddNullToObject(su, "confusion");
    }
    cJSON *mem = cJSON_AddArrayToObject(su, "members");
    for (int i = 0; i < m->m; i++) {
        cJSON *x = cJSON_CreateObject();
        cJSON_AddStringToObject(x, "name", m->members[i]);
        cJSON_AddItemToObject(x, "accuracy", num(s->labeled > 0 ? (double)s->member_correct[i] /
                                                                      (double)s->labeled
                                                                : NAN));
        cJSON_AddNumberToObject(x, "alone_right", (double)s->lone_right[i]);
        cJSON_AddNumberToObject(x, "alone_wrong", (double)s->lone_wrong[i]);
        cJSON_AddNumberToObject(x, "helped", (double)s->helped_by[i]);
        cJSON_AddNumberToObject(x, "hurt", (double)s->hurt_by[i]);
        cJSON_AddItemToArray(mem, x);
    }
    cJSON *cp = cJSON_AddArrayToObject(su, "contested_pairs");
    for (int i = 0; i < s->n_contested; i++) {
        cJSON *x = cJSON_CreateObject();
        cJSON_AddStringToObject(x, "a", m->classes[s->contested[i].a]);
        cJSON_AddStringToObject(x, "b", m->classes[s->contested[i].b]);
        cJSON_AddNumberToObject(x, "count", (double)s->contested[i].count);
        cJSON_AddItemToArray(cp, x);
    }

    cJSON *lists = cJSON_AddObjectToObject(root, "lists");
    for (int w = 0; w < CC_REVIEW_KINDS; w++) {
        if (!(o->lists & (1u << w)))
            continue;
        int n;
        int64_t matched;
        cc_review_get_list(rv, (cc_review_where)w, &n, &matched);
        cJSON *l = cJSON_AddObjectToObject(lists, cc_review_where_name((cc_review_where)w));
        cJSON_AddStringToObject(l, "meaning", list_title((cc_review_where)w));
        if (w == CC_REVIEW_PAIR) {
            cJSON *pr = cJSON_AddArrayToObject(l, "pair");
            cJSON_AddItemToArray(pr, cJSON_CreateString(m->classes[o->pair_a]));
            cJSON_AddItemToArray(pr, cJSON_CreateString(m->classes[o->pair_b]));
        }
        cJSON_AddNumberToObject(l, "matched", (double)matched);
        cJSON_AddArrayToObject(l, "events");
    }
    char *text = print_json(root);
    if (!text)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    /* a TAB is escaped inside strings, so this marks the arrays themselves */
    static const char mark[] = "\t\"events\":\t[]";
    const char *p = text;
    int rc = 0;
    for (int w = 0; w < CC_REVIEW_KINDS && !rc; w++) {
        if (!(o->lists & (1u << w)))
            continue;
        const char *at = strstr(p, mark);
        if (!at) {
            rc = cc_error_set(err, CC_EIO, "review: JSON layout not as expected");
            break;
        }
        const char *line = at;
        while (line > text && line[-1] == '\t')
            line--;
        event_sink k = {f, m, (cc_review_where)w, (int)(at - line) + 2, 0};
        fwrite(p, 1, (size_t)(at - p) + sizeof mark - 2, f); /* up to and with '[' */
        rc = cc_review_each(rv, (cc_review_where)w, json_one, &k, err);
        p = at + sizeof mark - 2;
    }
    if (!rc)
        fputs(p, f);
    free(text);
    return rc;
}

char *cc_review_event_json(const cc_review_event *e, const cc_model *m)
{
    cJSON *root = event_json(e, m, 1);
    cJSON_AddStringToObject(root, "model", m->name);
    cJSON_AddItemToObject(root, "classes", names(m->classes, m->k));
    return print_json(root);
}

/* ---- CSV (RFC 4180 quoting) ---- */

/* A cell that starts with = + - @ (or a tab or carriage return) is read as
 * a formula by spreadsheet programs; as OWASP's "CSV Injection" page
 * advises, such a cell gets a leading single quote, which makes it text.
 * Only names from the logs pass through here (numbers do not). */
static void csv_field(FILE *f, const char *s)
{
    if (!s)
        return;
    int formula = s[0] && strchr("=+-@\t\r", s[0]) != NULL;
    if (!formula && strpbrk(s, ",\"\r\n") == NULL) {
        fputs(s, f);
        return;
    }
    fputc('"', f);
    if (formula)
        fputc('\'', f);
    for (; *s; s++) {
        if (*s == '"')
            fputc('"', f);
        fputc(*s, f);
    }
    fputc('"', f);
}

static void csv_num(FILE *f, double x)
{
    if (isfinite(x))
        fprintf(f, ",%.6g", x);
    else
        fputc(',', f);
}

static void csv_bool(FILE *f, int x)
{
    fputs(x < 0 ? "," : x ? ",1" : ",0", f);
}

static int csv_one(void *payload, int rank, const cc_review_event *e)
{
    event_sink *k = payload;
    FILE *f = k->f;
    const cc_model *m = k->m;
    const cc_event_view *v = &e->view;
    char t[21];
    cc_review_format_time(e->ts, t);
    fprintf(f, "%s,%d,", cc_review_where_name(k->w), rank);
    csv_field(f, e->id);
    fprintf(f, ",%s,", t);
    csv_field(f, e->segment);
    fputc(',', f);
    csv_field(f, e->label >= 0 ? m->classes[e->label] : NULL);
    fputc(',', f);
    csv_field(f, m->classes[v->ens]);
    csv_num(f, v->avg[v->ens]);
    fputc(',', f);
    csv_field(f, m->classes[v->second]);
    csv_num(f, v->avg[v->second]);
    csv_num(f, v->margin);
    csv_bool(f, v->ens_right);
    fputc(',', f);
    csv_field(f, m->classes[v->vote]);
    fprintf(f, ",%d", v->votes[v->vote]);
    csv_bool(f, v->vote_tie);
    csv_num(f, v->mutual_information);
    csv_num(f, v->entropy);
    csv_num(f, v->disagreement);
    if (e->label >= 0)
        fprintf(f, ",%d", v->n_right);
    else
        fputc(',', f);
    for (int i = 0; i < m->m; i++) {
        const float *row = e->probs + (size_t)i * (size_t)m->k;
        fputc(',', f);
        csv_field(f, m->classes[v->member_class[i]]);
        csv_num(f, row[v->member_class[i]]);
        csv_num(f, row[v->ens]);
        csv_num(f, row[v->second]);
        csv_bool(f, v->member_right[i]);
    }
    fputs("\r\n", f);
    return ferror(f);
}

int cc_review_write_csv(FILE *f, cc_review *rv, const cc_model *m, cc_error *err)
{
    fputs("list,rank,id,time,segment,label,ensemble,p_ensemble,runner_up,p_runner_up,margin,"
          "ensemble_right,vote,vote_count,vote_tie,mutual_information,entropy,disagreement,"
          "members_right", f);
    static const char *const per[] = {"class", "p", "p_ensemble_class", "p_runner_up", "right"};
    for (int i = 0; i < m->m; i++)
        for (int j = 0; j < 5; j++) {
            char col[96];
            snprintf(col, sizeof col, "%s.%s", m->members[i], per[j]);
            fputc(',', f);
            csv_field(f, col);
        }
    fputs("\r\n", f);
    const cc_review_opts *o = cc_review_get_opts(rv);
    for (int w = 0; w < CC_REVIEW_KINDS; w++) {
        if (!(o->lists & (1u << w)))
            continue;
        event_sink k = {f, m, (cc_review_where)w, 0, 0};
        int rc = cc_review_each(rv, (cc_review_where)w, csv_one, &k, err);
        if (rc)
            return rc;
    }
    return 0;
}
