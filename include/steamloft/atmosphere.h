/* atmosphere: a vertical profile of the background atmosphere on geometric
 * altitude, with monotone (Steffen) spline interpolation (pressure in log
 * space), the WMO lapse-rate tropopause, cold point, stratopause and the
 * background stratospheric water.  Built-in profiles: the U.S. Standard
 * Atmosphere 1976 (dry, and a humid variant) and five climate-zone profiles,
 * all from 0 to 1000 km; user profiles from the text
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
    double n2_per_s2;           /* squared buoyancy frequency of dry air,
                                   N^2 = (g/T)(dT/dz + g/cp), s-2 */
    double ice_saturation_mole_fraction; /* e_ice(T)/p, mol mol-1 */
    double gravity_m_s2;        /* g at this altitude (inverse square) */
} sl_atmos_state;

/* Opaque interpolation tables (Steffen splines, see atmosphere.c). */
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
    double *molar_mass_kg_kmol; /* mean molar mass of the dry air: M0 = 28.9644 below
                                   80 km, the U.S. Standard Atmosphere's composition
                                   above (diffusive separation, O2 dissociation) */
    sl_atmosphere_splines *sp;
    /* Derived markers (computed at init). */
    double tropopause_altitude_m;   /* WMO lapse-rate definition */
    double tropopause_temperature_K;
    double tropopause_pressure_Pa;
    double cold_point_altitude_m;   /* temperature minimum at or above 500 hPa and below 30 km */
    double cold_point_temperature_K;
    double stratopause_altitude_m;  /* temperature maximum between tropopause and 70 km */
    double stratopause_temperature_K;
    double strat_water_column_kg_m2;/* background H2O vapour mass per area between the
                                       tropopause and the stratopause, kg m-2 */
    double strat_water_burden_kg;   /* the column times the Earth's area (SL_EARTH_AREA_M2):
                                       the global burden if the whole globe had this profile */
    double join_altitude_m;         /* a user column that ended below the built-in top was
                                       joined here onto a climate-zone profile (see
                                       sl_atmosphere_init); NaN when not joined */
    char joined_onto[32];           /* the climate-zone profile it was joined onto, or "" */
    /* Markers that a profile does not have (no level satisfies the WMO rule,
     * the profile ends below the stratopause, ...) are NaN; so are the water
     * column and burden when either boundary is missing. */
} sl_atmosphere;

/* Names of the built-in profiles, NULL-terminated (at most
 * SL_ATMOSPHERE_MAX_BUILTINS). */
#define SL_ATMOSPHERE_MAX_BUILTINS 8
extern const char *const sl_atmosphere_builtin_names[];

/* Build profile NAME_OR_PATH: a built-in name, else a text or CF netCDF file.
 * Fails with SL_EDATA (bad content, naming file and line or variable),
 * SL_ENOINPUT (cannot open) or SL_ENOMEM.  ATM's previous contents are
 * ignored (free an initialised profile first); on failure ATM is left zeroed
 * with nothing to free, on success release it with sl_atmosphere_free.
 * A file profile whose lowest level lies between 0 and 2000 m (a reanalysis
 * column whose 1000 hPa level is at 100 m, say) is extended down to 0 m
 * isothermally and hydrostatically; the source line says so.  A file profile
 * that ends below 1000 km (a column ending at 1 hPa, ~48 km) is joined at its
 * top onto the best-matching climate-zone profile (temperature offset fading
 * over 10 km, pressure hydrostatic; atmosphere.c): join_altitude_m,
 * joined_onto and the source line record it. */
int sl_atmosphere_init(sl_atmosphere *atm, const char *name_or_path, sl_err *e);

/* What the built-in profiles have in common: the standard's diffusion
 * integration above 86 km (its composition, and for us1976 its temperature
 * and pressure) on the built-in level grid, the same above 80 km for every
 * built-in profile.  sl_atmosphere_init_cached computes it on the first
 * build that needs it and takes it from the cache on the next ones, with
 * the same values to the bit; several built-in profiles built in one run
 * (the site's and the box model's backgrounds) then integrate once.  Zero
 * it before the first use; it is written by the builds, so one thread at a
 * time; release with sl_atmosphere_cache_free. */
typedef struct sl_atmosphere_cache {
    size_t n;                  /* altitudes held; 0: empty */
    double *z, *t, *p, *rho, *m; /* one block */
} sl_atmosphere_cache;

/* sl_atmosphere_init through CACHE (NULL: none, = sl_atmosphere_init). */
int sl_atmosphere_init_cached(sl_atmosphere *atm, const char *name_or_path, sl_atmosphere_cache *cache, sl_err *e);

/* Release the cache's tables; safe on a zeroed one. */
void sl_atmosphere_cache_free(sl_atmosphere_cache *c);

/* Build a profile named NAME from N >= 3 levels (copied; strictly increasing
 * finite altitudes, temperatures 50-2000 K).  PRESSURE_PA_OR_NULL NULL: the
 * pressure is integrated hydrostatically (moist air, inverse-square gravity)
 * from 101325 Pa at the lowest level.  H2O_MOLE_FRACTION_OR_NULL NULL: dry air.
 * Fails with SL_EDATA naming the level, or SL_ENOMEM; ATM as for
 * sl_atmosphere_init. */
