/* scenario: the scenario file (INI, read with inih) and the one parameter
 * table that defines every key once.
 *
 * A scenario file has [section] headers and `key = value` lines.  Every key
 * carries its unit in its name (diameter_m, speed_km_s, energy_Mt); the value
 * is converted to SI here, with the factors of include/steamloft/units_table.h,
 * and nowhere else.  Inside the program a scenario value is therefore always
 * SI: metres, kilograms, seconds, joules, kelvin, pascals and RADIANS (keys
 * ending in _deg).  Dimensionless keys (fractions, coefficients) have the unit
 * "1"; text keys (atmosphere) and choice keys (partition method) have none.
 *
 * The table SL_SCENARIO_PARAMS below drives parsing, defaults, range checks,
 * `steamloft params`, and the provenance written into outputs.  To add a key,
 * add one row (and, for a new section, one line to SL_SCENARIO_SECTIONS):
 *
 *   X(ID, section, key, type, unit suffix, default, min, max, flags, choices, meaning)
 *
 * default/min/max are in the key's own unit (as a user writes them); the
 * range is closed.  SL_P_<ID> is the index of the row.  Flags:
 *   SL_PF_REQUIRED  must be given when its section is in use
 *   SL_PF_DERIVED   when absent, computed from other keys (documented in meaning)
 *   SL_PF_OPTIONAL  may stay unset (value NaN); its absence means something
 *   SL_PF_DATE      a text key holding an ISO 8601 UTC date (include/steamloft/date.h);
 *                   its value_si is the time in seconds since 1970-01-01 00:00:00 UTC
 *
 * Errors (all name the file, the line when there is one, the key and its
 * valid range):
 *   exit 78 (SL_ECONFIG)  file syntax: a malformed line, an unknown section or
 *                         key, a duplicate key, a missing required key, a
 *                         line too long, sections that cannot go together;
 *   exit 65 (SL_EDATA)    values: not a number (or not one of the choices),
 *                         outside the valid range, inconsistent values;
 *   exit 66 (SL_ENOINPUT) the file cannot be opened.
 *
 * Reading is two-phase so that an ensemble can take values over before they
 * are converted: sl_scenario_read() checks the syntax and keeps the raw text
 * and line of every key; sl_scenario_mark_external() hands a key to the
 * caller (its raw text, e.g. "uniform(10, 50)", is then not converted);
 * sl_scenario_finish() converts, fills defaults, checks ranges and required
 * keys, and resolves derived defaults.  sl_scenario_load() does all of it.
 * sl_scenario_set() then changes any numeric key by "section.key" with an SI
 * value, re-checking its range and re-resolving derived defaults.
 *
 * A scenario is plain data (no pointers): copy it with `=`; it allocates
 * nothing, so sl_scenario_free() is only there for symmetry. */
#ifndef STEAMLOFT_SCENARIO_H
#define STEAMLOFT_SCENARIO_H

#include <math.h>
#include <stddef.h>

#include "steamloft/err.h"
#include "steamloft/event_kind.h"

/* Sections: X(ID, name, meaning). */
#define SL_SCENARIO_SECTIONS(X)                                                                    \
    X(SCENARIO, "scenario", "optional: the scenario's own name, used in titles and tables")         \
    X(IMPACTOR, "impactor", "a body entering the atmosphere (instead of [explosion])")            \
    X(EXPLOSION, "explosion", "an explosion given directly by its energy (instead of [impactor])") \
    X(SITE, "site", "where it happens: position, ocean, sea surface, background atmosphere")       \
    X(AIRBURST, "airburst", "optional: impose a burst instead of computing it (with [impactor])")  \
    X(ENTRY, "entry", "coefficients of the atmospheric-entry model")                               \
    X(PARTITION, "partition", "how the energy reaching the sea is shared out")                            \
    X(PLUME, "plume", "plume rise, freeze-out in the young cloud, and the altitude bands")          \
    X(STRAT, "strat", "stratospheric box model: time span, output step, backgrounds, time scales") \
    X(EMISSION, "emission", "optional: the injection as a model input: pulse length and horizontal footprint")

typedef enum sl_param_type {
    SL_PT_REAL = 0,  /* a real number in the key's unit */
    SL_PT_INT,       /* an integer (month) */
    SL_PT_TEXT,      /* free text (a profile name or a file path) */
    SL_PT_CHOICE     /* one of a '|'-separated list of words; value_si is its index */
} sl_param_type;

