/* review.c — the review queries behind review.h: one pass over a time range
 * through events_by_time, bounded candidate heaps per list, then the kept
 * events read by id through the store (events_by_hash). */
#include "review.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"

static const char *const where_names[CC_REVIEW_KINDS] = {
    "wrong", "helped", "hurt", "top-mi", "top-disagreement", "pair", "low-margin"};

const char *cc_review_where_name(cc_review_where w)
{
    return w >= 0 && w < CC_REVIEW_KINDS ? where_names[w] : "?";
}

int cc_review_where_from_name(const char *name)
{
    for (int w = 0; w < CC_REVIEW_KINDS; w++)
        if (strcmp(name, where_names[w]) == 0)
            return w;
    return -1;
}

/* A candidate: ranked by k1 descending, k2 descending, then earlier ts, then id. */
typedef struct cand {
    double k1, k2;
    int64_t ts;
    char *id;
} cand;

typedef struct heap {
    cand *v;
    int n, cap;
} heap;

static int before(const cand *a, double k1, double k2, int64_t ts, const char *id)
{
    if (a->k1 != k1)
        return a->k1 > k1;
    if (a->k2 != k2)
        return a->k2 > k2;
    if (a->ts != ts)
        return a->ts < ts;
    return strcmp(a->id, id) < 0;
}

static int cand_before(const cand *a, const cand *b) { return before(a, b->k1, b->k2, b->ts, b->id); }

/* The root holds the candidate ranked last, so a newcomer is compared with it once. */
static void sift_down(heap *h, int i)
{
    for (;;) {
        int l = 2 * i + 1, r = l + 1, worst = i;
        if (l < h->n && cand_before(&h->v[worst], &h->v[l]))
            worst = l;
        if (r < h->n && cand_before(&h->v[worst], &h->v[r]))
            worst = r;
        if (worst == i)
            return;
        cand t = h->v[i];
        h->v[i] = h->v[worst];
        h->v[worst] = t;
        i = worst;
    }
}

static void sift_up(heap *h, int i)
{
    while (i > 0) {
        int p = (i - 1) / 2;
        if (!cand_before(&h->v[p], &h->v[i]))
            return;
        cand t = h->v[i];
        h->v[i] = h->v[p];
        h->v[p] = t;
        i = p;
    }
}

/* Offers a candidate; returns -1 on out of memory. */
static int heap_offer(heap *h, double k1, double k2, int64_t ts, const char *id)
{
    if (h->cap == 0)
        return 0;
    if (h->n == h->cap && !before(&h->v[0], k1, k2, ts, id)) {
        char *copy = strdup(id);
        if (!copy)
            return -1;
        free(h->v[0].id);
        h->v[0] = (cand){k1, k2, ts, copy};
        sift_down(h, 0);
        return 0;
    }
    if (h->n == h->cap)
        return 0;
    char *copy = strdup(id);
    if (!copy)
        return -1;
    h->v[h->n] = (cand){k1, k2, ts, copy};
    sift_up(h, h->n++);
    return 0;
}

static int cand_cmp(const void *a, const void *b)
{
    const cand *x = a, *y = b;
    return cand_before(x, y) ? -1 : cand_before(y, x) ? 1 : 0;
}

static void heap_clear(heap *h)
{
    for (int i = 0; h->v && i < h->n; i++)
        free(h->v[i].id);
    free(h->v);
    h->v = NULL;
    h->n = h->cap = 0;
}

typedef struct list {
    cc_review_event *events;
    int n;
    int64_t matched;
} list;

struct cc_review {
    cc_review_opts opts;
    char *segment;
    cc_review_summary sum;
    int64_t *pair_counts;   /* k * k, [a * k + b], a < b */
    list lists[CC_REVIEW_KINDS];
    /* deferred: each list's candidates, best first; events are read one at
     * a time by cc_review_each inside the read transaction kept open */
    heap kept[CC_REVIEW_KINDS];
    cc_store *store;
    const cc_model *model;
    int in_snapshot;        /* deferred: the review's snapshot is still open */
};

static int wants(const cc_review_opts *o, cc_review_where w) { return (o->lists >> w) & 1u; }

