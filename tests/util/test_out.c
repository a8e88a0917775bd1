/* test_out.c — the checked output file: complete or absent, never partial;
 * owner-only when new; a replaced file keeps its mode; failures name the
 * file; no temporary file is left behind. */
#include <dirent.h>
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "check.h"
#include "out.h"

static char dir[] = "/tmp/cc_test_out_XXXXXX";

static int entries(void)
{
    int n = 0;
    DIR *d = opendir(dir);
    struct dirent *e;
    while (d && (e = readdir(d)))
        n += strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0;
    if (d)
        closedir(d);
    return n;
}

static char *slurp(const char *path)
{
    static char buf[256];
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    size_t n = fread(buf, 1, sizeof buf - 1, f);
    fclose(f);
    buf[n] = '\0';
    return buf;
}

int main(void)
{
    if (!mkdtemp(dir))
        return 1;
    char path[256], sub[256];
    cc_error err = CC_ERROR_INIT;
    snprintf(path, sizeof path, "%s/report.txt", dir);

    /* a new file: written whole, mode 0600, no temporary left */
    umask(022);
    CHECK(cc_out_save(path, 0, "hello\n", 6, &err) == 0);
    struct stat st;
    CHECK(stat(path, &st) == 0 && (st.st_mode & 0777) == 0600);
    CHECK(slurp(path) && strcmp(slurp(path), "hello\n") == 0);
    CHECK(entries() == 1);

    /* a stream: written through stdio, nothing visible before commit */
    cc_out *o;
    CHECK(cc_out_open(&o, path, 0, &err) == 0);
    fprintf(cc_out_stream(o), "second %d\n", 2);
    CHECK(strcmp(slurp(path), "hello\n") == 0);
    CHECK(cc_out_commit(o, &err) == 0);
    CHECK(strcmp(slurp(path), "second 2\n") == 0);

    /* discarded: the target untouched, the temporary gone */
    CHECK(cc_out_open(&o, path, 0, &err) == 0);
    cc_out_write(o, "x", 1);
    cc_out_discard(o);
    CHECK(strcmp(slurp(path), "second 2\n") == 0 && entries() == 1);

    /* a replaced file keeps its mode */
    chmod(path, 0644);
    CHECK(cc_out_save(path, 0, "third\n", 6, &err) == 0);
    CHECK(stat(path, &st) == 0 && (st.st_mode & 0777) == 0644);

    /* through a symbolic link: the file it points to is replaced, the link stays */
    char link_path[256];
    snprintf(link_path, sizeof link_path, "%s/link.txt", dir);
    CHECK(symlink("report.txt", link_path) == 0);
    CHECK(cc_out_save(link_path, 0, "via link\n", 9, &err) == 0);
    CHECK(lstat(link_path, &st) == 0 && S_ISLNK(st.st_mode));
    CHECK(strcmp(slurp(path), "via link\n") == 0);
    unlink(link_path);

    /* no replace: refused while the file exists */
    CHECK(cc_out_save(path, CC_OUT_NO_REPLACE, "x", 1, &err) == -CC_EIO);
    CHECK(strstr(err.msg, path) && strcmp(slurp(path), "via link\n") == 0);
    snprintf(sub, sizeof sub, "%s/new.txt", dir);
    CHECK(cc_out_save(sub, CC_OUT_NO_REPLACE, "n", 1, &err) == 0 && entries() == 2);

    /* a folder that does not exist: the error names the file */
    snprintf(sub, sizeof sub, "%s/missing/r.txt", dir);
    err.msg[0] = '\0';
    CHECK(cc_out_save(sub, 0, "x", 1, &err) == -CC_EIO && strstr(err.msg, sub));

    /* a device that is always full: written in place, the failure caught */
    if (access("/dev/full", W_OK) == 0) {
        err.msg[0] = '\0';
        CHECK(cc_out_save("/dev/full", 0, "x", 1, &err) == -CC_EIO);
        CHECK(strstr(err.msg, "/dev/full") && strstr(err.msg, strerror(ENOSPC)));
    }
    CHECK(strcmp(cc_out_name(NULL), "standard output") == 0);
    CHECK(strcmp(cc_out_name("-"), "standard output") == 0);

    char cmd[300];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    if (system(cmd) != 0)
        fprintf(stderr, "could not remove %s\n", dir);
    return CHECK_DONE("out");
}