enum { SL_PF_REQUIRED = 1u, SL_PF_DERIVED = 2u, SL_PF_OPTIONAL = 4u, SL_PF_DATE = 8u };

#define SL_NODEFAULT NAN

/* The parameter table.  Basis of every default is in its meaning or in the
 * module that uses it (entry.c, partition.c). */
#define SL_SCENARIO_PARAMS(X)                                                                      \
    X(SCENARIO_NAME, "scenario", "name", SL_PT_TEXT, "", SL_NODEFAULT, 0.0, 0.0, SL_PF_OPTIONAL,    \
      NULL, "a short name for titles, plots and tables (default: the file name without folders "    \
      "and extension)")                                                                             \
    X(IMPACTOR_DIAMETER, "impactor", "diameter_m", SL_PT_REAL, "m", SL_NODEFAULT, 0.1, 2.0e4,      \
      SL_PF_REQUIRED, NULL, "diameter of a sphere of the impactor's volume (0.1 m-20 km: meteoroids " \
      "to extinction-class bodies)")                                                                \
    X(IMPACTOR_DENSITY, "impactor", "density_kg_m3", SL_PT_REAL, "kg_m3", SL_NODEFAULT, 300.0,     \
      9000.0, SL_PF_REQUIRED, NULL,                                                                 \
      "bulk density (comets ~500, C-type ~1300, S-type ~2700, chondrite ~3300, iron ~7800)")       \
    X(IMPACTOR_SPEED, "impactor", "speed_km_s", SL_PT_REAL, "km_s", SL_NODEFAULT, 11.0, 73.0,      \
      SL_PF_REQUIRED, NULL, "speed at the top of the atmosphere (at least escape speed, ~11.2)")    \
    X(IMPACTOR_ANGLE, "impactor", "angle_deg", SL_PT_REAL, "deg", SL_NODEFAULT, 5.0, 90.0,         \
      SL_PF_REQUIRED, NULL, "entry angle from the horizontal at the top of the atmosphere")         \
    X(IMPACTOR_STRENGTH, "impactor", "strength_Pa", SL_PT_REAL, "Pa", SL_NODEFAULT, 1.0e3, 5.0e8,  \
      SL_PF_DERIVED, NULL,                                                                          \
      "ram pressure at which the body breaks up; default 10^(2.107+0.0624*sqrt(density)) Pa "       \
      "(Collins, Melosh & Marcus 2005, eq. 9) below 5000 kg/m3, [entry] iron_strength_Pa above")   \
    X(IMPACTOR_WATER, "impactor", "water_mass_fraction", SL_PT_REAL, "1", 0.0, 0.0, 0.5, 0u, NULL, \
      "mass fraction of water the body carries (carbonaceous bodies up to ~0.2)")                   \
    X(EXPLOSION_ENERGY, "explosion", "energy_Mt", SL_PT_REAL, "Mt", SL_NODEFAULT, 1.0e-4, 1.0e5,   \
      SL_PF_REQUIRED, NULL, "energy released, megatonnes of TNT (1 Mt = 4.184e15 J)")               \
    X(EXPLOSION_ALTITUDE, "explosion", "altitude_m", SL_PT_REAL, "m", 0.0, 0.0, 80000.0, 0u, NULL, \
      "height of the burst above sea level (0 = at the surface)")                                   \
    X(EXPLOSION_HEAT, "explosion", "heat_fraction", SL_PT_REAL, "1", 0.5, 0.05, 1.0, 0u, NULL,     \
      "largest fraction of the energy left as buoyant heat in the fireball; the heat is that of "   \
      "the air in the fireball at its maximum size at 3000 K, at most this fraction (0.5, the "     \
      "blast's share of Glasstone & Dolan 1977, the upper bound of the calibration with [plume] "   \
      "entrainment_coefficient on the 1.69 Mt and 15 Mt clouds, docs/physics.md section 6)")       \
    X(SITE_LATITUDE, "site", "latitude_deg", SL_PT_REAL, "deg", SL_NODEFAULT, -90.0, 90.0,         \
      SL_PF_REQUIRED, NULL, "latitude of the impact or burst point")                                \
    X(SITE_LONGITUDE, "site", "longitude_deg", SL_PT_REAL, "deg", 0.0, -180.0, 360.0, 0u, NULL,    \
      "longitude of the impact or burst point")                                                     \
    X(SITE_OCEAN_DEPTH, "site", "ocean_depth_m", SL_PT_REAL, "m", 3682.0, 0.0, 11100.0, 0u, NULL,  \
      "depth of the ocean at the point (default: the mean ocean depth, ~3682 m)")                   \
    X(SITE_SST, "site", "sea_surface_temperature_K", SL_PT_REAL, "K", SL_NODEFAULT, 271.0, 310.0, \
      SL_PF_DERIVED, NULL,                                                                          \
      "temperature of the sea water that is heated and vaporised; default derived from latitude "   \
      "and month: zonal-mean climatology (Neale & Hoskins 2000 Qobs with an annual cycle, "         \
      "docs/physics.md section 1)")                                                                 \
    X(SITE_ATMOSPHERE, "site", "atmosphere", SL_PT_TEXT, "", SL_NODEFAULT, 0.0, 0.0, SL_PF_DERIVED, \
      NULL,                                                                                         \
      "background atmosphere: a built-in profile (steamloft atmos) or a profile file, relative "    \
      "paths first next to the scenario file; default derived from latitude and month (tropical, "  \
      "mid-latitude or sub-arctic, summer or winter; docs/physics.md section 1)")                   \
    X(SITE_MONTH, "site", "month", SL_PT_INT, "", 0.0, 0.0, 12.0, 0u, NULL,                         \
      "month of the event, 1-12 (0 = not given; annual-mean conditions); follows from date "      \
      "when that is given")                                                                         \
    X(SITE_DATE, "site", "date", SL_PT_TEXT, "", SL_NODEFAULT, 0.0, 0.0,                            \
      SL_PF_OPTIONAL | SL_PF_DATE, NULL,                                                            \
      "UTC date and time of the event, ISO 8601 (2022-01-15 or 2022-01-15T04:15:00Z); sets the "    \
      "month; without it outputs carry a nominal date (the 1st of the month, or January 1st)")     \
    X(AIRBURST_ALTITUDE, "airburst", "altitude_m", SL_PT_REAL, "m", SL_NODEFAULT, 0.0, 100000.0,   \
      SL_PF_OPTIONAL, NULL, "impose the burst at this altitude (needs energy_fraction)")            \
    X(AIRBURST_FRACTION, "airburst", "energy_fraction", SL_PT_REAL, "1", SL_NODEFAULT, 0.0, 1.0,   \
      SL_PF_OPTIONAL, NULL, "fraction of the entry energy released at the imposed burst")           \
    X(ENTRY_START_ALTITUDE, "entry", "start_altitude_m", SL_PT_REAL, "m", 100000.0, 50000.0,       \
      120000.0, 0u, NULL, "altitude where the integration starts (the top of the atmosphere)")      \
    X(ENTRY_DRAG, "entry", "drag_coefficient", SL_PT_REAL, "1", 2.0, 0.5, 3.0, 0u, NULL,          \
      "drag coefficient (2 as in Collins et al. 2005, so their closed forms cross-check)")           \
    X(ENTRY_HEAT_TRANSFER, "entry", "heat_transfer_coefficient", SL_PT_REAL, "1", 0.03, 0.0, 1.0, \
      0u, NULL, "fraction of the incoming air's energy that ablates the body (0 = no ablation; "   \
      "0.03 for bodies of metres and more, Svetsov et al. 1995, below the ~0.1-0.2 of small "       \
      "meteoroids, Ceplecha et al. 1998)")                                                          \
    X(ENTRY_ABLATION_HEAT, "entry", "heat_of_ablation_J_kg", SL_PT_REAL, "J_kg", 8.0e6, 1.0e6,     \
      1.0e8, 0u, NULL, "energy to ablate one kilogram of the body")                                 \
    X(ENTRY_SPREAD, "entry", "spread_coefficient", SL_PT_REAL, "1", 0.3, 0.05, 2.0, 0u, NULL,       \
      "pancake spreading r d2r/dt2 = C rho_air v^2 / rho_body (calibrated with ablation on in "    \
      "real atmospheres, see entry.c; 0.5 = Collins et al. 2005 with drag coefficient 2)")         \
    X(ENTRY_BURST_FACTOR, "entry", "burst_spread_factor", SL_PT_REAL, "1", 5.0, 2.0, 20.0, 0u,      \
      NULL, "the debris cloud bursts when its radius reaches this multiple of its first radius "   \
      "(calibrated, see entry.c; Collins et al. 2005 use 7 and allow 2-10)")                       \
    X(ENTRY_BREAKUP_MODEL, "entry", "breakup_model", SL_PT_CHOICE, "", 0.0, 0.0, 0.0, 0u,            \
      "auto|pancake|fragments", "how a body breaks: a spreading debris cloud (pancake), pieces "   \
      "that fly on (fragments), or auto: fragments at or above fragmenting_strength_Pa")           \
    X(ENTRY_FRAGMENTING_STRENGTH, "entry", "fragmenting_strength_Pa", SL_PT_REAL, "Pa", 1.0e7,      \
      1.0e3, 1.0e9, 0u, NULL, "auto: bodies at least this strong break into fragments, weaker "    \
      "ones into a debris cloud (stony bolides break at 0.1-5 MPa, Popova et al. 2011; irons are " \
      "tens to hundreds of MPa, Petrovic 2001)")                                                    \
    X(ENTRY_IRON_STRENGTH, "entry", "iron_strength_Pa", SL_PT_REAL, "Pa", 1.0e8, 1.0e6, 1.0e9, 0u, \
      NULL, "default strength of bodies of 5000 kg/m3 and more (iron-meteorite strengths, tens "    \
      "to hundreds of MPa, Petrovic 2001; calibrated on Meteor Crater, see entry.c)")              \
    X(ENTRY_FRAGMENT_COUNT, "entry", "fragment_count", SL_PT_INT, "", 6.0, 2.0, 16.0, 0u, NULL,     \
      "equal pieces a strong body breaks into at each break-up (besides its debris cloud)")        \
    X(ENTRY_FRAGMENT_GENERATIONS, "entry", "fragment_generations", SL_PT_INT, "", 0.0, 0.0, 5.0,   \
      0u, NULL, "how many times pieces may break again (pieces of the last one stay whole)")        \
    X(ENTRY_CLOUD_FRACTION, "entry", "cloud_fraction", SL_PT_REAL, "1", 0.5, 0.0, 0.95, 0u, NULL,  \
      "mass fraction of a breaking strong body crushed into a debris cloud (the rest: pieces)")     \
    X(ENTRY_WEIBULL, "entry", "weibull_exponent", SL_PT_REAL, "1", 0.25, 0.0, 0.5, 0u, NULL,        \
      "strength of a piece = parent's x (parent mass / piece mass)^exponent (Weibull scaling)")    \
    X(ENTRY_SEPARATION, "entry", "separation_coefficient", SL_PT_REAL, "1", 0.5, 0.01, 2.0, 0u,     \
      NULL, "lateral speed of separating pieces, v sqrt(C (R/r) rho_air/rho_body) (Passey & "       \
      "Melosh 1980)")                                                                               \
    X(ENTRY_RADIATION_TEMPERATURE, "entry", "radiation_temperature_K", SL_PT_REAL, "K", 2.0e4, 0.0, \
      1.0e5, 0u, NULL, "the heat flux that ablates a body is at most the black-body flux of its "   \
      "shock layer at this temperature (optically thick layers of large bodies, Svetsov, "          \
      "Nemtchinov & Teterev 1995); 0 = no limit")                                                   \
    X(ENTRY_BAND, "entry", "band_width_m", SL_PT_REAL, "m", 1000.0, 10.0, 10000.0, 0u, NULL,        \
      "width of the altitude bands of deposited energy")                                            \
    X(ENTRY_RTOL, "entry", "relative_tolerance", SL_PT_REAL, "1", 1.0e-8, 1.0e-12, 1.0e-4, 0u,      \
      NULL, "relative error tolerance of the ODE solver")                                           \
    X(PARTITION_METHOD, "partition", "method", SL_PT_CHOICE, "", 0.0, 0.0, 0.0, 0u, "shock|budget", \
      "how the sea's share is computed: shock physics or a fixed energy budget")                    \
    X(PARTITION_VAPOR_FRACTION, "partition", "vapor_energy_fraction", SL_PT_REAL, "1", 0.1, 0.01,  \
      1.0, 0u, NULL,                                                                                \
      "budget method: fraction of the energy at the sea that heats and vaporises water")            \
    X(PARTITION_TARGET_HEAT, "partition", "target_heat_fraction", SL_PT_REAL, "1", 0.5, 0.05, 1.0, \
      0u, NULL, "shock method: most of the impact energy left as waste heat in the target (about "  \
      "half above ~15 km/s, O'Keefe & Ahrens 1977); bounds the pressure decay in water")             \
    X(PARTITION_HEAT_FRACTION, "partition", "plume_heat_fraction", SL_PT_REAL, "1", 0.1, 0.0, 1.0, \
      0u, NULL, "both methods: fraction of the energy at the sea left as sensible heat in the plume") \
    X(PARTITION_AIRBURST_HEAT, "partition", "air_heat_fraction", SL_PT_REAL, "1", 0.5, 0.05, 1.0,  \
      0u, NULL, "largest fraction of the energy deposited in the air left as buoyant heat (the "     \
      "rule of [explosion] heat_fraction)")                                                         \
    X(PARTITION_IMPACTOR_HUGONIOT, "partition", "impactor_material", SL_PT_CHOICE, "", 0.0, 0.0,    \
      0.0, 0u, "auto|basalt|granite|iron|ice",                                                       \
      "shock method: linear Hugoniot of the impactor (auto: iron above 5000 kg/m3, else basalt)")  \
    X(PLUME_ALPHA, "plume", "entrainment_coefficient", SL_PT_REAL, "1", 0.29, 0.0, 1.0, 0u, NULL,  \
      "alpha: entrainment velocity alpha*w through the thermal's surface (0.29, fitted to the "     \
      "1.69 Mt and 15 Mt surface-burst clouds within the 0.2-0.35 of laboratory thermals, "          \
      "docs/physics.md section 6; 0 = a parcel that does not mix)")                                 \
    X(PLUME_ADDED_MASS, "plume", "added_mass_coefficient", SL_PT_REAL, "1", 0.5, 0.0, 2.0, 0u,     \
      NULL, "k: share of the displaced air accelerated with the thermal (0.5, sphere in potential " \
      "flow); changes the rise time, not the height")                                               \
    X(PLUME_FALLOUT_SPEED, "plume", "fallout_speed_m_s", SL_PT_REAL, "m_s", 1.0, 0.0, 50.0, 0u,    \
      NULL, "settling speed of condensate in the rising thermal (1 m/s: drizzle and snow, Rogers " \
      "& Yau 1989; 0 keeps all condensate aloft)")                                                  \
    X(PLUME_ICE_SEDIMENT, "plume", "ice_sediment_fraction", SL_PT_REAL, "1", 0.5, 0.0, 1.0, 0u,    \
      NULL, "share of the ice formed at the cloud level (water above ice saturation) that falls "  \
      "out; 0.5 between small sublimating crystals (Jensen et al. 2007) and large falling ones")    \
    X(PLUME_RTOL, "plume", "relative_tolerance", SL_PT_REAL, "1", 1.0e-6, 1.0e-12, 1.0e-3, 0u,     \
      NULL, "relative error tolerance of the plume ODE solver")                                     \
    X(PLUME_BAND_BOTTOM, "plume", "band_bottom_m", SL_PT_REAL, "m", 0.0, 0.0, 100000.0, 0u, NULL,  \
      "bottom of the lowest altitude band of the injection profile")                                \
    X(PLUME_BAND_TOP, "plume", "band_top_m", SL_PT_REAL, "m", 100000.0, 1000.0, 120000.0, 0u,      \
      NULL, "top of the highest altitude band (water above it is pressed into the top band)")      \
    X(PLUME_BAND_WIDTH, "plume", "band_width_m", SL_PT_REAL, "m", 1000.0, 10.0, 20000.0, 0u, NULL, \
      "width of the altitude bands of the injection profile") \
    X(STRAT_SPAN, "strat", "span_years", SL_PT_REAL, "years", 20.0, 0.1, 1000.0, 0u, NULL,          \
      "length of the box-model time series")                                                        \
    X(STRAT_STEP, "strat", "step_days", SL_PT_REAL, "days", 30.4375, 1.0, 365.25, 0u, NULL,          \
      "output step of the box model (30.4375 days = 1/12 year)")                                    \
    X(STRAT_TROPICS_ATMOSPHERE, "strat", "tropics_atmosphere", SL_PT_CHOICE, "", 0.0, 0.0, 0.0, 0u,  \
      "tropical|us1976-humid|midlatitude-summer|midlatitude-winter|subarctic-summer|"               \
      "subarctic-winter|us1976",                                                                    \
      "background profile of the tropical boxes (the transport is calibrated on tropical)")         \
    X(STRAT_EXTRATROPICS_ATMOSPHERE, "strat", "extratropics_atmosphere", SL_PT_CHOICE, "", 0.0, 0.0, \
      0.0, 0u,                                                                                      \
      "us1976-humid|tropical|midlatitude-summer|midlatitude-winter|subarctic-summer|"               \
      "subarctic-winter|us1976",                                                                    \
      "background profile of both extratropical regions (us1976-humid: mid-latitude annual "        \
      "mean; the dry us1976 has no background water to compare with)")                             \
    X(STRAT_DEEP_BRANCH, "strat", "deep_branch_fraction", SL_PT_REAL, "1", 0.7104, 0.01, 1.0, 0u,    \
      NULL, "share of the 100-hPa tropical upward flux that rises on (calibrated; strat.c)")        \
    X(STRAT_INMIXING, "strat", "inmixing_time_years", SL_PT_REAL, "years", 1.0672, 0.01, 50.0, 0u,   \
      NULL, "time to mix extratropical air into the tropical pipe (calibrated; Volk et al. 1996: "   \
      "about 13.5 months)")                                                                         \
    X(STRAT_LMS_RESIDENCE, "strat", "lms_residence_days", SL_PT_REAL, "days", 50.0, 1.0, 3650.0, 0u, \
      NULL, "residence of water in the lowermost stratosphere (Gettelman 1999: about 50 days)")     \
    X(STRAT_VORTEX, "strat", "antarctic_vortex_fraction", SL_PT_REAL, "1", 0.1424, 0.0, 0.9, 0u,     \
      NULL, "share of the southern extratropical air (poleward of 65 S) dried each winter")       \
    X(EMISSION_DURATION, "emission", "duration_s", SL_PT_REAL, "s", 21600.0, 60.0, 3.15576e7, 0u,   \
      NULL, "length of the emission pulse handed to a model (6 h: the usual pulse of "              \
      "elevated-emission inputs of explosive eruptions, common practice)")                          \
    X(EMISSION_RADIUS, "emission", "radius_m", SL_PT_REAL, "m", SL_NODEFAULT, 1000.0, 5.0e6,       \
      SL_PF_OPTIONAL, NULL, "radius of the horizontal footprint (a disc on the sphere around the "  \
      "site); default: the largest radius of the rising thermals at their apex")

