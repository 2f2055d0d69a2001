/* strat: the stratospheric box model.  Excess water (kg) in boxes = layers
 * above the tropopause x three latitude regions, moved by a leaky tropical
 * pipe (Plumb 1996, JGR 101, 3957; Neu & Plumb 1999, JGR 104, 19243):
 * upwelling in the tropics, detrainment and two-way mixing between the
 * tropics and each extratropical region, downwelling in the extratropics,
 * vertical eddy diffusion, and exit through the extratropical tropopause.
 * Sinks: return to the troposphere, freeze-drying at the cold tropical
 * tropopause, freeze-drying in the Antarctic winter vortex (seasonal),
 * photolysis in the mesosphere, and freeze-out of the young cloud above ice
 * saturation at t = 0.  The physics, the equations and the published basis of
 * every constant are in the header comment of src/strat.c.
 *
 * Layers (the injection profile's bands are aggregated into these): the
 * bottom layer of each region starts at that region's tropopause; the fixed
 * edges above are SL_STRAT_EDGES_KM (16 km ~ 100 hPa, then 20, 25, ... up to
 * 100 km, into the mesosphere).  A layer that lies wholly below a region's
 * tropopause is absent in that region (the tropical tropopause near 17 km has
 * no 'lowermost stratosphere' layer below 16 km).
 *
 * Use: build one sl_strat_model (background and propagators; shareable
 * read-only between threads), one sl_strat_result per thread (its arrays and
 * workspace are allocated once), then call sl_strat_run per injection: no
 * allocation inside sl_strat_run.
 *
 * Units: SI inside (kg, m, s, mole fraction); ppmv, Tg, years only at the
 * output boundary. */
#ifndef STEAMLOFT_STRAT_H
#define STEAMLOFT_STRAT_H

#include <stddef.h>

#include "steamloft/atmosphere.h"
#include "steamloft/err.h"
#include "steamloft/injection.h"

enum {
    SL_STRAT_SOUTH = 0,   /* southern extratropics, 90 S to the tropical edge */
    SL_STRAT_TROPICS = 1, /* tropics, between the tropical edges (20 S - 20 N by default) */
    SL_STRAT_NORTH = 2,   /* northern extratropics */
    SL_STRAT_N_REGIONS = 3
};

/* Rows of the linear response per output time (sl_strat_response). */
enum { SL_STRAT_RESPONSE_ROWS = 6 };

/* Fixed layer edges above the bottom layer, km (boundary unit, converted once). */
#define SL_STRAT_EDGES_KM {16.0, 20.0, 25.0, 30.0, 35.0, 40.0, 50.0, 60.0, 70.0, 85.0, 100.0}
enum { SL_STRAT_N_FIXED_EDGES = 11, SL_STRAT_MAX_LAYERS = SL_STRAT_N_FIXED_EDGES,
       SL_STRAT_MAX_BOXES = SL_STRAT_MAX_LAYERS * SL_STRAT_N_REGIONS };

/* The sinks, in the order of sl_strat_result.sink_kg columns. */
typedef enum sl_strat_sink {
    SL_STRAT_SINK_TROPOSPHERE = 0,   /* transport back into the troposphere */
    SL_STRAT_SINK_COLD_POINT,        /* freeze-drying at the cold tropical tropopause */
    SL_STRAT_SINK_POLAR_WINTER,      /* freeze-drying in the winter polar vortex */
    SL_STRAT_SINK_PHOTOLYSIS,        /* mesospheric photolysis */
    SL_STRAT_SINK_CLOUD_FREEZE,      /* young-cloud freeze-out above ice saturation (t = 0) */
    SL_STRAT_N_SINKS
} sl_strat_sink;

/* Names of the sinks for outputs ("troposphere", "cold_point", ...). */
extern const char *const sl_strat_sink_names[SL_STRAT_N_SINKS];

/* Parameters.  sl_strat_params_default fills the published/calibrated values;
 * every field may be overridden (scenario [strat] section, decay options). */
