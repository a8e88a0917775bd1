/* ch_store_probe.c — prints what the ClickHouse store backend
 * (cluster/ch_store.h) answers to its row-reading ops one at a time
 * (events_scan, event_read, labeled_day_last), so single_server.sh can
 * compare them with the same questions asked of the SQLite file. The ops are
 * called through the backend table.
 *
 *   ch_store_probe URL MODEL scan FROM_TS TO_TS   -> "id ts label" per event
 *   ch_store_probe URL MODEL read ID              -> "ts label label_at segment"
 *   ch_store_probe URL MODEL lastlabeled DAY      -> the day, or "none"
 *   ch_store_probe URL MODEL totals               -> "days first last events labeled pending"
 *   ch_store_probe URL MODEL slices               -> "limit" then "name events labeled" per slice */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "ch_store.h"
#include "store_backend.h"
#include "store_catalog.h"
#include "store_slices.h"

static int print_event(void *ctx, const char *id, int64_t ts, int label, const float *probs)
{
    (void)ctx;
    (void)probs;
    printf("%s %lld %d\n", id, (long long)ts, label);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc < 4 || ((!strcmp(argv[3], "read") || !strcmp(argv[3], "lastlabeled")) && argc != 5)) {
        fprintf(stderr, "usage: ch_store_probe URL MODEL scan FROM TO | read ID | lastlabeled DAY | totals | slices\n");
        return 2;
    }
    cc_error err = CC_ERROR_INIT;
    cc_store *s = NULL;
    cc_model *m = NULL;
    int rc = 0;
    if (cc_ch_store_open(&s, argv[1], &err) || cc_store_model_get(s, argv[2], &m, &err)) {
        fprintf(stderr, "ch_store_probe: %s\n", err.msg);
        cc_store_close(s);
        return 3;
    }
    float *probs = malloc((size_t)m->m * (size_t)m->k * sizeof *probs);
    if (strcmp(argv[3], "scan") == 0 && argc == 6) {
        rc = s->be->events_scan(s, m, atoll(argv[4]), atoll(argv[5]), NULL, print_event, NULL,
                                  &err);
    } else if (strcmp(argv[3], "read") == 0) {
        int found;
        cc_event_rec e;
        rc = s->be->event_read(s, m, argv[4], &found, &e, probs, &err);
        if (!rc && found) {
            printf("%lld %d %lld %s\n", (long long)e.ts, e.label, (long long)e.label_at,
                   e.segment ? e.segment : "-");
            free(e.segment);
        } else if (!rc) {
            printf("absent\n");
        }
    } else if (strcmp(argv[3], "lastlabeled") == 0) {
        int found;
        int64_t day;
        rc = s->be->labeled_day_last(s, m, atoll(argv[4]), &found, &day, &err);
        if (!rc)
            found ? printf("%lld\n", (long long)day) : printf("none\n");
    } else if (strcmp(argv[3], "totals") == 0) {
        cc_model_totals t;
        rc = cc_store_model_totals(s, m, &t, &err);
        if (!rc)
            printf("%d %lld %lld %lld %lld %lld\n", t.days, (long long)t.first_day,
                   (long long)t.last_day, (long long)t.events, (long long)t.labeled,
                   (long long)t.pending_labels);
    } else if (strcmp(argv[3], "slices") == 0) {
        cc_slice *list = NULL;
        int n = 0, limit = 0;
        rc = cc_store_slice_limit_get(s, m, &limit, &err);
        if (!rc)
            rc = cc_store_slice_list(s, m, &list, &n, &err);
        if (!rc) {
            printf("%d\n", limit);
            for (int i = 0; i < n; i++)
                printf("%s %lld %lld\n", cc_slice_name(&list[i]), (long long)list[i].events,
                       (long long)list[i].labeled);
        }
        cc_slice_list_free(list, n);
    } else {
        fprintf(stderr, "ch_store_probe: unknown question '%s'\n", argv[3]);
        rc = -CC_EUSAGE;
    }
    if (rc)
        fprintf(stderr, "ch_store_probe: %s\n", err.msg);
    free(probs);
    cc_model_free(m);
    cc_store_close(s);
    return rc ? 3 : 0;
}
