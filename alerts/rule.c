/* rule.c — parsing and validating the rules file (JSON with comments), and
 * the default rule set with its reasoning. */
#include "rule.h"

#include <cjson/cJSON.h>
#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "paths.h"

struct cc_ruleset {
    cc_rule *rules;
    int n_rules;
    cc_receiver *receivers;
    int n_receivers;
    cc_receiver defaults;       /* the "delivery" section; url unused */
    int backoff_s, max_backoff_s;
};

/* Where an error is: the file, then a rule (by name or position) or none. */
typedef struct where {
    const char *source;
    const char *rule;           /* NULL: top level */
    int index;
    cc_error *err;
} where;

static int fail(const where *w, const char *key, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

static int fail(const where *w, const char *key, const char *fmt, ...)
{
    char what[512], at[160];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(what, sizeof what, fmt, ap);
    va_end(ap);
    if (w->rule)
        snprintf(at, sizeof at, "rule '%.64s'", w->rule);
    else if (w->index >= 0)
        snprintf(at, sizeof at, "rule #%d", w->index + 1);
    else
        at[0] = '\0';
    return cc_error_set(w->err, CC_EINPUT, "%s: %s%skey '%s': %s", w->source, at,
                        at[0] ? ": " : "", key, what);
}

static void rule_clear(cc_rule *r)
{
    free(r->name);
    free(r->metric);
    free(r->action);
    free(r->advice);
    free(r->description);
    free(r->subject);
    for (int i = 0; i < r->n_models; i++)
        free(r->models[i]);
    free(r->models);
}

void cc_rules_receiver_clear(cc_receiver *r)
{
    if (!r)
        return;
    free(r->url);
    free(r->secret_env);
    r->url = r->secret_env = NULL;
}

void cc_rules_free(cc_ruleset *rs)
{
    if (!rs)
        return;
    for (int i = 0; i < rs->n_rules; i++)
        rule_clear(&rs->rules[i]);
    free(rs->rules);
    for (int i = 0; i < rs->n_receivers; i++)
        cc_rules_receiver_clear(&rs->receivers[i]);
    free(rs->receivers);
    cc_rules_receiver_clear(&rs->defaults);
    free(rs);
}

/* Comments become spaces (newlines kept), so error positions stay right. */
static void strip_comments(char *s)
{
    int in_str = 0;
    for (char *p = s; *p; p++) {
        if (in_str) {
            if (*p == '\\' && p[1])
                p++;
            else if (*p == '"')
                in_str = 0;
        } else if (*p == '"') {
            in_str = 1;
        } else if (p[0] == '/' && p[1] == '/') {
            while (*p && *p != '\n')
                *p++ = ' ';
            if (!*p)
                break;
        } else if (p[0] == '/' && p[1] == '*') {
            *p++ = ' ';
            *p = ' ';
            while (p[1] && !(p[1] == '*' && p[2] == '/')) {
                p++;
                if (*p != '\n')
                    *p = ' ';
            }
            if (p[1]) {
                p[1] = p[2] = ' ';
                p += 2;
            }
        }
    }
}

static int check_keys(const where *w, const cJSON *obj, const char *const *known,
                      const char *prefix)
{
    for (const cJSON *it = obj->child; it; it = it->next) {
        int ok = 0;
        for (int i = 0; known[i]; i++)
            ok |= strcmp(it->string, known[i]) == 0;
        if (!ok) {
            char list[400] = "";
            for (int i = 0; known[i]; i++) {
                strncat(list, i ? ", " : "", sizeof list - strlen(list) - 1);
                strncat(list, known[i], sizeof list - strlen(list) - 1);
            }
            char key[160];
            snprintf(key, sizeof key, "%s%s", prefix, it->string);
            return fail(w, key, "unknown key (known: %s)", list);
        }
    }
    return 0;
}

static int get_string(const where *w, const cJSON *obj, const char *key, const char *label,
                      int required, size_t max_len, char **out)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
    *out = NULL;
    if (!v)
        return required ? fail(w, label, "missing") : 0;
    if (!cJSON_IsString(v) || !v->valuestring[0])
        return fail(w, label, "must be a non-empty string");
    if (strlen(v->valuestring) > max_len)
        return fail(w, label, "longer than %zu bytes", max_len);
    if (!(*out = strdup(v->valuestring)))
        return cc_error_set(w->err, CC_ENOMEM, "out of memory");
    return 0;
}