typedef struct sl_strat_params {
    /* Transport.  upflux: Seol & Yamazaki 1999; the three calibrated ones come
     * from sl_strat_calibrate (see src/strat.c and `steamloft decay --calibrate`). */
    double upflux_tropopause_kg_s;  /* tropical upward air mass flux across the tropopause */
    double deep_branch_fraction;    /* share of that flux rising on at constant speed (deep branch; calibrated);
                                       the rest turns poleward in the lowest tropical layer (shallow branch) */
    double inmixing_time_s;         /* time to mix extratropical air into the tropical pipe (calibrated) */
    double kzz_m2_s;                /* vertical eddy diffusivity below 30 km (calibrated) */
    double lms_residence_s;         /* residence of water in the lowermost stratosphere */
    double tropics_edge_deg;        /* edge of the tropical pipe */
    double edge_ramp_deg;           /* injections within +-ramp of the edge are split linearly */
    /* Sinks. */
    double cold_point_saturation_ratio; /* ice saturation ratio allowed at the cold point */
    double antarctic_vortex_fraction;   /* share of the southern extratropical air dried each winter */
    double arctic_vortex_fraction;      /* same for the north (default 0: Arctic rarely reaches the frost point) */
    double photolysis_lifetime_70km_s;  /* diurnal-mean H2O lifetime at 70 km */
    double photolysis_scale_height_m;   /* lifetime e-folding height */
    double photolysis_bottom_m;         /* no net loss below (net production, Sonnemann & Grygalashvyly 2005) */
    /* Early spreading of the young cloud. */
    double default_cloud_area_m2;   /* used when the injection does not give cloud_area_m2 */
    int cloud_freeze_out;           /* 1: freeze out at t = 0 what the young cloud cannot hold at ice
                                       saturation (default 0: the injection stage has done it) */
    double zonal_spread_time_s;     /* time for the cloud to encircle the globe */
    double region_spread_time_s;    /* time to fill the latitude region */
    /* Forcing indicator. */
    double forcing_W_m2_per_mole_fraction; /* per unit uniform mole-fraction increase above 100 hPa */
    double forcing_scale_height_m;  /* decrease of the per-molecule forcing with height */
    /* Run. */
    double span_s;                  /* length of the output time series (default 20 years) */
    double step_s;                  /* output step (default 1/12 year) */
    int start_month;                /* calendar month of the event, 1-12; 0 = unknown: the
                                       seasonal polar sink acts at its annual-mean rate */
} sl_strat_params;

/* Fill the defaults (all published or calibrated; see src/strat.c). */
void sl_strat_params_default(sl_strat_params *p);

/* 1 when every field of A equals that of B (field by field, so the struct's
 * padding never matters), else 0. */
int sl_strat_params_equal(const sl_strat_params *a, const sl_strat_params *b);


/* Check every parameter against its valid range; SL_EDATA names the field and the range. */
int sl_strat_params_check(const sl_strat_params *p, sl_err *e);

/* The model: geometry, background and precomputed monthly propagators. */
typedef struct sl_strat_model {
    sl_strat_params par;
    size_t n_layers;                        /* layers (some absent in some regions) */
    double layer_top_m[SL_STRAT_MAX_LAYERS];
    size_t n_boxes;
    int box_of[SL_STRAT_N_REGIONS][SL_STRAT_MAX_LAYERS]; /* box index or -1 when absent */
    int box_region[SL_STRAT_MAX_BOXES];
    int box_layer[SL_STRAT_MAX_BOXES];
    double box_bottom_m[SL_STRAT_MAX_BOXES];
    double box_top_m[SL_STRAT_MAX_BOXES];
    double box_mid_m[SL_STRAT_MAX_BOXES];   /* air-mass-weighted mean altitude */
    double box_air_kg[SL_STRAT_MAX_BOXES];
    double box_background_kg[SL_STRAT_MAX_BOXES]; /* background water */
    double box_forcing_W_m2_per_kg[SL_STRAT_MAX_BOXES];
    int box_in_reference[SL_STRAT_MAX_BOXES];     /* above 16 km (~100 hPa) */
    double region_area_m2[SL_STRAT_N_REGIONS];
    double tropopause_m[SL_STRAT_N_REGIONS];
    double tropics_top_density_kg_m3[SL_STRAT_MAX_LAYERS]; /* tropical air density at layer_top_m */
    double tropics_tropopause_density_kg_m3;
    double reference_air_kg;        /* air in the reference domain (above ~100 hPa) */
    double reference_background_kg; /* background water there: the 'stratospheric burden' */
    double background_total_kg;     /* background water in all boxes */
    double cold_point_room_kg;      /* excess the tropical bottom box holds before ice saturation */
    /* Fine tables for the young-cloud freeze-out, per region: air density and
     * the water a cubic metre of cloud holds above background at ice saturation. */
    size_t n_fine;
    double fine_dz_m;
    double *fine_density_kg_m3;     /* [region * n_fine + i], altitude i*fine_dz_m */
    double *fine_room_kg_m3;
    /* Time stepping. */
    double internal_step_s;
    size_t substeps;                /* internal steps per output step */
    size_t n_out;                   /* output times within the span (incl. t = 0) */
    size_t n_run;                   /* output times computed (>= n_out, covers 3 years) */
    size_t n_aug;                   /* n_boxes + SL_STRAT_N_SINKS */
    double *rate;                   /* n_aug x n_aug, annual-mean rates (no seasonal sink), column = source */
    double *propagator[12];         /* per calendar month, n_aug x n_aug, for internal_step_s,
                                       column-major: element (i, j) at [j * n_aug + i] */
    double slowest_mode_s;          /* e-folding of the slowest transport mode (conserved tracer) */
} sl_strat_model;