/* Row indices SL_P_<ID>, and SL_P_COUNT. */
typedef enum sl_param_id {
#define SL_X_ENUM_(id, ...) SL_P_##id,
    SL_SCENARIO_PARAMS(SL_X_ENUM_)
#undef SL_X_ENUM_
    SL_P_COUNT
} sl_param_id;

/* Section indices SL_S_<ID>, and SL_S_COUNT. */
typedef enum sl_section_id {
#define SL_X_SEC_(id, ...) SL_S_##id,
    SL_SCENARIO_SECTIONS(SL_X_SEC_)
#undef SL_X_SEC_
    SL_S_COUNT
} sl_section_id;

/* One row of the table. */
typedef struct sl_param_def {
    const char *section;
    const char *key;
    sl_param_type type;
    const char *unit;        /* unit suffix of the key ("km_s", "1"), "" for text/choice/int */
    double default_value;    /* in the key's unit; NaN = none */
    double min_value;        /* valid range, closed, in the key's unit (REAL/INT only) */
    double max_value;
    unsigned flags;          /* SL_PF_* */
    const char *choices;     /* SL_PT_CHOICE: "a|b|c", else NULL */
    const char *meaning;
} sl_param_def;

extern const sl_param_def sl_scenario_params[SL_P_COUNT];
extern const char *const sl_scenario_section_names[SL_S_COUNT];
extern const char *const sl_scenario_section_meanings[SL_S_COUNT];

