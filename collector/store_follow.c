/* store_follow.c — the SQLite backend's follow_offsets table: where follow
 * mode read each file up to (created by the schema in store.c). */
#include "store_sqlite.h"

int cc_sq_follow_offset_get(cc_store *store, const char *path, int *found,
                            cc_follow_offset *out, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    *found = 0;
    if (!cc_sq_has_table(s, "follow_offsets"))
        return 0;
    if (sqlite3_prepare_v2(s->db,
                           "SELECT dev, ino, offset, line FROM follow_offsets WHERE path = ?1",
                           -1, &st, NULL) != SQLITE_OK)
        return cc_sq_error(s, err, "follow_offsets");
    sqlite3_bind_text(st, 1, path, -1, SQLITE_STATIC);
    int step = sqlite3_step(st);
    if (step == SQLITE_ROW) {
        *found = 1;
        out->dev = (uint64_t)sqlite3_column_int64(st, 0);
        out->ino = (uint64_t)sqlite3_column_int64(st, 1);
        out->offset = sqlite3_column_int64(st, 2);
        out->line = sqlite3_column_int64(st, 3);
    }
    sqlite3_finalize(st);
    return step == SQLITE_ROW || step == SQLITE_DONE ? 0 : cc_sq_error(s, err, "follow_offsets");
}

int cc_sq_follow_offset_set(cc_store *store, const char *path, const cc_follow_offset *o,
                            int64_t now, cc_error *err)
{
    sq_store *s = SQ(store);
    sqlite3_stmt *st = NULL;
    if (sqlite3_prepare_v2(s->db,
                           "INSERT OR REPLACE INTO follow_offsets(path, dev, ino, offset, "
                           "line, updated_at) VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
                           -1, &st, NULL) != SQLITE_OK)
        return cc_sq_error(s, err, "follow_offsets");
    sqlite3_bind_text(st, 1, path, -1, SQLITE_STATIC);
    sqlite3_bind_int64(st, 2, (sqlite3_int64)o->dev);
    sqlite3_bind_int64(st, 3, (sqlite3_int64)o->ino);
    sqlite3_bind_int64(st, 4, o->offset);
    sqlite3_bind_int64(st, 5, o->line);
    sqlite3_bind_int64(st, 6, now);
    int step = sqlite3_step(st);
    sqlite3_finalize(st);
    return step == SQLITE_DONE ? 0 : cc_sq_error(s, err, "follow_offsets");
}
