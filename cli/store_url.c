/* store_url.c — `--store URL` for the reading commands: sqlite:PATH (the
 * same as --db PATH) or clickhouse://HOST:PORT/DATABASE. Every reading
 * command reads the cluster through its read-only store backend
 * (cluster/ch_store.h): reports its summaries, review and show its event
 * rows, through the same store calls as on a SQLite file. */
#include <string.h>

#include "ch_store.h"
#include "cli.h"
#include "store.h"

int cli_store_url_open(const char *command, const char *db, const char *url, const char *model,
                       int events, const char *event_id, cc_store **out, cc_error *err)
{
    (void)model, (void)events, (void)event_id; /* the backend reads what each call asks */
    *out = NULL;
    if (db && url)
        return cc_error_set(err, CC_EUSAGE, "concord %s: give --db or --store, not both",
                            command);
    if (!url)
        return cli_store_open(out, db, CC_STORE_READONLY, err);
    if (strncmp(url, "sqlite:", 7) == 0)
        return cli_store_open(out, url + 7, CC_STORE_READONLY, err);
    if (strncmp(url, "clickhouse://", 13) != 0)
        return cc_error_set(err, CC_EUSAGE,
                            "concord %s: --store '%s': expected sqlite:PATH or "
                            "clickhouse://HOST:PORT/DATABASE", command, url);
    return cc_ch_store_open(out, url, err);
}

void cli_store_url_close(cc_store *s) { cc_store_close(s); }