/* Integer in [lo, hi]; *out keeps its default when the key is absent. */
static int get_int(const where *w, const cJSON *obj, const char *key, const char *label,
                   int64_t lo, int64_t hi, int64_t *out)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
    if (!v)
        return 0;
    if (!cJSON_IsNumber(v) || v->valuedouble != floor(v->valuedouble) ||
        v->valuedouble < (double)lo || v->valuedouble > (double)hi)
        return fail(w, label, "must be a whole number from %lld to %lld", (long long)lo,
                    (long long)hi);
    *out = (int64_t)v->valuedouble;
    return 0;
}

static int get_seconds_ms(const where *w, const cJSON *obj, const char *key, const char *label,
                          int *out_ms)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
    if (!v)
        return 0;
    if (!cJSON_IsNumber(v) || !(v->valuedouble >= 0.1 && v->valuedouble <= 600))
        return fail(w, label, "must be a number of seconds from 0.1 to 600");
    *out_ms = (int)lround(v->valuedouble * 1000);
    return 0;
}

static int valid_env_name(const char *s)
{
    if (!(isalpha((unsigned char)s[0]) || s[0] == '_'))
        return 0;
    for (const char *p = s; *p; p++)
        if (!(isalnum((unsigned char)*p) || *p == '_'))
            return 0;
    return 1;
}

static int valid_url(const char *u)
{
    if (strncmp(u, "http://", 7) == 0)
        return u[7] != '\0';
    if (strncmp(u, "https://", 8) == 0)
        return u[8] != '\0';
    if (strncmp(u, "file://", 7) == 0)
        return u[7] == '/';
    return strncmp(u, "file:", 5) == 0 && u[5] != '\0';
}

static int valid_rule_name(const char *s)
{
    for (const char *p = s; *p; p++)
        if (!(isalnum((unsigned char)*p) || *p == '-' || *p == '_' || *p == '.'))
            return 0;
    return 1;
}

/* Secret variable, timeouts and attempts: shared by "delivery" and each
 * webhook (which inherits what it does not set). */
static int receiver_opts(const where *w, const cJSON *obj, const char *prefix, cc_receiver *r)
{
    char label[96];
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, "secret_env");
    snprintf(label, sizeof label, "%ssecret_env", prefix);
    if (v) {
        if (!cJSON_IsString(v) || !valid_env_name(v->valuestring))
            return fail(w, label, "must name an environment variable (letters, digits, _), "
                                  "not hold the secret itself");
        free(r->secret_env);
        if (!(r->secret_env = strdup(v->valuestring)))
            return cc_error_set(w->err, CC_ENOMEM, "out of memory");
    }
    int rc;
    snprintf(label, sizeof label, "%sconnect_timeout_seconds", prefix);
    if ((rc = get_seconds_ms(w, obj, "connect_timeout_seconds", label, &r->connect_timeout_ms)))
        return rc;
    snprintf(label, sizeof label, "%stimeout_seconds", prefix);
    if ((rc = get_seconds_ms(w, obj, "timeout_seconds", label, &r->timeout_ms)))
        return rc;
    int64_t attempts = r->max_attempts;
    snprintf(label, sizeof label, "%smax_attempts", prefix);
    if ((rc = get_int(w, obj, "max_attempts", label, 1, 100, &attempts)))
        return rc;
    r->max_attempts = (int)attempts;
    return 0;
}

