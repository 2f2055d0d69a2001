/* date: ISO 8601 UTC dates at the input and output boundary.
 *
 * Inside the program an event time is seconds since 1970-01-01 00:00:00 UTC
 * (a double; proleptic Gregorian calendar, no leap seconds, as the CF
 * conventions' "standard" calendar after 1582 and POSIX time do).
 *
 * Accepted forms: YYYY-MM-DD, YYYY-MM-DDThh:mm, YYYY-MM-DDThh:mm:ss, each
 * optionally ending in Z or +00:00 (UTC); a space may stand for the T.
 * Years 1-9999. */
#ifndef STEAMLOFT_DATE_H
#define STEAMLOFT_DATE_H

#include <stddef.h>

/* The valid forms, for messages. */
#define SL_DATE_FORMS "an ISO 8601 UTC date: YYYY-MM-DD or YYYY-MM-DDThh:mm[:ss][Z]"

/* Parse TEXT into *EPOCH_S.  Returns 0 on success, -1 when TEXT is not one
 * of the forms or names no real day or time (2023-02-29, 24:00). */
int sl_date_parse(const char *text, double *epoch_s);

/* Calendar fields of EPOCH_S (seconds are rounded down to whole seconds). */
typedef struct sl_date_fields {
    int year, month, day, hour, minute, second;
} sl_date_fields;
void sl_date_split(double epoch_s, sl_date_fields *out);

/* "YYYY-MM-DDThh:mm:ssZ" into BUF (at least 21 bytes). */
void sl_date_format(double epoch_s, char *buf, size_t n);

/* Seconds since the epoch of YEAR-MONTH-DAY 00:00:00 UTC. */
double sl_date_epoch_of_day(int year, int month, int day);

#endif
