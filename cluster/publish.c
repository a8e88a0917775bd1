/* publish.c — one publish run of a local store to the cluster (publish.h). */
#include "publish.h"

#include <cjson/cJSON.h>
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "ch_schema.h"
#include "ch_vector.h"
#include "ingest.h"
#include "summary.h"

typedef struct models_cache {
    cc_model **m;
    int n;
} models_cache;

/* Another source's runs: the newest complete one, the last read here. */
typedef struct source_mark {
    char *name;
    int64_t complete, read;
} source_mark;

typedef struct run {
    cc_store *store;
    cc_ch *ch;
    const cc_publish_opts *o;
    cc_publish_stats *st;
    cc_error *err;
    models_cache models;
    cc_buf body;
    const char *table;          /* where body goes */
    int64_t rows;
    cc_summary *sum;
    cc_slice *slices;           /* slices_of(slices_model) */
    int n_slices;
    int64_t slices_model;
    source_mark *sources;       /* other sources (pull_labels) */
    int n_sources;
    int64_t label_rowid;        /* the last event rowid the pull looked at */
} run;

int cc_publish_source_ok(const char *name)
{
    size_t n = strlen(name);
    if (n < 1 || n > 64)
        return 0;
    for (const char *p = name; *p; p++)
        if (!((*p >= 'a' && *p <= 'z') || (*p >= 'A' && *p <= 'Z') || (*p >= '0' && *p <= '9') ||
              *p == '_' || *p == '-' || *p == '.'))
            return 0;
    return 1;
}

static void sleep_ms(int ms)
{
    struct timespec ts = {ms / 1000, (long)(ms % 1000) * 1000000L};
    while (nanosleep(&ts, &ts) != 0 && errno == EINTR)
        ;
}

static int64_t mono_ms(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (int64_t)ts.tv_sec * 1000 + ts.tv_nsec / 1000000;
}

/* One attempt of a query (sql, body, out) or, with sql NULL, of the schema. */
typedef struct attempt {
    const char *sql;
    const cc_buf *body;
    cc_buf *out;
} attempt;

static int try_once(run *r, const attempt *a, cc_error *e)
{
    return a->sql ? cc_ch_query(r->ch, a->sql, a->body, a->out, e) : cc_ch_schema_create(r->ch, e);
}

/* An attempt retried with a growing pause (0.5 s doubling to 30 s) until
 * it succeeds or retry_for_s has passed; a 4xx answer is not retried. Safe because every statement sent
 * by a publish is idempotent. */
static int retrying(run *r, const char *what, const attempt *a)
{
    int64_t give_up = mono_ms() + (int64_t)r->o->retry_for_s * 1000;
    int pause = 500;
    for (int n = 1;; n++) {
        cc_error e = CC_ERROR_INIT;
        int rc = try_once(r, a, &e);
        if (!rc) {
            if (a->body)
                r->st->bytes += (int64_t)a->body->len;
            return 0;
        }
        /* a 4xx answer (a bad query, an unknown table) will not change */
        long status = cc_ch_last_status(r->ch);
        if (rc == -CC_ENOMEM || rc == -CC_EUSAGE || (status >= 400 && status < 500) ||
            mono_ms() + pause > give_up)
            return cc_error_set(r->err, e.code, "%s (gave up after %d attempt%s): %s", what, n,
                                n == 1 ? "" : "s", e.msg);
        if (r->o->on_retry)
            r->o->on_retry(r->o->ctx, what, n, pause, &e);
        r->st->retries++;
        sleep_ms(pause);
        pause = pause >= 15000 ? 30000 : pause * 2;
    }
}

static int query_retrying(run *r, const char *what, const char *sql, const cc_buf *body,
                          cc_buf *out)
{
    attempt a = {sql, body, out};
    return retrying(r, what, &a);
}

static int model_of(run *r, const char *name, cc_model **out)
{
    for (int i = 0; i < r->models.n; i++)
        if (strcmp(r->models.m[i]->name, name) == 0) {
            *out = r->models.m[i];
            return 0;
        }
    cc_model **grown = realloc(r->models.m, (size_t)(r->models.n + 1) * sizeof *grown);
    if (!grown)
        return cc_error_set(r->err, CC_ENOMEM, "out of memory");
    r->models.m = grown;
    int rc = cc_store_model_get(r->store, name, out, r->err);
    if (!rc)
        r->models.m[r->models.n++] = *out;
    return rc;
}

