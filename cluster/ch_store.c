/* ch_store.c — the read-only ClickHouse backend of the store (ch_store.h). */
#include "ch_store.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "ch_client.h"
#include "ch_schema.h"
#include "ch_vector.h"
#include "date.h"
#include "fetch.h"
#include "store_backend.h"
#include "summary.h"

/* Merged vectors of the days the last summary_days listed, so that a report
 * reads its range in one query; bounded, beyond it days are read one by one. */
#define CACHE_MAX_BYTES ((size_t)256 << 20)

typedef struct ch_store {
    cc_store base;          /* first: what the dispatch sees */
    char *url;
    cc_ch *ch;
    cc_ch_model *models;
    int n_models;
    int64_t cache_model;    /* model id the cache holds, 0 for none */
    int64_t cache_slice;    /* and its slice id, 0 for the whole model */
    int64_t *cache_days;
    int64_t **cache_vec;    /* layout len counters per day */
    int n_cache;
    int64_t slices_model;   /* model id the slice list is of, 0 for none */
    cc_slice *slices;       /* the model's slices in the hosts' order; id = index + 1 */
    char **slice_keys;      /* their keys in the summaries table */
    int n_slices;
    int slice_limit;        /* the hosts' slice limit of slices_model */
    int64_t pending_model;  /* model id pending holds the count of, 0 for none */
    int64_t pending;        /* labels in the cluster whose event no host published */
    int has_slice_lists;    /* 1: the cluster has the slice_lists table, 0 no, -1 unknown */
} ch_store;

#define CH(s) ((ch_store *)(s))

static void drop_cache(ch_store *c)
{
    for (int i = 0; i < c->n_cache; i++)
        free(c->cache_vec[i]);
    free(c->cache_vec);
    free(c->cache_days);
    c->cache_vec = NULL;
    c->cache_days = NULL;
    c->n_cache = 0;
    c->cache_model = 0;
    c->cache_slice = 0;
}

static void drop_slices(ch_store *c)
{
    for (int i = 0; i < c->n_slices; i++)
        free(c->slice_keys[i]);
    free(c->slice_keys);
    cc_slice_list_free(c->slices, c->n_slices);
    c->slice_keys = NULL;
    c->slices = NULL;
    c->n_slices = 0;
    c->slices_model = 0;
}

static void ch_close(cc_store *s)
{
    ch_store *c = CH(s);
    drop_cache(c);
    drop_slices(c);
    cc_ch_models_free(c->models, c->n_models);
    cc_ch_close(c->ch);
    free(c->url);
    free(c);
}

static int ch_readonly(const cc_store *s)
{
    (void)s;
    return 1;
}

static const cc_ch_model *find_model(ch_store *c, const char *name)
{
    for (int i = 0; i < c->n_models; i++)
        if (strcmp(c->models[i].model->name, name) == 0)
            return &c->models[i];
    return NULL;
}

static char **copy_names(char *const *names, int n)
{
    char **out = calloc((size_t)n, sizeof *out);
    for (int i = 0; out && i < n; i++)
        if (!(out[i] = strdup(names[i]))) {
            while (i--)
                free(out[i]);
            free(out);
            return NULL;
        }
    return out;
}

