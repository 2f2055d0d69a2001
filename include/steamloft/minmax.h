/* minmax: fmax and fmin of the C library as inline functions, for hot loops
 * (gcc -O2 calls libm for fmax/fmin on x86-64).  The same result as glibc's
 * for every pair of arguments (tests/test_units.c compares the bits with
 * real libm calls over zeros and NaNs of both signs, infinities and
 * numbers): the larger (or smaller); the second when they compare equal (so
 * fmax(+0, -0) is -0, as from glibc); the one that is not NaN when the other
 * is; the first when both are NaN. */
#ifndef STEAMLOFT_MINMAX_H
#define STEAMLOFT_MINMAX_H

static inline double sl_max(double x, double y) { return x > y || y != y ? x : y; }
static inline double sl_min(double x, double y) { return x < y || y != y ? x : y; }

#endif
