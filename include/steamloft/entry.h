/* entry: a body's flight through the atmosphere to the sea.
 *
 * The meteor equations on a spherical, non-rotating Earth (flight-path angle
 * gamma measured below the horizontal, altitude h, ground range x):
 *
 *   dv/dt     = -D/m + g sin(gamma),       D = (1/2) C_D rho_air A v^2,  A = pi r^2
 *   dgamma/dt = g cos(gamma)/v - v cos(gamma)/(R + h)
 *   dh/dt     = -v sin(gamma),             dx/dt = v cos(gamma) R/(R + h)
 *   dm/dt     = -C_H rho_air A v^3 / (2 Q)                     (ablation)
 *
 * with g = g0 (R/(R+h))^2.  The body stays intact until the ram pressure
 * rho_air v^2 reaches its strength.  Then it breaks in one of two ways
 * (breakup_model; auto chooses by strength):
 *   pancake    weak rubble spreads as a debris cloud (Chyba, Thomas & Zahnle
 *              1993; Hills & Goda 1993), r d^2r/dt^2 = C_s rho_air v^2/rho_body,
 *              and once its radius reaches f_p times its first radius the cloud
 *              releases its kinetic energy as an airburst over a short path
 *              (Collins, Melosh & Marcus 2005), the part of the path below the
 *              sea going to the sea;
 *   fragments  a strong body splits into a debris cloud (as above) and a few
 *              equal pieces that separate sideways (Passey & Melosh 1980) and fly
 *              on with Weibull size-scaled strengths, each group able to break
 *              again or reach the sea (after the fragment-cloud models of
 *              Wheeler, Register & Mathias 2017).
 * Each set of equal pieces is one group (one trajectory times its count), so
 * a body gives at most 1 + 2 x (fragment_generations + 1) groups.  Events
 * (breakup, spread limit, sea level, leaving the atmosphere) are located by
 * root finding (Brent) on the step that crosses them, not by the step size;
 * the energy given to the air is spread over the altitude bands by cubic
 * Hermite interpolation inside each step.  Energy bookkeeping:
 *   E_kinetic,0 + W_gravity = E_air + E_sea + E_carried_off
 * to the solver tolerance (E_air includes the ablated vapour's share).
 *
 * The air comes through a density callback so that the same code runs on an
 * sl_atmosphere profile (chain.c) and on the exponential atmosphere of the
 * closed-form cross-checks (Collins, Melosh & Marcus 2005), which appear in
 * the tests only.
 *
 * Usage: zero an sl_entry, call sl_entry_solve() as often as needed (its
 * workspace is allocated on the first call and reused), then sl_entry_free(). */
#ifndef STEAMLOFT_ENTRY_H
#define STEAMLOFT_ENTRY_H

#include <stddef.h>

#include "steamloft/err.h"

/* Air density at an altitude.  Must accept any altitude (extrapolating beyond
 * its table), return SL_OK or a status with the message in E. */
typedef struct sl_entry_air {
    int (*density)(void *ctx, double altitude_m, double *density_kg_m3, sl_err *e);
    void *ctx;
} sl_entry_air;

typedef struct sl_entry_params {
    double diameter_m;
    double density_kg_m3;
    double speed_m_s;              /* at start_altitude_m */
    double angle_rad;              /* from the horizontal, at start_altitude_m */
    double strength_Pa;            /* breakup when rho_air v^2 reaches it */
    double start_altitude_m;
    double drag_coefficient;
    double heat_transfer_coefficient;
    double heat_of_ablation_J_kg;
    double spread_coefficient;     /* C_s of the pancake law */
    double burst_spread_factor;    /* f_p */
    double band_width_m;
    double relative_tolerance;
    double imposed_burst_altitude_m; /* NaN: compute the burst */
    double imposed_burst_fraction;   /* fraction of E_kinetic,0 released there */
    int flat_no_gravity;           /* 1: flat Earth without gravity (closed-form cross-checks) */
    /* Break-up (after the older members, so positional initialisers keep
     * working; sl_entry_params_breakup_defaults() fills them). */
    int breakup_model;             /* SL_ENTRY_MODEL_* */
    double fragmenting_strength_Pa; /* auto: fragments at or above this strength */
    int fragment_count;            /* pieces per break (>= 2) */
    int fragment_generations;      /* breaks a piece may undergo (0: the body breaks once) */
    double cloud_fraction;         /* mass fraction crushed into a debris cloud at a break */
    double weibull_exponent;       /* piece strength = parent's (m_parent/m_piece)^a */
    double separation_coefficient; /* Passey & Melosh lateral-speed constant */
    double radiation_temperature_K; /* heat flux <= sigma T^4 (0: no limit) */
} sl_entry_params;

enum { SL_ENTRY_MODEL_AUTO = 0, SL_ENTRY_MODEL_PANCAKE, SL_ENTRY_MODEL_FRAGMENTS };

