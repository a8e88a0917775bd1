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

/* ---- every command: --db PATH or --store URL (the writer side too) ---- */

int cli_store_name(const char *command, const cli_opt *opts, int n_opts, int use,
                   const char **path, const char **url)
{
    const char *db = cli_get(opts, n_opts, "db"), *store = cli_get(opts, n_opts, "store");
    int kind = use & 3;
    *path = db;
    *url = NULL;
    if (!store) {
        if (!db && !(use & CLI_STORE_OPTIONAL))
            return cli_usage(command, "--db FILE (or --store URL) is required");
        return EXIT_OK;
    }
    if (strncmp(store, "sqlite:", 7) == 0) {
        if (db)
            return cli_usage(command, "give --db or --store, not both");
        if (!store[7])
            return cli_usage(command, "--store sqlite:PATH needs a path");
        *path = store + 7;
        return EXIT_OK;
    }
    if (strncmp(store, "clickhouse://", 13) != 0)
        return cli_usage(command, "--store '%s': expected sqlite:PATH or "
                                  "clickhouse://HOST:PORT/DATABASE", store);
    if (kind == CLI_STORE_WRITES)
        return cli_usage(command,
                         "--store %s: a cluster is read-only for concord %s. A host writes "
                         "to its local SQLite store (--db FILE) and sends it to the cluster "
                         "with --publish URL (ingest, label, follow, serve) or concord "
                         "publish", store, command);
    if (kind == CLI_STORE_LOCAL)
        return cli_usage(command,
                         "--store %s: concord %s reads what only a host's local SQLite store "
                         "keeps; give --db FILE or --store sqlite:FILE (a cluster serves "
                         "report, review, show, models, verify and check)", store, command);
    if (db && !(use & CLI_STORE_BESIDE))
        return cli_usage(command, "give --db or --store, not both");
    *url = store;
    return EXIT_OK;
}

int cli_store_open_named(const char *path, const char *url, int flags, cc_store **out,
                         cc_error *err)
{
    if (url)
        return cc_ch_store_open(out, url, err);
    return cli_store_open(out, path, flags, err);
}
