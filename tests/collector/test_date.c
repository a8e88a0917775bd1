/* test_date.c — RFC 3339 parsing and civil dates. Expected Unix times were
 * computed with Python's datetime.fromisoformat(...).timestamp() (Debian
 * python3 3.11); leap-second handling (":60" counts as ":59") is our choice. */
#include <string.h>

#include "check.h"
#include "date.h"

static int64_t ts(const char *s)
{
    int64_t t = -1;
    const char *why;
    return cc_parse_rfc3339(s, (int)strlen(s), &t, &why) == 0 ? t : -999;
}

int main(void)
{
    CHECK(ts("1970-01-01T00:00:00Z") == 0);
    CHECK(ts("2026-11-03T14:02:11Z") == 1793714531);       /* python datetime */
    CHECK(ts("2026-11-03T01:30:00+02:00") == 1793662200);  /* python datetime */
    CHECK(ts("2024-02-29T23:59:60Z") == 1709251199);       /* leap second -> :59 */
    CHECK(ts("1999-12-31T23:59:59.999-05:30") == 946704599); /* python: 946704599.999 */
    CHECK(ts("2026-11-03 14:02:11z") == 1793714531);       /* RFC 3339 §5.6 note */
    CHECK(ts("2026-11-03T14:02:11") == -999);              /* no zone */
    CHECK(ts("2026-02-29T00:00:00Z") == -999);             /* not a leap year */
    CHECK(ts("2026-13-01T00:00:00Z") == -999);
    CHECK(ts("2026-11-03T24:00:00Z") == -999);
    CHECK(ts("2026-11-03T14:02:11Zjunk") == -999);
    CHECK(ts("2026-11-03T14:02:11+0200") == -999);

    /* ":60" only where RFC 3339 section 5.7 puts a leap second: 23:59:60 UTC.
     * 2017-01-01T00:00:00Z is 1483228800 (date -u -d 2017-01-01 +%s). */
    CHECK(ts("2016-12-31T23:59:60Z") == 1483228799);
    CHECK(ts("2017-01-01T01:59:60+02:00") == 1483228799); /* the same second, local */
    CHECK(ts("2024-02-29T12:30:60Z") == -999);
    CHECK(ts("2016-12-31T23:59:60+02:00") == -999);      /* 21:59:60 UTC */
    /* years outside 0001..9999 once the offset is applied */
    CHECK(ts("0001-01-01T00:30:00+01:00") == -999);
    CHECK(ts("9999-12-31T23:30:00-01:00") == -999);
    CHECK(ts("0001-01-01T00:00:00Z") == -62135596800LL);  /* python datetime(1,1,1) */
    CHECK(ts("1969-12-31T23:59:59Z") == -1);

    /* a +02:00 time early in the morning belongs to the previous UTC day */
    CHECK(cc_day_of_unix(ts("2026-11-03T01:30:00+02:00")) == cc_days_from_civil(2026, 11, 2));
    CHECK(cc_day_of_unix(-1) == -1);
    CHECK(cc_days_from_civil(1970, 1, 1) == 0);
    CHECK(cc_days_from_civil(2000, 3, 1) == 11017);        /* python date.toordinal diff */

    int64_t day;
    char out[11];
    CHECK(cc_parse_date("2026-10-05", &day) == 0 && day == 20731);
    cc_format_date(day, out);
    CHECK(strcmp(out, "2026-10-05") == 0);
    CHECK(cc_parse_date("2026-10-5", &day) != 0);
    CHECK(cc_parse_date("2026-10-05x", &day) != 0);
    /* ISO weeks start on Monday: 2026-10-05 is a Monday, 2026-10-11 a Sunday */
    CHECK(cc_week_start(20731) == 20731);
    CHECK(cc_week_start(20737) == 20731);
    CHECK(cc_week_start(20738) == 20738);
    for (int64_t d = -800; d < 30000; d += 7) {
        int y, mo, dd;
        cc_civil_from_days(d, &y, &mo, &dd);
        CHECK(cc_days_from_civil(y, mo, dd) == d);
    }
    return CHECK_DONE("date");
}
