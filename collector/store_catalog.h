/* store_catalog.h — what a database holds for a model, in totals read from
 * the summaries' event and label columns (no summary is decoded). */
#ifndef CC_COLLECTOR_STORE_CATALOG_H
#define CC_COLLECTOR_STORE_CATALOG_H

#include <stdint.h>

#include "error.h"
#include "store.h"

typedef struct cc_model_totals {
    int days;                 /* days with events */
    int64_t first_day, last_day; /* valid when days > 0 */
    int64_t events, labeled;
    int64_t pending_labels;   /* labels waiting for their event */
} cc_model_totals;

int cc_store_model_totals(cc_store *s, const cc_model *m, cc_model_totals *out, cc_error *err);

#endif