static int ch_model_get(cc_store *s, const char *name, cc_model **out, cc_error *err)
{
    const cc_ch_model *cm = find_model(CH(s), name);
    if (!cm)
        return cc_error_set(err, CC_ENOTFOUND, "%s: no model named '%s'", s->path, name);
    cc_model *m = calloc(1, sizeof *m);
    if (m) {
        m->id = cm->model->id;
        m->m = cm->model->m;
        m->k = cm->model->k;
        m->name = strdup(cm->model->name);
        m->members = copy_names(cm->model->members, m->m);
        m->classes = copy_names(cm->model->classes, m->k);
    }
    if (!m || !m->name || !m->members || !m->classes) {
        cc_model_free(m);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    *out = m;
    return 0;
}

static int ch_model_list(cc_store *s, char ***out, int *n, cc_error *err)
{
    ch_store *c = CH(s);
    *out = calloc((size_t)c->n_models + 1, sizeof **out);
    *n = 0;
    if (!*out)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    for (int i = 0; i < c->n_models; i++)
        if (((*out)[(*n)++] = strdup(c->models[i].model->name)) == NULL)
            return cc_error_set(err, CC_ENOMEM, "out of memory");
    return 0;
}

static int ch_baseline_get(cc_store *s, const cc_model *m, int *has, int64_t *from, int64_t *to,
                           cc_error *err)
{
    const cc_ch_model *cm = find_model(CH(s), m->name);
    if (!cm)
        return cc_error_set(err, CC_ENOTFOUND, "%s: no model named '%s'", s->path, m->name);
    *has = cm->has_baseline;
    *from = cm->from;
    *to = cm->to;
    return 0;
}

/* "SELECT cols FROM db.table FINAL WHERE col = 'name'" into b. */
static void where_name(cc_buf *b, ch_store *c, const char *table, const char *cols,
                       const char *col, const char *name)
{
    char head[256];
    snprintf(head, sizeof head, "SELECT %s FROM %s.%s FINAL WHERE %s = ", cols,
             cc_ch_database(c->ch), table, col);
    cc_buf_put(b, head, strlen(head));
    cc_ch_quote(b, name);
}

/* The same for the model column of the summaries and events tables. */
static void where_model(cc_buf *b, ch_store *c, const char *table, const char *cols,
                        const cc_model *m)
{
    where_name(b, c, table, cols, "model", m->name);
}

static int select_rb(ch_store *c, cc_buf *sql, const char *tail, cc_buf *ans, cc_error *err)
{
    cc_buf_put(sql, tail, strlen(tail) + 1);
    if (sql->oom) {
        cc_buf_free(sql);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    int rc = cc_ch_query(c->ch, (const char *)sql->p, NULL, ans, err);
    cc_buf_free(sql);
    return rc;
}

/* The days in [from, to] with events of the model's slice key ("" for the
 * whole model), one row per day: cols selected from the merged summaries,
 * in day order. */
static int days_select(ch_store *c, const cc_model *m, const char *slice, const char *cols,
                       int64_t from, int64_t to, cc_layout *l, cc_buf *ans, cc_error *err)
{
    if (cc_layout_init(l, m->m, m->k))
        return cc_error_set(err, CC_EIO, "%s: model '%s' has a shape out of range", c->base.path,
                            m->name);
    cc_buf sql = CC_BUF_INIT;
    char tail[256];
    where_model(&sql, c, "summaries", cols, m);
    cc_buf_put(&sql, " AND slice = ", 13);
    cc_ch_quote(&sql, slice);
    snprintf(tail, sizeof tail,
             " AND layout_version = %d AND day >= %lld AND day <= %lld "
             "GROUP BY day HAVING sum(events) > 0 ORDER BY day FORMAT RowBinary",
             CC_SUMMARY_VERSION, (long long)from, (long long)to);
    return select_rb(c, &sql, tail, ans, err);
}

/* Reads (day, counters) rows into the cache, or into one vector when
 * one_day is set. */
static int read_vectors(ch_store *c, const cc_model *m, const char *slice, int64_t from,
                        int64_t to, int64_t *one, int *found, cc_error *err)
{
    cc_layout l;
    cc_buf ans = CC_BUF_INIT;
    int rc = days_select(c, m, slice, "day, " CC_CH_VECTOR_SUM, from, to, &l, &ans, err);
    cc_rb rb = {ans.p, ans.p + ans.len};
    char what[300];
    snprintf(what, sizeof what, "model '%s'%s%s", m->name, *slice ? ", slice " : "", slice);
    while (!rc && rb.p < rb.end) {
        int64_t day;
        if (cc_rb_i64(&rb, &day)) {
            rc = cc_error_set(err, CC_EIO, "%s: a truncated summary row", c->base.path);
            break;
        }
        int64_t *v = one;
        if (!one) {
            int64_t *days = realloc(c->cache_days, (size_t)(c->n_cache + 1) * sizeof *days);
            int64_t **vecs = realloc(c->cache_vec, (size_t)(c->n_cache + 1) * sizeof *vecs);
            if (days)
                c->cache_days = days;
            if (vecs)
                c->cache_vec = vecs;
            if (!days || !vecs || !(v = malloc(l.len * sizeof *v))) {
                rc = cc_error_set(err, CC_ENOMEM, "out of memory");
                break;
            }
            c->cache_days[c->n_cache] = day;
            c->cache_vec[c->n_cache++] = v;
        }
        rc = cc_ch_vector_read(&rb, &l, v, what, day, err);
        if (rc == -1)
            rc = cc_error_set(err, CC_EIO, "%s: model '%s': a malformed summary row (layout %d "
                                           "has %zu counters)", c->base.path, m->name,
                              CC_SUMMARY_VERSION, l.len);
        if (found)
            *found = 1;
    }
    cc_buf_free(&ans);
    return rc;
}

/* summary_days of the model (slice_id 0, key "") or of one slice. */
static int range_days(ch_store *c, const cc_model *m, int64_t slice_id, const char *slice,
                      int64_t from, int64_t to, int64_t **days, int *n, cc_error *err)
{
    cc_layout l;
    *days = NULL;
    *n = 0;
    drop_cache(c);
    cc_buf ans = CC_BUF_INIT;
    int rc = days_select(c, m, slice, "day", from, to, &l, &ans, err);
    size_t count = rc ? 0 : ans.len / 8;
    if (!rc && count && !(*days = malloc(count * sizeof **days)))
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
    cc_rb rb = {ans.p, ans.p + ans.len};
    for (size_t i = 0; !rc && i < count; i++)
        cc_rb_i64(&rb, &(*days)[i]);
    cc_buf_free(&ans);
    if (rc) {
        free(*days);
        *days = NULL;
        return rc;
    }
    *n = (int)count;
    /* the range's vectors in one read, when they fit the bound */
    if (count && count * l.len * sizeof(int64_t) <= CACHE_MAX_BYTES) {
        rc = read_vectors(c, m, slice, (*days)[0], (*days)[count - 1], NULL, NULL, err);
        if (rc) {
            drop_cache(c);
        } else {
            c->cache_model = m->id;
            c->cache_slice = slice_id;
        }
    }
    if (rc) {
        free(*days);
        *days = NULL;
        *n = 0;
    }
    return rc;
}

static int range_get(ch_store *c, const cc_model *m, int64_t slice_id, const char *slice,
                     int64_t day, cc_summary *out, cc_error *err)
{
    const cc_layout *l = cc_summary_layout(out);
    int64_t *v = cc_summary_data_mut(out);
    if (c->cache_model == m->id && c->cache_slice == slice_id)
        for (int i = 0; i < c->n_cache; i++)
            if (c->cache_days[i] == day) {
                memcpy(v, c->cache_vec[i], l->len * sizeof *v);
                return 0;
            }
    cc_summary_clear(out);
    int found = 0;
    return read_vectors(c, m, slice, day, day, v, &found, err);
}

static int ch_summary_days(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                           int64_t **days, int *n, cc_error *err)
{
    return range_days(CH(s), m, 0, "", from, to, days, n, err);
}

static int ch_summary_get(cc_store *s, const cc_model *m, int64_t day, cc_summary *out,
                          cc_error *err)
{
    return range_get(CH(s), m, 0, "", day, out, err);
}

/* ---- slices: the vectors published under a slice key (ch_schema.h) ---- */

static int ch_slices_kept(cc_store *s)
{
    (void)s;
    return 1;
}

/* ---- the hosts' slice lists (ch_schema.c, slice_lists) ---- */

typedef struct slice_rank {
    int64_t pos;            /* the smallest position at any host, INT64_MAX if none */
    int source;             /* the first source (in name order) with that position */
    int index;              /* in key order */
} slice_rank;

static int rank_cmp(const void *a, const void *b)
{
    const slice_rank *x = a, *y = b;
    if (x->pos != y->pos)
        return x->pos < y->pos ? -1 : 1;
    if (x->source != y->source)
        return x->source < y->source ? -1 : 1;
    return (x->index > y->index) - (x->index < y->index);
}

/* Orders c's slices (read in key order) as the hosts list them: by the
 * smallest position a host gave the slice (a host's slices are in the order
 * it made them), ties to the source first in name order, then key order
 * (slices no host listed, from a host of an earlier release, come last);
 * and takes the slice limit the hosts published (the largest, if they
 * differ), CC_SLICES_DEFAULT_MAX if none did. One host: exactly its order. */
static int order_slices(ch_store *c, const cc_model *m, cc_error *err)
{
    int rc = 0;
    c->slice_limit = CC_SLICES_DEFAULT_MAX;
    if (c->has_slice_lists < 0) {
        cc_buf sql = CC_BUF_INIT, ans = CC_BUF_INIT;
        char q[256];
        snprintf(q, sizeof q, "EXISTS TABLE %s.slice_lists FORMAT RowBinary",
                 cc_ch_database(c->ch));
        cc_buf_put(&sql, q, strlen(q));
        rc = select_rb(c, &sql, "", &ans, err);
        if (!rc)
            c->has_slice_lists = ans.len >= 1 && ans.p[0] == 1;
        cc_buf_free(&ans);
        if (rc)
            return rc;
    }
    if (!c->has_slice_lists || c->n_slices == 0)
        return 0;
    slice_rank *rk = malloc((size_t)c->n_slices * sizeof *rk);
    if (!rk)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    for (int i = 0; i < c->n_slices; i++)
        rk[i] = (slice_rank){INT64_MAX, 0, i};
    cc_buf sql = CC_BUF_INIT, ans = CC_BUF_INIT;
    where_name(&sql, c, "slice_lists", "source, slice_limit, slice_keys", "name", m->name);
    rc = select_rb(c, &sql, " ORDER BY source FORMAT RowBinary", &ans, err);
    cc_rb rb = {ans.p, ans.p + ans.len};
    int limit = 0;
    for (int source = 0; !rc && rb.p < rb.end; source++) {
        const char *src, *key;
        size_t src_n, key_n;
        int32_t lim;
        uint64_t n;
        if (cc_rb_string(&rb, &src, &src_n) || cc_rb_i32(&rb, &lim) || cc_rb_varint(&rb, &n)) {
            rc = cc_error_set(err, CC_EIO, "%s: a truncated slice list", c->base.path);
            break;
        }
        if (lim > limit)
            limit = lim;
        for (uint64_t p = 0; p < n; p++) {
            if (cc_rb_string(&rb, &key, &key_n)) {
                rc = cc_error_set(err, CC_EIO, "%s: a truncated slice list", c->base.path);
                break;
            }
            for (int i = 0; i < c->n_slices; i++)
                if (strlen(c->slice_keys[i]) == key_n &&
                    memcmp(c->slice_keys[i], key, key_n) == 0) {
                    if ((int64_t)p < rk[i].pos)
                        rk[i].pos = (int64_t)p, rk[i].source = source;
                    break;
                }
        }
    }
    cc_buf_free(&ans);
    cc_slice *sl = rc ? NULL : malloc((size_t)c->n_slices * sizeof *sl);
    char **keys = rc ? NULL : malloc((size_t)c->n_slices * sizeof *keys);
    if (!rc && (!sl || !keys))
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
    if (!rc) {
        qsort(rk, (size_t)c->n_slices, sizeof *rk, rank_cmp);
        for (int i = 0; i < c->n_slices; i++) {
            sl[i] = c->slices[rk[i].index];
            sl[i].id = i + 1;
            keys[i] = c->slice_keys[rk[i].index];
        }
        free(c->slices);
        free(c->slice_keys);
        c->slices = sl;
        c->slice_keys = keys;
        sl = NULL;
        keys = NULL;
        if (limit > 0)
            c->slice_limit = limit;
    }
    free(sl);
    free(keys);
    free(rk);
    return rc;
}

/* The model's slices, read once per model: every key with events, in the
 * hosts' order (order_slices), with its event and label totals. */
static int load_slices(ch_store *c, const cc_model *m, cc_error *err)
{
    if (c->slices_model == m->id)
        return 0;
    drop_slices(c);
    cc_layout l;
    if (cc_layout_init(&l, m->m, m->k))
        return cc_error_set(err, CC_EIO, "%s: model '%s' has a shape out of range", c->base.path,
                            m->name);
    cc_buf sql = CC_BUF_INIT, ans = CC_BUF_INIT;
    char tail[320];
    char cols[96];
    snprintf(cols, sizeof cols, "slice, sum(events), sum(counters[%zu])", l.n_labeled + 1);
    where_model(&sql, c, "summaries", cols, m);
    snprintf(tail, sizeof tail,
             " AND layout_version = %d AND slice != '' GROUP BY slice HAVING sum(events) > 0 "
             "ORDER BY slice FORMAT RowBinary", CC_SUMMARY_VERSION);
    int rc = select_rb(c, &sql, tail, &ans, err);
    cc_rb rb = {ans.p, ans.p + ans.len};
    while (!rc && rb.p < rb.end) {
        const char *key;
        size_t key_n;
        int64_t events, labeled;
        if (cc_rb_string(&rb, &key, &key_n) || cc_rb_i64(&rb, &events) ||
            cc_rb_i64(&rb, &labeled)) {
            rc = cc_error_set(err, CC_EIO, "%s: a truncated slice row", c->base.path);
            break;
        }
        cc_slice *grown = realloc(c->slices, (size_t)(c->n_slices + 1) * sizeof *grown);
        char **keys = realloc(c->slice_keys, (size_t)(c->n_slices + 1) * sizeof *keys);
        if (grown)
            c->slices = grown;
        if (keys)
            c->slice_keys = keys;
        if (!grown || !keys) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            break;
        }
        cc_slice *sl = &c->slices[c->n_slices];
        sl->id = c->n_slices + 1;
        sl->events = events;
        sl->labeled = labeled;
        if (cc_ch_slice_parse(key, key_n, &sl->kind, &sl->segment)) {
            rc = cc_error_set(err, CC_EIO, "%s: model '%s': a summary row of an unknown slice "
                                           "'%.*s'", c->base.path, m->name,
                              (int)(key_n > 64 ? 64 : key_n), key);
            break;
        }
        if (!(c->slice_keys[c->n_slices] = strndup(key, key_n))) {
            free(sl->segment);
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            break;
        }
        c->n_slices++;
    }
    cc_buf_free(&ans);
    if (!rc)
        rc = order_slices(c, m, err);
    if (rc)
        drop_slices(c);
    else
        c->slices_model = m->id;
    return rc;
}

/* The key of slice id of m. */
static int slice_key(ch_store *c, const cc_model *m, int64_t id, const char **key,
                     cc_error *err)
{
    int rc = load_slices(c, m, err);
    if (rc)
        return rc;
    if (id < 1 || id > c->n_slices)
        return cc_error_set(err, CC_ENOTFOUND, "%s: model '%s' has no slice %lld", c->base.path,
                            m->name, (long long)id);
    *key = c->slice_keys[id - 1];
    return 0;
}

static int ch_slice_limit_get(cc_store *s, const cc_model *m, int *limit, cc_error *err)
{
    ch_store *c = CH(s);
    int rc = load_slices(c, m, err);
    *limit = rc ? CC_SLICES_DEFAULT_MAX : c->slice_limit;
    return rc;
}

static int ch_slice_list(cc_store *s, const cc_model *m, cc_slice **out, int *n, cc_error *err)
{
    ch_store *c = CH(s);
    int rc = load_slices(c, m, err);
    if (rc)
        return rc;
    if (!(*out = calloc((size_t)(c->n_slices ? c->n_slices : 1), sizeof **out)))
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    for (int i = 0; i < c->n_slices; i++) {
        (*out)[i] = c->slices[i];
        if (!((*out)[i].segment = strdup(c->slices[i].segment))) {
            cc_slice_list_free(*out, i);
            *out = NULL;
            return cc_error_set(err, CC_ENOMEM, "out of memory");
        }
    }
    *n = c->n_slices;
    return 0;
}

static int ch_slice_overview(cc_store *s, const cc_model *m, int *count,
                             int64_t *overflow_events, cc_error *err)
{
    ch_store *c = CH(s);
    int rc = load_slices(c, m, err);
    if (rc)
        return rc;
    *count = c->n_slices;
    for (int i = 0; i < c->n_slices; i++)
        if (c->slices[i].kind == CC_SLICE_OVERFLOW)
            *overflow_events += c->slices[i].events;
    return 0;
}

static int ch_slice_summary_days(cc_store *s, const cc_model *m, int64_t slice, int64_t from,
                                 int64_t to, int64_t **days, int *n, cc_error *err)
{
    ch_store *c = CH(s);
    const char *key = NULL;
    *days = NULL;
    *n = 0;
    int rc = slice_key(c, m, slice, &key, err);
    return rc ? rc : range_days(c, m, slice, key, from, to, days, n, err);
}

static int ch_slice_summary_get(cc_store *s, const cc_model *m, int64_t day, int64_t slice,
                                cc_summary *out, cc_error *err)
{
    ch_store *c = CH(s);
    const char *key = NULL;
    int rc = slice_key(c, m, slice, &key, err);
    return rc ? rc : range_get(c, m, slice, key, day, out, err);
}

static int ch_labeled_day_last(cc_store *s, const cc_model *m, int64_t day, int *found,
                               int64_t *out, cc_error *err)
{
    ch_store *c = CH(s);
    cc_layout l;
    *found = 0;
    /* the shape from the cluster's models: the alert evaluator passes a
     * model with its name only */
    const cc_ch_model *cm = find_model(c, m->name);
    if (!cm)
        return cc_error_set(err, CC_ENOTFOUND, "%s: no model named '%s'", s->path, m->name);
    if (cc_layout_init(&l, cm->model->m, cm->model->k))
        return cc_error_set(err, CC_EIO, "%s: model '%s' has a shape out of range", s->path,
                            m->name);
    cc_buf sql = CC_BUF_INIT, ans = CC_BUF_INIT;
    char tail[320];
    where_model(&sql, c, "summaries", "day", m);
    /* ClickHouse arrays count from 1 */
    snprintf(tail, sizeof tail,
             " AND layout_version = %d AND slice = '' AND day <= %lld GROUP BY day "
             "HAVING sum(counters[%zu]) > 0 ORDER BY day DESC LIMIT 1 FORMAT RowBinary",
             CC_SUMMARY_VERSION, (long long)day, l.n_labeled + 1);
    int rc = select_rb(c, &sql, tail, &ans, err);
    cc_rb rb = {ans.p, ans.p + ans.len};
    if (!rc && ans.len >= 8 && !cc_rb_i64(&rb, out))
        *found = 1;
    cc_buf_free(&ans);
    return rc;
}

/* Event rows: SELECT ts, has_segment, segment, label, label_at, probs [, id]. */
typedef struct event_row {
    const char *id, *segment;
    size_t id_n, segment_n;
    int64_t ts, label_at;
    uint8_t has_segment;
    int32_t label;
} event_row;

static int read_event(cc_rb *rb, const cc_model *m, int with_id, event_row *e, float *probs)
{
    uint64_t n;
    if ((with_id && cc_rb_string(rb, &e->id, &e->id_n)) || cc_rb_i64(rb, &e->ts) ||
        cc_rb_u8(rb, &e->has_segment) || cc_rb_string(rb, &e->segment, &e->segment_n) ||
        cc_rb_i32(rb, &e->label) || cc_rb_i64(rb, &e->label_at) || cc_rb_varint(rb, &n) ||
        n != (uint64_t)m->m * (uint64_t)m->k)
        return -1;
    for (uint64_t i = 0; i < n; i++)
        if (cc_rb_f32(rb, &probs[i]))
            return -1;
    return 0;
}

static int ch_events_scan(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                          const char *segment, cc_event_scan_fn fn, void *ctx, cc_error *err)
{
    ch_store *c = CH(s);
    cc_buf sql = CC_BUF_INIT, ans = CC_BUF_INIT;
    char tail[256];
    where_model(&sql, c, "events", "id, ts, has_segment, segment, label, label_at, probs", m);
    if (segment) {
        cc_buf_put(&sql, " AND has_segment = 1 AND segment = ", 35);
        cc_ch_quote(&sql, segment);
    }
    snprintf(tail, sizeof tail, " AND ts >= %lld AND ts <= %lld ORDER BY day, ts, id "
                                "FORMAT RowBinary", (long long)from, (long long)to);
    int rc = select_rb(c, &sql, tail, &ans, err);
    float *probs = rc ? NULL : malloc((size_t)m->m * (size_t)m->k * sizeof *probs);
    if (!rc && !probs)
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
    cc_rb rb = {ans.p, ans.p + ans.len};
    while (!rc && rb.p < rb.end) {
        event_row e;
        char *id;
        if (read_event(&rb, m, 1, &e, probs)) {
            rc = cc_error_set(err, CC_EIO, "%s: a malformed event row", s->path);
            break;
        }
        if (!(id = strndup(e.id, e.id_n))) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            break;
        }
        rc = fn(ctx, id, e.ts, e.label, probs);
        free(id);
    }
    free(probs);
    cc_buf_free(&ans);
    return rc;
}

