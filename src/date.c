/* date: ISO 8601 UTC dates (see include/steamloft/date.h).  The day count
 * uses the proleptic Gregorian calendar: 365 days a year, one more in years
 * divisible by 4 except centuries not divisible by 400 (the rule of the
 * calendar itself; the counting below is written from that rule). */
#include "steamloft/date.h"

#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

static int is_leap(int y)
{
    return (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
}

static int days_in_month(int y, int m)
{
    static const int len[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
    return m == 2 && is_leap(y) ? 29 : len[m - 1];
}

/* Days from 1970-01-01 to Y-M-D: whole years, then whole months. */
static long days_from_epoch(int y, int m, int d)
{
    long n = 0;
    if (y >= 1970)
        for (int k = 1970; k < y; k++)
            n += is_leap(k) ? 366 : 365;
    else
        for (int k = y; k < 1970; k++)
            n -= is_leap(k) ? 366 : 365;
    for (int k = 1; k < m; k++)
        n += days_in_month(y, k);
    return n + d - 1;
}

double sl_date_epoch_of_day(int year, int month, int day)
{
    return 86400.0 * (double)days_from_epoch(year, month, day);
}

/* N decimal digits at *P into *V; advances *P. */
static int digits(const char **p, int n, int *v)
{
    int x = 0;
    for (int i = 0; i < n; i++) {
        if (!isdigit((unsigned char)(*p)[i]))
            return -1;
        x = 10 * x + ((*p)[i] - '0');
    }
    *p += n;
    *v = x;
    return 0;
}

int sl_date_parse(const char *text, double *epoch_s)
{
    const char *p = text;
    int y, mo, d, h = 0, mi = 0, s = 0;
    if (digits(&p, 4, &y) || *p++ != '-' || digits(&p, 2, &mo) || *p++ != '-' || digits(&p, 2, &d))
        return -1;
    if (*p == 'T' || *p == ' ') {
        p++;
        if (digits(&p, 2, &h) || *p++ != ':' || digits(&p, 2, &mi))
            return -1;
        if (*p == ':') {
            p++;
            if (digits(&p, 2, &s))
                return -1;
        }
    }
    if (*p == 'Z')
        p++;
    else if (strcmp(p, "+00:00") == 0)
        p += 6;
    if (*p != '\0')
        return -1;
    if (y < 1 || mo < 1 || mo > 12 || d < 1 || d > days_in_month(y, mo) || h > 23 || mi > 59 ||
        s > 59)
        return -1;
    *epoch_s = sl_date_epoch_of_day(y, mo, d) + 3600.0 * h + 60.0 * mi + s;
    return 0;
}

void sl_date_split(double epoch_s, sl_date_fields *out)
{
    double days = floor(epoch_s / 86400.0);
    long sec = (long)floor(epoch_s - 86400.0 * days);
    long n = (long)days;
    int y = 1970;
    while (n < 0) {
        y--;
        n += is_leap(y) ? 366 : 365;
    }
    while (n >= (is_leap(y) ? 366 : 365)) {
        n -= is_leap(y) ? 366 : 365;
        y++;
    }
    int m = 1;
    while (n >= days_in_month(y, m)) {
        n -= days_in_month(y, m);
        m++;
    }
    out->year = y;
    out->month = m;
    out->day = (int)n + 1;
    out->hour = (int)(sec / 3600);
    out->minute = (int)(sec % 3600 / 60);
    out->second = (int)(sec % 60);
}

void sl_date_format(double epoch_s, char *buf, size_t n)
{
    sl_date_fields f;
    sl_date_split(epoch_s, &f);
    snprintf(buf, n, "%04d-%02d-%02dT%02d:%02d:%02dZ", f.year, f.month, f.day, f.hour, f.minute,
             f.second);
}
