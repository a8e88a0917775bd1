/* date.c — civil-date arithmetic (the era-based days-from-civil method of
 * H. Hinnant, "chrono-Compatible Low-Level Date Algorithms") and RFC 3339
 * parsing. */
#include "date.h"

#include <stdio.h>

int64_t cc_days_from_civil(int y, int mo, int d)
{
    y -= mo <= 2;
    int64_t era = (y >= 0 ? y : y - 399) / 400;
    int64_t yoe = y - era * 400;
    int64_t doy = (153 * (mo + (mo > 2 ? -3 : 9)) + 2) / 5 + d - 1;
    int64_t doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    return era * 146097 + doe - 719468;
}

void cc_civil_from_days(int64_t z, int *y, int *mo, int *d)
{
    z += 719468;
    int64_t era = (z >= 0 ? z : z - 146096) / 146097;
    int64_t doe = z - era * 146097;
    int64_t yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365;
    int64_t doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    int64_t mp = (5 * doy + 2) / 153;
    *d = (int)(doy - (153 * mp + 2) / 5 + 1);
    *mo = (int)(mp < 10 ? mp + 3 : mp - 9);
    *y = (int)(yoe + era * 400 + (*mo <= 2));
}

static int days_in_month(int y, int mo)
{
    static const int dm[] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
    int leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
    return mo == 2 ? 28 + leap : dm[mo - 1];
}

static int digits(const char *s, int n, int *out)
{
    int v = 0;
    for (int i = 0; i < n; i++) {
        if (s[i] < '0' || s[i] > '9')
            return -1;
        v = v * 10 + (s[i] - '0');
    }
    *out = v;
    return 0;
}

static int parse_ymd(const char *s, int *y, int *mo, int *d)
{
    if (digits(s, 4, y) || s[4] != '-' || digits(s + 5, 2, mo) || s[7] != '-' ||
        digits(s + 8, 2, d))
        return -1;
    if (*mo < 1 || *mo > 12 || *d < 1 || *d > days_in_month(*y, *mo))
        return -1;
    return 0;
}

/* 0001-01-01T00:00:00Z and 9999-12-31T23:59:59Z */
#define FIRST_UNIX (-62135596800LL)
#define LAST_UNIX 253402300799LL

int cc_parse_rfc3339(const char *s, int len, int64_t *out, const char **why)
{
    int y, mo, d, h, mi, se, oh = 0, om = 0, sign = 0, i;
    *why = "not an RFC 3339 date-time";
    if (len < 20 || parse_ymd(s, &y, &mo, &d))
        return -1;
    if (s[10] != 'T' && s[10] != 't' && s[10] != ' ')
        return -1;
    if (digits(s + 11, 2, &h) || s[13] != ':' || digits(s + 14, 2, &mi) || s[16] != ':' ||
        digits(s + 17, 2, &se))
        return -1;
    if (h > 23 || mi > 59 || se > 60) {
        *why = "time of day out of range";
        return -1;
    }
    i = 19;
    if (i < len && s[i] == '.') {
        i++;
        int start = i;
        while (i < len && s[i] >= '0' && s[i] <= '9')
            i++;
        if (i == start)
            return -1;
    }
    if (i < len && (s[i] == 'Z' || s[i] == 'z')) {
        i++;
    } else if (i + 6 <= len && (s[i] == '+' || s[i] == '-')) {
        sign = s[i] == '+' ? 1 : -1;
        if (digits(s + i + 1, 2, &oh) || s[i + 3] != ':' || digits(s + i + 4, 2, &om) ||
            oh > 23 || om > 59)
            return -1;
        i += 6;
    } else {
        *why = "date-time lacks a time zone (Z or +hh:mm)";
        return -1;
    }
    if (i != len)
        return -1;
    int offset_s = sign * (oh * 3600 + om * 60);
    if (se == 60) {
        /* RFC 3339 section 5.7: a leap second is inserted at the end of a UTC
         * day, so :60 must fall on 23:59:60 UTC once the offset is applied.
         * It is stored as 23:59:59 of that day. */
        int utc_minute = ((h * 60 + mi - offset_s / 60) % 1440 + 1440) % 1440;
        if (utc_minute != 23 * 60 + 59) {
            *why = "second 60 is a leap second only at 23:59:60 UTC";
            return -1;
        }
        se = 59;
    }
    int64_t t = cc_days_from_civil(y, mo, d) * 86400 + h * 3600 + mi * 60 + se - offset_s;
    if (t < FIRST_UNIX || t > LAST_UNIX) {
        *why = "outside the years 0001..9999 once the offset is applied";
        return -1;
    }
    *out = t;
    return 0;
}

int cc_parse_date(const char *s, int64_t *out_day)
{
    int y, mo, d;
    int n = 0;
    while (s[n] && n < 11)
        n++;
    if (n != 10 || parse_ymd(s, &y, &mo, &d))
        return -1;
    *out_day = cc_days_from_civil(y, mo, d);
    return 0;
}

void cc_format_date(int64_t day, char out[11])
{
    int y, mo, d;
    cc_civil_from_days(day, &y, &mo, &d);
    snprintf(out, 11, "%04u-%02u-%02u", (unsigned)y % 10000u, (unsigned)mo % 100u,
             (unsigned)d % 100u);
}

int64_t cc_day_of_unix(int64_t t)
{
    return t >= 0 ? t / 86400 : -((-t + 86399) / 86400);
}

int64_t cc_week_start(int64_t day)
{
    /* 1970-01-01 was a Thursday: (day + 3) mod 7 is 0 on Mondays */
    int64_t w = (day + 3) % 7;
    if (w < 0)
        w += 7;
    return day - w;
}