static void event_clear(cc_review_event *e)
{
    free(e->id);
    free(e->segment);
    free(e->probs);
}

void cc_review_event_free(cc_review_event *e)
{
    if (!e)
        return;
    event_clear(e);
    free(e);
}

void cc_review_free(cc_review *rv)
{
    if (!rv)
        return;
    cc_review_summary *s = &rv->sum;
    free(s->member_correct);
    free(s->helped_by);
    free(s->hurt_by);
    free(s->lone_right);
    free(s->lone_wrong);
    free(s->confusion);
    free(s->contested);
    free(rv->pair_counts);
    for (int w = 0; w < CC_REVIEW_KINDS; w++) {
        for (int i = 0; i < rv->lists[w].n; i++)
            event_clear(&rv->lists[w].events[i]);
        free(rv->lists[w].events);
        heap_clear(&rv->kept[w]);
    }
    if (rv->in_snapshot)
        cc_store_snapshot_end(rv->store);
    free(rv->segment);
    free(rv);
}

const cc_review_opts *cc_review_get_opts(const cc_review *rv) { return &rv->opts; }
const cc_review_summary *cc_review_get_summary(const cc_review *rv) { return &rv->sum; }

const cc_review_event *cc_review_get_list(const cc_review *rv, cc_review_where w, int *n,
                                          int64_t *matched)
{
    if (w < 0 || w >= CC_REVIEW_KINDS || !wants(&rv->opts, w)) {
        *n = 0;
        if (matched)
            *matched = 0;
        return NULL;
    }
    *n = rv->opts.deferred ? rv->kept[w].n : rv->lists[w].n;
    if (matched)
        *matched = rv->lists[w].matched;
    return rv->opts.deferred ? NULL : rv->lists[w].events;
}

/* Reads one event by (model, id) into e (id already set). *found = 0 when absent. */
static int fetch(cc_store *s, const cc_model *m, cc_review_event *e, int *found, cc_error *err)
{
    size_t want = (size_t)m->m * (size_t)m->k * sizeof(float);
    cc_event_rec rec;
    *found = 0;
    if (!(e->probs = malloc(want)))
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    int rc = cc_store_event_read(s, m, e->id, found, &rec, e->probs, err);
    if (rc || !*found)
        return rc;
    e->ts = rec.ts;
    e->label = rec.label;
    e->label_at = rec.label_at;
    e->segment = rec.segment;
    *found = 0;
    if (e->label >= m->k || cc_event_view_compute(&e->view, e->probs, m->m, m->k, e->label))
        return cc_error_set(err, CC_EIO, "%s: event '%s' has a label out of range",
                            cc_store_path(s), e->id);
    cc_event_view_uncertainty(&e->view, e->probs);
    *found = 1;
    return 0;
}

