/* kilter: time stamps of load shapes and meter data, ISO 8601 calendar dates
 * and times of day with their UTC offset (ISO 8601-1:2019, 5.4: extended
 * format YYYY-MM-DDThh:mm[:ss] followed by Z or +hh:mm / -hh:mm), turned
 * into seconds since 1970-01-01T00:00:00Z.  The offset is required: interval
 * data without it cannot be placed across a change of daylight-saving time.
 * Days from the civil date by the proleptic Gregorian rule (the leap years of
 * ISO 8601: divisible by 4, not by 100 unless by 400). */
#include <stdio.h>
#include <string.h>
#include "kilter/series.h"

static int digits(const char *s, int n, int *v)
{
    *v = 0;
    for (int i = 0; i < n; i++) {
        if (s[i] < '0' || s[i] > '9')
            return 0;
        *v = *v * 10 + (s[i] - '0');
    }
    return 1;
}

static int leap(int y)
{
    return (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
}

static int month_days(int y, int m)
{
    static const int D[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
    return m == 2 && leap(y) ? 29 : D[m - 1];
}

/* Days from 1970-01-01 to y-m-d (y >= 1970 - a few: the count may be negative). */
static long days_from_civil(int y, int m, int d)
{
    long days = 0;
    for (int yy = 1970; yy < y; yy++)
        days += leap(yy) ? 366 : 365;
    for (int yy = y; yy < 1970; yy++)
        days -= leap(yy) ? 366 : 365;
    for (int mm = 1; mm < m; mm++)
        days += month_days(y, mm);
    return days + d - 1;
}

int kl_time_parse(const char *s, kl_time *t, int *offset_s, const char **why)
{
    int y, mo, d, h, mi, se = 0, oh = 0, om = 0, sign = 1;
    size_t n = strlen(s), at;
    *why = "expected an ISO 8601 time with its UTC offset, e.g. 2026-07-06T14:10+10:00 or "
           "2026-07-06T04:10:00Z";
    if (n < 16 || !digits(s, 4, &y) || s[4] != '-' || !digits(s + 5, 2, &mo) || s[7] != '-'
        || !digits(s + 8, 2, &d) || (s[10] != 'T' && s[10] != ' ') || !digits(s + 11, 2, &h)
        || s[13] != ':' || !digits(s + 14, 2, &mi))
        return -1;
    at = 16;
    if (at < n && s[at] == ':') {
        if (at + 3 > n || !digits(s + at + 1, 2, &se))
            return -1;
        at += 3;
    }
    if (at < n && s[at] == 'Z' && at + 1 == n) {
        /* UTC */
    } else if ((s[at] == '+' || s[at] == '-') && at + 6 == n && digits(s + at + 1, 2, &oh)
               && s[at + 3] == ':' && digits(s + at + 4, 2, &om)) {
        sign = s[at] == '-' ? -1 : 1;
    } else {
        *why = at == n ? "the time has no UTC offset: add Z or +hh:mm / -hh:mm (e.g. +10:00), "
                         "so that times across a daylight-saving change stay in order"
                       : "expected the UTC offset as Z or +hh:mm / -hh:mm after the time "
                         "(e.g. 2026-07-06T14:10+10:00)";
        return -1;
    }
    if (y < 1900 || y > 2200 || mo < 1 || mo > 12 || d < 1 || d > month_days(y, mo) || h > 23
        || mi > 59 || se > 59 || oh > 14 || om > 59) {
        *why = "the date or time is out of range (month 1-12, a day the month has, hour 0-23, "
               "minute and second 0-59, offset at most 14:00)";
        return -1;
    }
    *offset_s = sign * (oh * 3600 + om * 60);
    *t = (kl_time)days_from_civil(y, mo, d) * 86400 + h * 3600 + mi * 60 + se - *offset_s;
    return 0;
}

/* The civil date of day count `days` since 1970-01-01. */
static void civil_from_days(long days, int *y, int *m, int *d)
{
    int yy = 1970;
    while (days < 0)
        days += leap(--yy) ? 366 : 365;
    while (days >= (leap(yy) ? 366 : 365))
        days -= leap(yy++) ? 366 : 365;
    int mm = 1;
    while (days >= month_days(yy, mm))
        days -= month_days(yy, mm++);
    *y = yy;
    *m = mm;
    *d = (int)days + 1;
}

void kl_time_local(kl_time t, int offset_s, kl_time_parts *p)
{
    kl_time l = t + offset_s;
    long days = (long)(l >= 0 ? l / 86400 : -((-l + 86399) / 86400));
    long sec = (long)(l - (kl_time)days * 86400);
    civil_from_days(days, &p->year, &p->month, &p->day);
    p->hour = (int)(sec / 3600);
    p->minute = (int)(sec / 60 % 60);
    p->second = (int)(sec % 60);
    p->weekday = (int)(((days % 7) + 7 + 3) % 7); /* 1970-01-01 was a Thursday; 0 = Monday */
}

void kl_time_format(kl_time t, int offset_s, char buf[32])
{
    kl_time_parts p;
    kl_time_local(t, offset_s, &p);
    int a = offset_s < 0 ? -offset_s : offset_s;
    if (p.second)
        snprintf(buf, 32, "%04d-%02d-%02dT%02d:%02d:%02d%c%02d:%02d", p.year, p.month, p.day, p.hour,
                 p.minute, p.second, offset_s < 0 ? '-' : '+', a / 3600 % 100, a / 60 % 60);
    else
        snprintf(buf, 32, "%04d-%02d-%02dT%02d:%02d%c%02d:%02d", p.year, p.month, p.day, p.hour,
                 p.minute, offset_s < 0 ? '-' : '+', a / 3600 % 100, a / 60 % 60);
}
