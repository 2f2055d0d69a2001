/* injection: lofted water by altitude band (vapour and ice), the result of the
 * plume stage or read from a file, and the input of the stratospheric box
 * model.  Bands are contiguous, bottom to top; masses are totals per band (kg).
 * Owner: the injection module (src/injection.c).
 *
 * File formats read by sl_injection_read (the format is told by the content:
 * netCDF files by their magic number, everything else is read as CSV):
 *
 * CSV: '#' starts a comment line; comment lines of the form "# key = value"
 * with KEY one word of letters, digits and '_' set metadata:
 * tropopause_altitude_m|_km, latitude_deg, time_s|_days, cloud_area_m2 (such
 * a word that is not one of these is refused as a likely typo; any other
 * comment, an '=' in prose included, is ignored).  The text rules of
 * include/steamloft/infile.h apply (16 MiB, BOM and CRLF accepted, decimal
 * numbers only, 4096 characters of content per line).  The first other line is a header naming the columns, each
 * with its unit suffix: bottom_m|bottom_km, top_m|top_km, vapor_kg|vapor_Tg
 * (mass_kg|mass_Tg are read as vapour) and optionally ice_kg|ice_Tg, in any
 * order.  Then one row per band, bottom to top, contiguous (each bottom equal
 * to the previous top), altitudes 0 to 1000 km, masses >= 0.  The metadata key
 * event_month (0-12) sets the month.
 *
 * Injection table (the CSV of `run --injection-table`, told by its header
 * event_time_utc,latitude_deg,longitude_deg,bottom_m,top_m,bottom_hPa,top_hPa,
 * species,mass_kg,duration_s,radius_m): one row per band and species
 * (water_vapour, ice), bands bottom to top, the rows of one band adjacent;
 * species are summed per band into vapour and ice, gaps become empty bands.
 * Event time, latitude and longitude come from the rows and must be the same
 * on every row; the month follows from the time unless "# event_month = M"
 * says it (a run without a [site] date writes that line; its time is nominal
 * and is then not taken).  The metadata lines above apply as well.  The
 * pressure, duration and radius columns are checked (decimal numbers in
 * range) but not used: the box model takes the cloud's area from
 * cloud_area_m2, as for the other CSV layout.
 *
 * CF netCDF: a coordinate variable altitude(altitude) (units "m" or "km",
 * increasing) with a "bounds" attribute naming altitude_bnds(altitude, 2);
 * vapor_mass(altitude) with units "kg" or "Tg" (required) and ice_mass(altitude)
 * (optional); optional scalar variables tropopause_altitude (m or km),
 * latitude (degrees_north), cloud_area (m2) and time (s or days). */
#ifndef STEAMLOFT_INJECTION_H
#define STEAMLOFT_INJECTION_H

#include <stddef.h>

#include "steamloft/atmosphere.h"
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
    /* Where and when (carried through files so that `decay` on a run file
     * starts where the run started): */
    double longitude_deg;      /* event longitude, degrees east; NaN unknown */
    double event_time_s;       /* event time, s since 1970-01-01 UTC; NaN unknown (nominal) */
    int month;                 /* event month 1-12; 0 unknown (annual-mean conditions) */
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
/* Vapour + ice below ALTITUDE_M, the same split: the two add up to the total to rounding (a NaN
 * altitude gives 0 for both; the plume stage then counts every band as below). */
double sl_injection_mass_below_kg(const sl_injection *inj, double altitude_m);
/* Set every band's vapour and ice to zero, keeping the bands (for reuse of one
 * profile across ensemble members without allocation). */
void sl_injection_clear(sl_injection *inj);
/* Read a profile from a CSV (band bottom, top, mass) or CF netCDF file (see
 * the formats above).  INJ must be zeroed or freed.  Errors name the file and
 * line (or netCDF variable), the column or key, and the valid range:
 * SL_ENOINPUT (cannot open), SL_EDATA (bad content), SL_ENOMEM. */
int sl_injection_read(sl_injection *inj, const char *path, sl_err *e);
void sl_injection_free(sl_injection *inj);

/* Water vapour alone above ALTITUDE_M (bands split proportionally). */
double sl_injection_vapor_above_kg(const sl_injection *inj, double altitude_m);

