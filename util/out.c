/* out.c — checked output files: temporary name, checked writes, rename. */
#define _XOPEN_SOURCE 700 /* realpath, fchmod */
#include "out.h"

#include <errno.h>
#include <fcntl.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

struct cc_out {
    FILE *f;
    char *target;   /* NULL for standard output */
    char *tmp;      /* NULL when written in place */
    int flags;
    int err_no;     /* first failure seen by cc_out_write */
    mode_t mode;    /* permission bits to give the new file */
};

const char *cc_out_name(const char *path)
{
    return !path || strcmp(path, "-") == 0 ? "standard output" : path;
}

static void out_free(cc_out *o)
{
    free(o->target);
    free(o->tmp);
    free(o);
}

/* "dir/name" -> "dir/.name.XXXXXX", beside the target so rename stays on
 * one file system. */
static char *tmp_name(const char *target)
{
    const char *slash = strrchr(target, '/');
    size_t dir_len = slash ? (size_t)(slash - target + 1) : 0;
    size_t n = strlen(target) + 10;
    char *t = malloc(n);
    if (t)
        snprintf(t, n, "%.*s.%s.XXXXXX", (int)dir_len, target, target + dir_len);
    return t;
}

int cc_out_open(cc_out **out, const char *path, int flags, cc_error *err)
{
    *out = NULL;
    cc_out *o = calloc(1, sizeof *o);
    if (!o)
        return cc_error_set(err, CC_ENOMEM, "%s: out of memory", cc_out_name(path));
    o->flags = flags;
    o->mode = 0600;
    if (!path || strcmp(path, "-") == 0) {
        o->f = stdout;
        *out = o;
        return 0;
    }
    if (!(o->target = strdup(path))) {
        out_free(o);
        return cc_error_set(err, CC_ENOMEM, "%s: out of memory", path);
    }
    struct stat st;
    int exists = stat(path, &st) == 0;
    if (exists && (flags & CC_OUT_NO_REPLACE)) {
        out_free(o);
        return cc_error_set(err, CC_EIO, "%s: %s", path, strerror(EEXIST));
    }
    if (exists && S_ISDIR(st.st_mode)) {
        out_free(o);
        return cc_error_set(err, CC_EIO, "%s: cannot write: %s", path, strerror(EISDIR));
    }
    if (exists && !S_ISREG(st.st_mode)) {
        /* a device or a FIFO: no rename possible, write in place */
        if (!(o->f = fopen(path, "w"))) {
            int e = errno;
            out_free(o);
            return cc_error_set(err, CC_EIO, "%s: cannot write: %s", path, strerror(e));
        }
        *out = o;
        return 0;
    }
    if (exists && access(path, W_OK) != 0) {
        /* rename() could replace a file we may not write: refuse as open() would */
        int e = errno;
        out_free(o);
        return cc_error_set(err, CC_EIO, "%s: cannot write: %s", path, strerror(e));
    }
    if (exists)
        o->mode = st.st_mode & 07777; /* a replaced file keeps its permissions */
    struct stat lst;
    if (exists && lstat(path, &lst) == 0 && S_ISLNK(lst.st_mode)) {
        /* replace the file the link points to, not the link */
        char *real = realpath(path, NULL);
        if (!real) {
            int e = errno;
            out_free(o);
            return cc_error_set(err, CC_EIO, "%s: cannot write: %s", path, strerror(e));
        }
        free(o->target);
        o->target = real;
    }
    int fd = -1;
    if (!(o->tmp = tmp_name(o->target)) || (fd = mkstemp(o->tmp)) < 0) {
        int e = o->tmp ? errno : ENOMEM;
        out_free(o);
        return cc_error_set(err, CC_EIO, "%s: cannot write: %s", path, strerror(e));
    }
    if (!(o->f = fdopen(fd, "w"))) {
        int e = errno;
        close(fd);
        unlink(o->tmp);
        out_free(o);
        return cc_error_set(err, CC_EIO, "%s: cannot write: %s", path, strerror(e));
    }
    *out = o;
    return 0;
}

FILE *cc_out_stream(cc_out *o) { return o->f; }

int cc_out_write(cc_out *o, const void *data, size_t len)
{
    if (len && fwrite(data, 1, len, o->f) != len) {
        if (!o->err_no)
            o->err_no = errno ? errno : EIO;
        return -1;
    }
    return 0;
}

void cc_out_discard(cc_out *o)
{
    if (!o)
        return;
    if (o->f && o->f != stdout)
        fclose(o->f);
    if (o->tmp)
        unlink(o->tmp);
    out_free(o);
}

int cc_out_commit(cc_out *o, cc_error *err)
{
    if (!o)
        return 0;
    const char *name = cc_out_name(o->target);
    int e = o->err_no;
    errno = 0;
    if (fflush(o->f) != 0 && !e)
        e = errno ? errno : EIO;
    if (ferror(o->f) && !e)
        e = errno ? errno : EIO;
    if (o->f == stdout) {
        clearerr(stdout);
        out_free(o);
        return e ? cc_error_set(err, CC_EIO, "%s: write failed: %s", name, strerror(e)) : 0;
    }
    if (!e && o->tmp && fchmod(fileno(o->f), o->mode) != 0)
        e = errno;
    if (!e && o->tmp && fsync(fileno(o->f)) != 0)
        e = errno;
    if (fclose(o->f) != 0 && !e)
        e = errno ? errno : EIO;
    o->f = NULL;
    if (!e && o->tmp) {
        if (o->flags & CC_OUT_NO_REPLACE) {
            /* link() refuses an existing name atomically, unlike rename() */
            if (link(o->tmp, o->target) != 0)
                e = errno;
        } else if (rename(o->tmp, o->target) != 0) {
            e = errno;
        }
    }
    if (o->tmp && (e || (o->flags & CC_OUT_NO_REPLACE)))
        unlink(o->tmp); /* after link() the target keeps the data */
    if (e) {
        cc_error_set(err, CC_EIO, "%s: write failed: %s", name, strerror(e));
        out_free(o);
        return -CC_EIO;
    }
    out_free(o);
    return 0;
}

int cc_out_save(const char *path, int flags, const void *data, size_t len, cc_error *err)
{
    cc_out *o;
    int rc = cc_out_open(&o, path, flags, err);
    if (rc)
        return rc;
    cc_out_write(o, data, len);
    return cc_out_commit(o, err);
}