/* One event by id: its newest version (the largest seq, the row FINAL
 * would keep), without FINAL, which would merge every row of the model,
 * probability arrays included, for each event a review lists; PREWHERE
 * reads the id column first and the other columns only where it matches. */
static int ch_event_read(cc_store *s, const cc_model *m, const char *id, int *found,
                         cc_event_rec *out, float *probs, cc_error *err)
{
    ch_store *c = CH(s);
    cc_buf sql = CC_BUF_INIT, ans = CC_BUF_INIT;
    char head[256];
    *found = 0;
    snprintf(head, sizeof head, "SELECT ts, has_segment, segment, label, label_at, probs "
                                "FROM %s.events PREWHERE id = ", cc_ch_database(c->ch));
    cc_buf_put(&sql, head, strlen(head));
    cc_ch_quote(&sql, id);
    cc_buf_put(&sql, " WHERE model = ", 15);
    cc_ch_quote(&sql, m->name);
    int rc = select_rb(c, &sql, " ORDER BY seq DESC LIMIT 1 FORMAT RowBinary", &ans, err);
    cc_rb rb = {ans.p, ans.p + ans.len};
    if (!rc && ans.len) {
        event_row e;
        if (read_event(&rb, m, 0, &e, probs)) {
            rc = cc_error_set(err, CC_EIO, "%s: a malformed event row", s->path);
        } else {
            out->ts = e.ts;
            out->label = e.label;
            out->label_at = e.label_at;
            out->segment = e.has_segment ? strndup(e.segment, e.segment_n) : NULL;
            if (e.has_segment && !out->segment)
                rc = cc_error_set(err, CC_ENOMEM, "out of memory");
            else
                *found = 1;
        }
    }
    cc_buf_free(&ans);
    return rc;
}

