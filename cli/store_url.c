/* store_url.c — `--store URL` for the reading commands: sqlite:PATH (the
 * same as --db PATH) or clickhouse://HOST:PORT/DATABASE. Reports read the
 * cluster through its store backend (cluster/ch_store.h). Review and show
 * read event rows with SQL of the SQLite backend's (collector/review.c), so
 * for them the cluster's merged view is copied into a temporary local store
 * (removed on close) until review reads through the store's ops. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "ch_client.h"
#include "ch_store.h"
#include "cli.h"
#include "fetch.h"
#include "store.h"

/* The temporary folder of the one cluster copy a command has open. */
static struct {
    cc_store *store;
    char dir[4096];
} copy;

static void remove_copy(void)
{
    static const char *const files[] = {"cluster.db", "cluster.db-wal", "cluster.db-shm"};
    char path[4200];
    if (!copy.dir[0])
        return;
    for (size_t i = 0; i < sizeof files / sizeof *files; i++) {
        snprintf(path, sizeof path, "%s/%s", copy.dir, files[i]);
        unlink(path);
    }
    rmdir(copy.dir);
    copy.dir[0] = 0;
    copy.store = NULL;
}

int cli_store_url_open(const char *command, const char *db, const char *url, const char *model,
                       int events, const char *event_id, cc_store **out, cc_error *err)
{
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
    if (!events)
        return cc_ch_store_open(out, url, err);
    if (copy.dir[0])
        return cc_error_set(err, CC_EIO, "concord %s: one cluster store at a time", command);
    cc_ch *ch = NULL;
    int rc = cc_ch_open(&ch, url, err);
    if (rc)
        return rc;
    const char *tmp = getenv("TMPDIR");
    snprintf(copy.dir, sizeof copy.dir, "%s/concord-cluster-XXXXXX", tmp && *tmp ? tmp : "/tmp");
    if (!mkdtemp(copy.dir)) {
        copy.dir[0] = 0;
        cc_ch_close(ch);
        return cc_error_set(err, CC_EIO, "concord %s: cannot make a temporary folder for the "
                                         "cluster's data (TMPDIR)", command);
    }
    char path[4200];
    snprintf(path, sizeof path, "%s/cluster.db", copy.dir);
    cc_store *w = NULL;
    cc_fetch_opts fo = CC_FETCH_OPTS_INIT;
    fo.model = model;
    fo.events = events;
    fo.event_id = event_id;
    if (!(rc = cc_store_open(&w, path, CC_STORE_CREATE, err)))
        rc = cc_fetch_into(ch, w, &fo, err);
    cc_store_close(w);
    cc_ch_close(ch);
    if (!rc)
        rc = cc_store_open(out, path, CC_STORE_READONLY, err);
    if (rc) {
        remove_copy();
        return rc;
    }
    copy.store = *out;
    return 0;
}

void cli_store_url_close(cc_store *s)
{
    cc_store_close(s);
    if (s && s == copy.store)
        remove_copy();
}

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
