/* test_store_access.c — how the store is opened and shared: a reader never
 * creates or writes and keeps one snapshot; a writer waits for another's
 * lock up to its bound, says so once and fails with CC_EBUSY; a schema
 * version past 32 bits is refused and kept; pruning keeps the summary part
 * of the deleted rows; the backup is a complete, owner-only copy; the
 * class-index and integrity checks behind `verify`. */
#include <sqlite3.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "check.h"
#include "store.h"
#include "store_sqlite.h" /* cc_store_db: inspects the SQLite file directly */
#include "summary.h"

static int waits;
static void on_wait(void *ctx, const char *path)
{
    (void)ctx;
    (void)path;
    waits++;
}

static int faults_seen;
static int on_fault(void *ctx, const char *what, const char *id, int64_t value)
{
    (void)ctx;
    faults_seen++;
    CHECK(strcmp(what, "label") == 0 && strcmp(id, "e1") == 0 && value == 7);
    return 0;
}

static void remove_db(const char *path)
{
    char side[128];
    unlink(path);
    snprintf(side, sizeof side, "%s-wal", path);
    unlink(side);
    snprintf(side, sizeof side, "%s-shm", path);
    unlink(side);
}

int main(void)
{
    char dir[] = "/tmp/cc_test_access_XXXXXX";
    CHECK(mkdtemp(dir) != NULL);
    char path[96], copy[96];
    snprintf(path, sizeof path, "%s/a.db", dir);
    snprintf(copy, sizeof copy, "%s/copy.db", dir);
    cc_error err = CC_ERROR_INIT;
    cc_store *w = NULL, *r = NULL, *w2 = NULL;
    cc_model *model = NULL, *seen = NULL;
    struct stat sb;

    /* a reader of a missing file creates nothing */
    cc_store_opts ro = CC_STORE_OPTS_INIT;
    ro.flags = CC_STORE_READONLY;
    CHECK(cc_store_open_with(&r, path, &ro, &err) == -CC_EIO && r == NULL);
    CHECK(strstr(err.msg, "no such database") != NULL);
    CHECK(stat(path, &sb) != 0);
    /* nor does a writer without CC_STORE_CREATE */
    CHECK(cc_store_open(&w, path, 0, &err) == -CC_EIO && stat(path, &sb) != 0);

    /* created owner-only whatever the umask */
    mode_t old = umask(022);
    CHECK(cc_store_open(&w, path, CC_STORE_CREATE, &err) == 0);
    umask(old);
    CHECK(stat(path, &sb) == 0 && (sb.st_mode & 0777) == 0600);
    CHECK(cc_store_model_create(w, "t", 2, 3, NULL, NULL, &model, &err) == 0);

    /* a reader keeps its snapshot: rows committed after it opened are not seen */
    CHECK(cc_store_open_with(&r, path, &ro, &err) == 0 && cc_store_readonly(r));
    CHECK(cc_store_begin(r, &err) != 0); /* a reader cannot write */
    float probs[6] = {0.7f, 0.2f, 0.1f, 0.1f, 0.8f, 0.1f};
    int ins;
    CHECK(cc_store_begin(w, &err) == 0);
    CHECK(cc_store_event_insert(w, model, "e1", 2, 86400 * 10, NULL, 0, 0, 1, probs, &ins,
                                &err) == 0 && ins);
    CHECK(cc_store_event_insert(w, model, "e2", 2, 86400 * 10 + 5, NULL, 0, 0, -1, probs, &ins,
                                &err) == 0 && ins);
    CHECK(cc_store_event_insert(w, model, "e3", 2, 86400 * 11, NULL, 0, 0, -1, probs, &ins,
                                &err) == 0 && ins);
    cc_summary *day = cc_summary_create(2, 3), *got = cc_summary_create(2, 3);
    CHECK(day && got);
    CHECK(cc_store_summary_from_rows(w, model, 10, day, &err) == 0);
    CHECK(cc_store_summary_add(w, model, 10, day, &err) == 0);
    CHECK(cc_store_summary_from_rows(w, model, 11, got, &err) == 0);
    CHECK(cc_store_summary_add(w, model, 11, got, &err) == 0);
    CHECK(cc_store_commit(w, &err) == 0);
    int found = 1;
    cc_stored_event ev;
    float back[6];
    CHECK(cc_store_model_get(r, "t", &seen, &err) == 0);
    CHECK(cc_store_event_get(r, seen, "e1", 2, &found, &ev, back, &err) == 0 && !found);
    cc_store_close(r);
    CHECK(cc_store_open_with(&r, path, &ro, &err) == 0);
    CHECK(cc_store_event_get(r, seen, "e1", 2, &found, &ev, back, &err) == 0 && found &&
          ev.label == 1 && ev.day == 10);

    /* a second writer waits for the first one's lock up to its bound, says so
     * once, then gives up with CC_EBUSY; the reader is not held up */
    cc_store_opts wo = CC_STORE_OPTS_INIT;
    wo.wait_ms = 300;
    wo.on_wait = on_wait;
    CHECK(cc_store_open_with(&w2, path, &wo, &err) == 0);
    CHECK(cc_store_begin(w, &err) == 0);
    CHECK(cc_store_begin(w2, &err) == -CC_EBUSY);
    CHECK(strstr(err.msg, "gave up") != NULL);
    CHECK(waits == 1 && cc_store_take_timed_out(w2) == 1 && cc_store_take_timed_out(w2) == 0);
    CHECK(cc_store_begin(w2, &err) == -CC_EBUSY && waits == 1); /* said once per store */
    CHECK(cc_store_summary_get(r, seen, 10, got, &err) == 0 && cc_summary_equal(got, day));
    cc_store_rollback(w);
    CHECK(cc_store_begin(w2, &err) == 0);
    cc_store_rollback(w2);

    /* pruning day 10: rows gone, summary kept, pruned part = the rows' summary */
    int64_t removed = 0;
    CHECK(cc_store_begin(w, &err) == 0);
    CHECK(cc_store_prune_day(w, model, 10, 1000, &removed, &err) == 0 && removed == 2);
    CHECK(cc_store_commit(w, &err) == 0);
    CHECK(cc_store_summary_get(w, model, 10, got, &err) == 0 && cc_summary_equal(got, day));
    CHECK(cc_store_summary_from_rows(w, model, 10, got, &err) == 0 &&
          cc_summary_data(got)[cc_summary_layout(got)->n_events] == 0);
    CHECK(cc_store_pruned_get(w, model, 10, &found, got, &err) == 0 && found &&
          cc_summary_equal(got, day));
    CHECK(cc_store_pruned_get(w, model, 11, &found, got, &err) == 0 && !found);
    cc_pruned_range pr;
    CHECK(cc_store_pruned_range(w, model, 0, 100, &pr, &err) == 0 && pr.days == 1 &&
          pr.first == 10 && pr.last == 10 && pr.events == 2);
    int64_t *days = NULL;
    int n_days = 0;
    CHECK(cc_store_row_days(w, model, &days, &n_days, &err) == 0 && n_days == 1 && days[0] == 11);
    free(days);

    /* a label out of range is found (K = 3); integrity_check passes */
    int64_t faults = 0;
    int ok = 0;
    sqlite3_exec(cc_store_db(w), "UPDATE events SET label = 7 WHERE id = 'e3'", NULL, NULL, NULL);
    CHECK(cc_store_class_faults(w, model, NULL, NULL, &faults, &err) == 0 && faults == 1);
    sqlite3_exec(cc_store_db(w), "UPDATE events SET label = NULL WHERE id = 'e3';"
                                 "INSERT INTO events(model_id, id, ts, day, pred, label, probs, "
                                 "id_hash) SELECT model_id, 'e1', 0, 12, 0, 7, probs, "
                                 "concord_id_hash('e1') FROM events WHERE id = 'e3'",
                 NULL, NULL, NULL);
    CHECK(cc_store_class_faults(w, model, on_fault, NULL, &faults, &err) == 0 && faults == 1 &&
          faults_seen == 1);
    CHECK(cc_store_integrity(w, NULL, NULL, &ok, &err) == 0 && ok == 1);

    /* the backup: a full copy, owner-only, never over an existing file */
    cc_store_close(r);
    CHECK(cc_store_open_with(&r, path, &ro, &err) == 0);
    CHECK(cc_store_backup(r, copy, &err) == 0);
    CHECK(stat(copy, &sb) == 0 && (sb.st_mode & 0777) == 0600);
    CHECK(cc_store_backup(r, copy, &err) == -CC_EIO && strstr(err.msg, "exists") != NULL);
    cc_store *c = NULL;
    cc_model *cm = NULL;
    CHECK(cc_store_open_with(&c, copy, &ro, &err) == 0 && cc_store_model_get(c, "t", &cm, &err) == 0);
    CHECK(cm && cc_store_pruned_get(c, cm, 10, &found, got, &err) == 0 && found &&
          cc_summary_equal(got, day));
    cc_model_free(cm);
    cc_store_close(c);

    /* schema version 2^32 + 1 is newer than ours, for readers and writers, and kept */
    cc_store_close(r);
    cc_store_close(w2);
    r = w2 = NULL;
    sqlite3_exec(cc_store_db(w), "UPDATE meta SET value = '4294967297' "
                                 "WHERE key = 'schema_version'", NULL, NULL, NULL);
    CHECK(cc_store_open_with(&r, path, &ro, &err) == -CC_EIO && strstr(err.msg, "newer"));
    CHECK(cc_store_open(&w2, path, 0, &err) == -CC_EIO && strstr(err.msg, "4294967297"));
    sqlite3_stmt *q = NULL;
    sqlite3_prepare_v2(cc_store_db(w), "SELECT value FROM meta WHERE key = 'schema_version'",
                       -1, &q, NULL);
    CHECK(q && sqlite3_step(q) == SQLITE_ROW &&
          sqlite3_column_int64(q, 0) == INT64_C(4294967297));
    sqlite3_finalize(q);

    cc_summary_free(day);
    cc_summary_free(got);
    cc_model_free(model);
    cc_model_free(seen);
    cc_store_close(w);
    remove_db(path);
    remove_db(copy);
    rmdir(dir);
    return CHECK_DONE("store_access");
}
