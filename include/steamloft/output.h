/* output: the read-only view of one run's results that every writer takes
 * (netCDF in output_nc, CSV in output_csv, gnuplot in plot).
 *
 * The view holds pointers into results owned elsewhere (the injection
 * profile, the atmosphere, the box-model time series) plus the scenario
 * parameters and provenance; writers never modify or free anything.  All
 * physical values are SI with the unit in the name; writers convert to the
 * output units (km, Tg, years, ppmv in text and plots; CF units in netCDF)
 * at the boundary only.
 *
 * Only inj is required.  atm, series, scalars and params may be NULL/0 and
 * are then left out of every output. */
#ifndef STEAMLOFT_OUTPUT_H
#define STEAMLOFT_OUTPUT_H

#include <stddef.h>
#include <stdio.h>

#include "steamloft/atmosphere.h"
#include "steamloft/err.h"
#include "steamloft/injection.h"
#include "steamloft/plume.h"

/* Box-model time series.  Arrays are row-major: excess_kg[(t*n_region+r)*n_layer+l].
 * Layers are contiguous and increasing; regions are contiguous latitude bands
 * from south to north.  Optional arrays may be NULL. */
typedef struct sl_output_series {
    size_t n_time, n_region, n_layer;
    const double *time_s;                  /* n_time, seconds after the event, increasing */
    const double *region_south_deg;        /* n_region, degrees north */
    const double *region_north_deg;        /* n_region */
    const double *layer_bottom_m;          /* n_layer */
    const double *layer_top_m;             /* n_layer */
    const double *excess_kg;               /* n_time*n_region*n_layer: excess water per box;
                                            * NaN where the region has no box in the layer
                                            * (below its tropopause): netCDF _FillValue, CSV empty */
    const double *mole_fraction_anomaly;   /* n_time*n_layer: global-mean excess, mol mol-1 (optional) */
    const double *global_excess_kg;        /* n_time: total excess in the stratosphere */
    const double *column_anomaly_kg_m2;    /* n_time: global-mean column excess (optional) */
    const double *local_column_anomaly_kg_m2; /* n_time: over the early local cloud (optional) */
    const double *percent_of_background;   /* n_time: global excess / background burden * 100 (optional) */
    const double *forcing_W_m2;            /* n_time: first-order forcing indicator (optional) */
    size_t n_sink;                         /* removal paths (transport, freeze-drying, photolysis) */
    const char *const *sink_name;          /* n_sink short names, [A-Za-z0-9_] */
    const double *sink_kg;                 /* n_sink*n_time: cumulative mass removed by each path */
    const double *region_tropopause_m;     /* n_region: where each region's lowest box starts (optional) */
    const double *box_bottom_m, *box_top_m; /* n_region*n_layer: each region's box in each layer,
                                            * NaN where it has none (optional, both or neither) */
} sl_output_series;

/* A named scalar result (burst altitude, e-folding time, ...), in SI. */
typedef struct sl_output_scalar {
    const char *name;          /* netCDF variable / CSV key: [A-Za-z][A-Za-z0-9_]* */
    const char *long_name;     /* one line for people */
    const char *units;         /* UDUNITS spelling of the SI unit: "m", "kg", "s", "J", "1" */
    const char *standard_name; /* a name from the CF table, or NULL (never invented) */
    double value;              /* finite, or NaN: undefined (JSON null, netCDF _FillValue) */
} sl_output_scalar;

/* One scenario parameter as it was used (after defaults), for provenance. */
typedef struct sl_output_param {
    const char *name;   /* "section.key" or "key", e.g. "impactor.diameter_m" */
    const char *text;   /* text value, or NULL for a number */
    double value;       /* the number (in the unit its key names) when text is NULL */
    const char *origin; /* "file", "default", "derived", "set", or NULL when not known */
} sl_output_param;

struct sl_param_value;
/* Fill OUT[0..N-1] from the scenario provenance records PV (scenario.h):
 * text values stay text, numbers are given in their key's unit.  OUT points
 * into PV, which must outlive it. */
void sl_output_params_from_provenance(const struct sl_param_value *pv, size_t n,
                                      sl_output_param *out);

