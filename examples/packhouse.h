/* packhouse.h — invented demo data: an apple packhouse grades fruit into six
 * grades with a five-member ensemble. Nothing here is real data. */
#ifndef CC_EXAMPLES_PACKHOUSE_H
#define CC_EXAMPLES_PACKHOUSE_H

#include <stdint.h>

#include "error.h"

#define CC_DEMO_CLASSES "premium,extra,class-1,class-2,juice,cull"
#define CC_DEMO_MEMBERS "hue,shape,blemish,size,wide"

typedef struct cc_demo_opts {
    int days;              /* 28 */
    int per_day;           /* events per day */
    uint64_t seed;
    int64_t first_day;     /* UTC day number of day 1 */
    double label_share;    /* share of events that get a label */
} cc_demo_opts;

#define CC_DEMO_OPTS_INIT {28, 1500, 20261005, 20731 /* 2026-10-05 */, 0.3}

/* Injected incidents, as 1-based day numbers (inclusive). */
typedef struct cc_demo_incidents {
    int fog_from, fog_to;          /* camera fogged: members disagree */
    int mix_from, mix_to;          /* late-season grade mix */
    int retrain_from, retrain_to;  /* retrained members are near copies */
    int broken_from, broken_to;    /* one member's model file replaced by an old one */
    int broken_member;             /* its index (0-based) in CC_DEMO_MEMBERS */
    int64_t events, inline_labels, delayed_labels;
    int line_fog_from, line_fog_to; /* one packing line's camera fogged: that line only */
    int line_fog_line;             /* its number: events with segment "line-N" */
} cc_demo_incidents;

/* Writes the events (JSON Lines; some with inline labels) and the delayed
 * labels to the two paths. */
int cc_demo_generate(const char *events_path, const char *labels_path, const cc_demo_opts *o,
                     cc_demo_incidents *out, cc_error *err);

#endif