int sl_atmosphere_init_levels(sl_atmosphere *atm, const char *name, size_t n, const double *altitude_m,
                              const double *temperature_K, const double *pressure_Pa_or_NULL,
                              const double *h2o_mole_fraction_or_NULL, sl_err *e);

/* State at ALTITUDE_M.  SL_EDATA when outside [altitude_m[0], altitude_m[n-1]].
 * Allocates nothing and does not modify ATM: safe from many threads at once.
 * The full state, ice saturation included; a caller in a hot loop uses one
 * of the light queries below. */
int sl_atmosphere_at(const sl_atmosphere *atm, double altitude_m, sl_atmos_state *out, sl_err *e);

/* Light queries for hot loops (entry, plume right-hand sides).  They give
 * the same numbers as sl_atmosphere_at, bit for bit, and differ only in what
 * they compute and in where the search for the level interval starts.
 *
 * A cursor is the caller's own search position: zero it once (or after the
 * profile changes), keep it in the caller's workspace (one per thread), pass
 * it to every query; a query near the previous one then finds its interval
 * in a comparison or two instead of a binary search.  NULL: a binary search
 * every call.  The profile stays const: many threads can share it, each with
 * its own cursor. */
typedef struct sl_atmos_cursor {
    size_t interval; /* level interval of the last query */
} sl_atmos_cursor;

/* Moist-air density only (what the entry's drag needs). */
int sl_atmosphere_density(const sl_atmosphere *atm, double altitude_m, sl_atmos_cursor *cur,
                          double *density_kg_m3, sl_err *e);

/* Every field of sl_atmos_state except ice_saturation_mole_fraction, which is
 * set to NaN (it costs an exponential; sl_atmosphere_at computes it). */
int sl_atmosphere_state(const sl_atmosphere *atm, double altitude_m, sl_atmos_cursor *cur, sl_atmos_state *out,
                        sl_err *e);

/* The air only: temperature, pressure, water mole fraction and density (the
 * same values as sl_atmosphere_state), altitude set; N^2, gravity and ice
 * saturation are NaN.  What the plume's right-hand side reads. */
int sl_atmosphere_air(const sl_atmosphere *atm, double altitude_m, sl_atmos_cursor *cur, sl_atmos_state *out,
                      sl_err *e);

/* Air-mass moments of the layer [Z0, Z1] (Z0 <= Z1): *M0 the integral of
 * the moist-air density (kg m-2), *M1 that of z times it (kg m-1).  Whole
 * cells of at most 500 m inside one level interval from tables, the parts
 * of the end cells by 4-point Gauss-Legendre on the smooth interpolated
 * density (measured within 3e-11 of fine Simpson sums per 1 km band;
 * tests/test_atmosphere.c holds it to 1e-10 of GSL's adaptive quadrature).
 * Outside the profile the density of its end level is held constant.  So
 * the mass of a layer weighted by any linear function of z costs one call
 * (the injection's umbrella placement).  SL_EINTERNAL for a profile not
 * initialised or bad limits. */
int sl_atmosphere_layer_mass(const sl_atmosphere *atm, double z0, double z1, sl_atmos_cursor *cur, double *m0,
                             double *m1, sl_err *e);

/* Geometric altitude (m) where the profile's (interpolated) pressure equals
 * PRESSURE_PA: the inverse of the ln p spline, which is monotone (Steffen),
 * to 1e-9 m.  SL_EDATA when the pressure is outside the profile's range. */
int sl_atmosphere_altitude_of_pressure(const sl_atmosphere *atm, double pressure_Pa, double *altitude_m, sl_err *e);

/* Gravity at geometric altitude Z above mean sea level, inverse-square law
 * with the USSA76 constants g0 and r0, m s-2. */
double sl_atmosphere_gravity_m_s2(double altitude_m);

/* The U.S. Standard Atmosphere 1976 evaluated directly from its defining
 * constants at geometric ALTITUDE_M in [0, 1000 km]: kinetic temperature,
 * pressure and (dry-air) density.  Above 86 km the standard's temperature
 * segments and its species diffusion equations (integrated from 86 km on
 * each call: about a millisecond; the built-in profile is the fast way).
 * SL_EDATA outside the range.  Any output pointer may be NULL. */
int sl_atmosphere_us1976(double altitude_m, double *temperature_K, double *pressure_Pa,
                         double *density_kg_m3, sl_err *e);

/* Write ATM as a text profile (the format of atmospheres/README.md; readable
 * by sl_atmosphere_init).  CSV != 0: comma-separated with one header line and
 * no comment lines.  SL_EIO on a write error. */
int sl_atmosphere_write_text(const sl_atmosphere *atm, int csv, void *stdio_file, sl_err *e);

/* Release everything; safe on a zeroed or half-built struct. */
void sl_atmosphere_free(sl_atmosphere *atm);

#endif