/* Build the model on the background profiles ATM[region] (the same profile
 * may be given for all three).  Fails with SL_EDATA (bad parameter, profile
 * too short), SL_ENUMERIC (matrix exponential), SL_ENOMEM. */
int sl_strat_model_init(sl_strat_model *m, const sl_strat_params *p,
                        const sl_atmosphere *const atm[SL_STRAT_N_REGIONS], sl_err *e);
void sl_strat_model_free(sl_strat_model *m);

/* Mean age of air (s) in every box for an inert tracer entering at the tropical
 * tropopause, from the steady age equation A (age * m) = -m.  AGE_S has n_boxes. */
int sl_strat_mean_age(const sl_strat_model *m, double *age_s, sl_err *e);

/* Results of one run.  Time series have n_times rows (output times from 0 to
 * the span); the per-box series is row-major [t * n_boxes + box]. */
typedef struct sl_strat_result {
    size_t n_times, n_boxes, n_layers;
    double *time_s;                     /* [n_times] since the event */
    double *box_excess_kg;              /* [n_times * n_boxes] */
    double *sink_kg;                    /* [n_times * SL_STRAT_N_SINKS], cumulative */
    double *global_excess_kg;           /* [n_times] */
    double *global_anomaly_mole_fraction; /* [n_times] over the air above ~100 hPa */
    double *layer_anomaly_mole_fraction;  /* [n_times * n_layers] global mean per layer */
    double *global_column_kg_m2;        /* [n_times] over the whole Earth */
    double *local_column_kg_m2;         /* [n_times] young cloud, then the wettest region */
    double *percent_of_background;      /* [n_times] */
    double *forcing_W_m2;               /* [n_times] */
    /* Early phase (daily for the first region_spread_time): the young cloud. */
    size_t n_early;
    double *early_time_s, *early_area_m2, *early_column_kg_m2;
    /* Scalars. */
    double injected_kg;                 /* water (vapour + ice) above the tropopause at t = 0 */
    double not_entered_kg;              /* water of the profile below the tropopause */
    double initial_excess_kg;           /* after the young-cloud freeze-out */
    double efolding_s;                  /* excess falls to 1/e of initial */
    int efolding_extrapolated;          /* 1 when beyond the computed time */
    double mean_residence_s;            /* integral of excess / initial excess */
    double percent_of_background_peak;
    double peak_global_anomaly_mole_fraction;
    double peak_global_column_kg_m2;
    double peak_local_column_kg_m2;
    double forcing_indicator_W_m2;      /* peak */
    double fraction_remaining_1y, fraction_remaining_3y;
    double budget_max_rel_error;        /* max over times of |injected - remaining - sinks| / injected */
    int has_detail;                     /* 1: box_excess_kg, sink_kg and layer_anomaly_mole_fraction
                                           are filled; 0 after sl_strat_run_linear took its short
                                           path (only the global series and the scalars are) */
    /* Workspace (private). */
    size_t n_run;
    double *work;
    double *linear;                     /* n_run x SL_STRAT_RESPONSE_ROWS (sl_strat_run_linear) */
} sl_strat_result;

/* Allocate RESULT for model M (once; reusable for many runs). */
int sl_strat_result_init(sl_strat_result *r, const sl_strat_model *m, sl_err *e);
void sl_strat_result_free(sl_strat_result *r);

/* Run the box model on INJ (bands, masses, latitude_deg, cloud_area_m2).
 * What lies above each region's tropopause (from the model's background
 * profiles, not inj->tropopause_altitude_m) enters; the rest is
 * r->not_entered_kg.  t = 0 is the time of the profile (inj->time_s is not
 * used).  With par.cloud_freeze_out the young cloud (cloud_area_m2, else the
 * default area) first freezes out what it cannot hold at ice saturation.
 * No allocation.  SL_EDATA for negative or
 * non-finite masses or a latitude outside -90..90; SL_EINTERNAL if the mass
 * budget does not close or a mass turns negative. */
int sl_strat_run(const sl_strat_model *m, const sl_injection *inj, sl_strat_result *r, sl_err *e);

/* Run from given box masses BOX_KG[n_boxes] at t = 0 (no young cloud, no
 * freeze-out; for restarts and for checks against analytic solutions). */
