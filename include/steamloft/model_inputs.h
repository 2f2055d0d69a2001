/* model_inputs: files a chemistry-climate model or an emulator takes in
 * directly (`steamloft run --injection-table/--emission/--forcing-series`).
 *
 *   injection table (CSV, or JSON when the name ends in .json): one row per
 *     layer of the model-input profile (emission.h) and species with mass > 0:
 *     event time, latitude, longitude, layer bottom and top in m and hPa (from
 *     the atmosphere of the run), species, mass, pulse length, footprint
 *     radius; '#' header lines with the caution, the version and the scenario
 *     digest.  Its masses sum to the water above the tropopause.
 *   emission file (netCDF-4): the same water spread over a lat x lon grid by
 *     the footprint and over the pulse; CF flavour in kg m-3 s-1 with CF
 *     coordinates and bounds (one time record whose bounds are the pulse), or
 *     the CESM elevated-emission flavour in molecules/cm3/s with integer
 *     date/datesec, altitude and altitude_int in km, and four records
 *     zero / on / on / zero (t0, t0 + 1 s, t0 + D, t0 + D + 1 s) whose
 *     linear-in-time integral is exactly the rate times D.
 *   zonal field (netCDF-4): the box model's excess on (time, altitude,
 *     latitude region, one longitude cell), see sl_model_inputs_zonal_write.
 *   forcing series (CSV): annual means of the box model's forcing indicator
 *     with each year's bounds.
 * Every file is staged and renamed through outfile.h. */
#ifndef STEAMLOFT_MODEL_INPUTS_H
#define STEAMLOFT_MODEL_INPUTS_H

#include "steamloft/atmosphere.h"
#include "steamloft/emission.h"
#include "steamloft/err.h"
#include "steamloft/injection.h"
#include "steamloft/strat.h"

typedef struct sl_model_inputs {
    const sl_injection *inj;
    const sl_atmosphere *atm;      /* for the pressures of the layer edges */
    const sl_strat_result *strat;  /* NULL: no forcing series */
    double latitude_deg, longitude_deg;
    double event_time_s;           /* seconds since 1970-01-01 UTC */
    int date_given;                /* 0: the time is nominal (no [site] date) */
    int month;                     /* the month the run used, 1-12; 0 none (annual mean) */
    double duration_s, radius_m;   /* pulse and footprint */
    const char *radius_origin;     /* "scenario" or how it was derived */
    char digest[17];               /* scenario digest, 16 hex digits */
    const char *title;
} sl_model_inputs;

/* FNV-1a 64-bit hash of TEXT as 16 hex digits into OUT (the scenario
 * digest: hashed over the provenance "section.key=value" lines). */
void sl_model_inputs_digest(const char *text, char out[17]);

int sl_model_inputs_table_write(const sl_model_inputs *mi, const char *path, int force, sl_err *e);

/* CESM: 0 = CF flavour, 1 = CESM flavour.  MODEL_TOP_M: NaN for none; the
 * water above it goes into *ABOVE_TOP_KG (and an attribute), not the file. */
int sl_model_inputs_emission_write(const sl_model_inputs *mi, const char *path,
                                   const sl_emission_grid *g, int cesm, double model_top_m,
                                   int force, double *above_top_kg, sl_err *e);

/* The box model's excess as a zonal-mean field on (time, altitude, lat, lon)
 * with lon one cell of bounds 0-360 (the layout CDO's zonmean writes, so CDO
 * sees a lon-lat grid with cell bounds): mole-fraction anomaly and mass per
 * area (shuffled and deflated), region and box bounds, _FillValue where a
 * region has no box in a layer. */
int sl_model_inputs_zonal_write(const sl_model_inputs *mi, const sl_strat_model *m,
                                const char *path, int force, sl_err *e);

int sl_model_inputs_forcing_write(const sl_model_inputs *mi, const char *path, int force, sl_err *e);

#endif
