/* minmax: fmax and fmin of the C library as inline functions, for hot loops
 * (gcc -O2 calls libm for fmax/fmin on x86-64).  The same result for every
 * pair of arguments: the one that is not NaN when the other is, the second
 * when they compare equal (so +0 and -0 come out as from glibc). */
#ifndef STEAMLOFT_MINMAX_H
#define STEAMLOFT_MINMAX_H

static inline double sl_max(double x, double y) { return x > y || y != y ? x : y; }
static inline double sl_min(double x, double y) { return x < y || y != y ? x : y; }

#endif