static int receiver_copy(const cc_receiver *from, cc_receiver *to)
{
    *to = *from;
    to->url = NULL;
    to->secret_env = from->secret_env ? strdup(from->secret_env) : NULL;
    return from->secret_env && !to->secret_env ? -1 : 0;
}

static int parse_delivery(const where *w, const cJSON *d, cc_ruleset *rs)
{
    static const char *const known[] = {"secret_env", "connect_timeout_seconds",
                                        "timeout_seconds", "max_attempts", "backoff_seconds",
                                        "max_backoff_seconds", NULL};
    if (!cJSON_IsObject(d))
        return fail(w, "delivery", "must be an object");
    int rc = check_keys(w, d, known, "delivery.");
    if (!rc)
        rc = receiver_opts(w, d, "delivery.", &rs->defaults);
    int64_t b = rs->backoff_s, mb = rs->max_backoff_s;
    if (!rc)
        rc = get_int(w, d, "backoff_seconds", "delivery.backoff_seconds", 1, 86400, &b);
    if (!rc)
        rc = get_int(w, d, "max_backoff_seconds", "delivery.max_backoff_seconds", 1, 604800,
                     &mb);
    if (!rc && mb < b)
        rc = fail(w, "delivery.max_backoff_seconds", "must not be below backoff_seconds");
    rs->backoff_s = (int)b;
    rs->max_backoff_s = (int)mb;
    return rc;
}

static int parse_webhooks(const where *w, const cJSON *a, cc_ruleset *rs)
{
    static const char *const known[] = {"url", "secret_env", "connect_timeout_seconds",
                                        "timeout_seconds", "max_attempts", NULL};
    if (!cJSON_IsArray(a))
        return fail(w, "webhooks", "must be an array of {\"url\": ...} objects");
    int n = cJSON_GetArraySize(a);
    if (n > 16)
        return fail(w, "webhooks", "at most 16 receivers");
    rs->receivers = calloc((size_t)(n ? n : 1), sizeof *rs->receivers);
    if (!rs->receivers)
        return cc_error_set(w->err, CC_ENOMEM, "out of memory");
    int i = 0, rc = 0;
    for (const cJSON *h = a->child; h && !rc; h = h->next, i++) {
        char prefix[32], label[64];
        snprintf(prefix, sizeof prefix, "webhooks[%d].", i);
        snprintf(label, sizeof label, "webhooks[%d].url", i);
        if (!cJSON_IsObject(h))
            return fail(w, label, "each webhook must be an object with a \"url\"");
        cc_receiver *r = &rs->receivers[rs->n_receivers];
        if (receiver_copy(&rs->defaults, r))
            return cc_error_set(w->err, CC_ENOMEM, "out of memory");
        rs->n_receivers++;
        if ((rc = check_keys(w, h, known, prefix)) ||
            (rc = get_string(w, h, "url", label, 1, 2048, &r->url)))
            return rc;
        if (!valid_url(r->url))
            return fail(w, label, "'%s' is not an http://, https:// or file: URL", r->url);
        rc = receiver_opts(w, h, prefix, r);
    }
    return rc;
}

