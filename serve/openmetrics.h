/* openmetrics.h — the server's figures in the OpenMetrics 1.0 text
 * exposition format: per model, the latest day's disagreement, mutual
 * information, class-mix p-value, ensemble accuracy, events and labelled
 * events, also per slice with events that day (label slice); the alert
 * rules' states (each-slice copies with a slice label); what the server took since it started
 * (events, duplicates, rejected lines, labels) and its queue. */
#ifndef CC_SERVE_OPENMETRICS_H
#define CC_SERVE_OPENMETRICS_H

#include "error.h"
#include "store.h"
#include "writer.h"

#define CC_OPENMETRICS_CONTENT_TYPE \
    "application/openmetrics-text; version=1.0.0; charset=utf-8"

/* The exposition (ends with "# EOF\n") read from store (a read-only
 * snapshot) and w's counters (w may be NULL); caller frees. NULL with err
 * set on failure. */
char *cc_openmetrics_render(cc_store *store, cc_writer *w, cc_error *err);

#endif
