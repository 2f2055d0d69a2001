/* atmosphere: a vertical profile of the background atmosphere on geometric
 * altitude, with monotone (Steffen) spline interpolation (pressure in log
 * space), the WMO lapse-rate tropopause, cold point, stratopause and the
 * background stratospheric water.  Built-in profiles: the U.S. Standard
 * Atmosphere 1976 and five climate-zone profiles; user profiles from the text
 * format of atmospheres/README.md or from CF netCDF.
 *
 * A profile is immutable after sl_atmosphere_init*(); queries take a const
 * pointer and allocate nothing, so one profile can be shared by threads. */
#ifndef STEAMLOFT_ATMOSPHERE_H
#define STEAMLOFT_ATMOSPHERE_H

#include <stddef.h>

#include "steamloft/err.h"

/* The state at one altitude. */
typedef struct sl_atmos_state {
    double altitude_m;          /* geometric altitude above mean sea level */
    double temperature_K;
    double pressure_Pa;
    double density_kg_m3;       /* moist-air density */
    double h2o_mole_fraction;   /* background water vapour, mol mol-1 */
    double n2_per_s2;           /* squared buoyancy frequency N^2, s-2 */
    double ice_saturation_mole_fraction; /* e_ice(T)/p, mol mol-1 */
    double gravity_m_s2;        /* g at this altitude (inverse square) */
} sl_atmos_state;

/* Opaque interpolation tables (GSL splines). */
typedef struct sl_atmosphere_splines sl_atmosphere_splines;

typedef struct sl_atmosphere {
    char name[64];              /* "us1976", "tropical", or the file name */
    char source[256];           /* provenance line: standard, file path, ... */
    size_t n;                   /* number of levels */
    double *altitude_m;         /* n levels, strictly increasing */
    double *temperature_K;
    double *pressure_Pa;
    double *density_kg_m3;
    double *h2o_mole_fraction;
    double *n2_per_s2;
    sl_atmosphere_splines *sp;
    /* Derived markers (computed at init). */
    double tropopause_altitude_m;   /* WMO lapse-rate definition */
    double tropopause_temperature_K;
    double tropopause_pressure_Pa;
    double cold_point_altitude_m;   /* temperature minimum below 30 km */
    double cold_point_temperature_K;
    double stratopause_altitude_m;  /* temperature maximum between tropopause and 70 km */
    double strat_water_column_kg_m2;/* background H2O from tropopause to stratopause... see atmosphere.c */
    double strat_water_burden_kg;   /* the column times the Earth's area */
} sl_atmosphere;

/* Names of the built-in profiles, NULL-terminated. */
extern const char *const sl_atmosphere_builtin_names[];

/* Build profile NAME_OR_PATH: a built-in name, else a text or CF netCDF file.
 * Fails with SL_EDATA (bad content, naming file and line or variable),
 * SL_ENOINPUT (cannot open) or SL_ENOMEM. */
int sl_atmosphere_init(sl_atmosphere *atm, const char *name_or_path, sl_err *e);

/* State at ALTITUDE_M.  SL_EDATA when outside [altitude_m[0], altitude_m[n-1]]. */
int sl_atmosphere_at(const sl_atmosphere *atm, double altitude_m, sl_atmos_state *out, sl_err *e);

/* Release everything; safe on a zeroed or half-built struct. */
void sl_atmosphere_free(sl_atmosphere *atm);

#endif