/* The box model's results as a series view and scalars.  The model's boxes
 * (regions x layers, a region's lowest box starting at its own tropopause)
 * go onto one common layer axis: layer l spans [top of layer l-1, top of
 * layer l], the lowest layer starting at the lowest tropopause; a box a
 * region does not have holds 0 kg. */
enum { SL_OUTPUT_STRAT_MAX_SCALARS = 16 };
struct sl_strat_model;
struct sl_strat_result;
typedef struct sl_output_strat {
    sl_output_series series;                    /* the view; points into this struct and the result */
    sl_output_scalar scalars[SL_OUTPUT_STRAT_MAX_SCALARS];
    size_t n_scalars;
    double region_south_deg[3], region_north_deg[3], region_tropopause_m[3];
    double *layer_bottom_m, *layer_top_m;       /* n_layer */
    double *excess_kg;                          /* n_time * 3 * n_layer */
    double *sink_kg;                            /* n_sink * n_time */
    double *box_bottom_m, *box_top_m;           /* 3 * n_layer */
} sl_output_strat;

/* Build OS from model M and result R (which must outlive OS).  SL_ENOMEM. */
int sl_output_strat_init(sl_output_strat *os, const struct sl_strat_model *m,
                         const struct sl_strat_result *r, sl_err *e);
/* Release; safe on a zeroed struct. */
void sl_output_strat_free(sl_output_strat *os);

/* Which published methods the run used (for the references attribute). */
enum {
    SL_OUTPUT_USED_ATMOSPHERE = 1u << 0, /* U.S. Standard Atmosphere 1976 / profile, WMO tropopause */
    SL_OUTPUT_USED_WATER = 1u << 1,      /* Murphy & Koop 2005 */
    SL_OUTPUT_USED_ENTRY = 1u << 2,      /* Chyba et al. 1993, Hills & Goda 1993, Collins et al. 2005 */
    SL_OUTPUT_USED_SHOCK = 1u << 3,      /* Melosh 1989, Pierazzo et al. 1997 */
    SL_OUTPUT_USED_PLUME = 1u << 4,      /* Morton, Taylor & Turner 1956 */
    SL_OUTPUT_USED_STRAT = 1u << 5       /* Plumb 1996, Neu & Plumb 1999, Hurst et al. 1999 */
};

typedef struct sl_output_view {
    const sl_injection *inj;          /* required: the injection profile */
    const sl_atmosphere *atm;         /* background profile used, or NULL */
    const sl_output_series *series;   /* box-model time series, or NULL */
    const sl_output_scalar *scalars;  /* n_scalars scalar results */
    size_t n_scalars;
    const sl_output_param *params;    /* n_params scenario parameters */
    size_t n_params;
    const char *title;                /* one line: what was run (scenario name) */
    const char *scenario_path;        /* scenario file, or NULL */
    const char *event_time;           /* "YYYY-MM-DD hh:mm:ss" of the event; NULL: nominal 2000-01-01 00:00:00 */
    const char *regime_note;          /* validity warning to carry into every output, or NULL */
    unsigned methods;                 /* SL_OUTPUT_USED_* bits */
    int argc;                         /* command line for history (0: none) */
    char *const *argv;
    const sl_plume *plume;            /* the run's sources and their regimes, or NULL (decay) */
} sl_output_view;

/* The reference list for the methods in METHODS (SL_OUTPUT_USED_* bits),
 * "; "-separated, into BUF.  Returns BUF (truncated at LEN-1 if needed). */
const char *sl_output_references(unsigned methods, char *buf, size_t len);

/* Check a view before writing: inj present with bands; every value finite;
 * series shapes consistent.  SL_EINTERNAL naming the offending field (a
 * non-finite result is a bug upstream, never written). */
int sl_output_view_check(const sl_output_view *v, sl_err *e);

/* The event time used as the time origin: v->event_time or the nominal date. */
const char *sl_output_event_time(const sl_output_view *v);

/* A function that writes one text file of a view to an open stream. */
typedef void (*sl_output_writer_fn)(FILE *fp, const sl_output_view *v);

/* Open NAME in the output set SET (see outfile.h), let FN write it, close it.
 * Fails as sl_outset_fopen / sl_outset_fclose do. */
struct sl_outset;
int sl_output_write_file(struct sl_outset *set, const char *name, sl_output_writer_fn fn,
                         const sl_output_view *v, sl_err *e);

#endif
