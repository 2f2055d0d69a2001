/* sort: exact, stable radix sorts of doubles for the ensemble statistics.
 *
 * The ensemble's percentiles, ranks and first-order shares sort each column
 * of up to millions of members; a comparison sort through a function pointer
 * (qsort) or a heap sort (gsl_sort) spends most of the statistics' time
 * there.  These sort by the IEEE 754 bit pattern made order-preserving
 * (negative numbers have all bits flipped, others the sign bit set; -0 is
 * taken as +0, so the two zeros are equal as they are to <), least
 * significant 11-bit digit first, skipping the digits all keys share.  The
 * order is the order of <, and stable: equal values keep their order
 * (tests/test_ensemble.c checks both against qsort).  NaNs sort after +inf
 * (a NaN with its sign bit set, before -inf); the callers pass finite values.
 *
 * Each call takes a scratch buffer of the array's size (the same memory
 * glibc's qsort takes for its merge sort); without memory it returns
 * SL_ENOMEM and leaves the array as it was. */
#ifndef STEAMLOFT_SORT_H
#define STEAMLOFT_SORT_H

#include "steamloft/err.h"

#include <stddef.h>
#include <stdint.h>

/* A value and the member it belongs to. */
typedef struct sl_sort_pair {
    double value;
    uint32_t member;
} sl_sort_pair;

/* X[0..N-1] in ascending order. */
int sl_sort_doubles(double *x, size_t n, sl_err *e);

/* P[0..N-1] by value, ascending; pairs of equal value keep their order. */
int sl_sort_pairs(sl_sort_pair *p, size_t n, sl_err *e);

#endif