/* Event rows of [ts_from, ts_to) in time order, for report --by hour. Like
 * the review's scan, FINAL leaves one row per (model, day, ts, id): a
 * re-sent row and an older label version are not counted twice. */
static int ch_events_between(cc_store *s, const cc_model *m, int64_t ts_from, int64_t ts_to,
                             cc_event_row_fn fn, void *payload, cc_error *err)
{
    ch_store *c = CH(s);
    if (ts_to <= ts_from)
        return 0;
    cc_buf sql = CC_BUF_INIT, ans = CC_BUF_INIT;
    char tail[320];
    where_model(&sql, c, "events", "ts, has_segment, segment, label, label_at, probs", m);
    /* the day bounds let ClickHouse skip by the key (model, day, ts, id) */
    snprintf(tail, sizeof tail, " AND day >= %lld AND day <= %lld AND ts >= %lld AND ts < %lld "
                                "ORDER BY day, ts, id FORMAT RowBinary",
             (long long)cc_day_of_unix(ts_from), (long long)cc_day_of_unix(ts_to - 1),
             (long long)ts_from, (long long)ts_to);
    int rc = select_rb(c, &sql, tail, &ans, err);
    float *probs = rc ? NULL : malloc((size_t)m->m * (size_t)m->k * sizeof *probs);
    if (!rc && !probs)
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
    cc_rb rb = {ans.p, ans.p + ans.len};
    while (!rc && rb.p < rb.end) {
        event_row e;
        if (read_event(&rb, m, 0, &e, probs)) {
            rc = cc_error_set(err, CC_EIO, "%s: a malformed event row", s->path);
            break;
        }
        rc = fn(payload, e.ts, e.label, e.label_at, probs);
    }
    free(probs);
    cc_buf_free(&ans);
    return rc;
}

