/* plume: rise of hot, moist buoyant thermals through a real atmosphere, and
 * the young cloud each one leaves.
 *
 * Each source (include/steamloft/source.h) is an instantaneous release: a
 * thermal after Morton, Taylor & Turner (1956), written in terms of mass so it
 * holds across several scale heights (non-Boussinesq), with added mass,
 * entrainment velocity alpha*w through the surface of a sphere, moist
 * thermodynamics (vapour, liquid, ice in equilibrium; the entrained air brings
 * its humidity; latent heats of the water module) and fallout of condensate.
 * The apex is found by event detection (root of w(t)).  The young cloud spans
 * the layer from the neutral-buoyancy level to the highest reach of the
 * thermal's top (apex + radius), the umbrella layer of Sparks (1986), its volume
 * widest at the neutral level and narrowing to the top (triangular profile), its
 * mass that volume times the ambient density.
 * Releases wider than the scale height are partly or wholly ballistic
 * (sl_plume_regime; plume.c "Ballistic regime").
 * Several sources rise on their own; their water adds up in the injection
 * profile, after freeze-out (sl_injection_add_cloud).  The equations, units
 * and references are in the header comment of src/plume.c.
 *
 * Usage: sl_plume_init once (allocates the ODE workspace), then
 * sl_plume_solve for each scenario (allocates nothing), sl_plume_free. */
#ifndef STEAMLOFT_PLUME_H
#define STEAMLOFT_PLUME_H

#include <stddef.h>

#include "steamloft/atmosphere.h"
#include "steamloft/err.h"
#include "steamloft/injection.h"
#include "steamloft/source.h"

/* The one water budget of an event, in the order it is told.  X(name, sign,
 * label): the field is name_kg (sl_plume), the JSON key name_kg, the netCDF
 * and CSV scalar name (in kg), the ensemble column name_Tg.  SIGN says how a line adds up: "+" adds to the running
 * total, "-" takes from it, "=" is the total so far (a check: the lines
 * above it add up to it to rounding, tests/test_plume.c).
 *
 *   water_source_kg        + what the sources carry into the plume stage:
 *                            sea water vaporised (partition's water_vaporized_kg),
 *                            liquid thrown up with it, the body's own water
 *   water_background_kg    + background water (the air's humidity) entrained during the rise
 *   water_fallout_kg       - fallen out during the rise: spray collapse and condensate
 *   water_rising_kg        = in the clouds at the end of the rise (apex, or re-entry)
 *   water_sedimented_kg    - frozen at cloud level and sedimented out
 *   water_air_humidity_kg  - the cloud air's own humidity at its new level (no excess)
 *   water_troposphere_kg   - excess left below the tropopause (water_below_bands_kg of it
 *                            below the lowest band)
 *   stratospheric_water_kg = excess above the tropopause: stratospheric_vapor_kg +
 *                            stratospheric_ice_kg; all of it enters the box model
 *                            (strat_injected_kg, the same tropopause)
 */
#define SL_WATER_BUDGET_LINES(X)                                                                             \
    X(water_source, '+', "water the sources carry")                                                       \
    X(water_background, '+', "background water entrained")                                   \
    X(water_fallout, '-', "fallen out during the rise")                                                   \
    X(water_rising, '=', "in the clouds after the rise")                                                  \
    X(water_sedimented, '-', "frozen and sedimented")                                                     \
    X(water_air_humidity, '-', "cloud air's own humidity")                                    \
    X(water_troposphere, '-', "excess left below the tropopause")                                         \
    X(stratospheric_water, '=', "above the tropopause")

/* Parameters (scenario section [plume]); defaults from sl_plume_params_default. */
typedef struct sl_plume_params {
    double entrainment_alpha;      /* alpha in u_e = alpha*w; 0.29 (fitted, docs/physics.md section 6) */
    double added_mass_k;           /* added-mass coefficient; 0.5 (sphere in potential flow) */
    double fallout_speed_m_s;      /* settling speed of condensate relative to the thermal; 1.0 */
    double ice_sediment_fraction;  /* share of the ice formed at cloud level that falls out; 0.5 */
    double rtol;                   /* ODE relative tolerance (scaled state); 1e-6 */
    double max_time_s;             /* give up when no apex by then; 7200 s */
} sl_plume_params;

void sl_plume_params_default(sl_plume_params *par);

/* Check ranges (alpha 0-1 (0: a parcel that does not mix), k 0-2, fallout speed 0-50 m/s, fraction 0-1,
 * rtol 1e-12-1e-3, max time 60-1e5 s).  SL_EDATA naming the key otherwise. */
int sl_plume_params_check(const sl_plume_params *par, sl_err *e);

typedef enum sl_plume_regime {
    SL_REGIME_THERMAL = 0, /* buoyant thermal: the model applies */
    SL_REGIME_BLOWOUT = 1, /* release larger than the scale height (part thermal, part ballistic,
                            * weighted by ballistic_fraction) */
    SL_REGIME_BALLISTIC = 2 /* release several scale heights across, or a thermal that left the
                             * atmosphere: flies above it and re-enters over a wide area */
} sl_plume_regime;

/* "thermal", "blow-out" or "ballistic". */
const char *sl_plume_regime_name(int regime);
/* The names of the codes 0, 1, 2 in order, blank-separated (CF flag_meanings). */
#define SL_PLUME_REGIME_FLAG_MEANINGS "thermal blow-out ballistic"