typedef enum sl_param_origin {
    SL_ORIGIN_UNSET = 0,  /* optional key not given */
    SL_ORIGIN_DEFAULT,    /* the table default */
    SL_ORIGIN_DERIVED,    /* computed from other keys */
    SL_ORIGIN_FILE,       /* written in the scenario file */
    SL_ORIGIN_SET,        /* set by a program (sl_scenario_set: ensembles, sweeps) */
    SL_ORIGIN_EXTERNAL    /* handed to another module, not yet set */
} sl_param_origin;


enum { SL_SCENARIO_RAW_LEN = 200, SL_SCENARIO_PATH_LEN = 256 };

typedef struct sl_scenario {
    char path[SL_SCENARIO_PATH_LEN];      /* as shown in messages ("<stdin>" for "-") */
    sl_scenario_kind kind;
    int section_line[SL_S_COUNT];         /* first line of each section's keys, 0 = absent */
    double value_si[SL_P_COUNT];          /* SI value (choice: index; text: NaN) */
    sl_param_origin origin[SL_P_COUNT];
    int line[SL_P_COUNT];                 /* line of the key in the file, 0 = not in the file */
    char raw[SL_P_COUNT][SL_SCENARIO_RAW_LEN]; /* value text as written (trimmed) */
    unsigned char set_key[SL_P_COUNT];    /* 1 given by --set, 2 by a table column */
    unsigned char set_section[SL_S_COUNT]; /* a section made present by an override */
    int finished;                         /* sl_scenario_finish succeeded */
} sl_scenario;