/* The days of [from, to] whose rows the cluster does not fully hold: the
 * merged summary counts more events than there are rows under FINAL (a
 * host pruned them before publishing them, or has not published them yet).
 * Reading rows of such a day would give part of it, so a caller that needs
 * the whole day (report --by hour) refuses it, as for a pruned day of a
 * SQLite store; events is the number of events missing. */
/* (day, Int64) rows of a query into days/vals, in the answer's order. */
static int day_counts(ch_store *c, cc_buf *sql, const char *tail, int64_t **days, int64_t **vals,
                      int *n, cc_error *err)
{
    cc_buf ans = CC_BUF_INIT;
    *days = *vals = NULL;
    *n = 0;
    int rc = select_rb(c, sql, tail, &ans, err);
    size_t count = rc ? 0 : ans.len / 16;
    if (!rc && ans.len % 16)
        rc = cc_error_set(err, CC_EIO, "%s: a truncated answer (events per day)", c->base.path);
    if (!rc && count &&
        (!(*days = malloc(count * sizeof **days)) || !(*vals = malloc(count * sizeof **vals))))
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
    cc_rb rb = {ans.p, ans.p + ans.len};
    for (size_t i = 0; !rc && i < count; i++)
        cc_rb_i64(&rb, &(*days)[i]), cc_rb_i64(&rb, &(*vals)[i]);
    cc_buf_free(&ans);
    if (rc) {
        free(*days);
        free(*vals);
        *days = *vals = NULL;
        return rc;
    }
    *n = (int)count;
    return 0;
}

