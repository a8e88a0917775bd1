/* synth.h — synthetic prediction events for the benchmark: an ensemble whose
 * members share a per-event signal (so they mostly agree) but each add their
 * own noise, bias and sharpness (so they sometimes do not). Used by both
 * concord-gen and concord-bench. */
#ifndef CC_BENCH_SYNTH_H
#define CC_BENCH_SYNTH_H

#include <stdint.h>
#include <stdio.h>

#define CC_SYNTH_MAX_MEMBERS 64
#define CC_SYNTH_MAX_CLASSES 256

typedef struct cc_synth_opts {
    int64_t n;          /* events */
    int members, classes;
    int days;           /* events are spread evenly over this many UTC days */
    uint64_t seed;
    double label_share; /* fraction of events carrying "label" */
    int64_t start_day;  /* UTC day number of the first day */
    int random_ids;     /* 1: ids look like random UUIDs (36 characters, no order);
                           0: "e" and the event's number (ascending) */
} cc_synth_opts;

/* n = 1,000,000, 5 members, 10 classes, 28 days, seed 1, label share 0.3,
 * starting 2026-11-02. */
void cc_synth_defaults(cc_synth_opts *o);

/* Checks ranges; returns NULL or a message naming the bad option. */
const char *cc_synth_check(const cc_synth_opts *o);

/* Writes o->n JSON lines to out. Returns 0, or -1 on a write error or out of
 * memory (errno set). */
int cc_synth_write(FILE *out, const cc_synth_opts *o);

/* Whole-string number options of the two bench programs: 0, or -1 when s is
 * not a number (ints limited to +-1e9). */
int cc_synth_parse_i64(const char *s, int64_t *out);
int cc_synth_parse_int(const char *s, int *out);
int cc_synth_parse_double(const char *s, double *out);

#endif
