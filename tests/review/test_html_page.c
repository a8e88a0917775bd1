/* test_html_page.c — the HTML page written from a streamed report
 * (cc_report_page_build) is the page of the built report (cc_report_html of
 * cc_report_build, the rendering it replaces: the reference here), byte for
 * byte, by day, ISO week, all and hour, with slice rows, a baseline and
 * without one; and the streamed page holds a fixed number of window figure
 * sets whatever the number of days: through the report's testing hook
 * (cc_report_live_windows), the most alive at once is the same for a 10-day
 * and a 60-day page, at most two windows with their slice rows (the last
 * window kept for its pair maps, the next one being computed), while a built
 * report of 60 days holds one per window and slice row, so the check can
 * fail. A structural bound, not a measured one: no time or RSS is read.
 * The events are invented (a small linear congruential generator). */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "../collector/check.h"
#include "date.h"
#include "ingest.h"
#include "report.h"
#include "store.h"

enum { DAYS = 60, PER_DAY = 6, MEMBERS = 3, CLASSES = 4, SEGMENTS = 3 };

static uint64_t lcg = 12345;

static double uniform(void)
{
    lcg = lcg * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(lcg >> 11) / 9007199254740992.0;
}

/* DAYS days of events from 2026-11-02: three segments, half labelled. */
static char *events_text(void)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    CHECK(f != NULL);
    int64_t day0;
    CHECK(cc_parse_date("2026-11-02", &day0) == 0);
    int id = 0;
    for (int d = 0; d < DAYS; d++)
        for (int e = 0; e < PER_DAY; e++) {
            int64_t ts = (day0 + d) * 86400 + 3600 * (e * 3 + 1);
            char when[32];
            cc_format_date(day0 + d, when);
            int truth = (int)(uniform() * CLASSES);
            fprintf(f, "{\"id\":\"ev%05d\",\"ts\":\"%sT%02d:00:00Z\",\"segment\":\"line-%d\","
                       "\"probs\":[", ++id, when, (int)((ts % 86400) / 3600), e % SEGMENTS + 1);
            for (int m = 0; m < MEMBERS; m++) {
                double p[CLASSES], sum = 0;
                for (int c = 0; c < CLASSES; c++)
                    sum += p[c] = uniform() + (c == truth ? 1.5 + 0.02 * d : 0.0);
                fputs(m ? ",[" : "[", f);
                for (int c = 0; c < CLASSES; c++)
                    fprintf(f, "%s%.4f", c ? "," : "", p[c] / sum);
                fputc(']', f);
            }
            fputc(']', f);
            if (e % 2 == 0)
                fprintf(f, ",\"label\":%d", truth);
            fputs("}\n", f);
        }
    CHECK(fclose(f) == 0);
    return buf;
}

static cc_store *make_store(const char *path, int with_baseline)
{
    cc_store *st = NULL;
    cc_ingest *ing = NULL;
    cc_error err = CC_ERROR_INIT;
    cc_ingest_opts o = CC_INGEST_OPTS_INIT;
    o.now = 1790000000;
    unlink(path);
    CHECK(cc_store_open(&st, path, CC_STORE_CREATE, &err) == 0);
    char *text = events_text();
    FILE *f = fmemopen(text, strlen(text), "r");
    CHECK(f != NULL);
    CHECK(cc_ingest_create(&ing, st, &o, &err) == 0);
    CHECK(cc_ingest_stream(ing, f, "mem", 1, CC_RECORD_EVENTS, &err) == 0);
    CHECK(cc_ingest_finish(ing, &err) == 0);
    CHECK(cc_ingest_get_stats(ing)->accepted == DAYS * PER_DAY);
    cc_ingest_free(ing);
    fclose(f);
    free(text);
    if (with_baseline) {
        cc_model *m = NULL;
        int64_t day0;
        CHECK(cc_parse_date("2026-11-02", &day0) == 0);
        CHECK(cc_store_model_get(st, "default", &m, &err) == 0);
        CHECK(cc_store_baseline_set(st, m, day0, day0 + 6, &err) == 0);
        cc_model_free(m);
    }
    if (err.code)
        fprintf(stderr, "store: %s\n", err.msg);
    return st;
}

/* The page of opts both ways; returns the streamed page's peak of live
 * window figure sets, and in *built_peak the built report's. */
