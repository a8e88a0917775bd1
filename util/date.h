/* date.h — UTC days and RFC 3339 timestamps, without the C library's time
 * zone state. A "day" is the number of days since 1970-01-01 (UTC). */
#ifndef CC_UTIL_DATE_H
#define CC_UTIL_DATE_H

#include <stdint.h>

/* Days since 1970-01-01 of a proleptic Gregorian date. */
int64_t cc_days_from_civil(int y, int mo, int d);
void cc_civil_from_days(int64_t day, int *y, int *mo, int *d);

/* Parses an RFC 3339 date-time ("2026-11-03T14:02:11Z", fraction and
 * +hh:mm/-hh:mm offsets allowed, 'T' or ' ' separator) into Unix seconds
 * (fraction dropped, rounded toward minus infinity). Returns 0, or -1 with
 * a short reason in *why. len = bytes of s. */
int cc_parse_rfc3339(const char *s, int len, int64_t *out_unix, const char **why);

/* Parses "YYYY-MM-DD" into a day number. Returns 0 or -1. */
int cc_parse_date(const char *s, int64_t *out_day);

/* Writes "YYYY-MM-DD" (11 bytes with NUL) for a day number. */
void cc_format_date(int64_t day, char out[11]);

/* Day of a Unix time, floor division. */
int64_t cc_day_of_unix(int64_t t);

/* Monday of the ISO week that holds day. */
int64_t cc_week_start(int64_t day);

#endif
