/* ingest.c — the write path: line -> parse -> validate against the model ->
 * event row + summary delta, batched into transactions. */
#include "ingest.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include "date.h"
#include "event_parse.h"
#include "event_view.h"
#include "ingest_pipeline.h"
#include "line_reader.h"
#include "names_text.h"
#include "store_slices.h"
#include "testpoint.h"
#include "summary.h"

/* A (day, slice)'s summary changes not yet added to the store. The deltas held at
 * once are bounded by opts.delta_budget bytes: past it, the least recently
 * used day's delta is added to the store inside the open transaction and its
 * buffer serves the new day (so a batch's rows and summary changes still
 * commit together). */
typedef struct day_delta {
    int64_t day;
    int64_t slice;   /* the slice's part; added to the model's day too when flushed */
    cc_summary *delta;
    uint64_t used;   /* ing->clock when last touched, for LRU eviction */
    int dirty;
} day_delta;

/* A segment's slice, cached for the run (a segment's slice never changes). */
typedef struct slice_entry {
    char *segment;   /* NULL: events without a segment */
    int len;
    int64_t slice;
    int overflow;
} slice_entry;

#define SLICE_CACHE_MAX 4096 /* segments remembered per model; more are looked up */

typedef struct model_state {
    cc_model *model;
    slice_entry *slices;
    int n_slices;
    int slice_limit;
    int64_t overflow_events; /* new events this run put in the overflow slice */
    day_delta *days;
    int n_days, cap_days, last;
    size_t delta_bytes; /* one summary of this model's shape */
    float *probs; /* m*k scratch */
    int64_t pruned_last; /* last pruned day (events on or before it are refused) */
} model_state;

typedef struct strict_reject {
    char *source, *reason, *text;
    size_t text_len;
    int64_t line;
    const char *kind;
} strict_reject;

struct cc_ingest {
    cc_store *store;
    cc_ingest_opts opts;
    cc_ingest_stats stats;
    cc_parser *parser;
    model_state *models;
    int n_models;
    int in_tx;
    int64_t since_commit;
    int64_t now; /* arrival time given to delayed labels */
    uint64_t clock;     /* ticks on every delta lookup */
    size_t held_bytes;  /* deltas allocated over all models */
    cc_event_view view; /* scratch: the event being taken (several KiB) */
    strict_reject *held;
    size_t n_held, cap_held;
    int file_failed; /* the last error was an input file's, the run is intact */
    cc_pipe *pipe;   /* opts.threads > 1: the parsing threads, made on first use */
    int pipe_failed; /* they could not be started: one thread does it all */
    int has_range;
    int64_t ts_first, ts_last;
};

static void model_state_clear(model_state *ms)
{
    for (int i = 0; i < ms->n_days; i++)
        cc_summary_free(ms->days[i].delta);
    free(ms->days);
    for (int i = 0; i < ms->n_slices; i++)
        free(ms->slices[i].segment);
    free(ms->slices);
    free(ms->probs);
    cc_model_free(ms->model);
}

static int begin(cc_ingest *ing, cc_error *err)
{
    int rc = cc_store_work_begin(ing->store, err);
    ing->in_tx = rc == 0;
    return rc;
}

