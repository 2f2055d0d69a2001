/* cuberoot: the cube root as an inline function, for the plume's hot loop
 * (the thermal's radius from its volume at every right-hand side), where the
 * C library's cbrt costs two more calls (frexp, ldexp) per root.
 *
 * Method: x = m 2^(3q + r), m in [1, 2), r in {0, 1, 2}; the cube root of m
 * from its degree-5 Chebyshev interpolant on [1, 2) (our coefficients:
 * nodes cos((2k + 1) pi / 12) in s = 2m - 3; relative error at most 1.8e-6),
 * times 2^(r/3); one Halley step on u = m 2^r, y - y (y^3 - u)/(2 y^3 + u),
 * whose error is (2/3) e^3 for a start e off, below 4e-18; then 2^q by the
 * exponent bits.  In the correction form, with y^3 - u exact (Sterbenz), the
 * rounding of y^3 costs at most about half an ulp (just above u = 4, where
 * the largest errors are).  Measured: within
 * 0.97 ulp of the exact root on 2e7 random normal numbers (glibc's cbrt: 3.4
 * ulp on the same numbers), about twice as fast.  tests/test_units.c checks
 * it against exact roots (Python's decimal module) and against cbrtl.  Zero,
 * subnormal numbers, infinities and NaN go to the C library. */
#ifndef STEAMLOFT_CUBEROOT_H
#define STEAMLOFT_CUBEROOT_H

#include <math.h>
#include <stdint.h>
#include <string.h>

static inline double sl_cbrt(double x)
{
    uint64_t b;
    memcpy(&b, &x, sizeof b);
    const unsigned be = (unsigned)(b >> 52) & 0x7ffu; /* biased exponent */
    if (be == 0u || be == 0x7ffu)
        return cbrt(x);
    const int E = (int)be - 1023;      /* -1022 ... 1023 */
    const int q = (E + 1026) / 3 - 342; /* floor(E / 3): the dividend is positive */
    const int r = E - 3 * q;
    static const double cbrt_two_pow[3] = {1.0, 1.2599210498948731648, 1.5874010519681994748}; /* 2^(r/3) */
    const uint64_t mb = (b & 0x000fffffffffffffu) | 0x3ff0000000000000u;
    double m;
    memcpy(&m, &mb, sizeof m);
    const double s = 2.0 * m - 3.0;
    double y = (1.1447129481629714 +
                s * (0.127190822812266 +
                     s * (-0.014109073670682443 +
                          s * (0.0026107903428057204 + s * (-0.000641948171379821 + s * 0.00015852979140706935))))) *
               cbrt_two_pow[r];
    const double u = m * (double)(1 << r); /* exact */
    const double t = y * y * y;
    y -= y * (t - u) / (t + t + u);
    uint64_t yb;
    memcpy(&yb, &y, sizeof yb);
    yb += (uint64_t)(int64_t)q << 52; /* y in [1, 2]: the result is normal */
    yb |= b & 0x8000000000000000u;   /* the sign */
    memcpy(&y, &yb, sizeof y);
    return y;
}

#endif
