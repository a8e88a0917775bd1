/* out.c — checked output files: temporary name, checked writes, rename. */
#define _GNU_SOURCE /* realpath, fchmod, fopencookie (the escaping text stream) */
#include "out.h"

#include <errno.h>
#include <fcntl.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "utf8.h"

struct cc_out {
    FILE *f;
    FILE *text;     /* CC_OUT_TEXT: the escaping stream in front of f */
    unsigned char pending[4]; /* CC_OUT_TEXT: an incomplete UTF-8 sequence */
    size_t n_pending;
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

static int open_raw(cc_out **out, const char *path, int flags, cc_error *err)
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

/* The escaping stream: each write is escaped (cc_text_escape, multiline)
 * and passed on to the real file; the bytes of a UTF-8 sequence cut by the
 * stdio buffer wait for the next write, so a character is never split. */
static int put_escaped(cc_out *o, const char *s, size_t n)
{
    if (!n)
        return 0;
    char *e = cc_text_escape(s, n, 1);
    if (!e) {
        errno = ENOMEM;
        return -1;
    }
    size_t len = strlen(e);
    int rc = fwrite(e, 1, len, o->f) == len ? 0 : -1;
    free(e);
    return rc;
}

static ssize_t text_write(void *cookie, const char *buf, size_t size)
{
    cc_out *o = cookie;
    size_t total = o->n_pending + size;
    char *all = malloc(total ? total : 1);
    if (!all) {
        errno = ENOMEM;
        return -1;
    }
    memcpy(all, o->pending, o->n_pending);
    memcpy(all + o->n_pending, buf, size);
    /* keep back a lead byte whose sequence is not complete yet */
    size_t cut = total;
    for (size_t back = 1; back <= 3 && back <= total; back++) {
        unsigned char b = (unsigned char)all[total - back];
        if ((b & 0xC0) == 0x80)
            continue;
        size_t need = b >= 0xF0 ? 4 : b >= 0xE0 ? 3 : b >= 0xC0 ? 2 : 1;
        if (need > back)
            cut = total - back;
        break;
    }
    int rc = put_escaped(o, all, cut);
    o->n_pending = total - cut;
    memcpy(o->pending, all + cut, o->n_pending);
    free(all);
    if (rc) {
        if (!o->err_no)
            o->err_no = errno ? errno : EIO;
        return -1;
    }
    return (ssize_t)size;
}

/* Closes the escaping stream (flushing through text_write) and writes what
 * was held back; 0 or an errno value. */
static int text_close(cc_out *o)
{
    if (!o->text)
        return 0;
    int e = 0;
    errno = 0;
    if (fclose(o->text) != 0)
        e = errno ? errno : EIO;
    o->text = NULL;
    if (!e && put_escaped(o, (const char *)o->pending, o->n_pending))
        e = errno ? errno : EIO;
    o->n_pending = 0;
    return e;
}

static int text_open(cc_out *o)
{
    cookie_io_functions_t io = {NULL, text_write, NULL, NULL};
    return (o->text = fopencookie(o, "w", io)) ? 0 : -1;
}

FILE *cc_out_stream(cc_out *o) { return o->text ? o->text : o->f; }

int cc_out_open(cc_out **out, const char *path, int flags, cc_error *err)
{
    int rc = open_raw(out, path, flags, err);
    if (rc || !(flags & CC_OUT_TEXT) || text_open(*out) == 0)
        return rc;
    cc_out_discard(*out);
    *out = NULL;
    return cc_error_set(err, CC_ENOMEM, "%s: out of memory", cc_out_name(path));
}

int cc_out_write(cc_out *o, const void *data, size_t len)
{
    if (len && fwrite(data, 1, len, cc_out_stream(o)) != len) {
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
    if (o->text) {
        o->n_pending = 0;
        fclose(o->text);
    }
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
    int e = text_close(o);
    if (o->err_no)
        e = o->err_no;
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
