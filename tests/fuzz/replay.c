/* replay.c — runs a fuzz target's entry point over every file of its corpus
 * in the ordinary build (no libFuzzer, any compiler), so each input that
 * once found a fault stays a regression case for every test run.
 * Usage: replay_TARGET DIR_OR_FILE... */
#include <dirent.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static int run_file(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f) {
        fprintf(stderr, "replay: cannot open %s\n", path);
        return -1;
    }
    size_t cap = 1 << 16, len = 0, got;
    uint8_t *buf = malloc(cap);
    while (buf && (got = fread(buf + len, 1, cap - len, f)) > 0) {
        len += got;
        if (len == cap) {
            uint8_t *nb = realloc(buf, cap *= 2);
            if (!nb)
                free(buf);
            buf = nb;
        }
    }
    fclose(f);
    if (!buf)
        return -1;
    LLVMFuzzerTestOneInput(buf, len); /* a fault aborts the process */
    free(buf);
    return 0;
}

int main(int argc, char **argv)
{
    int files = 0;
    for (int i = 1; i < argc; i++) {
        struct stat st;
        if (stat(argv[i], &st) != 0) {
            fprintf(stderr, "replay: %s: not found\n", argv[i]);
            return 1;
        }
        if (!S_ISDIR(st.st_mode)) {
            if (run_file(argv[i]))
                return 1;
            files++;
            continue;
        }
        DIR *d = opendir(argv[i]);
        struct dirent *e;
        while (d && (e = readdir(d))) {
            if (e->d_name[0] == '.')
                continue;
            char path[4096];
            snprintf(path, sizeof path, "%s/%s", argv[i], e->d_name);
            if (run_file(path))
                return 1;
            files++;
        }
        if (d)
            closedir(d);
    }
    printf("replay: %d inputs, no fault\n", files);
    return files > 0 ? 0 : 1;
}