int sl_strat_run_boxes(const sl_strat_model *m, const double *box_kg, sl_strat_result *r, sl_err *e);

/* The linear response of the model (see sl_strat_run_linear): built once per
 * model (about n_boxes direct runs), read-only afterwards, shareable between
 * threads. */
typedef struct sl_strat_response {
    size_t n_boxes, n_run, n_steps;
    sl_strat_params par;  /* of the model it was built for */
    unsigned regions;     /* bits 1 << region: the regions whose boxes have their columns
                             (SL_STRAT_ALL_REGIONS for sl_strat_response_init); the others are zero */
    double *rows;         /* [n_boxes][n_run][SL_STRAT_RESPONSE_ROWS]: excess, forcing, excess
                             per region, total mass, per unit mass in each box */
    double *clip;         /* [n_steps][n_boxes]: tropical bottom box after each internal step */
    double *clip_max;     /* [n_boxes]: the largest of those (and of t = 0) per box */
} sl_strat_response;

/* Build RS for model M.  SL_ENOMEM. */
int sl_strat_response_init(sl_strat_response *rs, const sl_strat_model *m, sl_err *e);

enum { SL_STRAT_ALL_REGIONS = (1u << SL_STRAT_N_REGIONS) - 1u };

/* The regions an injection at LATITUDE_DEG puts water in under P (the
 * tropics, the hemisphere's extratropics, or both across the edge ramp), as
 * bits 1 << region. */
unsigned sl_strat_regions_of_latitude(const sl_strat_params *p, double latitude_deg);

/* RS for the boxes of REGIONS only (bits 1 << region): each column is its
 * own box's integration, so the columns built are those of the full
 * response, bit for bit, at a fraction of the cost (an ensemble at one site
 * injects into one region or two).  sl_strat_run_linear then gives the
 * full response's results for any injection it covers and refuses others. */
int sl_strat_response_init_regions(sl_strat_response *rs, const sl_strat_model *m, unsigned regions, sl_err *e);

/* 1 when RS has every column an injection at LATITUDE_DEG can need. */
int sl_strat_response_covers(const sl_strat_response *rs, double latitude_deg);
/* Release RS; safe on a zeroed struct. */
void sl_strat_response_free(sl_strat_response *rs);

/* sl_strat_run by superposition: between the cold-point clips the box model
 * is linear in the state at t = 0, so each global series at output time i is
 * a row of RS times that state (seven dot products of n_boxes per output
 * time instead of an n_aug x n_boxes product per internal step).  When the
 * clip would act at some step (the member's tropical bottom box predicted
 * above its room) or nothing entered, it runs the direct integration
 * instead, so the results equal sl_strat_run's to rounding (a test checks
 * 1e-9 relative) in every case.  After the short path r->has_detail is 0:
 * box_excess_kg, sink_kg and layer_anomaly_mole_fraction are not filled.
 * Errors as sl_strat_run; SL_EINTERNAL when RS was built for another model
 * or lacks the regions of the injection's latitude (sl_strat_response_covers). */
int sl_strat_run_linear(const sl_strat_model *m, const sl_strat_response *rs, const sl_injection *inj,
                        sl_strat_result *r, sl_err *e);

/* Calibration of the three free transport constants (deep_branch_fraction,
 * inmixing_time_s, kzz_m2_s) against the published
 * time scales: in-mixing into the tropics within about 13.5 months (Volk et
 * al. 1996), mean age
 * about 1 yr in the tropics at 20 km and 4-5 yr in the extratropics at 25-40 km
 * (Waugh & Hall 2002), slowest mode 3.8-5.3 yr (Ehhalt et al. 2004), tropical
 * upwelling 0.2-0.4 mm/s at 20-30 km (Mote et al. 1996).  Nelder-Mead on the
 * logarithms, starting from BASE's values; OUT gets BASE with the fitted three. */
typedef struct sl_strat_calibration {
    double age_tropics_20km_s;
    double age_extratropics_25_40km_s;
    double slowest_mode_s;
    double upwelling_20_30km_m_s;
    double cost;                 /* sum of squared misfits in units of half the target ranges */
    size_t iterations;
} sl_strat_calibration;

/* Diagnostics for P (no fit).  */
int sl_strat_diagnose(const sl_strat_params *p, const sl_atmosphere *const atm[SL_STRAT_N_REGIONS],
                      sl_strat_calibration *out, sl_err *e);
int sl_strat_calibrate(const sl_strat_params *base, const sl_atmosphere *const atm[SL_STRAT_N_REGIONS],
                       sl_strat_params *out, sl_strat_calibration *cal, sl_err *e);

#endif