static int flush(run *r)
{
    if (r->body.oom)
        return cc_error_set(r->err, CC_ENOMEM, "out of memory building an insert");
    if (!r->rows)
        return 0;
    char sql[256], what[128];
    snprintf(sql, sizeof sql, "INSERT INTO %s.%s FORMAT RowBinary", cc_ch_database(r->ch),
             r->table);
    snprintf(what, sizeof what, "inserting %lld row%s into %s", (long long)r->rows,
             r->rows == 1 ? "" : "s", r->table);
    int rc = query_retrying(r, what, sql, &r->body, NULL);
    r->body.len = 0;
    r->rows = 0;
    return rc;
}

static int row_done(run *r)
{
    r->rows++;
    return r->body.len >= r->o->chunk_bytes ? flush(r) : r->body.oom ? flush(r) : 0;
}

/* ---- labels ---- */

static int put_pending(void *ctx, const char *model, const char *id, int id_len, int label,
                       int64_t received_at)
{
    run *r = ctx;
    cc_buf_string(&r->body, model, strlen(model));
    cc_buf_string(&r->body, id, (size_t)id_len);
    cc_buf_i32(&r->body, label);
    cc_buf_i64(&r->body, received_at);
    cc_buf_string(&r->body, r->o->source, strlen(r->o->source));
    cc_buf_u64(&r->body, (uint64_t)r->st->seq);
    r->st->labels_sent++;
    return row_done(r);
}

/* Applies one group of labels (same arrival time) through the ingest path,
 * exactly as if they had arrived here at that time. */
static int apply_labels(run *r, const char *lines, size_t len, int64_t at)
{
    cc_ingest_opts io = CC_INGEST_OPTS_INIT;
    cc_ingest *ing = NULL;
    io.now = at;
    FILE *f = fmemopen((void *)lines, len, "r");
    if (!f)
        return cc_error_set(r->err, CC_ENOMEM, "out of memory (labels from the cluster)");
    int rc = cc_ingest_create(&ing, r->store, &io, r->err);
    if (!rc)
        rc = cc_ingest_stream(ing, f, "labels from the cluster", 1, CC_RECORD_LABELS, r->err);
    if (!rc)
        rc = cc_ingest_finish(ing, r->err);
    if (!rc)
        r->st->labels_applied += cc_ingest_get_stats(ing)->labels_set;
    cc_ingest_free(ing);
    fclose(f);
    return rc;
}

/* The slice a stored event's summaries are in; *has = 0 for a store
 * without slices. */
static int event_slice(run *r, const cc_model *m, const char *id, int id_len, int *has,
                       int64_t *slice)
{
    char *segment = NULL;
    int found = 0, overflow = 0;
    *has = 0;
    if (!cc_store_slices_kept(r->store))
        return 0;
    int rc = cc_store_event_segment(r->store, m, id, id_len, &found, &segment, r->err);
    if (!rc && found)
        rc = cc_store_slice_resolve(r->store, m, segment, segment ? (int)strlen(segment) : 0, 0,
                                    slice, &overflow, r->err);
    free(segment);
    *has = !rc && found;
    return rc;
}

/* The same label as the event's, sent by another host, that arrived before
 * the one applied here: had one store read both, the later would have
 * changed nothing, so the label's arrival time is the earlier one. The
 * label-age counters of the event's day follow, the model's and those of
 * the event's slice. */
