/* out.h — the one way concord writes an output file: a report, a review, a
 * rules file, the demo's files. A regular file is written under a temporary
 * name beside it (created owner-only, 0600) and renamed over the target only
 * after every byte was written, flushed, synced and closed without error, so
 * a failed write never leaves a partial file. A target that exists and is not
 * a regular file (a device such as /dev/full, a FIFO) is written in place,
 * with the same checks. NULL or "-" means standard output; its writes and
 * flush are checked too. */
#ifndef CC_UTIL_OUT_H
#define CC_UTIL_OUT_H

#include <stddef.h>
#include <stdio.h>

#include "error.h"

typedef struct cc_out cc_out;

enum {
    CC_OUT_NO_REPLACE = 1, /* fail (CC_EIO, "exists") rather than replace a file */
    CC_OUT_TEXT = 2,       /* text for people: control characters from the data are
                            * shown as \xHH as they are written (cc_text_escape,
                            * multiline), so a streamed text output is escaped too */
};

/* Starts an output to path (NULL or "-" = standard output). flags: 0 or
 * CC_OUT_NO_REPLACE and/or CC_OUT_TEXT. On failure returns -CC_EIO with err naming the file. */
int cc_out_open(cc_out **out, const char *path, int flags, cc_error *err);

/* The stream to write through (stdio's error flag is checked at commit, so
 * unchecked fprintf/fputs calls on it are still caught). */
FILE *cc_out_stream(cc_out *o);

/* Writes len bytes; 0 or -1 (the failure is reported again by commit). */
int cc_out_write(cc_out *o, const void *data, size_t len);

/* Finishes: flush, fsync and close, then rename onto the target. On any
 * failure the temporary file is removed and err names the target and the
 * reason (CC_EIO). Frees o in every case; accepts NULL (returns 0). */
int cc_out_commit(cc_out *o, cc_error *err);

/* Abandons the output: the temporary file is removed, the target untouched.
 * Accepts NULL. */
void cc_out_discard(cc_out *o);

/* The whole output at once: open, write len bytes of data, commit. */
int cc_out_save(const char *path, int flags, const void *data, size_t len, cc_error *err);

/* The target's name for messages ("standard output" for NULL or "-"). */
const char *cc_out_name(const char *path);

#endif
