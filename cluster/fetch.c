/* fetch.c — the cluster's models, merged over the sources (fetch.h). */
#include "fetch.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int truncated(cc_ch *c, const char *what, cc_error *err)
{
    return cc_error_set(err, CC_EIO, "ClickHouse %s: %s: a truncated or malformed answer",
                        cc_ch_where(c), what);
}

/* "SELECT ... WHERE cond [AND model = 'x'] tail" into b. */
static void build_sql(cc_buf *b, const char *head, const char *model_col, const char *model,
                      const char *tail)
{
    cc_buf_put(b, head, strlen(head));
    if (model) {
        cc_buf_put(b, " AND ", 5);
        cc_buf_put(b, model_col, strlen(model_col));
        cc_buf_put(b, " = ", 3);
        cc_ch_quote(b, model);
    }
    cc_buf_put(b, tail, strlen(tail) + 1);
}

static int run_select(cc_ch *c, cc_buf *sql, cc_buf *ans, cc_error *err)
{
    if (sql->oom) {
        cc_buf_free(sql);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    int rc = cc_ch_query(c, (const char *)sql->p, NULL, ans, err);
    cc_buf_free(sql);
    return rc;
}

static char **read_names(cc_rb *rb, int *n)
{
    uint64_t count;
    *n = 0;
    if (cc_rb_varint(rb, &count) || count > 4096)
        return NULL;
    char **out = calloc(count ? count : 1, sizeof *out);
    for (uint64_t i = 0; out && i < count; i++) {
        const char *s;
        size_t len;
        if (cc_rb_string(rb, &s, &len) || !(out[i] = strndup(s, len))) {
            for (uint64_t j = 0; j < i; j++)
                free(out[j]);
            free(out);
            return NULL;
        }
    }
    *n = (int)count;
    return out;
}

static void free_names(char **names, int n)
{
    for (int i = 0; names && i < n; i++)
        free(names[i]);
    free(names);
}

static int same_names(char **a, int na, char **b, int nb)
{
    if (na != nb)
        return 0;
    for (int i = 0; i < na; i++)
        if (strcmp(a[i], b[i]) != 0)
            return 0;
    return 1;
}

void cc_ch_models_free(cc_ch_model *list, int n)
{
    for (int i = 0; list && i < n; i++)
        cc_model_free(list[i].model);
    free(list);
}

/* Models and baselines: one row per (model, source); all sources of a
 * model must agree. */
int cc_ch_models_load(cc_ch *c, const char *only, cc_ch_model **out, int *n_out, cc_error *err)
{
    cc_buf sql = CC_BUF_INIT, ans = CC_BUF_INIT;
    char head[256];
    *out = NULL;
    *n_out = 0;
    snprintf(head, sizeof head,
             "SELECT name, source, members, classes, has_baseline, baseline_from, baseline_to "
             "FROM %s.models FINAL WHERE 1", cc_ch_database(c));
    build_sql(&sql, head, "name", only, " ORDER BY name, source FORMAT RowBinary");
    int rc = run_select(c, &sql, &ans, err);
    cc_rb rb = {ans.p, ans.p + ans.len};
    cc_ch_model *list = NULL, *cur = NULL;
    int n = 0;
    char *cur_source = NULL;
    while (!rc && rb.p < rb.end) {
        const char *name, *src;
        size_t name_n, src_n;
        uint8_t has;
        int64_t from, to;
        int nm = 0, nk = 0;
        char **mem = NULL, **cls = NULL;
        if (cc_rb_string(&rb, &name, &name_n) || cc_rb_string(&rb, &src, &src_n) ||
            !(mem = read_names(&rb, &nm)) || !(cls = read_names(&rb, &nk)) ||
            cc_rb_u8(&rb, &has) || cc_rb_i64(&rb, &from) || cc_rb_i64(&rb, &to)) {
            free_names(mem, nm);
            rc = truncated(c, "models", err);
            break;
        }
        if (cur && strlen(cur->model->name) == name_n &&
            memcmp(cur->model->name, name, name_n) == 0) {
            if (!same_names(cur->model->members, cur->model->m, mem, nm) ||
                !same_names(cur->model->classes, cur->model->k, cls, nk))
                rc = cc_error_set(err, CC_EIO,
                                  "cluster: sources '%s' and '%.*s' disagree about model '%s' "
                                  "(its members or classes); one model name, one shape",
                                  cur_source, (int)src_n, src, cur->model->name);
            else if (has && cur->has_baseline && (from != cur->from || to != cur->to))
                rc = cc_error_set(err, CC_EIO,
                                  "cluster: sources '%s' and '%.*s' set different baselines "
                                  "for model '%s'; set the same one on every host",
                                  cur_source, (int)src_n, src, cur->model->name);
            else if (has && !cur->has_baseline) {
                cur->has_baseline = 1;
                cur->from = from;
                cur->to = to;
            }
            free_names(mem, nm);
            free_names(cls, nk);
            continue;
        }
        cc_ch_model *grown = realloc(list, (size_t)(n + 1) * sizeof *grown);
        cc_model *m = calloc(1, sizeof *m);
        free(cur_source);
        cur_source = strndup(src, src_n);
        if (grown)
            list = grown;
        if (!grown || !m || !cur_source || !(m->name = strndup(name, name_n))) {
            free(m);
            free_names(mem, nm);
            free_names(cls, nk);
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            break;
        }
        m->id = n + 1;
        m->m = nm;
        m->k = nk;
        m->members = mem;
        m->classes = cls;
        cur = &list[n++];
        cur->model = m;
        cur->has_baseline = has;
        cur->from = from;
        cur->to = to;
    }
    free(cur_source);
    cc_buf_free(&ans);
    if (rc) {
        cc_ch_models_free(list, n);
        return rc;
    }
    *out = list;
    *n_out = n;
    return 0;
}