static int parse_condition(const where *w, const cJSON *obj, cc_rule *r,
                           const cc_path_info *pi)
{
    static const struct {
        const char *key;
        cc_condition c;
    } conds[] = {{"above", CC_COND_ABOVE},
                 {"below", CC_COND_BELOW},
                 {"sigmas_above", CC_COND_SIGMAS_ABOVE},
                 {"sigmas_below", CC_COND_SIGMAS_BELOW}};
    int found = 0;
    for (int i = 0; i < 4; i++) {
        const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, conds[i].key);
        if (!v)
            continue;
        if (found++)
            return fail(w, conds[i].key, "a rule has exactly one of above, below, "
                                         "sigmas_above, sigmas_below");
        if (!cJSON_IsNumber(v) || !isfinite(v->valuedouble))
            return fail(w, conds[i].key, "must be a number");
        r->cond = conds[i].c;
        r->threshold = v->valuedouble;
        int sigma = r->cond == CC_COND_SIGMAS_ABOVE || r->cond == CC_COND_SIGMAS_BELOW;
        if (sigma && !(r->threshold > 0 && r->threshold <= 100))
            return fail(w, conds[i].key, "must be a number of standard deviations above 0 "
                                         "(at most 100)");
        if (sigma && pi->kind != CC_PATH_TRACKED)
            return fail(w, conds[i].key, "'%s' has no baseline spread; sigma conditions "
                                         "need a tracked figure (see the README, section Alerts), use "
                                         "above/below here", r->metric);
    }
    if (!found)
        return fail(w, "above", "missing: give one of above, below, sigmas_above, "
                                "sigmas_below");
    int sigma = r->cond == CC_COND_SIGMAS_ABOVE || r->cond == CC_COND_SIGMAS_BELOW;
    const char *shift_keys[] = {"min_shift", "min_relative_shift"};
    double *dst[] = {&r->min_shift, &r->min_relative_shift};
    for (int i = 0; i < 2; i++) {
        const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, shift_keys[i]);
        if (!v)
            continue;
        if (!sigma)
            return fail(w, shift_keys[i], "only goes with sigmas_above or sigmas_below");
        if (!cJSON_IsNumber(v) || !(v->valuedouble >= 0) || !isfinite(v->valuedouble))
            return fail(w, shift_keys[i], "must be a number of at least 0");
        *dst[i] = v->valuedouble;
    }
    return 0;
}

/* "member" or "class": a name, or "each"; only with a figure of that scope,
 * which defaults to "each". */
static int parse_scope(const where *w, const cJSON *obj, cc_rule *r, const cc_path_info *pi)
{
    static const char *const keys[] = {"member", "class"};
    for (int i = 0; i < 2; i++) {
        const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, keys[i]);
        cc_figure_scope want = i == 0 ? CC_SCOPE_MEMBER : CC_SCOPE_CLASS;
        if (!v)
            continue;
        if (pi->scope != want)
            return fail(w, keys[i], "'%s' is not a per-%s figure (see 'concord rules paths')",
                        r->metric, keys[i]);
        if (!cJSON_IsString(v) || !v->valuestring[0] || strlen(v->valuestring) > 256)
            return fail(w, keys[i], "must be a %s name or \"each\"", keys[i]);
        if (strcmp(v->valuestring, "each") == 0)
            r->each = 1;
        else if (!(r->subject = strdup(v->valuestring)))
            return cc_error_set(w->err, CC_ENOMEM, "out of memory");
    }
    if (pi->scope != CC_SCOPE_WINDOW && !r->subject)
        r->each = 1;
    return 0;
}

/* "scope": "model" (the default) or "each-slice". A figure the store
 * derives for the whole model only (labels.age_days) cannot be sliced. */
static int parse_slice_scope(const where *w, const cJSON *obj, cc_rule *r,
                             const cc_path_info *pi)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, "scope");
    if (!v)
        return 0;
    if (!cJSON_IsString(v) ||
        (strcmp(v->valuestring, "model") != 0 && strcmp(v->valuestring, "each-slice") != 0))
        return fail(w, "scope", "must be \"model\" (the whole model, the default) or "
                                "\"each-slice\" (every segment of the model alone)");
    r->each_slice = strcmp(v->valuestring, "each-slice") == 0;
    if (r->each_slice && pi->kind == CC_PATH_DERIVED)
        return fail(w, "scope", "'%s' is kept for the whole model only; use \"model\"",
                    r->metric);
    return 0;
}

const char *cc_rule_display_name(const cc_rule *r)
{
    return r->rule_name ? r->rule_name : r->name;
}