/* Phase 1: read PATH ("-" = standard input) and check its syntax: sections
 * and keys known, no duplicates, lines short enough.  Keeps the raw text and
 * line of every key; converts nothing.  SL_ECONFIG, SL_ENOINPUT, SL_EIO. */
int sl_scenario_read(sl_scenario *sc, const char *path, sl_err *e);

/* Phase 1 from a string; NAME is used in messages. */
int sl_scenario_read_string(sl_scenario *sc, const char *name, const char *text, sl_err *e);

/* Hand key ID to the caller before sl_scenario_finish(): its raw text is not
 * converted or checked, and its value stays NaN (origin SL_ORIGIN_EXTERNAL)
 * until sl_scenario_set() gives it one.  SL_EUSAGE for a non-numeric key. */
int sl_scenario_mark_external(sl_scenario *sc, sl_param_id id, sl_err *e);

/* Between the phases: ASSIGNMENT "section.key=value" (the command line's
 * --set) replaces or adds one key as if it were written in the file: VALUE
 * is text in the key's own unit (km/s for speed_km_s), a word for text and
 * choice keys, and may be a distribution for an ensemble.  The key's origin
 * becomes "set" and its line 0; a section it names becomes present.  The
 * value is converted and checked by sl_scenario_finish, whose messages then
 * name "--set section.key" and the valid range (SL_EDATA, exit 65).  The
 * last assignment of a key wins.  SL_EUSAGE (exit 64) for text without '=',
 * an unknown key (the message lists the keys of the section) or a value
 * longer than SL_SCENARIO_RAW_LEN - 1; SL_EINTERNAL after finish. */
