/* emission: the injection as a chemistry-climate model takes it in.
 *
 * Three pieces, no physics of their own (every number comes from the stages):
 *   - the model-input profile: the injected water above the tropopause (the
 *     band that holds the tropopause is cut there, its mass shared in
 *     proportion to height, as sl_injection_mass_above_kg does), optionally
 *     cut at a model top, whose water is reported rather than dropped;
 *   - a horizontal grid: regular global (NLATxNLON) or the lat/lon of a
 *     model's own netCDF file, with cell edges and areas on the sphere of
 *     radius SL_EARTH_MEAN_RADIUS_M;
 *   - the footprint: a disc of a given radius on the sphere, each cell's
 *     share proportional to the part of its area inside the disc (partial
 *     cells included, found by sampling each cell on an equal-area sub-grid),
 *     normalised so that the shares sum to 1 and the mass is conserved to
 *     rounding.  A disc smaller than the sampling puts all the mass in the
 *     cell holding the centre.
 * An emission rate per volume is mass / (cell area x layer depth x pulse
 * length): cell areas are those of the sphere at the surface (the thin-shell
 * convention of global models, whose cell areas do not grow with height). */
#ifndef STEAMLOFT_EMISSION_H
#define STEAMLOFT_EMISSION_H

#include <stddef.h>

#include "steamloft/err.h"
#include "steamloft/injection.h"

/* Event time and footprint (filled by stage_params.c from the scenario). */
typedef struct sl_emission_params {
    double event_time_s; /* seconds since 1970-01-01 UTC; NaN: no [site] date */
    int month;           /* 1-12, 0 unknown */
    double duration_s;   /* pulse length */
    double radius_m;     /* footprint radius; NaN: from the cloud */
} sl_emission_params;

/* One layer of the model-input profile. */
typedef struct sl_emission_layer {
    double bottom_m, top_m;
    double vapor_kg, ice_kg;
} sl_emission_layer;

typedef struct sl_emission_profile {
    size_t n;
    sl_emission_layer *layer;   /* bottom to top, contiguous */
    double above_top_kg;        /* water above the model top (0 without one) */
    double total_kg;            /* vapour + ice in the layers */
} sl_emission_profile;

/* Build the profile from INJ: above its tropopause (all bands when it is
 * unknown), below MODEL_TOP_M (NaN or inf: no top), layers with no water left
 * out.  SL_ENOMEM. */
int sl_emission_profile_build(sl_emission_profile *p, const sl_injection *inj, double model_top_m,
                              sl_err *e);
void sl_emission_profile_free(sl_emission_profile *p);

typedef struct sl_emission_grid {
    size_t nlat, nlon;
    double *lat_deg, *lon_deg;             /* cell centres as given */
    double *lat_edge_deg, *lon_edge_deg;   /* (nlat, 2) and (nlon, 2): each cell's edges */
    double *area_m2;                       /* nlat x nlon (row-major, lat outer) */
    char description[300];                 /* "regular 180x360" or "template FILE" */
} sl_emission_grid;

/* SPEC is NLATxNLON (1-3600 each) or a netCDF file name (ending in .nc)
 * whose 1-D latitude and longitude coordinates (units degrees_north and
 * degrees_east, or named lat/latitude and lon/longitude; their bounds when
 * given, else midpoints between centres) give the grid.  Regular grids have
 * edges at -90 + 180 j / NLAT and 360 i / NLON.  SL_EUSAGE for a spec that
 * is neither, SL_ENOINPUT for a template that cannot be opened, SL_EDATA
 * for a template without usable latitude/longitude (naming file and
 * variable), SL_ENOMEM. */
int sl_emission_grid_init(sl_emission_grid *g, const char *spec, sl_err *e);
int sl_emission_grid_regular(sl_emission_grid *g, size_t nlat, size_t nlon, sl_err *e);
void sl_emission_grid_free(sl_emission_grid *g);

/* Shares W (nlat x nlon, summing to 1) of a disc of RADIUS_M around
 * LAT_DEG, LON_DEG.  *AREA_M2 receives the disc area the sampling found
 * (the sum of cell area x covered fraction), for checks.  SL_EDATA for a
 * radius that is not positive and finite. */
int sl_emission_footprint(const sl_emission_grid *g, double lat_deg, double lon_deg, double radius_m,
                          double *w, double *area_m2, sl_err *e);

/* Number of molecules per kilogram of water (Avogadro constant, CODATA 2018,
 * exact, over the molar mass of water). */
double sl_emission_molecules_per_kg(void);

#endif