int cc_ingest_create(cc_ingest **out, cc_store *store, const cc_ingest_opts *opts,
                     cc_error *err)
{
    cc_ingest *ing = calloc(1, sizeof *ing);
    *out = NULL;
    if (!ing || !(ing->parser = cc_parser_create())) {
        free(ing);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    ing->store = store;
    ing->opts = *opts;
    if (!ing->opts.model)
        ing->opts.model = "default";
    if (ing->opts.batch < 1)
        ing->opts.batch = 20000;
    if (ing->opts.delta_budget == 0)
        ing->opts.delta_budget = CC_INGEST_DELTA_BUDGET;
    ing->now = opts->now > 0 ? opts->now : (int64_t)time(NULL);
    int rc = begin(ing, err);
    if (rc) {
        cc_ingest_free(ing);
        return rc;
    }
    *out = ing;
    return 0;
}

const cc_ingest_stats *cc_ingest_get_stats(const cc_ingest *ing) { return &ing->stats; }

int cc_ingest_file_failed(const cc_ingest *ing) { return ing->file_failed; }

void cc_ingest_ts_range(cc_ingest *ing, int64_t first, int64_t last)
{
    cc_parser_ts_range(ing->parser, first, last);
    if (ing->pipe)
        cc_pipe_ts_range(ing->pipe, first, last);
    ing->has_range = 1;
    ing->ts_first = first;
    ing->ts_last = last;
}

static int names_differ(char *const *a, char *const *b, int n)
{
    for (int i = 0; i < n; i++)
        if (strcmp(a[i], b[i]) != 0)
            return 1;
    return 0;
}

/* The model named name, from the cache, the store, or created from the
 * first event (m, k > 0). Returns NULL with why filled when it cannot be
 * had; a database failure also fills err and sets *fatal. */
static model_state *model_for(cc_ingest *ing, const char *name, int m, int k, char *why,
                              size_t why_len, int *fatal, cc_error *err)
{
    for (int i = 0; i < ing->n_models; i++)
        if (strcmp(ing->models[i].model->name, name) == 0)
            return &ing->models[i];
    cc_model *model = NULL;
    cc_error local = CC_ERROR_INIT;
    int rc = cc_store_model_get(ing->store, name, &model, &local);
    if (rc == -CC_ENOTFOUND) {
        if (m <= 0) {
            char **names = NULL, list[128];
            int n = 0;
            cc_store_model_list(ing->store, &names, &n, NULL);
            cc_names_text(list, sizeof list, (const char *const *)names, n);
            for (int i = 0; i < n; i++)
                free(names[i]);
            free(names);
            snprintf(why, why_len, "field 'model': no model '%s' in the database; models: %s",
                     name, list);
            return NULL;
        }
        const cc_ingest_opts *o = &ing->opts;
        if (o->classes && o->n_classes != k) {
            snprintf(why, why_len,
                     "field 'probs': %d classes, but --classes names %d; model '%s' not created",
                     k, o->n_classes, name);
            return NULL;
        }
        if (o->members && o->n_members != m) {
            snprintf(why, why_len,
                     "field 'probs': %d members, but --members names %d; model '%s' not created",
                     m, o->n_members, name);
            return NULL;
        }
        rc = cc_store_model_create(ing->store, name, m, k, o->classes, o->members, &model, err);
        if (!rc && o->max_slices > 0 &&
            (rc = cc_store_slice_limit_set(ing->store, model, o->max_slices, err))) {
            cc_model_free(model);
            model = NULL;
        }
    } else if (rc == 0) {
        if (ing->opts.classes && (ing->opts.n_classes != model->k ||
                                  names_differ(ing->opts.classes, model->classes, model->k))) {
            snprintf(why, why_len, "model '%s' already has other class names than --classes",
                     name);
            cc_model_free(model);
            return NULL;
        }
        if (ing->opts.members && (ing->opts.n_members != model->m ||
                                  names_differ(ing->opts.members, model->members, model->m))) {
            snprintf(why, why_len, "model '%s' already has other member names than --members",
                     name);
            cc_model_free(model);
            return NULL;
        }
        int limit;
        if (ing->opts.max_slices > 0 &&
            (rc = cc_store_slice_limit_get(ing->store, model, &limit, err)) == 0 &&
            limit != ing->opts.max_slices) {
            snprintf(why, why_len, "model '%s' already has a slice limit of %d; --max-slices "
                                   "applies only to the run that creates a model", name, limit);
            cc_model_free(model);
            return NULL;
        }
    } else {
        *err = local;
    }
    if (rc) {
        cc_model_free(model);
        *fatal = 1;
        return NULL;
    }
    model_state *grown = realloc(ing->models, (size_t)(ing->n_models + 1) * sizeof *grown);
    float *probs = malloc((size_t)model->m * (size_t)model->k * sizeof *probs);
    if (!grown || !probs) {
        if (grown)
            ing->models = grown;
        free(probs);
        cc_model_free(model);
        cc_error_set(err, CC_ENOMEM, "out of memory");
        *fatal = 1;
        return NULL;
    }
    ing->models = grown;
    model_state *ms = &ing->models[ing->n_models++];
    memset(ms, 0, sizeof *ms);
    ms->model = model;
    ms->probs = probs;
    cc_layout lay;
    cc_layout_init(&lay, model->m, model->k);
    ms->delta_bytes = lay.len * sizeof(int64_t);
    cc_pruned_range pr;
    if (cc_store_pruned_range(ing->store, model, INT64_MIN / 4, INT64_MAX / 4, &pr, err)) {
        *fatal = 1;
        return NULL;
    }
    ms->pruned_last = pr.days ? pr.last : INT64_MIN;
    if (cc_store_slice_limit_get(ing->store, model, &ms->slice_limit, err)) {
        *fatal = 1;
        return NULL;
    }
    return ms;
}

/* Adds a held delta to the store (inside the open transaction) and zeroes it. */
static int delta_flush(cc_ingest *ing, model_state *ms, day_delta *dd, cc_error *err)
{
    if (!dd->dirty)
        return 0;
    int rc = cc_store_slice_summary_add(ing->store, ms->model, dd->day, dd->slice, dd->delta,
                                        err);
    if (!rc)
        rc = cc_store_summary_add(ing->store, ms->model, dd->day, dd->delta, err);
    if (rc)
        return rc;
    cc_summary_clear(dd->delta);
    dd->dirty = 0;
    return 0;
}

/* Makes room for one more delta of ms's shape: while the budget would be
 * exceeded, the least recently used delta of any model is flushed; one of
 * ms's own is kept for reuse (*reuse), others are freed. At least one delta
 * is always allowed, whatever the budget. */
static int make_room(cc_ingest *ing, model_state *ms, day_delta **reuse, cc_error *err)
{
    *reuse = NULL;
    while (ing->held_bytes > 0 && ing->held_bytes + ms->delta_bytes > ing->opts.delta_budget) {
        model_state *owner = NULL;
        int at = -1;
        for (int i = 0; i < ing->n_models; i++)
            for (int j = 0; j < ing->models[i].n_days; j++)
                if (!owner || ing->models[i].days[j].used < owner->days[at].used) {
                    owner = &ing->models[i];
                    at = j;
                }
        int rc = delta_flush(ing, owner, &owner->days[at], err);
        if (rc)
            return rc;
        if (owner == ms) {
            *reuse = &ms->days[at];
            return 0;
        }
        cc_summary_free(owner->days[at].delta);
        owner->days[at] = owner->days[--owner->n_days];
        owner->last = 0;
        ing->held_bytes -= owner->delta_bytes;
    }
    return 0;
}

/* The held delta of (ms, day, slice), made when absent; NULL with err set
 * on a store failure or out of memory. */
static cc_summary *delta_for(cc_ingest *ing, model_state *ms, int64_t day, int64_t slice,
                             cc_error *err)
{
    ing->clock++;
    if (ms->last < ms->n_days && ms->days[ms->last].day == day &&
        ms->days[ms->last].slice == slice) {
        ms->days[ms->last].used = ing->clock;
        return ms->days[ms->last].delta;
    }
    for (int i = 0; i < ms->n_days; i++)
        if (ms->days[i].day == day && ms->days[i].slice == slice) {
            ms->last = i;
            ms->days[i].used = ing->clock;
            return ms->days[i].delta;
        }
    day_delta *dd;
    if (make_room(ing, ms, &dd, err))
        return NULL;
    if (!dd) {
        if (ms->n_days == ms->cap_days) {
            int cap = ms->cap_days ? 2 * ms->cap_days : 8;
            day_delta *grown = realloc(ms->days, (size_t)cap * sizeof *grown);
            if (!grown)
                goto oom;
            ms->days = grown;
            ms->cap_days = cap;
        }
        cc_summary *d = cc_summary_create(ms->model->m, ms->model->k);
        if (!d)
            goto oom;
        dd = &ms->days[ms->n_days++];
        dd->delta = d;
        ing->held_bytes += ms->delta_bytes;
    }
    dd->day = day;
    dd->slice = slice;
    dd->used = ing->clock;
    dd->dirty = 0;
    ms->last = (int)(dd - ms->days);
    return dd->delta;
oom:
    cc_error_set(err, CC_ENOMEM, "out of memory");
    return NULL;
}

static void mark_dirty(model_state *ms) { ms->days[ms->last].dirty = 1; }

/* Adds every held delta to the store: each slice's to its row, and the
 * slices of one day merged first, so the model's row of a day is read and
 * written once per flush however many slices the day has. */
static int flush(cc_ingest *ing, cc_error *err)
{
    for (int i = 0; i < ing->n_models; i++) {
        model_state *ms = &ing->models[i];
        int rc = 0;
        for (int j = 0; j < ms->n_days && !rc; j++) {
            if (!ms->days[j].dirty)
                continue;
            /* The day's first delta, once its slice row is written, gathers
             * the day's other slice deltas and is added to the model's row:
             * no extra summary (at 64 x 256 each is 20 MiB). */
            day_delta *first = &ms->days[j];
            int64_t day = first->day;
            rc = cc_store_slice_summary_add(ing->store, ms->model, day, first->slice,
                                            first->delta, err);
            for (int k = j + 1; k < ms->n_days && !rc; k++) {
                day_delta *dd = &ms->days[k];
                if (!dd->dirty || dd->day != day)
                    continue;
                rc = cc_store_slice_summary_add(ing->store, ms->model, day, dd->slice, dd->delta,
                                                err);
                if (!rc && cc_summary_merge(first->delta, dd->delta)) {
                    char date[11];
                    cc_format_date(day, date);
                    rc = cc_error_set(err, CC_EIO, "%s: summary counter overflow at model '%s', "
                                                   "%s; nothing was written",
                                      cc_store_path(ing->store), ms->model->name, date);
                }
                cc_summary_clear(dd->delta);
                dd->dirty = 0;
            }
            if (!rc)
                rc = cc_store_summary_add(ing->store, ms->model, day, first->delta, err);
            cc_summary_clear(first->delta);
            first->dirty = 0;
        }
        if (rc)
            return rc;
    }
    return 0;
}

static void discard_deltas(cc_ingest *ing)
{
    for (int i = 0; i < ing->n_models; i++)
        for (int j = 0; j < ing->models[i].n_days; j++) {
            cc_summary_clear(ing->models[i].days[j].delta);
            ing->models[i].days[j].dirty = 0;
        }
}

static int commit_batch(cc_ingest *ing, cc_error *err)
{
    int rc = flush(ing, err);
    if (!rc) {
        cc_testpoint("ingest-batch-written");
        rc = cc_store_work_commit(ing->store, err);
    }
    ing->in_tx = 0;
    if (rc)
        return rc;
    cc_testpoint("ingest-batch-committed");
    ing->since_commit = 0;
    return begin(ing, err);
}

static int reject(cc_ingest *ing, const char *kind, const char *source, const cc_line *ln,
                  const char *reason, cc_error *err)
{
    ing->stats.rejected++;
    if (ing->opts.on_reject)
        ing->opts.on_reject(ing->opts.payload, source, ln->number, reason);
    if (!ing->opts.strict)
        return cc_store_reject_add(ing->store, kind, source, ln->number, reason, ln->text,
                                   ln->len, err);
    /* strict: hold the reject until the run's transaction is rolled back */
    if (ing->n_held == ing->cap_held) {
        size_t cap = ing->cap_held ? 2 * ing->cap_held : 64;
        strict_reject *grown = realloc(ing->held, cap * sizeof *grown);
        if (!grown)
            return cc_error_set(err, CC_ENOMEM, "out of memory");
        ing->held = grown;
        ing->cap_held = cap;
    }
    strict_reject *h = &ing->held[ing->n_held++];
    size_t keep = ing->n_held <= 1000 ? (ln->len < 4096 ? ln->len : 4096) : 0;
    h->source = strdup(source);
    h->reason = strdup(reason);
    h->text = malloc(keep + 1);
    if (h->text)
        memcpy(h->text, ln->text, keep);
    h->text_len = keep;
    h->line = ln->number;
    h->kind = kind;
    return h->source && h->reason && h->text ? 0 : cc_error_set(err, CC_ENOMEM, "out of memory");
}

/* The slice of a segment (NULL: none) for model ms: from the run's cache,
 * else from the store (create = 1 may add it, or send it to overflow). */
static int slice_for(cc_ingest *ing, model_state *ms, const char *segment, int len, int create,
                     int64_t *slice, int *overflow, cc_error *err)
{
    for (int i = 0; i < ms->n_slices; i++) {
        const slice_entry *e = &ms->slices[i];
        if (segment ? e->segment && e->len == len && memcmp(e->segment, segment, (size_t)len) == 0
                    : !e->segment) {
            *slice = e->slice;
            *overflow = e->overflow;
            return 0;
        }
    }
    int rc = cc_store_slice_resolve(ing->store, ms->model, segment, len, create, slice, overflow,
                                    err);
    if (rc || ms->n_slices >= SLICE_CACHE_MAX)
        return rc;
    /* a segment sent to overflow by a label lookup (create = 0) is not
     * remembered: an event of it may still get a slice of its own */
    if (!create && *overflow)
        return 0;
    slice_entry *grown = realloc(ms->slices, (size_t)(ms->n_slices + 1) * sizeof *grown);
    if (!grown)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    ms->slices = grown;
    slice_entry *e = &grown[ms->n_slices];
    e->segment = NULL;
    if (segment) {
        if (!(e->segment = malloc((size_t)len + 1)))
            return cc_error_set(err, CC_ENOMEM, "out of memory");
        memcpy(e->segment, segment, (size_t)len);
        e->segment[len] = '\0';
    }
    e->len = len;
    e->slice = *slice;
    e->overflow = *overflow;
    ms->n_slices++;
    return 0;
}

/* Applies a label to a stored event, or parks it until the event arrives. */
static int apply_label(cc_ingest *ing, model_state *ms, const char *id, int id_len, int label,
                       int64_t arrived, cc_error *err)
{
    int found;
    cc_stored_event ev;
    int rc = cc_store_event_get(ing->store, ms->model, id, id_len, &found, &ev, ms->probs, err);
    if (rc)
        return rc;
    if (!found) {
        ing->stats.labels_pending++;
        return cc_store_pending_label_add(ing->store, ms->model, id, id_len, label, arrived,
                                          err);
    }
    if (ev.label == label) {
        ing->stats.labels_unchanged++;
        return 0;
    }
    char *segment = NULL;
    int64_t slice;
    int overflow;
    if ((rc = cc_store_event_segment(ing->store, ms->model, id, id_len, &found, &segment, err)) ||
        (rc = slice_for(ing, ms, segment, segment ? (int)strlen(segment) : 0, 0, &slice,
                        &overflow, err))) {
        free(segment);
        return rc;
    }
    free(segment);
    cc_summary *d = delta_for(ing, ms, ev.day, slice, err);
    if (!d)
        return -1;
    if (ev.label >= 0) {
        cc_summary_add_labeled(d, ms->probs, ev.label, -1);
        ing->stats.labels_changed++;
    }
    if (ev.label_at >= 0)
        cc_summary_add_label_delay(d, ev.label_at - ev.ts, -1);
    cc_summary_add_labeled(d, ms->probs, label, 1);
    cc_summary_add_label_delay(d, arrived - ev.ts, 1);
    mark_dirty(ms);
    ing->stats.labels_set++;
    return cc_store_event_set_label(ing->store, ms->model, id, id_len, label, arrived, err);
}

static int resolve_label(const cc_model *model, int label, const char *name, int *out,
                         char *why, size_t why_len)
{
    if (name) {
        *out = cc_model_class_index(model, name, (int)strlen(name));
        if (*out < 0) {
            char list[96];
            cc_names_text(list, sizeof list, (const char *const *)model->classes, model->k);
            snprintf(why, why_len,
                     "field 'label': unknown class name '%.64s' for model '%s'; classes: %s",
                     name, model->name, list);
            return -1;
        }
        return 0;
    }
    if (label >= model->k) {
        snprintf(why, why_len, "field 'label': %d is out of range 0..%d for model '%s'", label,
                 model->k - 1, model->name);
        return -1;
    }
    *out = label;
    return 0;
}

/* Parsing and shape checks of one record: needs no store and no model, only
 * the parser (one per thread), so it may run apart from the store step. */
static int parse_event(cc_parser *p, const cc_line *ln, cc_event *ev, char *why, size_t why_len)
{
    return cc_parse_event(p, ln->text, ln->len, ev, why, why_len);
}

/* The store step of one parsed event: the model (from the cache, the store,
 * or created), checks against its shape, the row and the summary delta.
 * pre, when not NULL, is the event as a parsing thread prepared it: its
 * float32 values and, with has_view, the label-free view. */
static int store_event(cc_ingest *ing, const char *source, const cc_line *ln,
                       const cc_event *evp, const cc_pipe_line *pre, cc_error *err)
{
    char why[256];
    cc_event ev = *evp;
    int fatal = 0, label = -1;
    const char *name = ev.model ? ev.model : ing->opts.model;
    model_state *ms = model_for(ing, name, ev.m, ev.k, why, sizeof why, &fatal, err);
    if (!ms)
        return fatal ? -1 : reject(ing, "event", source, ln, why, err);
    const cc_model *model = ms->model;
    if (ev.m != model->m || ev.k != model->k) {
        snprintf(why, sizeof why,
                 "field 'probs': %d members x %d classes, but model '%s' has %d x %d", ev.m,
                 ev.k, model->name, model->m, model->k);
        return reject(ing, "event", source, ln, why, err);
    }
    if ((ev.label >= 0 || ev.label_name) &&
        resolve_label(model, ev.label, ev.label_name, &label, why, sizeof why))
        return reject(ing, "event", source, ln, why, err);

    if (cc_day_of_unix(ev.ts) <= ms->pruned_last) {
        char last[11];
        cc_format_date(ms->pruned_last, last);
        snprintf(why, sizeof why, "field 'ts': model '%s' was pruned up to %s; events of "
                                  "pruned days are refused (their ids cannot be checked)",
                 model->name, last);
        return reject(ing, "event", source, ln, why, err);
    }
    const float *probs = ms->probs;
    /* one view of the event serves the stored class and both summary parts */
    cc_event_view *view = &ing->view;
    if (pre) {
        probs = pre->probs;
        if (pre->has_view)
            cc_pipe_view(pre, label, view);
        else
            cc_event_view_compute(view, probs, model->m, model->k, label);
    } else {
        size_t n = (size_t)model->m * (size_t)model->k;
        for (size_t i = 0; i < n; i++)
            ms->probs[i] = (float)ev.probs[i];
        cc_event_view_compute(view, ms->probs, model->m, model->k, label);
    }
    int pred = view->ens;

    int64_t slice;
    int inserted, overflow;
    if (cc_store_event_insert(ing->store, model, ev.id, ev.id_len, ev.ts, ev.segment,
                              ev.segment_len, pred, label, probs, &inserted, err))
        return -1;
    if (!inserted) {
        ing->stats.duplicates++;
        return 0;
    }
    /* a duplicate never makes a slice (nor takes a place under the limit) */
    if (slice_for(ing, ms, ev.segment, ev.segment_len, 1, &slice, &overflow, err))
        return -1;
    cc_summary *d = delta_for(ing, ms, cc_day_of_unix(ev.ts), slice, err);
    if (!d)
        return -1;
    ms->overflow_events += overflow;
    cc_summary_add_unlabeled_view(d, view, probs, 1);
    if (label >= 0)
        cc_summary_add_labeled_view(d, view, probs, 1);
    mark_dirty(ms);
    ing->stats.accepted++;
    return 0;
}

static int take_event(cc_ingest *ing, const char *source, const cc_line *ln, cc_error *err)
{
    char why[256];
    cc_event ev;
    if (parse_event(ing->parser, ln, &ev, why, sizeof why))
        return reject(ing, "event", source, ln, why, err);
    return store_event(ing, source, ln, &ev, NULL, err);
}

/* Labels: the same two steps. */
static int parse_label(cc_parser *p, const cc_line *ln, cc_label_line *lab, char *why,
                       size_t why_len)
{
    return cc_parse_label(p, ln->text, ln->len, lab, why, why_len);
}

static int store_label(cc_ingest *ing, const char *source, const cc_line *ln,
                       const cc_label_line *lab, cc_error *err)
{
    char why[256];
    int fatal = 0, label;
    const char *name = lab->model ? lab->model : ing->opts.model;
    model_state *ms = model_for(ing, name, 0, 0, why, sizeof why, &fatal, err);
    if (!ms)
        return fatal ? -1 : reject(ing, "label", source, ln, why, err);
    if (resolve_label(ms->model, lab->label, lab->label_name, &label, why, sizeof why))
        return reject(ing, "label", source, ln, why, err);
    return apply_label(ing, ms, lab->id, lab->id_len, label, ing->now, err);
}

static int take_label(cc_ingest *ing, const char *source, const cc_line *ln, cc_error *err)
{
    char why[256];
    cc_label_line lab;
    if (parse_label(ing->parser, ln, &lab, why, sizeof why))
        return reject(ing, "label", source, ln, why, err);
    return store_label(ing, source, ln, &lab, err);
}

static int reject_too_long(cc_ingest *ing, const char *source, const cc_line *ln,
                           cc_record_kind kind, cc_error *err)
{
    char why[160];
    snprintf(why, sizeof why, "line is %zu bytes, longer than the limit of %u bytes",
             ln->full_len, CC_LINE_MAX);
    ing->stats.lines++;
    return reject(ing, kind == CC_RECORD_EVENTS ? "event" : "label", source, ln, why, err);
}

/* After a line was taken: the batch is committed when it is full. */
static int line_done(cc_ingest *ing, int rc, cc_error *err)
{
    if (!rc && !ing->opts.strict && ++ing->since_commit >= ing->opts.batch)
        rc = commit_batch(ing, err);
    return rc;
}

/* One line of either kind: counted unless blank, refused when too long,
 * taken, and the batch committed when it is full. */
static int take_record(cc_ingest *ing, const char *source, const cc_line *ln,
                       cc_record_kind kind, cc_error *err)
{
    if (ln->too_long)
        return reject_too_long(ing, source, ln, kind, err);
    if (cc_line_blank(ln->text, ln->len))
        return 0;
    ing->stats.lines++;
    int rc = kind == CC_RECORD_EVENTS ? take_event(ing, source, ln, err)
                                      : take_label(ing, source, ln, err);
    return line_done(ing, rc, err);
}

/* The same for a line a parsing thread prepared (ingest_pipeline.h): the
 * same steps in the same order, so the same rows, summaries and rejects. */
typedef struct pipe_ctx {
    cc_ingest *ing;
    const char *source;
    cc_record_kind kind;
    cc_error *err;
} pipe_ctx;

static int take_prepared(void *payload, const cc_pipe_line *pl)
{
    const pipe_ctx *x = payload;
    cc_ingest *ing = x->ing;
    if (pl->status == CC_PIPE_LONG)
        return reject_too_long(ing, x->source, &pl->ln, x->kind, x->err);
    if (pl->status == CC_PIPE_BLANK)
        return 0;
    ing->stats.lines++;
    const char *kind_name = x->kind == CC_RECORD_EVENTS ? "event" : "label";
    int rc;
    if (pl->status == CC_PIPE_BAD)
        rc = reject(ing, kind_name, x->source, &pl->ln, pl->why, x->err);
    else if (x->kind == CC_RECORD_EVENTS)
        rc = store_event(ing, x->source, &pl->ln, &pl->ev, pl, x->err);
    else
        rc = store_label(ing, x->source, &pl->ln, &pl->lab, x->err);
    return line_done(ing, rc, x->err);
}

int cc_ingest_line(cc_ingest *ing, const char *text, size_t len, const char *source,
                   int64_t line, cc_record_kind kind, cc_error *err)
{
    if (!ing->in_tx) {
        int rc = begin(ing, err);
        if (rc)
            return rc;
    }
    if (len > 0 && text[len - 1] == '\n')
        len--;
    cc_line ln = {text, len, len, line, 0, 0};
    if (len > CC_LINE_MAX) {
        ln.len = 0;
        ln.too_long = 1;
    }
    return take_record(ing, source, &ln, kind, err);
}

void cc_ingest_set_model(cc_ingest *ing, const char *model)
{
    ing->opts.model = model ? model : "default";
}

int cc_ingest_stream(cc_ingest *ing, FILE *f, const char *source, int64_t first_line,
                     cc_record_kind kind, cc_error *err)
{
    if (!ing->in_tx) {
        int rc = begin(ing, err);
        if (rc)
            return rc;
    }
    cc_line_reader *r = cc_line_reader_create(f);
    int rc = r ? 0 : cc_error_set(err, CC_ENOMEM, "out of memory");
    int64_t lines_here = 0;
    if (!rc && ing->opts.threads > 1 && !ing->pipe && !ing->pipe_failed) {
        if ((ing->pipe = cc_pipe_create(ing->opts.threads - 1)) && ing->has_range)
            cc_pipe_ts_range(ing->pipe, ing->ts_first, ing->ts_last);
        ing->pipe_failed = ing->pipe == NULL; /* then all on this thread, same result */
    }
    if (!rc && ing->pipe) {
        pipe_ctx x = {ing, source, kind, err};
        int status;
        int64_t line, before = ing->stats.lines;
        rc = cc_pipe_run(ing->pipe, r, kind, first_line, take_prepared, &x, &status, &line);
        lines_here = ing->stats.lines - before;
        if (!rc && status == -1) {
            rc = cc_error_set(err, CC_EIO, "%s:%lld: cannot read: %s", source, (long long)line,
                              strerror(errno));
            ing->file_failed = 1;
        } else if (!rc && status == -2) {
            rc = cc_error_set(err, CC_EIO, "%s:%lld: line longer than %u MiB without a newline: "
                              "not a file of JSON lines, the rest of it is skipped", source,
                              (long long)line, CC_LINE_SKIP_MAX >> 20);
            ing->file_failed = 1;
        } else if (!rc && status == -3) {
            rc = cc_error_set(err, CC_ENOMEM, "out of memory");
        }
    }
    cc_line ln;
    while (!rc && !ing->pipe) {
        int got = cc_line_reader_next(r, &ln);
        if (got == 0)
            break;
        ln.number += first_line - 1;
        if (got == -1) {
            rc = cc_error_set(err, CC_EIO, "%s:%lld: cannot read: %s", source,
                              (long long)ln.number, strerror(errno));
            ing->file_failed = 1;
            break;
        }
        if (got == -2) {
            rc = cc_error_set(err, CC_EIO, "%s:%lld: line longer than %u MiB without a newline: "
                              "not a file of JSON lines, the rest of it is skipped", source,
                              (long long)ln.number, CC_LINE_SKIP_MAX >> 20);
            ing->file_failed = 1;
            break;
        }
        int64_t before = ing->stats.lines;
        rc = take_record(ing, source, &ln, kind, err);
        lines_here += ing->stats.lines - before;
    }
    if (!rc && lines_here == 0)
        ing->stats.empty_files++;
    cc_line_reader_free(r);
    return rc;
}

int cc_ingest_file(cc_ingest *ing, const char *path, cc_record_kind kind, cc_error *err)
{
    int from_stdin = strcmp(path, "-") == 0;
    FILE *f = from_stdin ? stdin : fopen(path, "rb");
    struct stat st;
    ing->file_failed = 0;
    if (!f) {
        ing->file_failed = 1;
        return cc_error_set(err, CC_EIO, "%s: cannot open: %s", path, strerror(errno));
    }
    if (fstat(fileno(f), &st) == 0 && S_ISDIR(st.st_mode)) {
        if (!from_stdin)
            fclose(f);
        ing->file_failed = 1;
        return cc_error_set(err, CC_EIO, "%s: is a directory, not a file of JSON lines", path);
    }
    int rc = cc_ingest_stream(ing, f, from_stdin ? "<stdin>" : path, 1, kind, err);
    if (!from_stdin)
        fclose(f);
    return rc;
}

/* A waiting label keeps the time it arrived, not the time its event did. */
static int drain_one(void *payload, const char *id, int id_len, int label, int64_t received_at)
{
    void **ctx = payload;
    return apply_label(ctx[0], ctx[1], id, id_len, label, received_at, ctx[2]) ? 1 : 0;
}

int cc_ingest_finish(cc_ingest *ing, cc_error *err)
{
    int rc = 0;
    if (ing->opts.strict && ing->stats.rejected > 0) {
        cc_store_work_abort(ing->store);
        ing->in_tx = 0;
        discard_deltas(ing);
        /* the rejects themselves are still worth keeping */
        if ((rc = cc_store_work_begin(ing->store, err)))
            return rc;
        for (size_t i = 0; !rc && i < ing->n_held; i++) {
            strict_reject *h = &ing->held[i];
            rc = cc_store_reject_add(ing->store, h->kind, h->source, h->line, h->reason,
                                     h->text, h->text_len, err);
        }
        if (!rc)
            rc = cc_store_work_commit(ing->store, err);
        else
            cc_store_work_abort(ing->store);
        return rc;
    }
    if (!ing->in_tx && (rc = begin(ing, err)))
        return rc;
    for (int i = 0; !rc && i < ing->n_models; i++) {
        cc_error inner = CC_ERROR_INIT;
        void *ctx[3] = {ing, &ing->models[i], &inner};
        rc = cc_store_pending_label_drain(ing->store, ing->models[i].model, drain_one, ctx,
                                          err);
        if (rc > 0) {
            if (err)
                *err = inner;
            rc = -inner.code;
        }
    }
    if (!rc)
        rc = flush(ing, err);
    if (!rc)
        rc = cc_store_work_commit(ing->store, err);
    ing->in_tx = 0;
    if (!rc)
        ing->stats.committed = 1;
    return rc;
}

void cc_ingest_each_overflow(const cc_ingest *ing, cc_overflow_fn fn, void *ctx)
{
    for (int i = 0; i < ing->n_models; i++)
        if (ing->models[i].overflow_events > 0)
            fn(ctx, ing->models[i].model->name, ing->models[i].slice_limit,
               ing->models[i].overflow_events);
}

void cc_ingest_free(cc_ingest *ing)
{
    if (!ing)
        return;
    if (ing->in_tx)
        cc_store_work_abort(ing->store);
    for (int i = 0; i < ing->n_models; i++)
        model_state_clear(&ing->models[i]);
    free(ing->models);
    for (size_t i = 0; i < ing->n_held; i++) {
        free(ing->held[i].source);
        free(ing->held[i].reason);
        free(ing->held[i].text);
    }
    free(ing->held);
    cc_parser_free(ing->parser);
    cc_pipe_free(ing->pipe);
    free(ing);
}

int cc_ingest_source_offset(cc_ingest *ing, const char *path, const cc_follow_offset *o,
                            cc_error *err)
{
    int rc = 0;
    if (!ing->in_tx && (rc = begin(ing, err)))
        return rc;
    return cc_store_follow_offset_set(ing->store, path, o, (int64_t)time(NULL), err);
}
