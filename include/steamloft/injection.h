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
 * to the previous top), altitudes 0 to 1000 km, masses >= 0.
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

#endif