/* What happened to a body: SL_ENTRY_MODE_* (also the text of sl_entry_mode_name). */
enum { SL_ENTRY_MODE_INTACT = 0, SL_ENTRY_MODE_PANCAKE, SL_ENTRY_MODE_FRAGMENTS, SL_ENTRY_MODE_IMPOSED };
const char *sl_entry_mode_name(int mode);

/* How a group of pieces ended. */
enum { SL_ENTRY_END_SEA = 0, SL_ENTRY_END_BURST, SL_ENTRY_END_AIR, SL_ENTRY_END_LEFT, SL_ENTRY_END_SPLIT };

#define SL_ENTRY_MAX_GROUPS 16 /* >= 1 + 2 x (the largest fragment_generations, 5, + 1) */

/* One group of equal pieces: the body, a set of fragments, or a debris cloud. */
typedef struct sl_entry_group {
    int cloud;                     /* 1: a debris cloud (pancake), 0: solid pieces */
    int generation;                /* 0: the body itself */
    double count;                  /* number of equal pieces */
    double piece_mass_kg;          /* mass of one piece when the group formed */
    double strength_Pa;
    double start_altitude_m;       /* where the group formed */
    int end;                       /* SL_ENTRY_END_* */
    double end_altitude_m;
    double sea_mass_kg;            /* whole group, at the sea (0 otherwise) */
    double sea_speed_m_s;
    double sea_energy_J;
    double lateral_spread_m;       /* sideways distance from the body's path at the end */
} sl_entry_group;


typedef struct sl_entry_work sl_entry_work; /* GSL workspaces (opaque) */

typedef struct sl_entry {
    /* Energy deposited in the air per altitude band: band i spans
     * [i*band_width_m, (i+1)*band_width_m); the top band ends at or above the
     * start altitude. */
    size_t n_bands;
    double band_width_m;
    double *band_energy_J;

    double initial_mass_kg;
    double initial_energy_J;       /* kinetic energy at the start altitude */

    int broke_up;
    double breakup_altitude_m;     /* NaN when it did not break up */
    double breakup_speed_m_s;

    int spread_reached;            /* the cloud reached f_p times its radius */
    double spread_altitude_m;      /* NaN when not */

    int mode;                      /* SL_ENTRY_MODE_*: how the body broke */
    size_t n_groups;
    sl_entry_group groups[SL_ENTRY_MAX_GROUPS];
    double sea_pieces;             /* solid pieces (not clouds) that reached the sea */
    double sea_fragment_energy_J;  /* their kinetic energy there */
    double sea_footprint_m;        /* largest sideways spread of what reached the sea */

    int airburst;                  /* see entry.c for the criterion */
    double burst_altitude_m;       /* altitude of peak energy deposition; NaN when no airburst */
    double peak_deposition_J_m;    /* peak dE/dz */
    double peak_altitude_m;        /* where dE/dz peaked (also without an airburst) */

    int reached_sea;
    int left_atmosphere;           /* skipped out: climbed above the start altitude */
    double sea_speed_m_s;          /* sqrt(2 E_sea / m_sea) (0 when nothing reached it) */
    double sea_mass_kg;            /* all pieces and cloud mass arriving */
    double sea_energy_J;           /* kinetic energy arriving at the sea surface */
    double sea_angle_rad;          /* energy-weighted flight-path angle below the horizontal */
    double sea_radius_m;           /* radius of the sphere of the arriving mass */
    double time_s;                 /* flight time to the end */
    double ground_range_m;

    double energy_air_drag_J;      /* drag work given to the air */
    double energy_ablation_J;      /* kinetic energy of the ablated mass, given to the air */
    double gravity_work_J;
    double energy_burst_J;         /* released by debris clouds over their burst paths (in air) */
    double energy_carried_off_J;   /* kinetic energy of what left the atmosphere */
    double energy_end_J;           /* sea + carried off */
    double energy_in_air_J;        /* drag + ablation + bursts = sum of band_energy_J */
    double energy_error_J;         /* E0 + W - (air + sea + carried off): the bookkeeping residual */

    int imposed;                   /* the burst was imposed by the scenario */
    long n_steps;
    sl_entry_work *w;
} sl_entry;

/* Integrate the entry for P through AIR.  Fills EN (reusing its workspace).
 * SL_EDATA for impossible parameters, SL_ENUMERIC when the solver fails,
 * the callback's status when the air fails, SL_ENOMEM. */
int sl_entry_solve(sl_entry *en, const sl_entry_params *p, const sl_entry_air *air, sl_err *e);

/* Energy deposited in the air between BOTTOM_M and TOP_M (bands split in proportion). */
double sl_entry_energy_between(const sl_entry *en, double bottom_m, double top_m);

/* Energy-weighted mean altitude of the energy deposited in the air (NaN when
 * none was). */
double sl_entry_deposition_centroid_m(const sl_entry *en);

/* Release the workspace and the bands; safe on a zeroed struct. */
void sl_entry_free(sl_entry *en);

#endif
