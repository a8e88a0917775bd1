/* review_render.h — a review (collector/review.h) and a single event as
 * text for people, JSON for tools, and CSV for spreadsheets. A review is
 * written to a stream; a single event renders into memory (malloc'd
 * NUL-terminated text, NULL on out of memory). */
#ifndef CC_REPORT_REVIEW_RENDER_H
#define CC_REPORT_REVIEW_RENDER_H

#include <stdint.h>
#include <stdio.h>

#include "review.h"
#include "store.h"

/* "YYYY-MM-DDTHH:MM:SSZ" (21 bytes with NUL) of a Unix time. */
void cc_review_format_time(int64_t ts, char out[21]);

/* Summary, then every list the review kept, written to f as the events
 * are read (cc_review_each): with a deferred review, memory does not grow
 * with --limit beyond the ranked ids. Returns 0 or the review's error;
 * write errors are left in f (ferror). */
int cc_review_write_text(FILE *f, cc_review *rv, const cc_model *m, cc_error *err);
int cc_review_write_json(FILE *f, cc_review *rv, const cc_model *m, cc_error *err);
/* One row per kept event of every list, with a "list" column; no summary. */
int cc_review_write_csv(FILE *f, cc_review *rv, const cc_model *m, cc_error *err);

/* One event in full: every member's vector, the averaged vector, the vote. */
char *cc_review_event_text(const cc_review_event *e, const cc_model *m);
char *cc_review_event_json(const cc_review_event *e, const cc_model *m);

#endif
