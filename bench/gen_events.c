/* gen_events.c — concord-gen: writes synthetic ensemble prediction events as
 * JSON Lines, for benchmarks and for trying concord on a realistic volume. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"
#include "synth.h"

static void usage(FILE *f)
{
    fputs("usage: concord-gen [options] [-o FILE]\n"
          "\n"
          "Writes synthetic prediction events of an ensemble as JSON Lines, one event\n"
          "per line, to standard output or FILE:\n"
          "  {\"id\":\"e0000001\",\"ts\":\"2026-11-02T00:00:01Z\",\"probs\":[[...],...],\n"
          "   \"label\":3}\n"
          "Members share a per-event signal plus their own noise, bias and sharpness,\n"
          "so they mostly agree without being identical. Every probability row is in\n"
          "[0, 1] and sums to 1. The same options and seed give the same bytes.\n"
          "\n"
          "options:\n"
          "  --n N              events to write (default 1000000)\n"
          "  --members M        ensemble members, 1..64 (default 5)\n"
          "  --classes K        classes, 2..256 (default 10)\n"
          "  --days D           spread events evenly over D UTC days (default 28)\n"
          "  --start DATE       first day, YYYY-MM-DD (default 2026-11-02)\n"
          "  --seed S           random seed, unsigned integer (default 1)\n"
          "  --label-share F    fraction of events with a \"label\" (default 0.3)\n"
          "  --random-ids       ids like random UUIDs, in no order (default: e0000001...)\n"
          "  -o, --output FILE  write to FILE instead of standard output\n"
          "  -h, --help         show this text\n",
          f);
}

static int parse_u64(const char *s, uint64_t *out)
{
    char *end;
    errno = 0;
    if (*s == '-')
        return -1;
    unsigned long long v = strtoull(s, &end, 10);
    if (errno || end == s || *end)
        return -1;
    *out = v;
    return 0;
}

int main(int argc, char **argv)
{
    cc_synth_opts o;
    cc_synth_defaults(&o);
    const char *output = NULL;

    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) {
            usage(stdout);
            return 0;
        }
        if (!strcmp(a, "--random-ids")) {
            o.random_ids = 1;
            continue;
        }
        const char *name = a, *val = NULL;
        char key[32];
        const char *eq = strncmp(a, "--", 2) == 0 ? strchr(a, '=') : NULL;
        if (eq && (size_t)(eq - a) < sizeof key) {
            memcpy(key, a, (size_t)(eq - a));
            key[eq - a] = '\0';
            name = key;
            val = eq + 1;
        } else if (i + 1 < argc) {
            val = argv[i + 1];
        }
        int known = !strcmp(name, "--n") || !strcmp(name, "--members") ||
                    !strcmp(name, "--classes") || !strcmp(name, "--days") ||
                    !strcmp(name, "--start") || !strcmp(name, "--seed") ||
                    !strcmp(name, "--label-share") || !strcmp(name, "-o") ||
                    !strcmp(name, "--output");
        if (!known) {
            fprintf(stderr, "concord-gen: unknown option '%s' (see --help)\n", a);
            return 2;
        }
        if (!val) {
            fprintf(stderr, "concord-gen: %s needs a value\n", name);
            return 2;
        }
        if (!eq)
            i++;
        int bad = 0;
        if (!strcmp(name, "--n"))
            bad = cc_synth_parse_i64(val, &o.n);
        else if (!strcmp(name, "--members"))
            bad = cc_synth_parse_int(val, &o.members);
        else if (!strcmp(name, "--classes"))
            bad = cc_synth_parse_int(val, &o.classes);
        else if (!strcmp(name, "--days"))
            bad = cc_synth_parse_int(val, &o.days);
        else if (!strcmp(name, "--start"))
            bad = cc_parse_date(val, &o.start_day);
        else if (!strcmp(name, "--seed"))
            bad = parse_u64(val, &o.seed);
        else if (!strcmp(name, "--label-share"))
            bad = cc_synth_parse_double(val, &o.label_share);
        else
            output = val;
        if (bad) {
            fprintf(stderr, "concord-gen: %s: cannot read '%s'\n", name, val);
            return 2;
        }
    }
    const char *problem = cc_synth_check(&o);
    if (problem) {
        fprintf(stderr, "concord-gen: %s\n", problem);
        return 2;
    }

    FILE *out = stdout;
    if (output && strcmp(output, "-") != 0 && !(out = fopen(output, "wb"))) {
        fprintf(stderr, "concord-gen: %s: %s\n", output, strerror(errno));
        return 1;
    }
    int rc = cc_synth_write(out, &o);
    int saved = errno;
    if (out != stdout && fclose(out) != 0 && !rc) {
        rc = -1;
        saved = errno;
    }
    if (rc) {
        fprintf(stderr, "concord-gen: writing %s: %s\n", output ? output : "standard output",
                strerror(saved));
        return 1;
    }
    return 0;
}