static int move_arrival_back(run *r, const cc_model *m, const char *id, int id_len,
                             const cc_stored_event *ev, const float *probs, int64_t at)
{
    (void)probs;
    cc_summary *d = cc_summary_create(m->m, m->k);
    if (!d)
        return cc_error_set(r->err, CC_ENOMEM, "out of memory");
    cc_summary_add_label_delay(d, ev->label_at - ev->ts, -1);
    cc_summary_add_label_delay(d, at - ev->ts, 1);
    int has_slice = 0;
    int64_t slice = 0;
    int rc = cc_store_begin(r->store, r->err);
    if (!rc) {
        if ((rc = cc_store_summary_add(r->store, m, ev->day, d, r->err)) ||
            (rc = event_slice(r, m, id, id_len, &has_slice, &slice)) ||
            (has_slice &&
             (rc = cc_store_slice_summary_add(r->store, m, ev->day, slice, d, r->err))) ||
            (rc = cc_store_event_set_label(r->store, m, id, id_len, ev->label, at, r->err)) ||
            (rc = cc_store_commit(r->store, r->err)))
            cc_store_rollback(r->store);
    }
    cc_summary_free(d);
    if (!rc)
        r->st->labels_applied++;
    return rc;
}

/* ---- reading other hosts' labels, incrementally ----
 *
 * A label row is read again only when it may be new here: (a) the rows a
 * source sent in runs after the last one this host read from it, up to its
 * last run that is known to be complete (a run sends its labels before its
 * models, so the source's newest seq in the models table bounds them; a run
 * still inserting is read next time), and (b) every row for the events
 * stored here since the last pull, which may have labels that were read
 * before their event arrived. Both marks are kept in publish_state
 * ("labels_seq:SOURCE", "label_rowid") and move only when the whole run
 * succeeded; reading a row twice changes nothing (see pull_labels). */

typedef struct label_row {
    char *model, *id, *source;
    int id_len;
    int32_t label;
    int64_t at;
} label_row;

typedef struct label_rows {
    label_row *v;
    int n, cap;
} label_rows;

typedef struct new_id {
    char *model, *id;
    int id_len;
} new_id;

typedef struct new_ids {
    new_id *v;
    int n, cap;
} new_ids;

static void label_rows_free(label_rows *l)
{
    for (int i = 0; i < l->n; i++) {
        free(l->v[i].model);
        free(l->v[i].id);
        free(l->v[i].source);
    }
    free(l->v);
    memset(l, 0, sizeof *l);
}

static void source_marks_free(run *r)
{
    for (int i = 0; i < r->n_sources; i++)
        free(r->sources[i].name);
    free(r->sources);
    r->sources = NULL;
    r->n_sources = 0;
}

/* Reads (model, id, label, received_at, source) rows of a labels query. */
static int read_label_rows(run *r, cc_buf *sql, label_rows *out)
{
    cc_buf ans = CC_BUF_INIT;
    if (sql->oom) {
        cc_buf_free(sql);
        return cc_error_set(r->err, CC_ENOMEM, "out of memory");
    }
    int rc = query_retrying(r, "reading labels sent by other hosts", (const char *)sql->p, NULL,
                            &ans);
    cc_buf_free(sql);
    cc_rb rb = {ans.p, ans.p + ans.len};
    while (!rc && rb.p < rb.end) {
        const char *model, *id, *src;
        size_t model_n, id_n, src_n;
        int32_t label;
        int64_t at;
        if (cc_rb_string(&rb, &model, &model_n) || cc_rb_string(&rb, &id, &id_n) ||
            cc_rb_i32(&rb, &label) || cc_rb_i64(&rb, &at) || cc_rb_string(&rb, &src, &src_n)) {
            rc = cc_error_set(r->err, CC_EIO, "ClickHouse %s: labels: a truncated answer",
                              cc_ch_where(r->ch));
            break;
        }
        if (out->n == out->cap) {
            int cap = out->cap ? out->cap * 2 : 64;
            label_row *grown = realloc(out->v, (size_t)cap * sizeof *grown);
            if (!grown) {
                rc = cc_error_set(r->err, CC_ENOMEM, "out of memory");
                break;
            }
            out->v = grown;
            out->cap = cap;
        }
        label_row *l = &out->v[out->n];
        l->model = strndup(model, model_n);
        l->id = strndup(id, id_n);
        l->source = strndup(src, src_n);
        l->id_len = (int)id_n;
        l->label = label;
        l->at = at;
        out->n++;
        if (!l->model || !l->id || !l->source)
            rc = cc_error_set(r->err, CC_ENOMEM, "out of memory");
    }
    cc_buf_free(&ans);
    return rc;
}