static int parse_rule(where *w, const cJSON *obj, cc_rule *r)
{
    static const char *const known[] = {
        "name", "metric", "member", "class", "above", "below", "sigmas_above", "sigmas_below",
        "min_shift", "min_relative_shift", "min_events", "min_labels", "days", "clear_days",
        "remind_after_days", "lag_days", "urgency", "action", "what_to_do", "about",
        "models", "enabled", "scope", NULL};
    int rc;
    if (!cJSON_IsObject(obj))
        return fail(w, "name", "each rule must be an object");
    if ((rc = get_string(w, obj, "name", "name", 1, 64, &r->name)))
        return rc;
    if (!valid_rule_name(r->name))
        return fail(w, "name", "'%s': use letters, digits, '-', '_' and '.' only", r->name);
    w->rule = r->name;
    if ((rc = check_keys(w, obj, known, "")) ||
        (rc = get_string(w, obj, "metric", "metric", 1, 128, &r->metric)))
        return rc;
    cc_path_info pi;
    if (cc_paths_lookup(r->metric, &pi))
        return fail(w, "metric", "unknown metric path '%s' (allowed: the tracked figures, "
                                 "other numbers of a report window, events, labeled, "
                                 "labels.age_days; see 'concord rules paths')", r->metric);
    if ((rc = parse_scope(w, obj, r, &pi)) || (rc = parse_condition(w, obj, r, &pi)) ||
        (rc = parse_slice_scope(w, obj, r, &pi)))
        return rc;
    int64_t me = CC_RULE_MIN_AUTO, ml = CC_RULE_MIN_AUTO, fa = 1, ca = 1, ra = 0, lag = 0;
    if ((rc = get_int(w, obj, "min_events", "min_events", 0, INT64_C(1) << 40, &me)) ||
        (rc = get_int(w, obj, "min_labels", "min_labels", 0, INT64_C(1) << 40, &ml)) ||
        (rc = get_int(w, obj, "days", "days", 1, 365, &fa)) ||
        (rc = get_int(w, obj, "clear_days", "clear_days", 1, 365, &ca)) ||
        (rc = get_int(w, obj, "remind_after_days", "remind_after_days", 1, 365, &ra)) ||
        (rc = get_int(w, obj, "lag_days", "lag_days", 0, 90, &lag)))
        return rc;
    r->min_events = me;
    r->min_labels = ml;
    r->raise_after = (int)fa;
    r->clear_after = (int)ca;
    r->remind_after_days = (int)ra;
    r->lag_days = (int)lag;

    const cJSON *sev = cJSON_GetObjectItemCaseSensitive(obj, "urgency");
    r->urgency = CC_URGENCY_MEDIUM;
    if (sev) {
        const char *s = cJSON_IsString(sev) ? sev->valuestring : "";
        if (strcmp(s, "low") == 0)
            r->urgency = CC_URGENCY_LOW;
        else if (strcmp(s, "medium") == 0)
            r->urgency = CC_URGENCY_MEDIUM;
        else if (strcmp(s, "high") == 0)
            r->urgency = CC_URGENCY_HIGH;
        else
            return fail(w, "urgency", "must be \"low\", \"medium\" or \"high\"");
    }
    if ((rc = get_string(w, obj, "action", "action", 0, 64, &r->action)) ||
        (rc = get_string(w, obj, "what_to_do", "what_to_do", 0, 512, &r->advice)) ||
        (rc = get_string(w, obj, "about", "about", 0, 1024, &r->description)))
        return rc;
    if (!r->action && !(r->action = strdup("review")))
        return cc_error_set(w->err, CC_ENOMEM, "out of memory");
    const cJSON *models = cJSON_GetObjectItemCaseSensitive(obj, "models");
    if (models) {
        if (!cJSON_IsArray(models) || cJSON_GetArraySize(models) == 0)
            return fail(w, "models", "must be a non-empty array of model names");
        r->models = calloc((size_t)cJSON_GetArraySize(models), sizeof *r->models);
        if (!r->models)
            return cc_error_set(w->err, CC_ENOMEM, "out of memory");
        for (const cJSON *m = models->child; m; m = m->next) {
            if (!cJSON_IsString(m) || !m->valuestring[0])
                return fail(w, "models", "must be a non-empty array of model names");
            if (!(r->models[r->n_models++] = strdup(m->valuestring)))
                return cc_error_set(w->err, CC_ENOMEM, "out of memory");
        }
    }
    return 0;
}