/* Scale heights (p/(rho g) at the apex) of a thermal's apex radius from which
 * its top is the apex plus this many scale heights rather than plus its
 * radius (plume.c, sl_plume_rise: its gas is stratified like the air, e^-3 of
 * its mass lies higher) and the outputs' validity line calls the thermal
 * strained (docs/physics.md section 6; PRACTICE). */
#define SL_PLUME_WIDE_SCALE_HEIGHTS 3.0

/* The rise of one source. */
typedef struct sl_thermal {
    int regime;                    /* sl_plume_regime */
    sl_source_kind kind;
    double source_altitude_m;      /* centre of the initial thermal */
    double source_radius_m;        /* initial radius (from the source or its gas volume) */
    double scale_height_m;         /* R T / g at the source level */
    double apex_time_s;            /* time of w = 0 (0 when it never rose) */
    double apex_altitude_m;        /* centre at the apex */
    double apex_radius_m;
    double apex_scale_height_m;    /* p/(rho g) at the apex: a radius well above it strains the
                                    * bulk-thermal picture (the report shows the ratio) */
    double top_altitude_m;         /* apex centre + apex radius: highest reach */
    double neutral_altitude_m;     /* first level where the buoyancy force vanished */
    double neutral_time_s;
    double cloud_bottom_m, cloud_top_m; /* the young cloud placed by the cloud rule */
    double temperature_apex_K;
    double air_kg;                 /* dry air in the thermal at the apex */
    double vapor_kg, liquid_kg, ice_kg; /* water at the apex */
    double max_speed_m_s;
    /* Ballistic part (plume.c, "Ballistic regime"): share of the water it carries (0 thermal, 1
     * ballistic), launch speed from the gas's specific energy, apogee of the mass-mean (45 degree)
     * path, re-entry range from the source, the layer the re-entering water is stopped in. */
    double ballistic_fraction;
    double launch_speed_m_s, apogee_m, reentry_range_m;
    double reentry_bottom_m, reentry_top_m;
    /* Budgets, integrated with the state (all in J or kg). */
    double water_initial_kg, water_entrained_kg, water_fallout_kg, water_final_kg;
    double energy_initial_J, energy_entrained_J, energy_fallout_J, energy_final_J;
    double energy_to_air_J;        /* kinetic energy given to the surrounding air as the added mass grew */
    double air_initial_kg, air_entrained_kg;
    size_t n_steps;                /* accepted ODE steps */
} sl_thermal;

typedef struct sl_plume_work sl_plume_work; /* opaque: GSL stepper, control, evolve, root solver */

typedef struct sl_plume {
    sl_plume_params par;
    sl_plume_work *work;
    sl_cloud_levels *levels;       /* set by the caller (NULL: none): the whole bands' cloud-level
                                    * values kept between solves (injection.h); borrowed, not freed */
    size_t n_thermals;
    sl_thermal th[SL_MAX_SOURCES];
    /* Whole event (all sources). */
    int regime;                    /* the highest regime of its sources */
    double widest_thermal;         /* the largest apex_radius_m / apex_scale_height_m of its
                                    * thermal-regime sources (0 if none): from
                                    * SL_PLUME_WIDE_SCALE_HEIGHTS the validity line says the
                                    * bulk-thermal picture is strained */
    double plume_top_m;            /* highest thermal top */
    double cloud_bottom_m, cloud_top_m; /* envelope of the clouds */
    double neutral_altitude_m;     /* of the source carrying the most water to its apex */
    double tropopause_altitude_m;  /* of the atmosphere used: the one tropopause of the plume stage
                                    * and of the box model's injection (strat.c) */
    /* The water budget (kg); the lines and their meaning are SL_WATER_BUDGET_LINES. */
#define SL_WATER_BUDGET_FIELD(name, sign, label) double name##_kg;
    SL_WATER_BUDGET_LINES(SL_WATER_BUDGET_FIELD)
#undef SL_WATER_BUDGET_FIELD
    double stratospheric_vapor_kg; /* of stratospheric_water_kg: vapour */
    double stratospheric_ice_kg;   /* of stratospheric_water_kg: ice */
    double water_below_bands_kg;   /* of water_troposphere_kg: below the lowest band, left out of the
                                    * injection profile */
} sl_plume;

/* Set parameters and allocate the ODE workspace.  PL must be zeroed.
 * SL_EDATA for bad parameters, SL_ENOMEM. */
int sl_plume_init(sl_plume *pl, const sl_plume_params *par, sl_err *e);

/* Change the parameters of an initialised plume without reallocating (an
 * ensemble member with its own entrainment coefficient, say).  SL_EDATA for
 * bad parameters (PL unchanged). */
int sl_plume_set_params(sl_plume *pl, const sl_plume_params *par, sl_err *e);


/* Rise one source through ATM; fill OUT.  Allocates nothing.  SL_EDATA for
 * an unusable source (naming the field and the range), SL_ENUMERIC when the
 * solver fails or no apex is reached within max_time_s. */
int sl_plume_rise(sl_plume *pl, const sl_atmosphere *atm, const sl_source *src, sl_thermal *out, sl_err *e);

/* Rise every source of SRC, place each cloud, apply the freeze-out and add the
 * water into INJ (which must have bands; its masses are cleared first, its
 * tropopause set from ATM), and fill the event totals.  A cloud's share
 * below the lowest band is left out (water_below_bands_kg); a cloud reaching above
 * the top band is pressed into it.  Allocates nothing. */
int sl_plume_solve(sl_plume *pl, const sl_atmosphere *atm, const sl_source_list *src, sl_injection *inj, sl_err *e);

/* Release the workspace; safe on a zeroed or half-built struct. */
void sl_plume_free(sl_plume *pl);

#endif