static void labels_head(run *r, cc_buf *sql)
{
    char head[256];
    snprintf(head, sizeof head, "SELECT model, id, label, received_at, source FROM %s.labels "
                                "FINAL WHERE source != ", cc_ch_database(r->ch));
    cc_buf_put(sql, head, strlen(head));
    cc_ch_quote(sql, r->o->source);
}

/* Each other source's newest complete run (models) and the last one read
 * here (publish_state). */
static int source_marks(run *r)
{
    cc_buf sql = CC_BUF_INIT, ans = CC_BUF_INIT;
    char head[256];
    snprintf(head, sizeof head, "SELECT source, max(seq) FROM %s.models FINAL WHERE source != ",
             cc_ch_database(r->ch));
    cc_buf_put(&sql, head, strlen(head));
    cc_ch_quote(&sql, r->o->source);
    const char *tail = " GROUP BY source ORDER BY source FORMAT RowBinary";
    cc_buf_put(&sql, tail, strlen(tail) + 1);
    if (sql.oom) {
        cc_buf_free(&sql);
        return cc_error_set(r->err, CC_ENOMEM, "out of memory");
    }
    int rc = query_retrying(r, "reading the other hosts' runs", (const char *)sql.p, NULL, &ans);
    cc_buf_free(&sql);
    cc_rb rb = {ans.p, ans.p + ans.len};
    while (!rc && rb.p < rb.end) {
        const char *src;
        size_t src_n;
        uint64_t seq;
        if (cc_rb_string(&rb, &src, &src_n) || cc_rb_u64(&rb, &seq)) {
            rc = cc_error_set(r->err, CC_EIO, "ClickHouse %s: models: a truncated answer",
                              cc_ch_where(r->ch));
            break;
        }
        source_mark *grown = realloc(r->sources, (size_t)(r->n_sources + 1) * sizeof *grown);
        if (!grown) {
            rc = cc_error_set(r->err, CC_ENOMEM, "out of memory");
            break;
        }
        r->sources = grown;
        source_mark *sm = &r->sources[r->n_sources];
        if (!(sm->name = strndup(src, src_n))) {
            rc = cc_error_set(r->err, CC_ENOMEM, "out of memory");
            break;
        }
        r->n_sources++;
        sm->complete = (int64_t)seq;
        char key[128];
        snprintf(key, sizeof key, "labels_seq:%s", sm->name);
        rc = cc_store_publish_state_get(r->store, key, &sm->read, r->err);
    }
    cc_buf_free(&ans);
    return rc;
}

/* (a): rows of the sources' runs not read here yet. */
static int read_new_runs(run *r, label_rows *out)
{
    cc_buf sql = CC_BUF_INIT;
    int any = 0;
    labels_head(r, &sql);
    cc_buf_put(&sql, " AND (", 6);
    for (int i = 0; i < r->n_sources; i++) {
        const source_mark *sm = &r->sources[i];
        if (sm->complete <= sm->read)
            continue;
        char bounds[96];
        if (any++)
            cc_buf_put(&sql, " OR ", 4);
        cc_buf_put(&sql, "(source = ", 10);
        cc_ch_quote(&sql, sm->name);
        snprintf(bounds, sizeof bounds, " AND seq > %lld AND seq <= %lld)", (long long)sm->read,
                 (long long)sm->complete);
        cc_buf_put(&sql, bounds, strlen(bounds));
    }
    const char *tail = ") FORMAT RowBinary";
    cc_buf_put(&sql, tail, strlen(tail) + 1);
    if (!any) {
        cc_buf_free(&sql);
        return 0;
    }
    return read_label_rows(r, &sql, out);
}

static int keep_id(void *ctx, const char *model, const char *id, int id_len)
{
    new_ids *l = ctx;
    if (l->n == l->cap) {
        int cap = l->cap ? l->cap * 2 : 256;
        new_id *grown = realloc(l->v, (size_t)cap * sizeof *grown);
        if (!grown)
            return -CC_ENOMEM;
        l->v = grown;
        l->cap = cap;
    }
    new_id *e = &l->v[l->n];
    e->model = strdup(model);
    e->id = strndup(id, (size_t)id_len);
    e->id_len = id_len;
    l->n++;
    return e->model && e->id ? 0 : -CC_ENOMEM;
}