static long same_page(cc_store *st, const cc_report_opts *ro, const char *what, long *built_peak)
{
    cc_error err = CC_ERROR_INIT;
    cc_report *r = NULL;
    cc_report_page *pg = NULL;
    long now, peak, streamed_peak;
    cc_html_extras x = CC_HTML_EXTRAS_INIT;
    x.note = "invented events";

    cc_report_live_windows_reset();
    CHECK(cc_report_build(&r, st, ro, &err) == 0);
    cc_report_live_windows(&now, built_peak);
    char *want = r ? cc_report_html(r, &x) : NULL;
    /* a few facts of the page straight from the built report's windows, so
     * that a slip in what both pages are written from shows too */
    if (r && want && r->n_windows > 0 && r->by != CC_BY_HOUR) {
        char a[11], b[11], line[96];
        cc_format_date(r->windows[0].from, a);
        cc_format_date(r->windows[r->n_windows - 1].to, b);
        snprintf(line, sizeof line, " &middot; %s to %s, %d ", a, b, r->n_windows);
        CHECK(strstr(want, line) != NULL);
        for (int s = 0; s < r->n_slices && r->by_segment; s++) {
            int64_t ev = 0, lab = 0;
            int nw = 0;
            for (int i = 0; i < r->n_windows; i++)
                for (int j = 0; j < r->windows[i].n_segments; j++)
                    if (r->windows[i].segments[j].slice == s) {
                        ev += r->windows[i].segments[j].metrics.events;
                        lab += r->windows[i].segments[j].metrics.labeled;
                        nw++;
                    }
            snprintf(line, sizeof line, "</th><td>%d</td><td>%lld</td><td>%lld</td>", nw,
                     (long long)ev, (long long)lab);
            CHECK(nw == 0 || strstr(want, line) != NULL);
        }
    }
    int n_windows = r ? r->n_windows : -1;
    int64_t events =
        r && r->n_windows ? cc_summary_data(r->range)[cc_summary_layout(r->range)->n_events] : 0;
    cc_report_free(r);

    cc_report_live_windows_reset();
    CHECK(cc_report_page_build(&pg, st, ro, &err) == 0);
    cc_report_live_windows(&now, &streamed_peak);
    char *got = pg ? cc_report_page_html(pg, &x) : NULL;

    CHECK(want != NULL && got != NULL);
    if (want && got && strcmp(want, got) != 0) {
        size_t i = 0;
        while (want[i] && want[i] == got[i])
            i++;
        fprintf(stderr, "%s: the pages differ at byte %zu: built '%.60s', streamed '%.60s'\n",
                what, i, want + i, got + i);
        CHECK(!"streamed page equals the built report's page");
    }
    int64_t first, last;
    CHECK(cc_report_page_windows(pg, &first, &last) == n_windows);
    CHECK(cc_report_page_events(pg) == events);
    free(want);
    free(got);
    cc_report_page_free(pg);
    cc_report_live_windows(&now, &peak);
    CHECK(now == 0); /* every window's figures were freed */
    printf("%-24s live window sets at most: built %ld, streamed %ld\n", what, *built_peak,
           streamed_peak);
    return streamed_peak;
}

int main(void)
{
    char path[] = "/tmp/cc_test_html_page_XXXXXX";
    int fd = mkstemp(path);
    CHECK(fd >= 0);
    close(fd);
    int64_t day0;
    CHECK(cc_parse_date("2026-11-02", &day0) == 0);
    long built, built10;
    for (int with_baseline = 1; with_baseline >= 0; with_baseline--) {
        cc_store *st = make_store(path, with_baseline);
        cc_report_opts ro = {0};
        ro.model = "default";
        ro.by = CC_BY_DAY;
        ro.by_segment = 1; /* what report --format html asks for */
        long p60 = same_page(st, &ro, "by day, 60 days", &built);
        CHECK(built >= DAYS * (1 + SEGMENTS)); /* the hook sees a built report's windows */
        ro.has_to = 1;
        ro.to = day0 + 9;
        long p10 = same_page(st, &ro, "by day, 10 days", &built10);
        CHECK(built10 >= 10 * (1 + SEGMENTS) && built10 < built);
        /* flat in days: the last window and the next, each with its slice rows */
        CHECK(p60 == p10);
        CHECK(p60 <= 2 * (1 + SEGMENTS));
        ro.has_to = 0;
        ro.by = CC_BY_WEEK;
        CHECK(same_page(st, &ro, "by week", &built) <= 2 * (1 + SEGMENTS));
        ro.by = CC_BY_ALL;
        same_page(st, &ro, "by all", &built);
        ro.has_from = ro.has_to = 1; /* a range without events */
        ro.from = day0 + 100;
        ro.to = day0 + 120;
        ro.by = CC_BY_DAY;
        CHECK(same_page(st, &ro, "no events", &built) == 0);
        cc_report_opts hr = {0};
        hr.model = "default";
        hr.by = CC_BY_HOUR;
        hr.ts_from = (day0 + 3) * 86400;
        hr.ts_to = (day0 + 5) * 86400;
        CHECK(same_page(st, &hr, "by hour", &built) <= 2);
        cc_store_close(st);
    }
    unlink(path);
    char side[64];
    snprintf(side, sizeof side, "%s-wal", path);
    unlink(side);
    snprintf(side, sizeof side, "%s-shm", path);
    unlink(side);
    return CHECK_DONE("test_html_page");
}
