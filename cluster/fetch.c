/* fetch.c — reading the cluster into a local store (fetch.h). */
#include "fetch.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "ch_schema.h"
#include "ch_vector.h"
#include "store_slices.h"
#include "summary.h"

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

static int fetch_models(cc_ch *c, cc_store *dst, const cc_fetch_opts *o, cc_error *err)
{
    cc_ch_model *list;
    int n, rc = cc_ch_models_load(c, o->model, &list, &n, err);
    for (int i = 0; !rc && i < n; i++) {
        cc_model *m = NULL, *src = list[i].model;
        rc = cc_store_model_create(dst, src->name, src->m, src->k, src->classes, src->members,
                                   &m, err);
        if (!rc && list[i].has_baseline)
            rc = cc_store_baseline_set(dst, m, list[i].from, list[i].to, err);
        cc_model_free(m);
    }
    cc_ch_models_free(list, n);
    return rc;
}

/* The destination's model named by a row, when it is not m already: m is
 * replaced (NULL on error); *changed tells the caller to renew what it
 * keeps per model. */
static int model_of_row(cc_store *dst, const char *name, size_t name_n, cc_model **m,
                        int *changed, cc_error *err)
{
    *changed = 0;
    if (*m && strlen((*m)->name) == name_n && memcmp((*m)->name, name, name_n) == 0)
        return 0;
    *changed = 1;
    cc_model_free(*m);
    *m = NULL;
    char *z = strndup(name, name_n);
    if (!z)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    int rc = cc_store_model_get(dst, z, m, err);
    if (rc == -CC_ENOTFOUND)
        rc = cc_error_set(err, CC_EIO, "cluster: rows of model '%s' but no source published "
                                       "the model itself", z);
    free(z);
    return rc;
}

/* The merged vectors of every (model, day) (slices = 0), or of every (model,
 * slice, day) with the slices created in dst (slices = 1; ch_schema.h). */
static int fetch_summaries(cc_ch *c, cc_store *dst, const cc_fetch_opts *o, int slices,
                           cc_error *err)
{
    cc_buf sql = CC_BUF_INIT, ans = CC_BUF_INIT;
    char head[512];
    snprintf(head, sizeof head,
             "SELECT model, %s day, " CC_CH_VECTOR_SUM " FROM %s.summaries FINAL "
             "WHERE layout_version = %d AND slice %s ''", slices ? "slice," : "",
             cc_ch_database(c), CC_SUMMARY_VERSION, slices ? "!=" : "=");
    build_sql(&sql, head, "model", o->model,
              slices ? " GROUP BY model, slice, day ORDER BY model, slice, day FORMAT RowBinary"
                     : " GROUP BY model, day ORDER BY model, day FORMAT RowBinary");
    int rc = run_select(c, &sql, &ans, err);
    cc_rb rb = {ans.p, ans.p + ans.len};
    cc_model *m = NULL;
    cc_summary *sum = NULL;
    while (!rc && rb.p < rb.end) {
        const char *name, *key = "";
        size_t name_n, key_n = 0;
        int64_t day;
        if (cc_rb_string(&rb, &name, &name_n) ||
            (slices && cc_rb_string(&rb, &key, &key_n)) || cc_rb_i64(&rb, &day)) {
            rc = truncated(c, "summaries", err);
            break;
        }
        int changed;
        if ((rc = model_of_row(dst, name, name_n, &m, &changed, err)))
            break;
        if (changed) {
            cc_summary_free(sum);
            if (!(sum = cc_summary_create(m->m, m->k))) {
                rc = cc_error_set(err, CC_ENOMEM, "out of memory");
                break;
            }
        }
        const cc_layout *l = cc_summary_layout(sum);
        char what[300];
        snprintf(what, sizeof what, "model '%s'%s%.*s", m->name, slices ? ", slice " : "",
                 (int)(key_n > 64 ? 64 : key_n), key);
        cc_summary_clear(sum);
        rc = cc_ch_vector_read(&rb, l, cc_summary_data_mut(sum), what, day, err);
        if (rc == -1)
            rc = cc_error_set(err, CC_EIO,
                              "cluster: model '%s' day %lld: a summary row of another length "
                              "than layout %d of %d members and %d classes (%zu), or truncated",
                              m->name, (long long)day, CC_SUMMARY_VERSION, m->m, m->k, l->len);
        if (!rc && !slices)
            rc = cc_store_summary_add(dst, m, day, sum, err);
        if (!rc && slices) {
            int kind;
            char *segment;
            int64_t id;
            if (cc_ch_slice_parse(key, key_n, &kind, &segment))
                rc = cc_error_set(err, CC_EIO, "cluster: model '%s': a summary row of an "
                                               "unknown slice '%.*s'",
                                  m->name, (int)(key_n > 64 ? 64 : key_n), key);
            else if (!(rc = cc_store_slice_add(dst, m, kind, segment, (int)strlen(segment), &id,
                                               err)))
                rc = cc_store_slice_summary_add(dst, m, day, id, sum, err);
            free(segment);
        }
    }
    cc_model_free(m);
    cc_summary_free(sum);
    cc_buf_free(&ans);
    return rc;
}