/* A young cloud as the plume leaves it: a layer of cloud air carrying water. */
typedef struct sl_young_cloud {
    double bottom_m, top_m;    /* the layer (bottom <= top; equal for a thin sheet) */
    double air_kg;             /* dry air in the cloud */
    double water_kg;           /* all its water: vapour, liquid and ice */
    double peak_m;             /* the umbrella's mode: its volume spread by a triangular profile from
                                * bottom to top with its mode here, its mass that volume times the
                                * ambient density; outside [bottom, top] or NaN: uniform */
} sl_young_cloud;

/* Weight of the umbrella profile of cloud C between Z0 and Z1: the integral of
 * the triangular profile times the ambient density of ATM (kg/m3; the share
 * of the cloud's mass there is this over the weight of the whole layer).
 * Allocates nothing; errors of the atmosphere query are passed on. */
int sl_injection_umbrella_weight(const sl_atmosphere *atm, const sl_young_cloud *c, double z0, double z1, double *w,
                                 sl_err *e);

/* What the freeze-out did with a cloud's water (kg).  water_kg of the cloud =
 * vapour anomaly added + ice added + sedimented_kg + background_kg. */
typedef struct sl_freeze_out {
    double frozen_kg;          /* water above ice saturation at the cloud level: became ice */
    double sedimented_kg;      /* the share of that ice that fell out (removed) */
    double background_kg;      /* vapour the cloud air holds at the background mixing ratio */
    double vapor_kg, ice_kg;   /* what was added to the bands */
} sl_freeze_out;

/* Freeze-out in the young cloud, then add its water to INJ.  The cloud's air
 * and water are spread in altitude over its layer, uniformly or, with a peak
 * (the umbrella), by mass: the triangular profile peaked at peak_m times the
 * ambient density (sl_injection_umbrella_weight); in each band the
 * cloud takes the ambient temperature and pressure of ATM at the middle of the
 * overlap, keeps vapour up to ice saturation, and turns the rest into ice, of
 * which SEDIMENT_FRACTION (0 to 1) falls out.  The band gets the vapour in
 * excess of the background mixing ratio (the anomaly) and the remaining ice.
 * The layer must lie within the bands.  TALLY may be NULL. */
int sl_injection_add_cloud(sl_injection *inj, const sl_atmosphere *atm, const sl_young_cloud *cloud,
                           double sediment_fraction, sl_freeze_out *tally, sl_err *e);

/* What a band the young cloud covers whole needs from the profile, kept from
 * one cloud to the next: its air-mass moments (the umbrella weight) and the
 * ice-saturation and background mixing ratios at its middle (the
 * freeze-out).  They depend only on the profile and the band, so a caller
 * that places many clouds on one profile and one band grid (a chain running
 * ensemble members) computes each once; partial bands are computed every
 * time.  The numbers are the same bits as without it.  Opt-in: the values
 * are tied to the profile and the grid by pointer, so the owner must call
 * sl_cloud_levels_forget whenever its profile or band grid may have changed,
 * even at the same address. */
typedef struct sl_cloud_levels {
    const sl_atmosphere *atm;  /* the profile the kept values belong to (NULL: none yet) */
    const double *grid;        /* the band_bottom_m array of the injection they belong to */
    size_t n_bands, cap;
    unsigned char *have;       /* per band: bit 0 moments kept, bit 1 mixing ratios kept */
    double *m0, *m1;           /* air mass and its first moment over the band (sl_atmosphere_layer_mass) */
    double *r_ice, *r_bg;      /* ice-saturation and background mixing ratios at the band's middle */
} sl_cloud_levels;

/* Tie LV to ATM and the bands of INJ: kept values are dropped when either
 * differs from the last call.  Allocates only when the grid outgrows what LV
 * holds (SL_ENOMEM). */
int sl_cloud_levels_bind(sl_cloud_levels *lv, const sl_atmosphere *atm, const sl_injection *inj, sl_err *e);
/* Drop every kept value (the profile or the grid may change in place). */
void sl_cloud_levels_forget(sl_cloud_levels *lv);
void sl_cloud_levels_free(sl_cloud_levels *lv);

/* sl_injection_add_cloud with the whole bands' values taken from, and kept
 * in, LV when LV is bound to ATM and INJ (sl_cloud_levels_bind); LV NULL or
 * bound to others: computed as sl_injection_add_cloud does. */
int sl_injection_add_cloud_kept(sl_injection *inj, const sl_atmosphere *atm, const sl_young_cloud *cloud,
                                double sediment_fraction, sl_freeze_out *tally, sl_cloud_levels *lv, sl_err *e);

#endif