int sl_scenario_override(sl_scenario *sc, const char *assignment, sl_err *e);
/* The same for a value from a table of scenarios (`steamloft tabulate`'s CSV
 * rows): messages then say "column section.key" instead of "--set". */
int sl_scenario_override_column(sl_scenario *sc, const char *assignment, sl_err *e);

/* Phase 2: convert every value to SI, check ranges and types (SL_EDATA),
 * fill defaults, check required keys and section rules (SL_ECONFIG), resolve
 * derived defaults and check consistency (SL_EDATA). */
int sl_scenario_finish(sl_scenario *sc, sl_err *e);

/* Both phases. */
int sl_scenario_load(sl_scenario *sc, const char *path, sl_err *e);
int sl_scenario_load_string(sl_scenario *sc, const char *name, const char *text, sl_err *e);

/* Index of "section.key", or -1. */
int sl_scenario_find(const char *section_dot_key);

/* Set numeric key SECTION_DOT_KEY to VALUE_SI (SI units: radians for _deg,
 * joules for _Mt, ...), check its range, mark it SL_ORIGIN_SET and
 * re-resolve derived defaults (e.g. strength from density unless the
 * strength was given).  SL_EUSAGE for an unknown or non-numeric key,
 * SL_EDATA for a value out of range. */
int sl_scenario_set(sl_scenario *sc, const char *section_dot_key, double value_si, sl_err *e);
int sl_scenario_set_id(sl_scenario *sc, sl_param_id id, double value_si, sl_err *e);