static int fetch_events(cc_ch *c, cc_store *dst, const cc_fetch_opts *o, cc_error *err)
{
    cc_buf sql = CC_BUF_INIT, ans = CC_BUF_INIT;
    char head[320];
    snprintf(head, sizeof head,
             "SELECT model, id, ts, has_segment, segment, pred, label, label_at, probs "
             "FROM %s.events FINAL WHERE 1", cc_ch_database(c));
    cc_buf_put(&sql, head, strlen(head));
    if (o->event_id) {
        cc_buf_put(&sql, " AND id = ", 10);
        cc_ch_quote(&sql, o->event_id);
    }
    char *rest = (char *)sql.p;
    sql.p = NULL;
    sql.len = sql.cap = 0;
    build_sql(&sql, rest ? rest : "", "model", o->model,
              " ORDER BY model, day, ts, id FORMAT RowBinary");
    free(rest);
    int rc = run_select(c, &sql, &ans, err);
    cc_rb rb = {ans.p, ans.p + ans.len};
    cc_model *m = NULL;
    float *probs = NULL;
    while (!rc && rb.p < rb.end) {
        const char *name, *id, *seg;
        size_t name_n, id_n, seg_n;
        int64_t ts, label_at;
        uint8_t has_seg;
        int32_t pred, label;
        uint64_t n;
        if (cc_rb_string(&rb, &name, &name_n) || cc_rb_string(&rb, &id, &id_n) ||
            cc_rb_i64(&rb, &ts) || cc_rb_u8(&rb, &has_seg) || cc_rb_string(&rb, &seg, &seg_n) ||
            cc_rb_i32(&rb, &pred) || cc_rb_i32(&rb, &label) || cc_rb_i64(&rb, &label_at) ||
            cc_rb_varint(&rb, &n)) {
            rc = truncated(c, "events", err);
            break;
        }
        int changed;
        if ((rc = model_of_row(dst, name, name_n, &m, &changed, err)))
            break;
        if (changed) {
            free(probs);
            if (!(probs = malloc((size_t)m->m * (size_t)m->k * sizeof *probs))) {
                rc = cc_error_set(err, CC_ENOMEM, "out of memory");
                break;
            }
        }
        if (n != (uint64_t)m->m * (uint64_t)m->k) {
            rc = cc_error_set(err, CC_EIO, "cluster: event '%.*s' of model '%s' has %llu "
                                           "probabilities, not %d", (int)id_n, id, m->name,
                              (unsigned long long)n, m->m * m->k);
            break;
        }
        for (uint64_t i = 0; i < n && !rc; i++)
            if (cc_rb_f32(&rb, &probs[i]))
                rc = truncated(c, "events", err);
        int inserted;
        if (!rc)
            rc = cc_store_event_insert(dst, m, id, (int)id_n, ts, has_seg ? seg : NULL,
                                       (int)seg_n, pred, label_at >= 0 ? -1 : label, probs,
                                       &inserted, err);
        if (!rc && label_at >= 0)
            rc = cc_store_event_set_label(dst, m, id, (int)id_n, label, label_at, err);
    }
    cc_model_free(m);
    free(probs);
    cc_buf_free(&ans);
    return rc;
}

int cc_fetch_into(cc_ch *c, cc_store *dst, const cc_fetch_opts *o, cc_error *err)
{
    int rc = cc_store_begin(dst, err);
    if (rc)
        return rc;
    if ((rc = fetch_models(c, dst, o, err)) || (rc = fetch_summaries(c, dst, o, 0, err)) ||
        (rc = fetch_summaries(c, dst, o, 1, err)) ||
        (o->events && (rc = fetch_events(c, dst, o, err))) ||
        (rc = cc_store_commit(dst, err))) {
        cc_store_rollback(dst);
        return rc;
    }
    return 0;
}