int cc_review_event_get(cc_store *s, const cc_model *m, const char *id, cc_review_event **out,
                        cc_error *err)
{
    cc_review_event *e = calloc(1, sizeof *e);
    int found = 0, rc;
    *out = NULL;
    if (!e || !(e->id = strdup(id))) {
        free(e);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    if (!(rc = fetch(s, m, e, &found, err)) && !found)
        rc = cc_error_set(err, CC_ENOTFOUND, "%s: model '%s' has no event with id '%s'",
                          cc_store_path(s), m->name, id);
    if (rc) {
        cc_review_event_free(e);
        return rc;
    }
    *out = e;
    return 0;
}

int cc_review_each(cc_review *rv, cc_review_where w, cc_review_event_fn fn, void *payload,
                   cc_error *err)
{
    int n;
    const cc_review_event *ev = cc_review_get_list(rv, w, &n, NULL);
    if (!rv->opts.deferred) {
        for (int i = 0; i < n; i++)
            if (fn(payload, i + 1, &ev[i]))
                return cc_error_set(err, CC_EIO, "review: the event writer stopped");
        return 0;
    }
    int rank = 0, rc = 0;
    for (int i = 0; !rc && i < n; i++) {
        cc_review_event e;
        int found;
        memset(&e, 0, sizeof e);
        e.id = rv->kept[w].v[i].id;
        rc = fetch(rv->store, rv->model, &e, &found, err);
        if (!rc && found && fn(payload, ++rank, &e))
            rc = cc_error_set(err, CC_EIO, "review: the event writer stopped");
        e.id = NULL; /* still the candidate's */
        event_clear(&e);
    }
    return rc;
}

static int pair_cmp(const void *a, const void *b)
{
    const cc_review_pair *x = a, *y = b;
    if (x->count != y->count)
        return x->count > y->count ? -1 : 1;
    if (x->a != y->a)
        return x->a < y->a ? -1 : 1;
    return (x->b > y->b) - (x->b < y->b);
}

static int alloc_summary(cc_review *rv, int m, int k)
{
    cc_review_summary *s = &rv->sum;
    s->m = m;
    s->k = k;
    s->best_member = -1;
    s->ensemble_accuracy = NAN;
    s->member_correct = calloc((size_t)m, sizeof(int64_t));
    s->helped_by = calloc((size_t)m, sizeof(int64_t));
    s->hurt_by = calloc((size_t)m, sizeof(int64_t));
    s->lone_right = calloc((size_t)m, sizeof(int64_t));
    s->lone_wrong = calloc((size_t)m, sizeof(int64_t));
    s->confusion = calloc((size_t)k * (size_t)k, sizeof(int64_t));
    rv->pair_counts = calloc((size_t)k * (size_t)k, sizeof(int64_t));
    return s->member_correct && s->helped_by && s->hurt_by && s->lone_right && s->lone_wrong &&
                   s->confusion && rv->pair_counts
               ? 0
               : -1;
}

/* Adds one event to the counts of the summary. */
static void count_event(cc_review *rv, const cc_event_view *v)
{
    cc_review_summary *s = &rv->sum;
    const int m = v->m, k = v->k;
    s->events++;
    if (!v->unanimous) {
        s->split_events++;
        int lo = v->ens < v->second ? v->ens : v->second;
        int hi = v->ens < v->second ? v->second : v->ens;
        rv->pair_counts[(size_t)lo * k + hi]++;
    }
    if (v->label < 0) {
        s->low_margin++;
        return;
    }
    s->labeled++;
    s->right += v->ens_right;
    s->wrong += !v->ens_right;
    s->confusion[(size_t)v->label * k + v->ens]++;
    for (int i = 0; i < m; i++) {
        s->member_correct[i] += v->member_right[i];
        s->helped_by[i] += v->ens_right && !v->member_right[i];
        s->hurt_by[i] += !v->ens_right && v->member_right[i];
        s->lone_right[i] += cc_event_view_lone_right(v, i);
        s->lone_wrong[i] += cc_event_view_lone_wrong(v, i);
    }
}

static int is_pair(const cc_event_view *v, int a, int b)
{
    return (v->ens == a && v->second == b) || (v->ens == b && v->second == a);
}

typedef struct scan_state {
    heap plain[CC_REVIEW_KINDS];   /* lists that do not depend on the best member */
    heap *helped, *hurt;           /* one heap per member, the best chosen at the end */
} scan_state;

typedef struct scan_ctx {
    cc_review *rv;
    cc_store *s;
    const cc_model *m;
    scan_state *st;
    cc_error *err;
    int rc;
} scan_ctx;

/* One event of the range: its counts, and an offer to each list's heap. */
static int scan_one(void *ctx, const char *id, int64_t ts, int label, const float *probs)
{
    scan_ctx *c = ctx;
    cc_review *rv = c->rv;
    const cc_review_opts *o = &rv->opts;
    const cc_model *m = c->m;
    scan_state *st = c->st;
    cc_event_view v;
    if (cc_event_view_compute(&v, probs, m->m, m->k, label)) {
        c->rc = cc_error_set(c->err, CC_EIO, "%s: event '%s' has a label out of range",
                             cc_store_path(c->s), id);
        return 1;
    }
    count_event(rv, &v);
    if (wants(o, CC_REVIEW_TOP_MI))
        cc_event_view_uncertainty(&v, probs);
    double dis = isnan(v.disagreement) ? 0.0 : v.disagreement;
    int oom = 0;
    if (label >= 0 && !v.ens_right)
        oom |= heap_offer(&st->plain[CC_REVIEW_WRONG], v.margin, 0, ts, id);
    if (wants(o, CC_REVIEW_TOP_MI))
        oom |= heap_offer(&st->plain[CC_REVIEW_TOP_MI], v.mutual_information, 0, ts, id);
    oom |= heap_offer(&st->plain[CC_REVIEW_TOP_DISAGREEMENT], dis, -v.margin, ts, id);
    if (wants(o, CC_REVIEW_PAIR) && is_pair(&v, o->pair_a, o->pair_b)) {
        rv->sum.pair_events++;
        oom |= heap_offer(&st->plain[CC_REVIEW_PAIR], -v.margin, 0, ts, id);
    }
    if (label < 0)
        oom |= heap_offer(&st->plain[CC_REVIEW_LOW_MARGIN], -v.margin, 0, ts, id);
    for (int i = 0; label >= 0 && (st->helped || st->hurt) && i < m->m; i++) {
        if (st->helped && v.ens_right && !v.member_right[i])
            oom |= heap_offer(&st->helped[i], v.margin, 0, ts, id);
        if (st->hurt && !v.ens_right && v.member_right[i])
            oom |= heap_offer(&st->hurt[i], v.margin, 0, ts, id);
    }
    if (oom) {
        c->rc = cc_error_set(c->err, CC_ENOMEM, "out of memory");
        return 1;
    }
    return 0;
}

/* The scan: every event of the range (or the store's sample of one in
 * sample_every), once, in the store's time order. */
static int scan(cc_review *rv, cc_store *s, const cc_model *m, scan_state *st, cc_error *err)
{
    const cc_review_opts *o = &rv->opts;
    scan_ctx c = {rv, s, m, st, err, 0};
    int rc = cc_store_events_sample(s, m, o->from, o->to, o->segment, o->sample_every, scan_one,
                                    &c, err);
    return c.rc ? c.rc : rc;
}

/* Turns a heap's candidates into the list's events, best first. */
static int materialize(cc_review *rv, cc_review_where w, heap *h, cc_store *s,
                       const cc_model *m, cc_error *err)
{
    list *l = &rv->lists[w];
    qsort(h->v, (size_t)h->n, sizeof *h->v, cand_cmp);
    if (h->n && !(l->events = calloc((size_t)h->n, sizeof *l->events)))
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    for (int i = 0; i < h->n; i++) {
        cc_review_event *e = &l->events[l->n];
        int found, rc;
        e->id = h->v[i].id;
        h->v[i].id = NULL;
        if ((rc = fetch(s, m, e, &found, err))) {
            l->n++;
            return rc;
        }
        if (found)
            l->n++;
        else
            event_clear(e);
    }
    return 0;
}

/* Best member, helped/hurt against it, sorted contested pairs. -1 on out of memory. */
static int finish_summary(cc_review *rv)
{
    cc_review_summary *s = &rv->sum;
    const int k = s->k;
    if (s->labeled > 0) {
        s->best_member = 0;
        for (int i = 1; i < s->m; i++)
            if (s->member_correct[i] > s->member_correct[s->best_member])
                s->best_member = i;
        s->helped = s->helped_by[s->best_member];
        s->hurt = s->hurt_by[s->best_member];
        s->ensemble_accuracy = (double)s->right / (double)s->labeled;
    }
    int n = 0;
    for (int a = 0; a < k; a++)
        for (int b = a + 1; b < k; b++)
            n += rv->pair_counts[(size_t)a * k + b] > 0;
    s->contested = n ? malloc((size_t)n * sizeof *s->contested) : NULL;
    if (n && !s->contested)
        return -1;
    for (int a = 0; a < k; a++)
        for (int b = a + 1; b < k; b++)
            if (rv->pair_counts[(size_t)a * k + b] > 0)
                s->contested[s->n_contested++] =
                    (cc_review_pair){a, b, rv->pair_counts[(size_t)a * k + b]};
    if (s->n_contested > 1)
        qsort(s->contested, (size_t)s->n_contested, sizeof *s->contested, pair_cmp);
    return 0;
}

int cc_review_run(cc_review **out, cc_store *s, const cc_model *m, const cc_review_opts *o,
                  cc_error *err)
{
    *out = NULL;
    if (o->limit < 0 || o->to < o->from)
        return cc_error_set(err, CC_EUSAGE, "review: empty time range or negative limit");
    if (((o->lists >> CC_REVIEW_PAIR) & 1u) &&
        (o->pair_a < 0 || o->pair_a >= m->k || o->pair_b < 0 || o->pair_b >= m->k ||
         o->pair_a == o->pair_b))
        return cc_error_set(err, CC_EUSAGE, "review: the pair needs two different classes");
    cc_review *rv = calloc(1, sizeof *rv);
    if (!rv)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    rv->opts = *o;
    rv->opts.segment = NULL;
    if ((o->segment && !(rv->segment = strdup(o->segment))) || alloc_summary(rv, m->m, m->k)) {
        cc_review_free(rv);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }

    rv->opts.segment = rv->segment;
    scan_state st;
    memset(&st, 0, sizeof st);
    int rc = 0;
    for (int w = 0; w < CC_REVIEW_KINDS && !rc; w++) {
        if (!wants(o, (cc_review_where)w) || o->limit == 0)
            continue;
        if (w == CC_REVIEW_HELPED || w == CC_REVIEW_HURT) {
            heap **hp = w == CC_REVIEW_HELPED ? &st.helped : &st.hurt;
            if (!(*hp = calloc((size_t)m->m, sizeof **hp)))
                rc = -1;
            for (int i = 0; !rc && i < m->m; i++)
                if (!((*hp)[i].v = malloc((size_t)o->limit * sizeof(cand))))
                    rc = -1;
                else
                    (*hp)[i].cap = o->limit;
        } else if (!(st.plain[w].v = malloc((size_t)o->limit * sizeof(cand)))) {
            rc = -1;
        } else {
            st.plain[w].cap = o->limit;
        }
    }
    if (rc)
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");

    /* the scan and the reads by id see one snapshot */
    int in_snapshot = 0;
    if (!rc && !(rc = cc_store_snapshot_begin(s, err)))
        in_snapshot = 1;
    if (!rc)
        rc = scan(rv, s, m, &st, err);
    if (!rc && finish_summary(rv))
        rc = cc_error_set(err, CC_ENOMEM, "out of memory");
    const cc_review_summary *sum = &rv->sum;
    rv->lists[CC_REVIEW_WRONG].matched = sum->wrong;
    rv->lists[CC_REVIEW_HELPED].matched = sum->helped;
    rv->lists[CC_REVIEW_HURT].matched = sum->hurt;
    rv->lists[CC_REVIEW_TOP_MI].matched = sum->events;
    rv->lists[CC_REVIEW_TOP_DISAGREEMENT].matched = sum->events;
    rv->lists[CC_REVIEW_PAIR].matched = sum->pair_events;
    rv->lists[CC_REVIEW_LOW_MARGIN].matched = sum->low_margin;
    for (int w = 0; w < CC_REVIEW_KINDS && !rc; w++) {
        heap *h = &st.plain[w];
        if (w == CC_REVIEW_HELPED || w == CC_REVIEW_HURT) {
            heap *per = w == CC_REVIEW_HELPED ? st.helped : st.hurt;
            h = per && sum->best_member >= 0 ? &per[sum->best_member] : NULL;
        }
        if (h && h->cap && o->deferred) {
            /* keep the ranked ids only; the heap's memory moves to rv */
            qsort(h->v, (size_t)h->n, sizeof *h->v, cand_cmp);
            rv->kept[w] = *h;
            memset(h, 0, sizeof *h);
        } else if (h && h->cap) {
            rc = materialize(rv, (cc_review_where)w, h, s, m, err);
        }
    }
    if (!rc && o->deferred) {
        rv->store = s;
        rv->model = m;
        rv->in_snapshot = in_snapshot;
    } else if (in_snapshot) {
        cc_store_snapshot_end(s);
    }

    for (int w = 0; w < CC_REVIEW_KINDS; w++)
        heap_clear(&st.plain[w]);
    for (int i = 0; i < m->m; i++) {
        if (st.helped)
            heap_clear(&st.helped[i]);
        if (st.hurt)
            heap_clear(&st.hurt[i]);
    }
    free(st.helped);
    free(st.hurt);
    if (rc) {
        cc_review_free(rv);
        return rc;
    }
    *out = rv;
    return 0;
}