static int skip_id(void *ctx, const char *model, const char *id, int id_len)
{
    (void)ctx, (void)model, (void)id, (void)id_len;
    return 0;
}

static int new_id_cmp(const void *a, const void *b)
{
    const new_id *x = a, *y = b;
    return strcmp(x->model, y->model);
}

/* Bytes of SQL per query of (b): well under ClickHouse's max_query_size
 * (256 KiB by default). */
#define IDS_SQL_BYTES ((size_t)96 << 10)

/* (b): every row for the events stored here since the last pull, in
 * queries of a bounded size, per model. */
static int read_for_new_events(run *r, int64_t after, label_rows *out)
{
    new_ids ids = {NULL, 0, 0};
    /* the first pull reads every run of every source in (a): it only needs
     * the last rowid */
    int first = after < 0;
    int rc = cc_store_publish_new_ids(r->store, first ? 0 : after, &r->label_rowid,
                                      first ? skip_id : keep_id, &ids, r->err);
    if (rc == -CC_ENOMEM)
        rc = cc_error_set(r->err, CC_ENOMEM, "out of memory");
    if (!rc && ids.n > 1)
        qsort(ids.v, (size_t)ids.n, sizeof *ids.v, new_id_cmp);
    for (int i = 0; !rc && i < ids.n;) {
        cc_buf sql = CC_BUF_INIT;
        labels_head(r, &sql);
        cc_buf_put(&sql, " AND model = ", 13);
        cc_ch_quote(&sql, ids.v[i].model);
        cc_buf_put(&sql, " AND id IN (", 12);
        const char *model = ids.v[i].model;
        for (int first_id = 1; i < ids.n && strcmp(ids.v[i].model, model) == 0 &&
                               (first_id || sql.len < IDS_SQL_BYTES);
             i++, first_id = 0) {
            if (!first_id)
                cc_buf_put(&sql, ", ", 2);
            cc_ch_quote(&sql, ids.v[i].id);
        }
        const char *tail = ") FORMAT RowBinary";
        cc_buf_put(&sql, tail, strlen(tail) + 1);
        rc = read_label_rows(r, &sql, out);
    }
    for (int i = 0; i < ids.n; i++) {
        free(ids.v[i].model);
        free(ids.v[i].id);
    }
    free(ids.v);
    return rc;
}

static int label_row_cmp(const void *a, const void *b)
{
    const label_row *x = a, *y = b;
    int c;
    if (x->at != y->at)
        return x->at < y->at ? -1 : 1;
    if ((c = strcmp(x->source, y->source)) || (c = strcmp(x->model, y->model)))
        return c;
    return strcmp(x->id, y->id);
}

/* Other sources' labels for events stored here whose label is older. They
 * are applied in order of arrival time, so the newest is applied last, as a
 * single store reading every label would; a row read again (by (a) and
 * (b), or after a failed run) changes nothing: its arrival time equals the
 * event's, or it is older with another class. */
