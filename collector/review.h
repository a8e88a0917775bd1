/* review.h — the post-incident queries over stored event rows: which events
 * of a time range went wrong, where averaging helped or hurt against the
 * range's best member, which were the most uncertain, the most disputed,
 * the closest calls between two given classes, and which unlabelled events
 * are the closest calls; plus a summary of the range and one event by id.
 *
 * A review reads the range once through the index on (model, day, ts) and
 * keeps only the ids of the best `limit` candidates of each list; the kept
 * events are then read by id (the unique index on (model, id)). Both reads happen in one
 * read transaction, so they see the same snapshot. */
#ifndef CC_COLLECTOR_REVIEW_H
#define CC_COLLECTOR_REVIEW_H

#include <stdint.h>

#include "error.h"
#include "event_view.h"
#include "store.h"

typedef enum cc_review_where {
    CC_REVIEW_WRONG,            /* labelled, the ensemble wrong; largest margin first */
    CC_REVIEW_HELPED,           /* the ensemble right, the best member wrong; largest margin first */
    CC_REVIEW_HURT,             /* the best member right, the ensemble wrong; largest margin first */
    CC_REVIEW_TOP_MI,           /* highest mutual information first */
    CC_REVIEW_TOP_DISAGREEMENT, /* highest share of disagreeing member pairs, then lowest margin */
    CC_REVIEW_PAIR,             /* top two averaged classes are {pair_a, pair_b}; lowest margin first */
    CC_REVIEW_LOW_MARGIN,       /* unlabelled; lowest margin first */
    CC_REVIEW_KINDS
} cc_review_where;

/* "wrong", "helped", "hurt", "top-mi", "top-disagreement", "pair", "low-margin". */
const char *cc_review_where_name(cc_review_where w);
/* The name's kind, or -1. "pair" alone; its classes are set in the options. */
int cc_review_where_from_name(const char *name);

typedef struct cc_review_opts {
    int64_t from, to;     /* Unix seconds, both inclusive */
    const char *segment;  /* only events of this segment; NULL for all */
    unsigned lists;       /* (1u << where) for each list to keep */
    int limit;            /* events kept per list, >= 0 */
    int pair_a, pair_b;   /* classes for CC_REVIEW_PAIR */
    int deferred;         /* 1: keep each list's ranked ids only and read the events
                             one at a time in cc_review_each (memory: about 50 bytes
                             per kept id instead of a few KiB per event) */
    int64_t sample_every; /* > 1: read only the events whose rowid (arrival order) is a
                             multiple of it, a deterministic sample spread over the range;
                             summary, counts and lists are then of those events only */
} cc_review_opts;

#define CC_REVIEW_OPTS_INIT {0, 0, NULL, 1u << CC_REVIEW_WRONG, 20, -1, -1, 0, 1}

typedef struct cc_review_event {
    char *id;
    char *segment;        /* NULL when the event had none */
    int64_t ts;
    int64_t label_at;     /* Unix time a delayed label arrived; -1 for inline or none */
    int label;            /* -1 when unknown */
    float *probs;         /* m * k */
    cc_event_view view;   /* with the entropy split */
} cc_review_event;

typedef struct cc_review_pair { int a, b; int64_t count; } cc_review_pair;

typedef struct cc_review_summary {
    int m, k;
    int64_t events, labeled;
    int64_t right, wrong;           /* the ensemble on labelled events */
    int64_t helped, hurt;           /* against best_member (0 without labels) */
    int64_t low_margin;             /* unlabelled events (candidates of that list) */
    int64_t pair_events;            /* events whose top two are {pair_a, pair_b}; 0 if not asked */
    int64_t split_events;           /* events on which the members' classes are not unanimous */
    int best_member;                /* highest accuracy in the range, ties to the lowest index; -1 without labels */
    double ensemble_accuracy;       /* NAN without labels */
    int64_t *member_correct;        /* m */
    int64_t *helped_by, *hurt_by;   /* m: the same two counts against each member */
    int64_t *lone_right;            /* m: the member alone was right */
    int64_t *lone_wrong;            /* m: the member alone was wrong */
    int64_t *confusion;             /* k * k: [true * k + ensemble class] */
    int n_contested;                /* contested pairs, count desc, then a, then b */
    cc_review_pair *contested;
} cc_review_summary;

typedef struct cc_review cc_review;

/* Runs the review of m's events in [o->from, o->to]. An empty range gives an
 * empty review, not an error. */
int cc_review_run(cc_review **out, cc_store *s, const cc_model *m, const cc_review_opts *o,
                  cc_error *err);
void cc_review_free(cc_review *rv);

const cc_review_opts *cc_review_get_opts(const cc_review *rv);
const cc_review_summary *cc_review_get_summary(const cc_review *rv);
/* The kept events of a list, best first (NULL and 0 for a list not asked
 * for); *matched, if not NULL, gets how many events of the range qualified. */
const cc_review_event *cc_review_get_list(const cc_review *rv, cc_review_where w, int *n,
                                          int64_t *matched);

/* Calls fn for each event of list w, best first (rank from 1); fn returns
 * 0 to go on. In a deferred review each event is read by id just before
 * the call and freed after it (the review keeps its read transaction open
 * until cc_review_free, so the events are those of the scanned snapshot);
 * cc_review_get_list then returns NULL with the list's length in *n.
 * Returns 0, a database error, or an error when fn stopped. */
typedef int (*cc_review_event_fn)(void *payload, int rank, const cc_review_event *e);
int cc_review_each(cc_review *rv, cc_review_where w, cc_review_event_fn fn, void *payload,
                   cc_error *err);

/* One event by id, or -CC_ENOTFOUND. Free with cc_review_event_free. */
int cc_review_event_get(cc_store *s, const cc_model *m, const char *id, cc_review_event **out,
                        cc_error *err);
void cc_review_event_free(cc_review_event *e);

#endif