/* The days of [from, to] whose rows the cluster does not fully hold: the
 * merged summary counts more events than there are rows under FINAL (a
 * host pruned them before publishing them, or its rows and summaries were
 * published by different runs). Reading the rows of such a day would give
 * part of it, so a caller that needs the whole day (report --by hour)
 * refuses it, as it refuses a pruned day of a SQLite store; events is the
 * number of events without a row. */
static int ch_pruned_range(cc_store *s, const cc_model *m, int64_t from, int64_t to,
                           cc_pruned_range *out, cc_error *err)
{
    ch_store *c = CH(s);
    memset(out, 0, sizeof *out);
    cc_buf sql = CC_BUF_INIT;
    char tail[320];
    int64_t *sd = NULL, *sn = NULL, *rd = NULL, *rn = NULL;
    int n_s = 0, n_r = 0;
    where_model(&sql, c, "summaries", "day, toInt64(sum(events))", m);
    snprintf(tail, sizeof tail,
             " AND layout_version = %d AND slice = '' AND day >= %lld AND day <= %lld "
             "GROUP BY day HAVING sum(events) > 0 ORDER BY day FORMAT RowBinary",
             CC_SUMMARY_VERSION, (long long)from, (long long)to);
    int rc = day_counts(c, &sql, tail, &sd, &sn, &n_s, err);
    if (!rc) {
        cc_buf q = CC_BUF_INIT;
        where_model(&q, c, "events", "day, toInt64(count())", m);
        snprintf(tail, sizeof tail, " AND day >= %lld AND day <= %lld GROUP BY day ORDER BY day "
                                    "FORMAT RowBinary", (long long)from, (long long)to);
        rc = day_counts(c, &q, tail, &rd, &rn, &n_r, err);
    }
    for (int i = 0, j = 0; !rc && i < n_s; i++) {
        while (j < n_r && rd[j] < sd[i])
            j++;
        int64_t have = j < n_r && rd[j] == sd[i] ? rn[j] : 0;
        if (sn[i] <= have)
            continue;
        if (out->days++ == 0)
            out->first = sd[i];
        out->last = sd[i];
        out->events += sn[i] - have;
    }
    free(sd);
    free(sn);
    free(rd);
    free(rn);
    return rc;
}

