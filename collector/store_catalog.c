/* store_catalog.c — a model's totals for `concord models`. */
#include "store_catalog.h"

#include <sqlite3.h>
#include <string.h>

int cc_store_model_totals(cc_store *s, const cc_model *m, cc_model_totals *out, cc_error *err)
{
    sqlite3_stmt *st = NULL;
    memset(out, 0, sizeof *out);
    if (sqlite3_prepare_v2(cc_store_db(s),
                           "SELECT count(*), min(day), max(day), total(events), total(labeled) "
                           "FROM summaries WHERE model_id = ?1 AND events > 0",
                           -1, &st, NULL) != SQLITE_OK)
        return cc_error_set(err, CC_EIO, "%s: reading totals: %s", cc_store_path(s),
                            sqlite3_errmsg(cc_store_db(s)));
    sqlite3_bind_int64(st, 1, m->id);
    int step = sqlite3_step(st);
    if (step == SQLITE_ROW) {
        out->days = sqlite3_column_int(st, 0);
        out->first_day = sqlite3_column_int64(st, 1);
        out->last_day = sqlite3_column_int64(st, 2);
        out->events = (int64_t)sqlite3_column_double(st, 3);
        out->labeled = (int64_t)sqlite3_column_double(st, 4);
    }
    sqlite3_finalize(st);
    if (step != SQLITE_ROW)
        return cc_error_set(err, CC_EIO, "%s: reading totals: %s", cc_store_path(s),
                            sqlite3_errmsg(cc_store_db(s)));
    out->pending_labels = cc_store_pending_label_count(s, m);
    return 0;
}