static int pull_labels(run *r)
{
    label_rows rows = {NULL, 0, 0};
    int64_t pulled = 0, after = 0;
    int rc = source_marks(r);
    if (!rc && !(rc = cc_store_publish_state_get(r->store, "labels_pulled", &pulled, r->err)) &&
        !(rc = cc_store_publish_state_get(r->store, "label_rowid", &after, r->err)))
        rc = read_for_new_events(r, pulled ? after : -1, &rows);
    if (!rc)
        rc = read_new_runs(r, &rows);
    r->st->labels_read = rows.n;
    if (!rc && rows.n > 1)
        qsort(rows.v, (size_t)rows.n, sizeof *rows.v, label_row_cmp);
    cc_buf lines = CC_BUF_INIT;
    int64_t group_at = INT64_MIN;
    float *probs = NULL;
    for (int i = 0; !rc && i < rows.n; i++) {
        const label_row *lr = &rows.v[i];
        const char *id = lr->id;
        size_t id_n = (size_t)lr->id_len;
        int32_t label = lr->label;
        int64_t at = lr->at;
        /* the previous arrival time's labels first: the event's state read
         * below must include them */
        if (at != group_at && lines.len) {
            rc = apply_labels(r, (const char *)lines.p, lines.len, group_at);
            lines.len = 0;
            if (rc)
                break;
        }
        cc_model *m = NULL;
        cc_error miss = CC_ERROR_INIT;
        /* a model this host never saw: the label is not for us */
        cc_store_model_get(r->store, lr->model, &m, &miss);
        if (!m)
            continue;
        cc_stored_event ev;
        int found = 0;
        free(probs);
        probs = malloc((size_t)m->m * (size_t)m->k * sizeof *probs);
        if (!probs)
            rc = cc_error_set(r->err, CC_ENOMEM, "out of memory");
        else
            rc = cc_store_event_get(r->store, m, id, (int)id_n, &found, &ev, probs, r->err);
        if (!rc && found && at < ev.label_at && label == ev.label)
            rc = move_arrival_back(r, m, id, (int)id_n, &ev, probs, at);
        if (!rc && found && at > ev.label_at && label >= 0 && label < m->k) {
            group_at = at;
            cJSON *o = cJSON_CreateObject();
            cJSON_AddStringToObject(o, "model", m->name);
            cJSON_AddStringToObject(o, "id", id);
            cJSON_AddNumberToObject(o, "label", label);
            char *text = cJSON_PrintUnformatted(o);
            if (!text)
                rc = cc_error_set(r->err, CC_ENOMEM, "out of memory");
            else {
                cc_buf_put(&lines, text, strlen(text));
                cc_buf_put(&lines, "\n", 1);
            }
            free(text);
            cJSON_Delete(o);
        }
        cc_model_free(m);
    }
    if (!rc && lines.len)
        rc = apply_labels(r, (const char *)lines.p, lines.len, group_at);
    if (!rc && lines.oom)
        rc = cc_error_set(r->err, CC_ENOMEM, "out of memory");
    free(probs);
    cc_buf_free(&lines);
    label_rows_free(&rows);
    return rc;
}

/* The marks of a pull, kept once the run has succeeded (inside its unit of
 * work). */
static int keep_label_marks(run *r)
{
    int rc = 0;
    for (int i = 0; !rc && i < r->n_sources; i++) {
        char key[128];
        snprintf(key, sizeof key, "labels_seq:%s", r->sources[i].name);
        if (r->sources[i].complete > r->sources[i].read)
            rc = cc_store_publish_state_set(r->store, key, r->sources[i].complete, r->err);
    }
    if (!rc)
        rc = cc_store_publish_state_set(r->store, "label_rowid", r->label_rowid, r->err);
    if (!rc)
        rc = cc_store_publish_state_set(r->store, "labels_pulled", 1, r->err);
    return rc;
}

/* ---- summaries, models, events ---- */

/* One summary vector row: (model, day, layout, slice key, source, seq, events, counters). */
static int put_vector(run *r, const char *model, int64_t day, const char *slice,
                      const cc_summary *sum)
{
    const cc_layout *l = cc_summary_layout(sum);
    const int64_t *v = cc_summary_data(sum);
    int rc = cc_ch_vector_check(sum, model, day, slice, r->err);
    if (rc)
        return rc;
    cc_buf_string(&r->body, model, strlen(model));
    cc_buf_i64(&r->body, day);
    cc_buf_u32(&r->body, CC_SUMMARY_VERSION);
    cc_buf_string(&r->body, slice, strlen(slice));
    cc_buf_string(&r->body, r->o->source, strlen(r->o->source));
    cc_buf_u64(&r->body, (uint64_t)r->st->seq);
    cc_buf_i64(&r->body, v[l->n_events]);
    cc_buf_varint(&r->body, l->len);
    for (size_t i = 0; i < l->len; i++)
        cc_buf_i64(&r->body, v[i]);
    return row_done(r);
}

/* The slices of m, listed once per model in a run. */
static int slices_of(run *r, const cc_model *m, cc_error *err)
{
    if (r->slices_model == m->id)
        return 0;
    cc_slice_list_free(r->slices, r->n_slices);
    r->slices = NULL;
    r->n_slices = 0;
    r->slices_model = 0;
    if (!cc_store_slices_kept(r->store))
        return 0;
    int rc = cc_store_slice_list(r->store, m, &r->slices, &r->n_slices, err);
    if (!rc)
        r->slices_model = m->id;
    return rc;
}

