/* dist: distributions written as a scenario value, in the unit of the key:
 *   uniform(a, b)          flat on [a, b], a < b
 *   normal(mean, sd)       Gaussian, sd > 0
 *   lognormal(median, s)   ln X ~ N(ln median, s^2), median > 0, s > 0
 *   choice(v1, v2, ...)    each listed value with equal probability (1-256 values)
 *   flux_angle()           impact angle above the horizontal for an isotropic
 *   flux_angle(lo, hi)     flux of bodies on a planet, dP = sin 2θ dθ on
 *                          [0°, 90°] (Gilbert 1893; Shoemaker 1962), so
 *                          P(θ <= x) = sin²x, median 45°, quartiles 30° and 60°;
 *                          with lo, hi the law truncated to [lo, hi].  Only on
 *                          angle keys (unit deg or rad); lo/hi in the key's unit.
 * Every distribution is sampled by its inverse CDF, x = F⁻¹(u), u in (0,1), so
 * Monte Carlo and Sobol share one mapping (see ensemble.h for the sampling).
 * Part of the input layer: scenario.c and ensemble.c both use it. */
#ifndef STEAMLOFT_DIST_H
#define STEAMLOFT_DIST_H

#include "steamloft/err.h"

#include <stddef.h>

typedef enum sl_dist_kind {
    SL_DIST_FIXED = 0,   /* one value (a) */
    SL_DIST_UNIFORM,     /* a = lower, b = upper */
    SL_DIST_NORMAL,      /* a = mean, b = sd */
    SL_DIST_LOGNORMAL,   /* a = median, b = sigma of ln X */
    SL_DIST_CHOICE,      /* values[0..n_values-1], equal weights */
    SL_DIST_FLUX_ANGLE   /* a, b = bounds in radians; unit_to_rad converts back */
} sl_dist_kind;

enum { SL_DIST_MAX_CHOICES = 256 };

typedef struct sl_dist {
    sl_dist_kind kind;
    double a, b;
    double unit_to_rad;  /* FLUX_ANGLE only: radians per unit of the key */
    size_t n_values;     /* CHOICE only */
    double *values;      /* CHOICE only; owned (sl_dist_free) */
} sl_dist;

/* 1 when TEXT (leading blanks allowed) starts with the name of a distribution
 * followed by '(' : uniform, normal, lognormal, choice, flux_angle.  A purely
 * syntactic test, for the scenario reader to decide whether to call
 * sl_dist_parse.  Never fails. */
int sl_dist_is_distribution(const char *text);

/* Parse TEXT as a distribution for scenario key KEY (a bare key such as
 * "angle_deg"; its unit suffix decides whether flux_angle is allowed).  WHERE
 * prefixes every message, e.g. "scen.ini:12: [impactor] angle_deg".  On
 * success d owns its memory (sl_dist_free).  Errors: SL_EDATA naming what is
 * wrong and what is valid. */
int sl_dist_parse(const char *text, const char *key, const char *where, sl_dist *d, sl_err *e);

/* Inverse CDF: the value (in the key's unit) at probability u, 0 < u < 1. */
double sl_dist_quantile(const sl_dist *d, double u);

/* The median (a typical value to stand in for the distribution). */
double sl_dist_median(const sl_dist *d);

/* Write a one-line description such as "normal(mean 20, sd 2)" into buf. */
void sl_dist_describe(const sl_dist *d, char *buf, size_t n);

/* Release d's memory; safe on a zeroed struct; leaves d zeroed. */
void sl_dist_free(sl_dist *d);

/* 1 if TEXT has the shape of a distribution, "name(" (any identifier), so
 * that a misspelled law can be named as such. */
int sl_dist_looks_like_law(const char *text);

/* The valid distribution forms, for messages. */
const char *sl_dist_forms(void);

#endif