int cc_rules_parse(cc_ruleset **out, const char *text, const char *source, cc_error *err)
{
    *out = NULL;
    char *copy = strdup(text);
    cc_ruleset *rs = calloc(1, sizeof *rs);
    if (!copy || !rs) {
        free(copy);
        free(rs);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    rs->defaults.connect_timeout_ms = CC_DELIVERY_CONNECT_TIMEOUT_MS;
    rs->defaults.timeout_ms = CC_DELIVERY_TIMEOUT_MS;
    rs->defaults.max_attempts = CC_DELIVERY_MAX_ATTEMPTS;
    rs->backoff_s = CC_DELIVERY_BACKOFF_S;
    rs->max_backoff_s = CC_DELIVERY_MAX_BACKOFF_S;
    strip_comments(copy);
    const char *end = NULL;
    cJSON *root = cJSON_ParseWithOpts(copy, &end, 1);
    where w = {source, NULL, -1, err};
    int rc = 0;
    if (!root) {
        int line = 1, col = 1;
        for (const char *p = copy; end && p < end && *p; p++) {
            if (*p == '\n') {
                line++;
                col = 1;
            } else {
                col++;
            }
        }
        rc = cc_error_set(err, CC_EINPUT, "%s:%d:%d: not valid JSON here (comments with // "
                                          "and /* */ are allowed, trailing commas are not)",
                          source, line, col);
        goto done;
    }
    static const char *const known[] = {"version", "webhooks", "delivery", "rules", NULL};
    if (!cJSON_IsObject(root)) {
        rc = fail(&w, "rules", "the file must hold one JSON object with a \"rules\" array");
        goto done;
    }
    if ((rc = check_keys(&w, root, known, "")))
        goto done;
    const cJSON *ver = cJSON_GetObjectItemCaseSensitive(root, "version");
    if (ver && !(cJSON_IsNumber(ver) && ver->valuedouble == 1)) {
        rc = fail(&w, "version", "this concord reads version 1 rules files");
        goto done;
    }
    const cJSON *d = cJSON_GetObjectItemCaseSensitive(root, "delivery");
    if (d && (rc = parse_delivery(&w, d, rs)))
        goto done;
    const cJSON *hooks = cJSON_GetObjectItemCaseSensitive(root, "webhooks");
    if (hooks && (rc = parse_webhooks(&w, hooks, rs)))
        goto done;
    const cJSON *rules = cJSON_GetObjectItemCaseSensitive(root, "rules");
    if (!rules || !cJSON_IsArray(rules)) {
        rc = fail(&w, "rules", rules ? "must be an array of rules" : "missing");
        goto done;
    }
    int n = cJSON_GetArraySize(rules);
    if (n > 1000) {
        rc = fail(&w, "rules", "at most 1000 rules");
        goto done;
    }
    rs->rules = calloc((size_t)(n ? n : 1), sizeof *rs->rules);
    if (!rs->rules) {
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        goto done;
    }
    int i = 0;
    for (const cJSON *r = rules->child; r; r = r->next, i++) {
        where rw = {source, NULL, i, err};
        const cJSON *en = cJSON_IsObject(r) ? cJSON_GetObjectItemCaseSensitive(r, "enabled")
                                            : NULL;
        cc_rule *dst = &rs->rules[rs->n_rules];
        memset(dst, 0, sizeof *dst);
        rs->n_rules++;
        if ((rc = parse_rule(&rw, r, dst)))
            goto done;
        if (en && !cJSON_IsBool(en)) {
            rc = fail(&rw, "enabled", "must be true or false");
            goto done;
        }
        for (int j = 0; j < rs->n_rules - 1; j++)
            if (strcmp(rs->rules[j].name, dst->name) == 0) {
                rc = fail(&rw, "name", "'%s' is used by two rules; names must be unique",
                          dst->name);
                goto done;
            }
        if (en && cJSON_IsFalse(en)) {
            rule_clear(dst);
            rs->n_rules--;
        }
    }
done:
    cJSON_Delete(root);
    free(copy);
    if (rc) {
        cc_rules_free(rs);
        return rc;
    }
    *out = rs;
    return 0;
}

int cc_rules_load(cc_ruleset **out, const char *path, cc_error *err)
{
    *out = NULL;
    FILE *f = fopen(path, "rb");
    if (!f)
        return cc_error_set(err, CC_EIO, "%s: cannot open: %s", path, strerror(errno));
    size_t cap = 1 << 16, len = 0;
    char *buf = malloc(cap);
    int rc = 0;
    while (buf) {
        size_t got = fread(buf + len, 1, cap - len - 1, f);
        len += got;
        if (got == 0)
            break;
        if (len + 1 >= cap) {
            if (cap >= (size_t)1 << 24) {
                rc = cc_error_set(err, CC_EINPUT, "%s: larger than 16 MiB", path);
                break;
            }
            char *nb = realloc(buf, cap *= 2);
            if (!nb) {
                free(buf);
                buf = NULL;
            }
            buf = nb;
        }
    }
    if (!rc && ferror(f))
        rc = cc_error_set(err, CC_EIO, "%s: read error: %s", path, strerror(errno));
    fclose(f);
    if (!buf)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    buf[len] = '\0';
    if (!rc && strlen(buf) != len)
        rc = cc_error_set(err, CC_EINPUT, "%s: contains a NUL byte", path);
    if (!rc)
        rc = cc_rules_parse(out, buf, path, err);
    free(buf);
    return rc;
}

int cc_rules_count(const cc_ruleset *rs) { return rs->n_rules; }
const cc_rule *cc_rules_get(const cc_ruleset *rs, int i) { return &rs->rules[i]; }
int cc_rules_receiver_count(const cc_ruleset *rs) { return rs->n_receivers; }
const cc_receiver *cc_rules_receiver(const cc_ruleset *rs, int i) { return &rs->receivers[i]; }
int cc_rules_backoff_s(const cc_ruleset *rs) { return rs->backoff_s; }
int cc_rules_max_backoff_s(const cc_ruleset *rs) { return rs->max_backoff_s; }

int cc_rules_receiver_for(const cc_ruleset *rs, const char *url, cc_receiver *out,
                          cc_error *err)
{
    memset(out, 0, sizeof *out);
    if (!valid_url(url))
        return cc_error_set(err, CC_EINPUT, "webhook '%s' is not an http://, https:// or "
                                            "file: URL", url);
    if (receiver_copy(&rs->defaults, out) || !(out->url = strdup(url))) {
        cc_rules_receiver_clear(out);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    return 0;
}

int cc_rules_applies(const cc_rule *r, const char *model)
{
    if (!r->models)
        return 1;
    for (int i = 0; i < r->n_models; i++)
        if (strcmp(r->models[i], model) == 0)
            return 1;
    return 0;
}

const char *cc_rules_condition_name(cc_condition c)
{
    switch (c) {
    case CC_COND_ABOVE: return "above";
    case CC_COND_BELOW: return "below";
    case CC_COND_SIGMAS_ABOVE: return "sigmas_above";
    default: return "sigmas_below";
    }
}

const char *cc_rules_urgency_name(cc_urgency s)
{
    return s == CC_URGENCY_LOW ? "low" : s == CC_URGENCY_HIGH ? "high" : "medium";
}