/* The model's vector of the day (slice ""), then each of its slices' with
 * events that day (see cc_ch_slice_key). */
static int put_day(void *ctx, const char *model, int64_t day)
{
    run *r = ctx;
    cc_model *m;
    int rc = model_of(r, model, &m);
    if (rc)
        return rc;
    cc_summary_free(r->sum);
    if (!(r->sum = cc_summary_create(m->m, m->k)))
        return cc_error_set(r->err, CC_ENOMEM, "out of memory");
    if ((rc = cc_store_summary_get(r->store, m, day, r->sum, r->err)) ||
        (rc = put_vector(r, model, day, "", r->sum)) || (rc = slices_of(r, m, r->err)))
        return rc;
    r->st->days++;
    for (int i = 0; i < r->n_slices && !rc; i++) {
        if ((rc = cc_store_slice_summary_get(r->store, m, day, r->slices[i].id, r->sum, r->err)))
            break;
        if (cc_summary_data(r->sum)[cc_summary_layout(r->sum)->n_events] == 0)
            continue;
        char *key = cc_ch_slice_key(&r->slices[i]);
        if (!key)
            return cc_error_set(r->err, CC_ENOMEM, "out of memory");
        rc = put_vector(r, model, day, key, r->sum);
        free(key);
        r->st->slice_days++;
    }
    return rc;
}

static void put_names(cc_buf *b, char *const *names, int n)
{
    cc_buf_varint(b, (uint64_t)n);
    for (int i = 0; i < n; i++)
        cc_buf_string(b, names[i], strlen(names[i]));
}

static int put_models(run *r)
{
    char **names = NULL;
    int n = 0, rc = cc_store_model_list(r->store, &names, &n, r->err);
    for (int i = 0; !rc && i < n; i++) {
        cc_model *m;
        int has = 0;
        int64_t from = 0, to = 0;
        if ((rc = model_of(r, names[i], &m)) ||
            (rc = cc_store_baseline_get(r->store, m, &has, &from, &to, r->err)))
            break;
        cc_buf_string(&r->body, m->name, strlen(m->name));
        cc_buf_string(&r->body, r->o->source, strlen(r->o->source));
        cc_buf_u64(&r->body, (uint64_t)r->st->seq);
        put_names(&r->body, m->members, m->m);
        put_names(&r->body, m->classes, m->k);
        cc_buf_u8(&r->body, (uint8_t)(has != 0));
        cc_buf_i64(&r->body, has ? from : 0);
        cc_buf_i64(&r->body, has ? to : 0);
        rc = row_done(r);
    }
    for (int i = 0; i < n; i++)
        free(names[i]);
    free(names);
    return rc;
}

/* Each model's slice limit and its slices' keys in id order (the order the
 * host made them), one row per model; nothing for a store without slices. */
static int put_slice_lists(run *r)
{
    if (!cc_store_slices_kept(r->store))
        return 0;
    int rc = 0;
    for (int i = 0; !rc && i < r->models.n; i++) {
        const cc_model *m = r->models.m[i];
        int limit = 0;
        if ((rc = cc_store_slice_limit_get(r->store, m, &limit, r->err)) ||
            (rc = slices_of(r, m, r->err)))
            break;
        cc_buf_string(&r->body, m->name, strlen(m->name));
        cc_buf_string(&r->body, r->o->source, strlen(r->o->source));
        cc_buf_u64(&r->body, (uint64_t)r->st->seq);
        cc_buf_i32(&r->body, limit);
        cc_buf_varint(&r->body, (uint64_t)r->n_slices);
        for (int j = 0; j < r->n_slices; j++) {
            char *key = cc_ch_slice_key(&r->slices[j]);
            if (!key)
                return cc_error_set(r->err, CC_ENOMEM, "out of memory");
            cc_buf_string(&r->body, key, strlen(key));
            free(key);
        }
        rc = row_done(r);
    }
    return rc;
}