/* Set text or choice key ID to TEXT (a word, a profile name or a file path,
 * as it would be written in the file), converted and checked as
 * sl_scenario_finish does (SL_EDATA naming the valid choices), marked
 * SL_ORIGIN_SET (line 0: a relative path is taken from the working
 * directory) and, on a finished scenario, derived defaults re-resolved.
 * SL_EUSAGE for a numeric key, a key of a section not in use, or text longer
 * than SL_SCENARIO_RAW_LEN - 1.  Allocates nothing (sweeps call it per
 * member). */
int sl_scenario_set_text(sl_scenario *sc, sl_param_id id, const char *text, sl_err *e);

/* Set N keys at once: key IDS[k] to VALUES_SI[k] as sl_scenario_set_id does,
 * or, where TEXTS and TEXTS[k] are not NULL, to that text as
 * sl_scenario_set_text does.  On a finished scenario the derived defaults are
 * re-resolved once, after the last key, so the checks that tie keys together
 * (a month that must agree with the date, an airburst below the start
 * altitude) see the final values, not a mixture of old and new ones.  Stops
 * at the first error (the codes of those two functions), the keys before it
 * set.  Allocates nothing (an ensemble calls it for every member). */
int sl_scenario_set_values(sl_scenario *sc, size_t n, const sl_param_id *ids, const double *values_si,
                           const char *const *texts, sl_err *e);