/* A model's totals over the merged summaries (concord models), and the
 * labels that wait for their event: label rows of any source whose (model,
 * id) has no event row in the cluster. The dispatch asks for that count
 * right after the totals through pending_label_count, which has no error
 * channel, so it is read here and kept. */
static int ch_model_totals(cc_store *s, const cc_model *m, cc_model_totals *out, cc_error *err)
{
    ch_store *c = CH(s);
    cc_layout l;
    memset(out, 0, sizeof *out);
    c->pending_model = 0;
    if (cc_layout_init(&l, m->m, m->k))
        return cc_error_set(err, CC_EIO, "%s: model '%s' has a shape out of range", s->path,
                            m->name);
    const char *db = cc_ch_database(c->ch);
    cc_buf sql = CC_BUF_INIT, ans = CC_BUF_INIT;
    char part[512];
    snprintf(part, sizeof part,
             "SELECT toInt64(count()), toInt64(min(day)), toInt64(max(day)), toInt64(sum(e)), "
             "toInt64(sum(l)) FROM (SELECT day, sum(events) AS e, sum(counters[%zu]) AS l "
             "FROM %s.summaries FINAL WHERE model = ", l.n_labeled + 1, db);
    cc_buf_put(&sql, part, strlen(part));
    cc_ch_quote(&sql, m->name);
    snprintf(part, sizeof part, " AND layout_version = %d AND slice = '' GROUP BY day "
                                "HAVING e > 0) FORMAT RowBinary", CC_SUMMARY_VERSION);
    int rc = select_rb(c, &sql, part, &ans, err);
    cc_rb rb = {ans.p, ans.p + ans.len};
    int64_t days = 0;
    if (!rc && (cc_rb_i64(&rb, &days) || cc_rb_i64(&rb, &out->first_day) ||
                cc_rb_i64(&rb, &out->last_day) || cc_rb_i64(&rb, &out->events) ||
                cc_rb_i64(&rb, &out->labeled)))
        rc = cc_error_set(err, CC_EIO, "%s: a truncated answer (model totals)", s->path);
    cc_buf_free(&ans);
    out->days = (int)days;
    if (!days)
        out->first_day = out->last_day = 0;
    if (rc)
        return rc;
    /* GLOBAL: the events subquery runs once over the Distributed table and
     * its ids go to every shard of the labels table */
    cc_buf q = CC_BUF_INIT;
    snprintf(part, sizeof part, "SELECT toInt64(uniqExact(id)) FROM %s.labels FINAL "
                                "WHERE model = ", db);
    cc_buf_put(&q, part, strlen(part));
    cc_ch_quote(&q, m->name);
    snprintf(part, sizeof part, " AND id GLOBAL NOT IN (SELECT id FROM %s.events WHERE model = ",
             db);
    cc_buf_put(&q, part, strlen(part));
    cc_ch_quote(&q, m->name);
    rc = select_rb(c, &q, ") FORMAT RowBinary", &ans, err);
    rb = (cc_rb){ans.p, ans.p + ans.len};
    if (!rc && cc_rb_i64(&rb, &c->pending))
        rc = cc_error_set(err, CC_EIO, "%s: a truncated answer (waiting labels)", s->path);
    cc_buf_free(&ans);
    if (!rc)
        c->pending_model = m->id;
    return rc;
}