static int put_event(void *ctx, const cc_published_event *e)
{
    run *r = ctx;
    cc_buf_string(&r->body, e->model, strlen(e->model));
    cc_buf_string(&r->body, e->id, (size_t)e->id_len);
    cc_buf_i64(&r->body, e->day);
    cc_buf_i64(&r->body, e->ts);
    cc_buf_u8(&r->body, e->segment != NULL);
    cc_buf_string(&r->body, e->segment ? e->segment : "", e->segment ? (size_t)e->segment_len : 0);
    cc_buf_i32(&r->body, e->pred);
    cc_buf_i32(&r->body, e->label);
    cc_buf_i64(&r->body, e->label_at);
    cc_buf_varint(&r->body, (uint64_t)e->n_probs);
    cc_buf_put(&r->body, e->probs, (size_t)e->n_probs * sizeof(float)); /* little-endian hosts */
    cc_buf_string(&r->body, r->o->source, strlen(r->o->source));
    cc_buf_u64(&r->body, (uint64_t)r->st->seq);
    r->st->events++;
    return row_done(r);
}

static int next_seq(run *r)
{
    int64_t seq;
    int rc = cc_store_begin(r->store, r->err);
    if (rc)
        return rc;
    if ((rc = cc_store_publish_state_get(r->store, "seq", &seq, r->err)) ||
        (rc = cc_store_publish_state_set(r->store, "seq", seq + 1, r->err)) ||
        (rc = cc_store_commit(r->store, r->err))) {
        cc_store_rollback(r->store);
        return rc;
    }
    r->st->seq = seq + 1;
    return 0;
}

int cc_publish_run(cc_store *store, cc_ch *c, const cc_publish_opts *o, cc_publish_stats *st,
                   cc_error *err)
{
    run r = {store, c, o, st, err, {NULL, 0}, CC_BUF_INIT, NULL, 0, NULL, NULL, 0, 0, NULL, 0, 0};
    memset(st, 0, sizeof *st);
    if (!o->source || !cc_publish_source_ok(o->source))
        return cc_error_set(err, CC_EUSAGE,
                            "source name '%s': use 1 to 64 letters, digits, '_', '-' or '.'",
                            o->source ? o->source : "");
    attempt schema = {NULL, NULL, NULL};
    int rc = retrying(&r, "creating the tables", &schema);
    if (rc)
        return rc;
    if ((rc = next_seq(&r)))
        return rc;
    /* 1. labels: ours out, theirs in (applying them marks days and rows) */
    r.table = "labels";
    if ((rc = cc_store_pending_label_list(store, put_pending, &r, err)) || (rc = flush(&r)) ||
        (rc = pull_labels(&r)))
        goto done;
    /* 2-3. one snapshot of the store: what changed, and its marks */
    int64_t day_mark = 0, relabel_mark = 0, after = 0, max_rowid = 0;
    if ((rc = cc_store_snapshot_begin(store, err)))
        goto done;
    r.table = "models";
    if (!(rc = put_models(&r)) && !(rc = flush(&r))) {
        r.table = "slice_lists";
        if (!(rc = put_slice_lists(&r)))
            rc = flush(&r);
    }
    if (!rc) {
        r.table = "summaries";
        if (!(rc = cc_store_publish_days(store, &day_mark, put_day, &r, err)) &&
            !(rc = flush(&r)) &&
            !(rc = cc_store_publish_state_get(store, "event_rowid", &after, err))) {
            r.table = "events";
            if (!(rc = cc_store_publish_events(store, after, &max_rowid, &relabel_mark,
                                               put_event, &r, err)))
                rc = flush(&r);
        }
    }
    cc_store_snapshot_end(store);
    if (rc)
        goto done;
    /* 4. everything is in the cluster: forget the marks */
    if ((rc = cc_store_begin(store, err)))
        goto done;
    if ((rc = cc_store_publish_state_set(store, "event_rowid", max_rowid, err)) ||
        (rc = cc_store_publish_clear(store, day_mark, relabel_mark, err)) ||
        (rc = keep_label_marks(&r)) ||
        (rc = cc_store_commit(store, err)))
        cc_store_rollback(store);
done:
    for (int i = 0; i < r.models.n; i++)
        cc_model_free(r.models.m[i]);
    free(r.models.m);
    cc_summary_free(r.sum);
    cc_slice_list_free(r.slices, r.n_slices);
    source_marks_free(&r);
    cc_buf_free(&r.body);
    return rc;
}
