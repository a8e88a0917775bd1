/* timed.c — concord-timed: runs one command and writes its wall seconds, user
 * and system CPU seconds and peak RSS in KiB on one line to a file (the
 * fields of GNU time's '%e %U %S %M', with microsecond CPU resolution, so
 * short commands such as a one-event ingest can be measured). The figures
 * come from wait4() on that child alone; this program stays small, so the
 * child starts from a peak RSS of about 1 MiB. bench/run times every command
 * with it. Not a test. */
#define _DEFAULT_SOURCE /* wait4 */
#include <errno.h>
#include <stdio.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/time.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

static double tv_s(struct timeval t) { return (double)t.tv_sec + (double)t.tv_usec / 1e6; }

int main(int argc, char **argv)
{
    if (argc < 4 || strcmp(argv[2], "--") != 0) {
        fputs("usage: concord-timed OUT -- COMMAND [ARG...]\n"
              "writes 'wall user sys peak_rss_kib' of COMMAND to OUT; its standard\n"
              "output goes to /dev/null; the exit status is COMMAND's\n",
              stderr);
        return 2;
    }
    struct timespec t0, t1;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    pid_t pid = fork();
    if (pid < 0) {
        perror("concord-timed: fork");
        return 2;
    }
    if (pid == 0) {
        if (!freopen("/dev/null", "w", stdout))
            _exit(127);
        execvp(argv[3], argv + 3);
        fprintf(stderr, "concord-timed: %s: %s\n", argv[3], strerror(errno));
        _exit(127);
    }
    int status = 0;
    struct rusage ru;
    while (wait4(pid, &status, 0, &ru) < 0) {
        if (errno != EINTR) {
            perror("concord-timed: wait4");
            return 2;
        }
    }
    clock_gettime(CLOCK_MONOTONIC, &t1);
    double wall = (double)(t1.tv_sec - t0.tv_sec) + (double)(t1.tv_nsec - t0.tv_nsec) / 1e9;
    FILE *f = fopen(argv[1], "w");
    if (!f || fprintf(f, "%.3f %.6f %.6f %ld\n", wall, tv_s(ru.ru_utime), tv_s(ru.ru_stime),
                      ru.ru_maxrss) < 0 ||
        fclose(f) != 0) {
        fprintf(stderr, "concord-timed: %s: %s\n", argv[1], strerror(errno));
        return 2;
    }
    if (WIFSIGNALED(status))
        return 128 + WTERMSIG(status);
    return WEXITSTATUS(status);
}
