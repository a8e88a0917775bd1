/* testpoint.c — stop points for crash tests (see testpoint.h). */
#include "testpoint.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

static int configured;      /* 0 not read yet, 1 off, 2 on */
static char wanted[64];
static long wanted_hit, hits;

static void configure(void)
{
    configured = 1;
    const char *v = getenv("CONCORD_TESTPOINT");
    const char *colon = v ? strrchr(v, ':') : NULL;
    if (!colon || colon == v || (size_t)(colon - v) >= sizeof wanted)
        return;
    char *end;
    long n = strtol(colon + 1, &end, 10);
    if (*end || n < 1)
        return;
    memcpy(wanted, v, (size_t)(colon - v));
    wanted[colon - v] = '\0';
    wanted_hit = n;
    configured = 2;
}

void cc_testpoint(const char *name)
{
    if (!configured)
        configure();
    if (configured != 2 || strcmp(name, wanted) != 0 || ++hits != wanted_hit)
        return;
    fprintf(stderr, "concord: testpoint %s %ld reached\n", name, hits);
    fflush(stderr);
    for (;;)
        pause();
}