static int64_t ch_pending_label_count(cc_store *s, const cc_model *m)
{
    ch_store *c = CH(s);
    return c->pending_model == m->id ? c->pending : 0;
}

static const cc_store_backend ch_backend = {
    .version = CC_STORE_BACKEND_VERSION,
    .size = sizeof(cc_store_backend),
    .name = "clickhouse",
    .close = ch_close,
    .readonly = ch_readonly,
    .model_get = ch_model_get,
    .model_list = ch_model_list,
    .summary_get = ch_summary_get,
    .summary_days = ch_summary_days,
    .baseline_get = ch_baseline_get,
    .events_scan = ch_events_scan,
    .event_read = ch_event_read,
    .labeled_day_last = ch_labeled_day_last,
    .pruned_range = ch_pruned_range,
    .events_between = ch_events_between,
    .model_totals = ch_model_totals,
    .pending_label_count = ch_pending_label_count,
    .slices_kept = ch_slices_kept,
    .slice_limit_get = ch_slice_limit_get,
    .slice_list = ch_slice_list,
    .slice_overview = ch_slice_overview,
    .slice_summary_get = ch_slice_summary_get,
    .slice_summary_days = ch_slice_summary_days,
};

int cc_ch_store_open(cc_store **out, const char *url, cc_error *err)
{
    ch_store *c = calloc(1, sizeof *c);
    *out = NULL;
    if (!c || !(c->url = strdup(url))) {
        free(c);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    c->base.be = &ch_backend;
    c->base.path = c->url;
    c->has_slice_lists = -1;
    int rc = cc_ch_open(&c->ch, url, err);
    if (!rc)
        rc = cc_ch_models_load(c->ch, NULL, &c->models, &c->n_models, err);
    if (rc) {
        ch_close(&c->base);
        return rc;
    }
    *out = &c->base;
    return 0;
}
