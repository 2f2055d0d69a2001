/* injection: lofted water by altitude band (vapour and ice), the result of the
 * plume stage or read from a file, and the input of the stratospheric box
 * model.  Bands are contiguous, bottom to top; masses are totals per band (kg).
 * Owner: the injection module (src/injection.c). */
#ifndef STEAMLOFT_INJECTION_H
#define STEAMLOFT_INJECTION_H

#include <stddef.h>

#include "steamloft/err.h"

typedef struct sl_injection {
    size_t n_bands;
    double *band_bottom_m;     /* n_bands, strictly increasing, contiguous */
    double *band_top_m;        /* band_top_m[i] == band_bottom_m[i+1] */
    double *vapor_kg;          /* water vapour lofted into each band */
    double *ice_kg;            /* ice (and liquid) still in each band */
    double tropopause_altitude_m; /* NaN when unknown (file input without it) */
    double latitude_deg;       /* where the cloud sits (event latitude) */
    double time_s;             /* time after the event the profile refers to */
    double cloud_area_m2;      /* horizontal area of the young cloud (0 if unknown) */
} sl_injection;

/* Allocate bands from N_EDGES edges (strictly increasing); masses zero. */
int sl_injection_init_bands(sl_injection *inj, const double *edges_m, size_t n_edges, sl_err *e);
/* Uniform bands from BOTTOM_M to TOP_M with width STEP_M. */
int sl_injection_init_uniform(sl_injection *inj, double bottom_m, double top_m, double step_m, sl_err *e);
/* Spread MASS_KG of vapour uniformly in altitude over [BOTTOM_M, TOP_M] into the bands. */
int sl_injection_add_layer(sl_injection *inj, double vapor_kg, double ice_kg, double bottom_m, double top_m, sl_err *e);
/* Totals. */
double sl_injection_total_vapor_kg(const sl_injection *inj);
double sl_injection_total_ice_kg(const sl_injection *inj);
/* Vapour + ice above ALTITUDE_M (bands split proportionally). */
double sl_injection_mass_above_kg(const sl_injection *inj, double altitude_m);
/* Read a profile from a CSV (band bottom, top, mass) or CF netCDF file. */
int sl_injection_read(sl_injection *inj, const char *path, sl_err *e);
void sl_injection_free(sl_injection *inj);

#endif
