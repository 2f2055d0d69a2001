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
 * with g = g0 (R/(R+h))^2.  The body stays intact (radius following its mass)
 * until the ram pressure rho_air v^2 reaches its strength; then its fragments
 * spread as a pancake (Chyba, Thomas & Zahnle 1993; Hills & Goda 1993),
 *
 *   r d^2r/dt^2 = C_s rho_air v^2 / rho_body,
 *
 * until the radius reaches f_p times the initial radius (the burst), after
 * which the debris cloud keeps that radius.  Events (breakup, burst, sea
 * level, leaving the atmosphere) are located by root finding (Brent) on the
 * step that crosses them, not by the step size.  Along the way the energy
 * given to the air (drag work plus the kinetic energy of the ablated mass)
 * is accumulated per altitude band, with the gravity work, so that
 *   E_kinetic,0 + W_gravity = E_air (drag) + E_ablation + E_kinetic,end
 * closes to the solver tolerance.
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
} sl_entry_params;


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

    int airburst;                  /* see entry.c for the criterion */
    double burst_altitude_m;       /* altitude of peak energy deposition; NaN when no airburst */
    double peak_deposition_J_m;    /* peak dE/dz */
    double peak_altitude_m;        /* where dE/dz peaked (also without an airburst) */

    int reached_sea;
    int left_atmosphere;           /* skipped out: climbed above the start altitude */
    double sea_speed_m_s;          /* at sea level (0 when it did not reach it) */
    double sea_mass_kg;
    double sea_energy_J;           /* kinetic energy arriving at the sea surface */
    double sea_angle_rad;          /* flight-path angle below the horizontal there */
    double sea_radius_m;           /* radius of the body or debris cloud there */
    double time_s;                 /* flight time to the end */
    double ground_range_m;

    double energy_air_drag_J;      /* drag work given to the air */
    double energy_ablation_J;      /* kinetic energy of the ablated mass, given to the air */
    double gravity_work_J;
    double energy_end_J;           /* kinetic energy at the end (sea or leaving) */
    double energy_in_air_J;        /* drag + ablation = sum of band_energy_J */
    double energy_error_J;         /* E0 + W - (air + end): the bookkeeping residual */

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