/* SI value of a numeric key (NaN when unset). */
double sl_scenario_value(const sl_scenario *sc, sl_param_id id);
/* Whether a key has a value (given, defaulted, derived or set). */
int sl_scenario_has(const sl_scenario *sc, sl_param_id id);
/* Resolved text of a text or choice key ("us1976", "shock"). */
const char *sl_scenario_text(const sl_scenario *sc, sl_param_id id);
/* The scenario's display name: [scenario] name when given, otherwise the
 * file name without folders and extension ("demo" for examples/demo.ini,
 * "stdin" for standard input).  Always NUL-terminated; truncated to N-1. */
void sl_scenario_name(const sl_scenario *sc, char *buf, size_t n);
/* The file name of PATH without folders and extension ("stdin" for "-" shown
 * as "<stdin>"): the name's fallback, also for tables of scenarios. */
void sl_scenario_path_stem(const char *path, char *buf, size_t n);
/* Raw text of a key as written in the file (or given by an override, line
 * 0) and its line, or NULL when neither has the key. */
const char *sl_scenario_raw(const sl_scenario *sc, sl_param_id id, int *line);

/* Where key ID came from, as the prefix of a message about its value:
 * "FILE:LINE: [sec] key" for a key written in the file, "FILE: --set
 * sec.key" for one given by --set, "FILE: column sec.key" for a tabulate
 * row, "FILE: [sec] key" otherwise (a default).  Always NUL-terminated. */
void sl_scenario_where(const sl_scenario *sc, sl_param_id id, char *buf, size_t n);

/* Valid range of a numeric key in its own unit, as people read it:
 * "0.1 to 100000 m", or the choices "shock|budget". */
void sl_scenario_range_text(sl_param_id id, char *buf, size_t n);
/* Printed unit symbol of a key ("km/s", "" for none). */
const char *sl_scenario_unit_symbol(sl_param_id id);
/* SI unit symbol (UDUNITS spelling, "m s-1", "1", "" for text). */
const char *sl_scenario_si_unit(sl_param_id id);

/* One resolved parameter, for provenance (netCDF attributes, reports). */
typedef struct sl_param_value {
    int id;
    char name[64];           /* "impactor.speed_km_s" */
    char text[SL_SCENARIO_RAW_LEN]; /* the value in the key's unit as text ("19.16", "us1976") */
    double value;            /* in the key's unit (NaN for text) */
    double value_si;         /* SI (NaN for text) */
    const char *unit;        /* key's unit symbol, "" for none */
    const char *si_unit;     /* SI unit symbol */
    const char *origin;      /* "file", "default", "derived", "set" */
    int line;                /* line in the file, 0 if not from it */
} sl_param_value;

/* Every resolved parameter that applies to this scenario (keys of sections
 * not in use, and unset optional keys, are left out), in table order.  Writes
 * at most MAX records into OUT (which may be NULL when MAX is 0) and returns
 * the number there are; SL_P_COUNT records always suffice. */
size_t sl_scenario_provenance(const sl_scenario *sc, sl_param_value *out, size_t max);

/* Name of an origin ("file", "default", ...). */
const char *sl_scenario_origin_name(sl_param_origin o);

/* Nothing to release (plain data); zeroes the struct. */
void sl_scenario_free(sl_scenario *sc);

#endif
