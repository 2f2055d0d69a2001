/* partition: what the energy of an impact or explosion turns into, as the
 * hot, moist sources handed to the plume stage.
 *
 * Impacts: the kinetic energy reaching the sea heats and vaporises sea water
 * (two selectable methods: a fixed energy budget, or shock physics with the
 * planar impact approximation, pressure decay after Pierazzo, Vickery &
 * Melosh 1997 and an entropy criterion for vaporisation on release), a
 * fraction stays as sensible heat in the plume, the rest goes into the
 * crater, waves and rock.  Shallow water: when the transient cavity reaches
 * the sea floor less water takes part.  The energy deposited in the air (an
 * airburst, or the heated trail of a body that reaches the sea) becomes a
 * hot-air source.  The water the impactor carries joins the sources.
 * Explosions become one source directly.
 *
 * Bookkeeping: energy_at_sea_J = vaporisation + plume heat + liquid heating
 * + other, with other >= 0, exactly; vaporised mass never exceeds energy_at_sea_J divided
 * by the energy to vaporise one kilogram of sea water (water_vapor_limit_kg).
 *
 * Plain data: no allocation; sl_partition_free() zeroes. */
#ifndef STEAMLOFT_PARTITION_H
#define STEAMLOFT_PARTITION_H

#include "steamloft/entry.h"
#include "steamloft/err.h"
#include "steamloft/event_kind.h"
#include "steamloft/source.h"

/* Specific entropies of saturated liquid and vapour at 101325 Pa (373.124 K),
 * IAPWS-95, zero for the liquid at the triple point (checked against
 * python3-iapws in the tests): the entropy criterion's thresholds. */
#define SL_WATER_S_LIQUID_1ATM_J_KG_K 1306.9
#define SL_WATER_S_VAPOR_1ATM_J_KG_K 7354.4

typedef enum sl_partition_method {
    SL_PARTITION_SHOCK = 0,   /* order of the choices of [partition] method */
    SL_PARTITION_BUDGET = 1
} sl_partition_method;

/* Linear shock Hugoniot U_s = C + S u_p of a material (Melosh 1989, App. II). */
typedef struct sl_hugoniot {
    const char *name;
    double density_kg_m3;
    double c_m_s;
    double s;
} sl_hugoniot;

/* Ambient air where a source starts. */
typedef struct sl_partition_air {
    double temperature_K;
    double pressure_Pa;
    double density_kg_m3;
} sl_partition_air;

typedef struct sl_partition_input {
    sl_scenario_kind kind;
    /* impactor */
    sl_partition_method method;
    double vapor_energy_fraction;    /* budget method */
    double plume_heat_fraction;      /* of the energy given to the water */
    double target_heat_fraction;     /* shock method: bound on the target's waste heat */
    double air_heat_fraction;        /* of the energy deposited in the air */
    int impactor_material;           /* index of [partition] impactor_material: 0 = auto */
    double impactor_density_kg_m3;
    double impactor_water_fraction;
    double impactor_mass_kg;         /* initial */
    double sea_temperature_K;
    double ocean_depth_m;
    const sl_entry *entry;           /* results of the entry stage */
    double air_source_altitude_m;    /* where the air's share is released */
    sl_partition_air air_at_source;  /* ambient air there */
    sl_partition_air air_at_sea;     /* ambient air at sea level */
    /* explosion */
    double explosion_energy_J;
    double explosion_altitude_m;
    double explosion_heat_fraction;
} sl_partition_input;

typedef struct sl_partition {
    sl_partition_method method;
    double energy_total_J;           /* initial kinetic energy, or the explosion energy */
    double energy_in_air_J;
    double energy_at_sea_J;
    double energy_to_water_J;        /* of energy_at_sea_J, after the shallow-water share */
    double energy_vaporization_J;    /* water_vaporized_kg times the vaporisation energy */
    double energy_plume_heat_J;      /* extra sensible heat of the sea plume (fraction f_h) */
    double energy_liquid_heat_J;     /* heating the thrown-up liquid to the boiling point */
    double energy_other_J;           /* crater, waves, rock, radiation: the rest */
    double vaporization_energy_J_kg; /* sea water from the sea temperature to vapour */
    double water_vapor_limit_kg;     /* energy_at_sea_J / vaporization_energy_J_kg */
    double water_vaporized_kg;       /* sea water turned to vapour */
    double water_liquid_lofted_kg;   /* liquid thrown up with the vapour (partly vaporised water) */
    double impactor_water_kg;        /* water carried by the impactor into the sources */
    int vapor_capped;                /* the method's estimate hit the energy bound */
    /* Impact geometry (Collins et al. 2005 water-target scaling). */
    double cavity_diameter_m;
    double cavity_depth_m;
    int shallow;                     /* the cavity reaches the sea floor */
    /* Shock method diagnostics. */
    double peak_pressure_Pa;         /* at contact, planar impact approximation */
    double isobaric_core_radius_m;
    double decay_exponent;           /* the one used (after the energy bound) */
    double decay_exponent_pvm;       /* Pierazzo, Vickery & Melosh 1997 fit */
    double target_waste_heat_J;      /* waste heat of the (whole-hemisphere) water target */
    double incipient_vapor_pressure_Pa;  /* water shocked above this starts to boil on release */
    double complete_vapor_pressure_Pa;   /* ... and above this turns entirely to vapour */
    sl_source_list sources;
} sl_partition;

/* Linear Hugoniots: 0 water, then the impactor materials in the order of
 * [partition] impactor_material (1 basalt, 2 granite, 3 iron, 4 ice). */
extern const sl_hugoniot sl_partition_hugoniots[5];


/* Share out the energy and build the sources.  SL_EDATA for inputs out of
 * their physical range, SL_ENUMERIC when a root cannot be found. */
int sl_partition_solve(sl_partition *pt, const sl_partition_input *in, sl_err *e);

/* Planar impact approximation: particle velocity in the target (m/s) and
 * contact pressure (Pa) for impactor P hitting target T at SPEED_M_S. */
int sl_partition_planar_impact(const sl_hugoniot *p, const sl_hugoniot *t, double speed_m_s,
                               double *u_target_m_s, double *pressure_Pa, sl_err *e);

/* Vapour mass fraction of water after a shock to PRESSURE_PA from
 * SEA_TEMPERATURE_K and isentropic release to 1 atm (entropy criterion);
 * also the liquid fraction of partly vaporised water through *LIQUID. */
double sl_partition_vapor_fraction(double pressure_Pa, double sea_temperature_K, double *liquid);

/* Transient cavity diameter in water (Collins et al. 2005, water target). */
double sl_partition_cavity_diameter_m(double diameter_m, double density_kg_m3, double speed_m_s,
                                      double angle_rad);

void sl_partition_free(sl_partition *pt);

#endif
