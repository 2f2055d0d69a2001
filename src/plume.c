/* plume: moist, non-Boussinesq buoyant thermals with entrainment and added mass.
 *
 * Physics.  Each source is an instantaneous release of buoyancy, a "thermal"
 * in the sense of Morton, Taylor & Turner (1956, Proc. R. Soc. A 234, 1-23):
 * a sphere of radius b rising at speed w, entraining ambient air through its
 * surface at the velocity alpha*w (0.2-0.35 in laboratory thermals, Scorer
 * 1957; Turner 1973; 0.29 fitted to two explosion clouds, docs/physics.md
 * section 6).
 * The equations are written for masses rather than volumes, so they hold
 * across several scale heights (the volcanic-plume form of Woods 1988, Bull.
 * Volcanol. 50, 169; here for a thermal, not a maintained plume).  State:
 *
 *   z    centre altitude (m)                   dz/dt   = w
 *   Ma   dry air in the thermal (kg)           dMa/dt  = (1 - q_e) m_e
 *   Mw   water, all phases (kg)                dMw/dt  = q_e m_e - m_f
 *   Pi   impulse (M + A) w, M = Ma + Mw        dPi/dt  = g (rho_a V - M) - m_f w
 *   H    enthalpy of the mixture (J)           dH/dt   = m_e h_e - m_f h_f - rho_a g V w
 *                                                        + m_e w^2 / 2
 *
 * with the entrainment rate m_e = 4 pi b^2 alpha rho_a |w| (ambient density: an
 * entrainment coefficient independent of the density ratio, as Salizzoni et
 * al. 2024, J. Fluid Mech. 995, find for jets, SEEN abstract), V = 4/3 pi b^3 the
 * gas volume (ideal-gas mixture of dry air and vapour at the ambient
 * pressure p(z); condensate volume neglected), q_e and h_e the specific
 * humidity and enthalpy of the ambient moist air, g(z) = g0 (R0/(R0+z))^2.
 * A = k rho_a V is the added mass: the displaced air set moving with the
 * thermal, k = 0.5 for a sphere (potential flow; for a uniform fluid sphere
 * the anomaly then accelerates at 2B/3 when its density is near the air's,
 * Tarshish, Jeevanjee & Lecoanet 2018, J. Atmos. Sci., arXiv:1809.08672,
 * SEEN abstract), so a gas much lighter than the air accelerates at g/k and
 * not at g (rho_a/rho - 1)/(1 + k) as an added mass on its own mass would
 * give.  w = Pi/(M + A) follows from the state; the impulse changes only
 * by buoyancy and what fallout takes with it.  The term -rho_a g V w is V
 * dp/dt for a thermal in hydrostatic surroundings (the adiabatic
 * expansion); the last term of dH/dt is the kinetic energy given to the
 * entrained mass, dissipated into heat.  As A changes at a given impulse
 * the kinetic energy (M + A) w^2/2 changes by -w^2/2 dA: that energy goes
 * to (or, when A shrinks as the thermal rises into thinner air, comes from)
 * the surrounding air, E_air = integral of (w^2/2) dA.  Its rate jumps
 * where the phase changes (dA/dt follows dT/dt), so it is not integrated
 * itself: from the kinetic-energy budget, d((M + A) w^2/2)/dt = w B -
 * (w^2/2)(m_e + m_f) - (w^2/2) dA/dt, E_air = KE(0) - KE(t) + W(t) with the
 * work W = integral of [w B - (w^2/2)(m_e + m_f)] dt, a smooth integrand
 * carried as the state IWORK.  With these the total energy E = H + M Phi(z)
 * + (M + A) w^2/2 + E_air, Phi = g0 R0 z/(R0+z), changes only by what
 * entrainment brings, m_e (h_e + Phi), and fallout removes, m_f (h_f + Phi
 * + w^2/2): the enthalpy equation (adiabatic expansion, dissipation,
 * fallout) against the mechanical work, to the solver tolerance
 * (tests/test_plume.c).
 * In the Boussinesq limit (A -> k M) these reduce to the MTT thermal
 * equations, d(b^3)/dt = 3 alpha b^2 w, d((1+k) b^3 w)/dt = b^3 g',
 * d(b^3 g')/dt = -N^2 b^3 w.
 *
 * Moist thermodynamics.  The water is in equilibrium at every instant
 * ("saturation adjustment"): vapour up to saturation over liquid above the
 * triple point and over ice below it (sl_water_esat_Pa, Murphy & Koop 2005),
 * the excess condensed; at 273.16 K liquid and ice coexist and share the
 * latent heat of fusion.  Enthalpies per kg, relative to 273.16 K:
 *   dry air c_pa (T-Tt), vapour L_v0 + c_pv (T-Tt), liquid c_l (T-Tt),
 *   ice -L_f0 + c_i (T-Tt),
 * with L_v0 and L_s0 = L_v0 + L_f0 the water module's latent heats at the
 * triple point, carried to other temperatures by Kirchhoff's law with the
 * constant heat capacities of water.h.  The enthalpy is then an exact state
 * function, so condensation and freezing conserve it and the energy budget
 * closes.  Buoyancy uses the mixture density (Ma + Mw)/V, condensate loading
 * included.
 *
 * Fallout.  Condensate settles at the speed v_s relative to the well-mixed
 * thermal and leaves through its lower cross-section: m_f = (3 v_s / 4 b) Mc
 * (the flux n v_s pi b^2 of a uniformly loaded sphere; the sedimentation rule
 * of particle clouds, Bush, Thurber & Blanchette 2003, J. Fluid Mech. 489).
 * v_s is a parameter (default 1 m/s, the order of drizzle and snowflake fall
 * speeds, Rogers & Yau 1989, MEM; 0 keeps all condensate aloft).  The water a
 * source brings is first put in equilibrium at the ambient pressure (hot
 * liquid flashes) and the condensate then present - spray and drops thrown
 * up with the plume - falls back at once with its enthalpy ("spray
 * collapse", counted as fallout): drops of millimetres fall at ~10 m/s, and
 * a plume carrying more water than air would otherwise collapse like an
 * overloaded eruption column (Sparks et al. 1997).
 *
 * Apex and cloud.  The ODEs are integrated by the ODE-with-events layer
 * (src/ode.c: Dormand-Prince 5(4), step by step on a scaled state).  Events
 * (w for the apex, the buoyancy force for the neutral level) are located on
 * each step's interpolant, never by step size.  The workspace is allocated
 * once (sl_plume_init); nothing is allocated while a thermal rises.
 * Measured: ~26 accepted steps and under 0.1 ms per thermal (bench
 * ensemble) at the default tolerance; 12000 random sources (1e3-1e14 kg of
 * air, up to 100 times as much water, 160-9000 K, 0-90 km, or heat
 * 1e9-1e20 J in 10 m-30 km spheres; three profiles) all rise without
 * failure, the energy budget closed to 4e-6 and the water budget to 1e-15
 * (with the added mass on the thermal's own mass; with it on the displaced
 * air, the 600 sources of tests/test_plume.c close the energy budget to
 * 1.5e-7).
 *
 * Cloud rule.  The young cloud spans the layer between the neutral-buoyancy
 * level z_N (where the buoyancy force first vanished) and the highest reach
 * of the thermal's top, z_apex + b_apex: the overshooting thermal collapses
 * and spreads between its neutral height and its overshoot height, the
 * "umbrella between H_B and H_T" of eruption columns (Sparks 1986, Bull.
 * Volcanol. 48, 3-15, SEEN).  We prefer it to the simpler placement
 * (centred on z_N, apex radius as half-thickness)
 * because in a deep atmosphere the thermal's radius grows with the density
 * scale height as well as by entrainment (b_apex ~ 0.5 z_apex for a 1-2 Mt
 * cloud), which put the cloud bottom far below the observed one; the rule
 * used reproduces the 1.69 Mt surface-burst cloud (top 21.6 km, bottom
 * 12.3 km) within the tolerance of tests/test_plume.c.  In the Boussinesq
 * limit it spans [2^-1/4, 1 + alpha] z_max.  Within the layer the mass is
 * placed where it is: the umbrella's volume is widest at the neutral level,
 * where the collapsing thermal spreads, and narrows linearly to nothing at
 * the top of the overshoot (a triangular profile with its mode at z_N;
 * Morton, Taylor & Turner 1956; Sparks 1986; Woods 1988), and its mass is
 * that volume times the ambient density (the gas has come to rest near its
 * level), so the overshoot, in thinner air, carries little of it
 * (sl_injection_umbrella_weight; docs/physics.md section 6).
 *
 * Ballistic regime: see sl_plume_rise's helpers ballistic_weight and
 * ballistic_flight below (and docs/physics.md section 6).
 *
 * Regimes.  X = r/H, the initial radius (the source's, or the radius its gas
 * would fill at ambient pressure when that is larger) over the scale height
 * H = p/(rho g) at the source.  X <= 1: a thermal.  1 < X < 4: "blow-out",
 * a share ln X / ln 4 of the water is ballistic, the rest follows the
 * thermal (so results change smoothly across the crossing).  X >= 4, or a
 * thermal whose centre reaches 120 km: "ballistic", all the gas (after the
 * spray has fallen back) flies above the atmosphere and re-enters
 * (ballistic_flight: launch speed sqrt(2 e) from the gas's specific energy,
 * Melosh 1989 ch. 5; 45 degree mass-mean path; re-entry over the disc of its
 * range, stopped where it has met its own mass of air, water left in the two
 * scale heights above; Shuvalov 1999; Pierazzo et al. 2010).  A thermal whose
 * top (apex + radius) passes 120 km but not its centre keeps the cloud rule,
 * its reach clipped at 120 km.  The regime of each source is in every
 * output, with a validity line; these numbers are the roughest of the tool.
 * Each thermal also reports its radius over the scale height at the apex:
 * near 1 for a 1-2 Mt cloud, 2.35 for 15 Mt, where the bulk thermal strains;
 * from SL_PLUME_WIDE_SCALE_HEIGHTS (3.4 for 50 Mt) its top is capped (see
 * sl_plume_rise) and the event's widest_thermal makes every output's
 * validity line say "strained".
 *
 * Units: SI throughout (m, s, kg, J, K, Pa). */
#include "steamloft/plume.h"
#include "steamloft/cuberoot.h"
#include "steamloft/minmax.h"
#include "steamloft/ode.h"
#include "steamloft/units.h"
#include "steamloft/water.h"

#include <gsl/gsl_errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

enum { IZ, IMA, IMW, IPI, IH, IEIN, IEOUT, IWIN, IWOUT, IWORK, NY };

#define T_TRIPLE SL_T_TRIPLE_K
#define CPA SL_CP_DRY_AIR_J_KG_K
#define CPV SL_CP_VAPOR_J_KG_K
#define CPL SL_CP_LIQUID_J_KG_K
#define CPI SL_CP_ICE_J_KG_K
#define RA SL_R_DRY_AIR_J_KG_K
#define RV SL_R_VAPOR_J_KG_K
#define EPS_RV (SL_R_DRY_AIR_J_KG_K / SL_R_VAPOR_J_KG_K)
#define FOUR_PI (4.0 * SL_PI)

/* Above this temperature no condensate can exist at any pressure the tool
 * meets (critical point of water 647.096 K, IAPWS; MEM). */
#define T_NO_CONDENSATE_K 640.0
/* Below this the saturation vapour pressure over ice is < 1e-8 Pa (Murphy &
 * Koop 2005 hold above 110 K): vapour is taken as zero. */
#define T_FROZEN_SOLID_K 120.0
/* Hottest initial thermal the heat-and-radius set-up makes (PRACTICE: a
 * fireball after its radiative phase is a few thousand kelvin; the ideal-gas,
 * constant-cp model of air is used no hotter).  A source with more heat than
 * its sphere can hold below it expands at this temperature to the volume it
 * needs.  The rise depends on the heat, hardly on this temperature. */
#define T_FIREBALL_CAP_K 3000.0

/* The last saturated temperature solve: its inputs, root and the enthalpy's
 * partial derivatives there, so that the next solve starts from the
 * first-order prediction T + (dH - h_Ma dMa - h_Mw dMw - h_p dp) / h_T
 * (one evaluation of the saturation law fewer than a Newton step from T). */
typedef struct warm_start {
    int ok, ice;
    double H, Ma, Mw, p, T, h_T, h_Ma, h_Mw, h_p;
    double es_Pa;              /* saturation pressure at T */
} warm_start;

/* Events of the rise (ode.h: each positive before it, <= 0 at it). */
enum { EV_APEX = 0,            /* w: the apex (terminal) */
       EV_NEUTRAL,             /* buoyancy force: the neutral level (not terminal, the first only) */
       EV_TOP,                 /* z_top - z: the top of the atmosphere profile (terminal) */
       N_EVENTS };

struct sl_plume_work {
    sl_ode *ode;               /* the ODE-with-events layer (ode.h) */
    double y[NY], y_tmp[NY];
    double scale[NY];
    /* Context of the current rise (set before integrating). */
    const sl_atmosphere *atm;
    sl_atmos_cursor atm_cursor; /* search position of the light atmosphere query */
    double k, alpha, v_fall;
    double lv0_J_kg, lf0_J_kg;
    double z_top_m;            /* stop: top of the atmosphere profile */
    double z_bottom_m;         /* bottom of the atmosphere profile */
    int rhs_failed;            /* the atmosphere could not be evaluated */
    double T_guess;            /* last equilibrium temperature: the root finder's first guess */
    warm_start warm;           /* the last saturated solve, for the next one's first guess */
    double es_triple_Pa;       /* saturation pressure at the triple point (sl_water_esat_Pa) */
    sl_err rhs_err;
    double kinetic0_J;         /* kinetic energy of the rising gas at the start */
    int rising;                /* the source starts at rest or rising: w >= 0 up to the apex */
    /* The event values of the state the right-hand side saw last (the end of
     * a trial step, where the events are evaluated next when it is
     * accepted): reused when the state is the same, bit for bit. */
    double last_s[NY], last_g[N_EVENTS];
    int last_ok;
};

/* Diagnosed quantities of a state. */
typedef struct diag {
    double z_m, T_K, vapor_kg, liquid_kg, ice_kg, volume_m3, radius_m;
    double mass_kg, added_kg, w_m_s, buoy_N, g_m_s2, phi_J_kg;
    sl_atmos_state amb;
} diag;

/* ------------------------------------------------------------------ params */

void sl_plume_params_default(sl_plume_params *par)
{
    par->entrainment_alpha = 0.29;   /* fitted to two explosion clouds (docs/physics.md section 6) */
    par->added_mass_k = 0.5;         /* sphere in potential flow (MEM-high) */
    par->fallout_speed_m_s = 1.0;    /* drizzle/snow fall speed order (Rogers & Yau 1989, MEM) */
    par->ice_sediment_fraction = 0.5;/* PRACTICE, between the end-members (see injection.c) */
    par->rtol = 1.0e-6;        /* halving it moves tops and stratospheric water < 1e-3 (test_plume_convergence.sh) */
    par->max_time_s = 7200.0;
}

int sl_plume_params_check(const sl_plume_params *p, sl_err *e)
{
    struct {
        const char *key;
        double v, lo, hi;
    } c[] = {
        {"entrainment_alpha", p->entrainment_alpha, 0.0, 1.0},
        {"added_mass_k", p->added_mass_k, 0.0, 2.0},
        {"fallout_speed_m_s", p->fallout_speed_m_s, 0.0, 50.0},
        {"ice_sediment_fraction", p->ice_sediment_fraction, 0.0, 1.0},
        {"rtol", p->rtol, 1.0e-12, 1.0e-3},
        {"max_time_s", p->max_time_s, 60.0, 1.0e5},
    };
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++)
        if (!isfinite(c[i].v) || c[i].v < c[i].lo || c[i].v > c[i].hi)
            SL_FAIL_RETURN(e, SL_EDATA, "[plume] %s = %g is outside the valid range %g to %g", c[i].key, c[i].v,
                           c[i].lo, c[i].hi);
    return SL_OK;
}

const char *sl_plume_regime_name(int regime)
{
    return regime == SL_REGIME_BALLISTIC ? "ballistic" : regime == SL_REGIME_BLOWOUT ? "blow-out" : "thermal";
}

/* ------------------------------------------------------------------ thermo */

/* Gravity of the atmosphere module (inverse square, USSA76 g0 and r0), so the
 * thermal feels the field the profile is hydrostatic in. */
static double gravity_m_s2(double z_m)
{
    return sl_atmosphere_gravity_m_s2(z_m);
}

/* Potential of that inverse-square field, zero at sea level: the integral of
 * g dz, g0 r0 z / (r0 + z). */
static double potential_J_kg(double z_m)
{
    return SL_USSA_G0_M_S2 * SL_USSA_R0_M * z_m / (SL_USSA_R0_M + z_m);
}

/* Saturation mass mixing ratio (kg vapour per kg dry air) at T, p: over
 * liquid above the triple point, over ice below; infinite when the vapour
 * pressure reaches p (no condensation possible). */
static double sat_ratio(double T_K, double p_Pa)
{
    if (T_K >= T_NO_CONDENSATE_K)
        return INFINITY;
    if (T_K <= T_FROZEN_SOLID_K)
        return 0.0;
    double es = sl_water_esat_Pa(T_K);
    if (!(es < p_Pa))
        return INFINITY;
    return EPS_RV * es / (p_Pa - es);
}

/* Enthalpy (J) of Ma, Mw at T with vapour at saturation (capped at Mw), the
 * condensate all liquid (ICE = 0) or all ice (ICE = 1).  With D non-NULL,
 * for the root finder: D[0], D[1] the first and second derivatives of the
 * enthalpy in T (J/K, J/K^2), D[2], D[3] those of the vapour mass (kg/K,
 * kg/K^2), all analytic from sl_water_esat_slopes_Pa (the same saturation
 * law, its derivatives exact).  Below saturation (vapour = Mw) the vapour's
 * derivatives are zero. */
static double h_sat(const sl_plume_work *w, double T_K, double Ma, double Mw, double p_Pa, int ice, double *vap,
                    double *D)
{
    double dT = T_K - T_TRIPLE;
    double cc = ice ? CPI : CPL;
    double es = 0.0, g1 = 0.0, g2 = 0.0, rs;
    if (T_K >= T_NO_CONDENSATE_K)
        rs = INFINITY;
    else if (T_K <= T_FROZEN_SOLID_K)
        rs = 0.0;
    else {
        es = D ? sl_water_esat_slopes_Pa(T_K, &g1, &g2) : sl_water_esat_Pa(T_K);
        rs = es < p_Pa ? EPS_RV * es / (p_Pa - es) : INFINITY;
    }
    double mvs = Ma * rs;
    double mv = mvs < Mw ? mvs : Mw; /* fmin(Mw, Ma rs): Ma rs is never NaN here */
    double mc = Mw - mv;
    if (vap)
        *vap = mv;
    double latent = w->lv0_J_kg + (ice ? w->lf0_J_kg : 0.0);
    if (D) {
        D[0] = Ma * CPA + mv * CPV + mc * cc;
        D[1] = D[2] = D[3] = 0.0;
        if (mv < Mw && es > 0.0) {
            /* rs = eps es/(p - es): rs' = eps p es'/(p - es)^2,
             * rs'' = eps p (es''/(p - es)^2 + 2 es'^2/(p - es)^3),
             * es' = es g1, es'' = es (g1^2 + g2). */
            double lat_T = latent + (CPV - cc) * dT;
            double q = 1.0 / (p_Pa - es);
            double des = es * g1, d2es = es * (g1 * g1 + g2);
            double drs = EPS_RV * p_Pa * q * q * des;
            double d2rs = EPS_RV * p_Pa * q * q * (d2es + 2.0 * des * des * q);
            D[2] = Ma * drs;
            D[3] = Ma * d2rs;
            D[0] += D[2] * lat_T;
            D[1] = D[3] * lat_T + 2.0 * D[2] * (CPV - cc);
        }
    }
    return (Ma * CPA + mv * CPV + mc * cc) * dT + mv * w->lv0_J_kg - (ice ? mc * w->lf0_J_kg : 0.0);
}

/* h_sat at the triple point with liquid condensate (the saturation pressure
 * there kept in the workspace): the same numbers as h_sat(T_TRIPLE, ice 0). */
static double h_triple(const sl_plume_work *w, double Ma, double Mw, double p_Pa, double *vap)
{
    double es = w->es_triple_Pa;
    double rs = es < p_Pa ? EPS_RV * es / (p_Pa - es) : INFINITY;
    double mvs = Ma * rs;
    double mv = mvs < Mw ? mvs : Mw;
    *vap = mv;
    return mv * w->lv0_J_kg;
}

/* Root of h_sat(T) = H on [lo, hi] (h(lo) <= H <= h(hi)); FLO, FHI are
 * h - H at the ends when known (NaN if not).  Halley's method (the exact
 * first and second derivatives) from GUESS, kept inside the shrinking
 * bracket; a step that leaves it is replaced by the secant through the
 * bracket's ends when both values are known (the step from the unsaturated
 * side, where h is linear, overshoots), else by bisection.  Converged when
 * the step is below 1e-12 T, or earlier when the vapour (saturated) moves by
 * less than SOLVE_VAPOR_STEP of itself over the step and the step's own
 * error estimate is below SOLVE_T_ERR T: Halley's error is about
 * (c^2 - h3/6h') |dT|^3, c = h''/2h', h3 the third derivative, here
 * ~ h'' mv''/mv' (the exponential saturation law), taken four times.  The
 * vapour is then carried to the root by its Taylor series to second order
 * (error about (dmv/mv)^3/6, 1.3e-9 of itself at the bound).  Measured on
 * the bench ensemble against a solve iterated to the last step: T within
 * 6.4e-12 of itself, the vapour within 3.2e-9, both far inside the plume's
 * relative tolerance (1e-6), in 1.33 evaluations of h_sat per solve.  The
 * bounds were 1e-5 and 1e-14 (T within 3.4e-15, vapour 5.4e-13, 1.87
 * evaluations per solve); the member outputs moved less than when the
 * plume's tolerance is halved (scripts/compare-physics.sh). */
#define SOLVE_VAPOR_STEP 2.0e-3
#define SOLVE_T_ERR 1.0e-10
static double solve_T(const sl_plume_work *w, double H, double Ma, double Mw, double p, int ice, double lo, double hi,
                      double flo, double fhi, double guess, double *vap, double *dhdT)
{
    *dhdT = NAN;
    double x = (guess > lo && guess < hi) ? guess : (isfinite(hi) ? 0.5 * (lo + hi) : lo + 1.0);
    for (int it = 0; it < 100; it++) {
        double D[4], mv;
        double f = h_sat(w, x, Ma, Mw, p, ice, &mv, D) - H;
        *vap = mv;
        *dhdT = D[0];
        if (f == 0.0)
            return x;
        if (f < 0.0) {
            lo = x;
            flo = f;
        } else {
            hi = x;
            fhi = f;
        }
        double xn = NAN;
        if (D[0] > 0.0) {
            double dxn = f / D[0];              /* Newton's step */
            double t = 0.5 * dxn * D[1] / D[0]; /* Halley's correction */
            double dx = fabs(t) < 0.5 ? dxn / (1.0 - t) : dxn;
            double c = 0.5 * D[1] / D[0];
            double adx = fabs(dx);
            if (adx <= 1.0e-12 * x ||
                (mv > 0.0 && mv < Mw && D[2] > 0.0 && D[2] * adx <= SOLVE_VAPOR_STEP * mv &&
                 4.0 * (c * c + fabs(c * D[3] / D[2]) / 3.0) * adx * adx * adx <= SOLVE_T_ERR * x)) {
                double v = mv - D[2] * dx + 0.5 * D[3] * dx * dx;
                *vap = v < Mw ? v : Mw;
                return x - dx;
            }
            xn = x - dx;
        }
        if (!(xn > lo && xn < hi)) {
            double wdt = hi - lo;
            xn = 0.5 * (lo + hi);
            if (flo < 0.0 && fhi > 0.0) {
                double xs = lo - flo * wdt / (fhi - flo);
                if (xs > lo + 1.0e-3 * wdt && xs < hi - 1.0e-3 * wdt)
                    xn = xs;
            }
        }
        x = xn;
    }
    h_sat(w, x, Ma, Mw, p, ice, vap, NULL);
    return x;
}

/* First guess of a saturated solve: the prediction from the last one on the
 * same branch (WS may be NULL), else GUESS. */
static double predict_T(const warm_start *ws, int ice, double H, double Ma, double Mw, double p, double guess)
{
    if (ws == NULL || !ws->ok || ws->ice != ice)
        return guess;
    double T = ws->T + (H - ws->H - ws->h_Ma * (Ma - ws->Ma) - ws->h_Mw * (Mw - ws->Mw) - ws->h_p * (p - ws->p)) / ws->h_T;
    return isfinite(T) ? T : guess;
}

/* Record a saturated solve's root T, vapour MV and enthalpy slope H_T (of
 * the root finder's last evaluation) in WS (if not NULL):
 * h = (Ma c_pa + Mw c_c)(T - Tt) - [ice] Mw L_f0 + mv Lambda(T), mv = Ma r_s(T, p),
 * Lambda = L_v0 + [ice] L_f0 + (c_pv - c_c)(T - Tt), dr_s/dp = -r_s/(p - e_s). */
static void keep_warm(const sl_plume_work *w, warm_start *ws, int ice, double H, double Ma, double Mw, double p,
                      double T, double mv, double h_T)
{
    if (ws == NULL)
        return;
    double cc = ice ? CPI : CPL, dT = T - T_TRIPLE;
    double lam = w->lv0_J_kg + (ice ? w->lf0_J_kg : 0.0) + (CPV - cc) * dT;
    double rs = mv / Ma, es = p * rs / (EPS_RV + rs);
    ws->ok = mv > 0.0 && mv < Mw && h_T > 0.0 && isfinite(h_T);
    ws->ice = ice;
    ws->H = H;
    ws->Ma = Ma;
    ws->Mw = Mw;
    ws->p = p;
    ws->T = T;
    ws->es_Pa = es;
    ws->h_T = h_T;
    ws->h_Ma = CPA * dT + rs * lam;
    ws->h_Mw = cc * dT - (ice ? w->lf0_J_kg : 0.0);
    ws->h_p = -Ma * lam * rs / (p - es);
}

/* Equilibrium temperature and phases for enthalpy H, dry air Ma, water Mw at
 * pressure p (saturation adjustment).  *T holds a first guess on entry (the
 * root is found to 1e-12 whatever the guess). */
static void equilibrate_ws(const sl_plume_work *w, double H, double Ma, double Mw, double p, double *T, double *mv,
                           double *ml, double *mi, warm_start *ws)
{
    *ml = *mi = 0.0;
    /* All vapour: H linear in T. */
    double T1 = T_TRIPLE + (H - Mw * w->lv0_J_kg) / (Ma * CPA + Mw * CPV);
    double rs1 = NAN; /* r_s(T1) when computed */
    /* Condensate at T1 is certain without the saturation law when the last
     * saturated solve was at a temperature above T1 and its saturation
     * pressure, at this pressure, holds less than Mw (r_s grows with T; the
     * margin covers the 4e-8 step of e_s between ice and liquid at Tt). */
    int sure = ws && ws->ok && T1 <= ws->T && T1 > T_FROZEN_SOLID_K && ws->es_Pa < p &&
               Ma * EPS_RV * ws->es_Pa / (p - ws->es_Pa) < Mw * (1.0 - 1.0e-6);
    if (!sure && (Mw <= 0.0 || Mw <= Ma * (rs1 = sat_ratio(T1, p)))) {
        *T = T1;
        *mv = Mw;
        return;
    }
    double vap_t = 0.0, hl = 0.0;
    if (T1 < T_TRIPLE)
        hl = h_triple(w, Ma, Mw, p, &vap_t);
    if (T1 >= T_TRIPLE || H >= hl) {
        /* Liquid condensate, T above the triple point: the root lies above
         * lo = max(T1, Tt) (condensation heats) and below
         * hi = T1 + Mw (L_v0 + L_f0)/(Ma c_pa) + 1 K, capped at 640 K.  There
         * h_sat(hi) > H always: with T >= lo, h_sat(T) - H = Ma c_pa (T - T1)
         * + mv c_pv (T - T1) + mc (c_l (T - Tt) - c_pv (T1 - Tt) - L_v0)
         * >= Ma c_pa (T - T1) - Mw L_v0 (c_l > c_pv), which is at least
         * Mw L_f0 + Ma c_pa at hi; at the 640 K cap (no condensate) h_sat is
         * the all-vapour enthalpy, above H since T1 < 640 K.  So the bracket
         * needs no check. */
        double lo = sl_max(T1, T_TRIPLE);
        double hi = sl_min(T1 + Mw * (w->lv0_J_kg + w->lf0_J_kg) / (Ma * CPA) + 1.0, T_NO_CONDENSATE_K);
        /* h_sat - H at lo: at T1, (Ma rs(T1) - Mw) times the latent heat
         * there (the all-vapour enthalpy at T1 is H); at Tt, hl - H. */
        double flo = T1 >= T_TRIPLE ? (Ma * rs1 - Mw) * (w->lv0_J_kg + (CPV - CPL) * (T1 - T_TRIPLE)) : hl - H;
        double v, hT;
        *T = solve_T(w, H, Ma, Mw, p, 0, lo, hi, flo, NAN, predict_T(ws, 0, H, Ma, Mw, p, *T), &v, &hT);
        keep_warm(w, ws, 0, H, Ma, Mw, p, *T, v, hT);
        *mv = v;
        *ml = Mw - v;
        return;
    }
    double mc_t = Mw - vap_t;
    double hi_ice = hl - mc_t * w->lf0_J_kg;
    if (H <= hi_ice) {
        double lo = sl_max(T1, 0.5 * T_FROZEN_SOLID_K);
        double flo = T1 >= lo ? (Ma * rs1 - Mw) * (w->lv0_J_kg + w->lf0_J_kg + (CPV - CPI) * (T1 - T_TRIPLE)) : NAN;
        double v, hT;
        *T = solve_T(w, H, Ma, Mw, p, 1, lo, T_TRIPLE, flo, hi_ice - H, predict_T(ws, 1, H, Ma, Mw, p, *T), &v, &hT);
        keep_warm(w, ws, 1, H, Ma, Mw, p, *T, v, hT);
        *mv = v;
        *mi = Mw - v;
        return;
    }
    /* At the triple point: liquid and ice coexist; the enthalpy between the two
     * branches sets the frozen share. */
    *T = T_TRIPLE;
    *mv = vap_t;
    *mi = (hl - H) / w->lf0_J_kg;
    *ml = mc_t - *mi;
}

/* equilibrate_ws without a warm start: *T is the first guess. */
static void equilibrate(const sl_plume_work *w, double H, double Ma, double Mw, double p, double *T, double *mv,
                        double *ml, double *mi)
{
    equilibrate_ws(w, H, Ma, Mw, p, T, mv, ml, mi, NULL);
}

/* Ambient moist air: specific humidity and enthalpy per kg. */
static void ambient(const sl_plume_work *w, const sl_atmos_state *a, double *q_e, double *h_e)
{
    double x = a->h2o_mole_fraction > 0.0 ? a->h2o_mole_fraction : 0.0;
    double r = sl_water_mixing_ratio_from_mole_fraction(x);
    double q = r / (1.0 + r);
    double dT = a->temperature_K - T_TRIPLE;
    *q_e = q;
    *h_e = (1.0 - q) * CPA * dT + q * (w->lv0_J_kg + CPV * dT);
}

/* Physical state from the scaled vector S. */
static int diagnose(sl_plume_work *w, const double *s, diag *d)
{
    double z = s[IZ] * w->scale[IZ];
    double Ma = s[IMA] * w->scale[IMA], Mw = s[IMW] * w->scale[IMW];
    double Pi = s[IPI] * w->scale[IPI], H = s[IH] * w->scale[IH];
    double zq = sl_min(sl_max(z, w->z_bottom_m), w->atm->altitude_m[w->atm->n - 1]);
    /* A trial state of a too-long step can be unphysical: GSL_EDOM makes the
     * evolve retry with a shorter step (GSL_EBADFUNC would abort). */
    if (!isfinite(z) || !isfinite(Ma) || !isfinite(Mw) || !isfinite(H) || Ma <= 0.0 || Mw < 0.0)
        return GSL_EDOM;
    int rc = sl_atmosphere_air(w->atm, zq, &w->atm_cursor, &d->amb, &w->rhs_err);
    if (rc != SL_OK) {
        w->rhs_failed = 1;
        return GSL_EBADFUNC;
    }
    d->z_m = z;
    d->T_K = w->T_guess;
    /* sl_plume_rise sets the guess to 0 at the start of each rise: no warm
     * start from another source's rise, so a member's numbers never depend
     * on the members before it. */
    if (!(w->T_guess > 0.0))
        w->warm.ok = 0;
    equilibrate_ws(w, H, Ma, Mw, d->amb.pressure_Pa, &d->T_K, &d->vapor_kg, &d->liquid_kg, &d->ice_kg, &w->warm);
    w->T_guess = d->T_K;
    if (!(d->T_K > 0.0) || !isfinite(d->T_K))
        return GSL_EDOM;
    d->volume_m3 = (Ma * RA + d->vapor_kg * RV) * d->T_K / d->amb.pressure_Pa;
    d->radius_m = sl_cbrt(d->volume_m3 * 3.0 / FOUR_PI); /* cuberoot.h: the hot loop */
    d->mass_kg = Ma + Mw;
    d->added_kg = w->k * d->amb.density_kg_m3 * d->volume_m3;
    d->w_m_s = Pi / (d->mass_kg + d->added_kg);
    d->g_m_s2 = gravity_m_s2(z);
    d->phi_J_kg = potential_J_kg(z);
    d->buoy_N = d->g_m_s2 * (d->amb.density_kg_m3 * d->volume_m3 - d->mass_kg);
    return GSL_SUCCESS;
}

/* DS = F / SCALE element by element, in two-lane packed divisions, which
 * gcc -O2 makes of a loop of that known even length over restrict arguments
 * (IEEE division gives the same bits either way); once per right-hand side. */
_Static_assert(NY % 2 == 0, "scaled_rates runs in pairs");
static void scaled_rates(double *restrict ds, const double *restrict f, const double *restrict scale)
{
    for (int i = 0; i < NY; i++)
        ds[i] = f[i] / scale[i];
}

static int rhs(double t, const double *s, double *ds, void *params)
{
    (void)t;
    sl_plume_work *w = params;
    diag d;
    int st = diagnose(w, s, &d);
    w->last_ok = st == GSL_SUCCESS;
    if (st != GSL_SUCCESS)
        return st;
    memcpy(w->last_s, s, sizeof w->last_s);
    w->last_g[EV_APEX] = d.w_m_s;
    w->last_g[EV_NEUTRAL] = d.buoy_N;
    w->last_g[EV_TOP] = w->z_top_m - d.z_m;
    double q_e, h_e;
    ambient(w, &d.amb, &q_e, &h_e);
    double b = d.radius_m, vel = d.w_m_s;
    /* m_e takes |w|; a thermal that starts at rest or rising has w >= 0 up to
     * its apex, where the rise stops (terminal event), so there w itself is
     * used: the same values, and past the apex, inside the step that finds
     * it, a smooth continuation instead of the kink of |w|, which cost
     * several rejected steps at every apex (the state at the apex is then
     * computed by a step that ends there, ode.h). */
    double me = FOUR_PI * b * b * w->alpha * d.amb.density_kg_m3 * (w->rising ? vel : fabs(vel));
    double mc = d.liquid_kg + d.ice_kg;
    double mf = mc > 0.0 ? 0.75 * w->v_fall / b * mc : 0.0;
    double hf = 0.0;
    if (mc > 0.0) {
        double dT = d.T_K - T_TRIPLE;
        hf = (d.liquid_kg * CPL * dT + d.ice_kg * (CPI * dT - w->lf0_J_kg)) / mc;
    }
    double kin = 0.5 * vel * vel;
    double f[NY];
    f[IZ] = vel;
    f[IMA] = (1.0 - q_e) * me;
    f[IMW] = q_e * me - mf;
    f[IPI] = d.buoy_N - mf * vel;
    f[IH] = me * h_e - mf * hf - d.amb.density_kg_m3 * d.g_m_s2 * d.volume_m3 * vel + me * kin;
    f[IEIN] = me * (h_e + d.phi_J_kg);
    f[IEOUT] = mf * (hf + d.phi_J_kg + kin);
    f[IWIN] = q_e * me;
    f[IWOUT] = mf;
    f[IWORK] = vel * d.buoy_N - kin * (me + mf);
    scaled_rates(ds, f, w->scale);
    return GSL_SUCCESS;
}

/* Kinetic energy (J) of the thermal and its added mass, (M + A) w^2/2. */
static double kinetic_energy(const diag *d)
{
    return 0.5 * (d->mass_kg + d->added_kg) * d->w_m_s * d->w_m_s;
}

/* Total energy (J) of the scaled state: H + M Phi + (M + A) w^2/2. */
static double total_energy(const sl_plume_work *w, const double *s, const diag *d)
{
    double H = s[IH] * w->scale[IH];
    return H + d->mass_kg * d->phi_J_kg + kinetic_energy(d);
}

/* ------------------------------------------------------------------ events */

/* All event values of a scaled state.  An evaluation leaves the Newton
 * guess alone, so that while an event is located one time gives one value
 * (the buoyancy force is a small difference of large terms). */
static int events(double t, const double *s, double *g, void *params)
{
    (void)t;
    sl_plume_work *w = params;
    if (w->last_ok && memcmp(s, w->last_s, sizeof w->last_s) == 0) {
        memcpy(g, w->last_g, sizeof w->last_g);
        return GSL_SUCCESS;
    }
    double T_keep = w->T_guess;
    warm_start warm_keep = w->warm;
    diag d;
    int st = diagnose(w, s, &d);
    w->T_guess = T_keep;
    w->warm = warm_keep;
    if (st != GSL_SUCCESS)
        return st;
    g[EV_APEX] = d.w_m_s;
    g[EV_NEUTRAL] = d.buoy_N;
    g[EV_TOP] = w->z_top_m - d.z_m;
    return GSL_SUCCESS;
}

/* A failed step: the atmosphere's message when the right-hand side could not
 * evaluate it, else the solver's (already in E). */
static int solver_failure(sl_plume_work *w, sl_err *e)
{
    if (w->rhs_failed) {
        sl_err_set(e, w->rhs_err.code, __func__, __LINE__, "plume: %s", w->rhs_err.msg);
        return w->rhs_err.code;
    }
    return sl_err_push(e, e ? e->code : SL_ENUMERIC, __func__, __LINE__);
}

/* ------------------------------------------------------------------ set-up */

int sl_plume_init(sl_plume *pl, const sl_plume_params *par, sl_err *e)
{
    memset(pl, 0, sizeof *pl);
    if (par)
        pl->par = *par;
    else
        sl_plume_params_default(&pl->par);
    SL_TRY_RETURN(e, sl_plume_params_check(&pl->par, e));
    sl_plume_work *w = calloc(1, sizeof *w);
    if (w == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "plume: out of memory for the workspace");
    pl->work = w;
    /* Dormand-Prince 5(4) on the scaled state: absolute and relative tolerance both rtol. */
    sl_ode_config oc = {.dim = NY, .rhs = rhs, .events = events, .n_events = N_EVENTS,
                        .params = w, .atol = pl->par.rtol, .rtol = pl->par.rtol};
    int rc = sl_ode_init(&w->ode, &oc, e);
    if (rc != SL_OK) {
        sl_plume_free(pl);
        return sl_err_push(e, rc, __func__, __LINE__);
    }
    w->lv0_J_kg = sl_water_latent_vaporization_J_kg(T_TRIPLE);
    w->lf0_J_kg = sl_water_latent_sublimation_J_kg(T_TRIPLE) - w->lv0_J_kg;
    w->es_triple_Pa = sl_water_esat_Pa(T_TRIPLE);
    if (!(w->lv0_J_kg > 2.0e6 && w->lv0_J_kg < 3.0e6 && w->lf0_J_kg > 2.0e5 && w->lf0_J_kg < 4.0e5)) {
        sl_plume_free(pl);
        SL_FAIL_RETURN(e, SL_EINTERNAL, "plume: latent heats at the triple point out of range (L_v %g, L_f %g J/kg)",
                       w->lv0_J_kg, w->lf0_J_kg);
    }
    return SL_OK;
}

int sl_plume_set_params(sl_plume *pl, const sl_plume_params *par, sl_err *e)
{
    if (pl == NULL || pl->work == NULL || par == NULL)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "sl_plume_set_params: plume not initialised");
    SL_TRY_RETURN(e, sl_plume_params_check(par, e));
    if (par->rtol != pl->par.rtol) {
        SL_TRY_RETURN(e, sl_ode_set_tolerance(pl->work->ode, par->rtol, par->rtol, e));
    }
    pl->par = *par;
    return SL_OK;
}

void sl_plume_free(sl_plume *pl)
{
    if (pl == NULL || pl->work == NULL)
        return;
    sl_plume_work *w = pl->work;
    sl_ode_free(w->ode);
    free(w);
    pl->work = NULL;
}

/* Initial gas state of a source: dry air, vapour, liquid, temperature. */
typedef struct start {
    double air_kg, vapor_kg, liquid_kg, T_K, volume_m3, radius_m;
} start;

static int source_state(const sl_source *src, const sl_atmos_state *amb, start *st, sl_err *e)
{
    const char *what = src->kind == SL_SOURCE_SEA_PLUME ? "sea plume" : src->kind == SL_SOURCE_AIRBURST ? "airburst" : "explosion";
    struct {
        const char *name;
        double v;
    } nonneg[] = {{"air_mass_kg", src->air_mass_kg}, {"vapor_mass_kg", src->vapor_mass_kg},
                  {"liquid_mass_kg", src->liquid_mass_kg}, {"heat_J", src->heat_J},
                  {"radius_m", src->radius_m}, {"temperature_K", src->temperature_K}};
    for (size_t i = 0; i < sizeof nonneg / sizeof nonneg[0]; i++)
        if (!isfinite(nonneg[i].v) || nonneg[i].v < 0.0)
            SL_FAIL_RETURN(e, SL_EDATA, "%s source: %s = %g must be finite and >= 0", what, nonneg[i].name, nonneg[i].v);
    if (!isfinite(src->vertical_speed_m_s) || fabs(src->vertical_speed_m_s) > 1.0e4)
        SL_FAIL_RETURN(e, SL_EDATA, "%s source: vertical_speed_m_s = %g outside the valid range -1e4 to 1e4", what,
                       src->vertical_speed_m_s);
    double p = amb->pressure_Pa, Ta = amb->temperature_K;
    st->vapor_kg = src->vapor_mass_kg;
    st->liquid_kg = src->liquid_mass_kg;
    if (src->air_mass_kg > 0.0 && src->temperature_K > 0.0) {
        /* Complete gas state given. */
        if (src->temperature_K < 150.0 || src->temperature_K > 1.0e5)
            SL_FAIL_RETURN(e, SL_EDATA, "%s source: temperature_K = %g outside the valid range 150 to 1e5", what,
                           src->temperature_K);
        st->air_kg = src->air_mass_kg;
        st->T_K = src->temperature_K;
    } else if (src->heat_J > 0.0 && src->radius_m > 0.0) {
        /* Heat and radius: find the air mass and temperature such that the gas
         * fills the sphere at ambient pressure and holds the heat as sensible
         * enthalpy over ambient:  p V = (Ma Ra + Mv Rv) T,
         * Q = (Ma cpa + Mv cpv + Ml cl)(T - Ta).  With Ma(T) from the second,
         * the gas volume falls as T rises (Ra cpv / cpa > Rv), so bisection on
         * T finds the one root when there is one. */
        double V = FOUR_PI / 3.0 * src->radius_m * src->radius_m * src->radius_m;
        double Q = src->heat_J, cw = st->vapor_kg * CPV + st->liquid_kg * CPL;
        double lo = Ta * (1.0 + 1.0e-12), hi = cw > 0.0 ? Ta + Q / cw : INFINITY;
#define PV_OF(T) ((sl_max(0.0, (Q / ((T) - Ta) - cw) / CPA) * RA + st->vapor_kg * RV) * (T) - p * V)
        double T_root = NAN;
        if (!isfinite(hi) || PV_OF(hi) <= 0.0) {
            if (!isfinite(hi))
                hi = 2.0 * T_FIREBALL_CAP_K;
            if (PV_OF(hi) <= 0.0) {
                for (int it = 0; it < 200 && hi - lo > 1.0e-12 * hi; it++) {
                    double mid = 0.5 * (lo + hi);
                    if (PV_OF(mid) > 0.0)
                        lo = mid;
                    else
                        hi = mid;
                }
                T_root = 0.5 * (lo + hi);
            }
        }
        double ma_cap = (Q / (T_FIREBALL_CAP_K - Ta) - cw) / CPA;
        if (T_root <= T_FIREBALL_CAP_K) {
            st->T_K = T_root;
            st->air_kg = sl_max(0.0, (Q / (T_root - Ta) - cw) / CPA);
        } else if (ma_cap > 0.0) {
            /* Too much heat for the sphere below the cap: the gas at the cap
             * temperature holding the heat fills a larger volume. */
            st->T_K = T_FIREBALL_CAP_K;
            st->air_kg = ma_cap;
        } else {
            /* The water's gas alone overfills the sphere: the thermal is the
             * sphere's own air with the heat and the water added at constant
             * pressure; it fills a larger volume. */
            st->air_kg = amb->density_kg_m3 * V;
            st->T_K = Ta + Q / (st->air_kg * CPA + cw);
        }
#undef PV_OF
    } else {
        SL_FAIL_RETURN(e, SL_EDATA,
                       "%s source: needs either air_mass_kg > 0 and temperature_K, or heat_J > 0 and radius_m > 0", what);
    }
    if (!(st->air_kg > 0.0))
        SL_FAIL_RETURN(e, SL_EDATA, "%s source: no air in the initial thermal (heat %g J cannot be held by %g kg of water)",
                       what, src->heat_J, st->vapor_kg + st->liquid_kg);
    st->volume_m3 = (st->air_kg * RA + st->vapor_kg * RV) * st->T_K / p;
    st->radius_m = sl_cbrt(st->volume_m3 * 3.0 / FOUR_PI);
    return SL_OK;
}

/* ------------------------------------------------------------------ rise */

static void finish_budget(sl_plume_work *w, sl_thermal *out, const double *s, const diag *d)
{
    out->water_final_kg = s[IMW] * w->scale[IMW];
    out->water_entrained_kg = s[IWIN] * w->scale[IWIN];
    out->water_fallout_kg = s[IWOUT] * w->scale[IWOUT];
    out->air_entrained_kg = s[IMA] * w->scale[IMA] - out->air_initial_kg;
    out->energy_entrained_J = s[IEIN] * w->scale[IEIN];
    out->energy_fallout_J = s[IEOUT] * w->scale[IEOUT];
    out->energy_final_J = total_energy(w, s, d);
    /* What the changes of A gave the surrounding air: the work of buoyancy,
     * less the kinetic energy entrainment and fallout took, less the gain in
     * kinetic energy (the KE budget; see the header comment). */
    out->energy_to_air_J = w->kinetic0_J + s[IWORK] * w->scale[IWORK] - kinetic_energy(d);
    out->air_kg = s[IMA] * w->scale[IMA];
    out->vapor_kg = d->vapor_kg;
    out->liquid_kg = d->liquid_kg;
    out->ice_kg = d->ice_kg;
    out->temperature_apex_K = d->T_K;
}

/* The thermal equations are followed to 120 km at most (the base of the
 * thermosphere; the built-in profiles now reach 1000 km), so that a blow-out
 * result does not depend on where the profile ends (atmosphere branch,
 * issue 12; the ballistic regime replaces this stop). */
#define THERMAL_TOP_M 120000.0

/* ------------------------------------------------------------------ ballistic */

/* Ballistic regime (see the header comment).  A release X = r/H scale heights
 * across is a thermal for X <= 1 and fully ballistic from X >= X_BALLISTIC;
 * in between the water is shared with the weight ln X / ln X_BALLISTIC, so
 * results change smoothly across the crossing (PRACTICE, no source: a
 * release a few scale heights across has little atmosphere above it to rise
 * through; Melosh 1989, Impact Cratering, ch. 5, vapour plumes expand freely
 * once they outgrow the scale height). */
#define X_BALLISTIC 4.0
/* Highest apogee followed: the top of the built-in atmospheres (PRACTICE). */
#define APOGEE_MAX_M 1.0e6

static double ballistic_weight(double x)
{
    if (!(x > 1.0))
        return 0.0;
    return sl_min(1.0, log(x) / log(X_BALLISTIC));
}

/* Column mass per area above Z (kg/m2): p(z)/g(z), hydrostatic. */
static int column_above(const sl_atmosphere *atm, double z_m, double *col, sl_err *e)
{
    sl_atmos_state a;
    SL_TRY_RETURN(e, sl_atmosphere_at(atm, z_m, &a, e));
    *col = a.pressure_Pa / gravity_m_s2(z_m);
    return SL_OK;
}

/* The ballistic flight of a release of gas mass M_GAS (kg) with specific
 * energy E_J_KG above the ambient air at altitude Z0: launch speed
 * v = sqrt(2 e), the energy of free expansion (Melosh 1989 ch. 5); the
 * mass-mean path leaves at 45 degrees, its apogee with inverse-square gravity,
 * its range v^2/g (flat Earth, at most a quarter of the circumference); the
 * gas comes back over the disc of that radius and is stopped where it has
 * met its own mass of air, p(z_r)/g = M_gas/A (momentum, PRACTICE); the water
 * is left in the layer of two scale heights above z_r (Shuvalov 1999, JGR 104,
 * 5877, and Pierazzo et al. 2010, EPSL 299, 263: the water of a 1 km ocean
 * impact is thrown to ~160 km and falls back over more than 1000 km). */
static int ballistic_flight(const sl_atmosphere *atm, double z0_m, double m_gas_kg, double e_J_kg, sl_thermal *out,
                            sl_err *e)
{
    double v = e_J_kg > 0.0 ? sqrt(2.0 * e_J_kg) : 0.0;
    double g0 = gravity_m_s2(z0_m), R = SL_USSA_R0_M + z0_m;
    double vz2 = 0.5 * v * v;
    double rise = vz2 < 1.999 * g0 * R ? vz2 * R / (2.0 * g0 * R - vz2) : APOGEE_MAX_M;
    out->launch_speed_m_s = v;
    out->apogee_m = sl_min(z0_m + rise, APOGEE_MAX_M);
    out->reentry_range_m = sl_min(v * v / g0, 0.5 * SL_PI * SL_USSA_R0_M);
    double area = sl_min(SL_PI * out->reentry_range_m * out->reentry_range_m, SL_EARTH_AREA_M2);
    double sigma = area > 0.0 ? m_gas_kg / area : INFINITY;
    double zlo = atm->altitude_m[0], zhi = sl_min(atm->altitude_m[atm->n - 1], sl_max(out->apogee_m, zlo));
    double clo = 0.0, chi = 0.0;
    SL_TRY_RETURN(e, column_above(atm, zlo, &clo, e));
    SL_TRY_RETURN(e, column_above(atm, zhi, &chi, e));
    double zr;
    if (sigma >= clo)
        zr = zlo;
    else if (sigma <= chi)
        zr = zhi;
    else {
        double a = zlo, b = zhi;
        for (int it = 0; it < 60 && b - a > 1.0; it++) { /* bisection on ln(column) to 1 m */
            double m = 0.5 * (a + b), cm = 0.0;
            SL_TRY_RETURN(e, column_above(atm, m, &cm, e));
            if (cm > sigma)
                a = m;
            else
                b = m;
        }
        zr = 0.5 * (a + b);
    }
    sl_atmos_state ar;
    SL_TRY_RETURN(e, sl_atmosphere_at(atm, zr, &ar, e));
    double hr = ar.pressure_Pa / (ar.density_kg_m3 * gravity_m_s2(zr));
    out->reentry_bottom_m = zr;
    out->reentry_top_m = sl_min(zr + 2.0 * hr, atm->altitude_m[atm->n - 1]);
    return SL_OK;
}

int sl_plume_rise(sl_plume *pl, const sl_atmosphere *atm, const sl_source *src, sl_thermal *out, sl_err *e)
{
    if (pl == NULL || pl->work == NULL || atm == NULL || atm->n < 2 || src == NULL || out == NULL)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "sl_plume_rise: plume not initialised or null argument");
    sl_plume_work *w = pl->work;
    memset(out, 0, sizeof *out);
    out->kind = src->kind;
    double zlo = atm->altitude_m[0], zhi = atm->altitude_m[atm->n - 1];
    if (!isfinite(src->altitude_m) || src->altitude_m < zlo)
        SL_FAIL_RETURN(e, SL_EDATA, "source altitude_m = %g is outside the atmosphere profile '%s' (valid range %g to %g m)",
                       src->altitude_m, atm->name, zlo, zhi);
    /* A release centred above the profile's top (a fireball sized in the thin
     * air of a very high burst, lifted off the surface by its own radius) has
     * no air to rise through: it is wholly ballistic from the top of the
     * profile (Melosh 1989 ch. 5), never an error. */
    const int above_top = src->altitude_m > zhi;
    const double z_src = above_top ? zhi : src->altitude_m;
    sl_atmos_state amb;
    SL_TRY_RETURN(e, sl_atmosphere_at(atm, z_src, &amb, e));
    start st = {0};
    SL_TRY_RETURN(e, source_state(src, &amb, &st, e));

    w->atm = atm;
    w->atm_cursor.interval = 0;
    w->k = pl->par.added_mass_k;
    w->alpha = pl->par.entrainment_alpha;
    w->v_fall = pl->par.fallout_speed_m_s;
    w->z_bottom_m = zlo;
    w->z_top_m = sl_min(zhi, THERMAL_TOP_M);
    w->rhs_failed = 0;
    w->last_ok = 0; /* the scales change with each source */
    w->T_guess = 0.0;

    out->source_altitude_m = src->altitude_m;
    out->source_radius_m = st.radius_m;
    out->scale_height_m = amb.pressure_Pa / (amb.density_kg_m3 * gravity_m_s2(z_src));

    /* Initial enthalpy with the water as given (vapour, liquid); the
     * equilibrium diagnosis then settles the phases at constant enthalpy. */
    double dT0 = st.T_K - T_TRIPLE;
    double H0 = st.air_kg * CPA * dT0 + st.vapor_kg * (w->lv0_J_kg + CPV * dT0) + st.liquid_kg * CPL * dT0;
    double Mw0 = st.vapor_kg + st.liquid_kg, M0 = st.air_kg + Mw0;
    out->water_initial_kg = Mw0;
    out->air_initial_kg = st.air_kg;

    /* The fireball's size: the source's radius when it gives one.  The regime
     * check also looks at the gas volume at ambient pressure, which is larger
     * when the source holds more heat or water than its sphere can at that
     * pressure (it then expands before it can rise). */
    double r_fireball = src->radius_m > 0.0 ? src->radius_m : st.radius_m;
    /* Blow-out at the start: the release is larger than the atmosphere's
     * scale height.  It is still followed with the thermal equations (the
     * best estimate this model has of how high the buoyant gas goes) and
     * flagged; see "Regime" in the header comment. */
    int blowout_at_start = sl_max(r_fireball, st.radius_m) > out->scale_height_m;
    out->ballistic_fraction = above_top ? 1.0 : ballistic_weight(sl_max(r_fireball, st.radius_m) / out->scale_height_m);

    double w0 = src->vertical_speed_m_s, phi0 = potential_J_kg(z_src);
    w->rising = w0 >= 0.0;
    double kin0 = 0.5 * w0 * w0;

    /* Spray collapse: the source's water is first brought to equilibrium at
     * the ambient pressure (hot liquid flashes to vapour, excess vapour
     * condenses), then the condensate present at that moment - spray and
     * drops thrown up with the plume, millimetres to centimetres across and
     * falling at ~10 m/s (Gunn & Kinzer 1949, MEM) - falls back at once with
     * its enthalpy, counted as fallout.  Only the gas phase starts to rise; a
     * plume loaded with more water than air would otherwise collapse (the
     * column collapse of eruption columns, Sparks et al. 1997). */
    double T_eq, mv0, ml0, mi0;
    w->T_guess = 0.0;
    T_eq = 0.0;
    equilibrate(w, H0, st.air_kg, Mw0, amb.pressure_Pa, &T_eq, &mv0, &ml0, &mi0);
    double spray = ml0 + mi0;
    double h_spray = ml0 * CPL * (T_eq - T_TRIPLE) + mi0 * (CPI * (T_eq - T_TRIPLE) - w->lf0_J_kg);
    double Mw1 = Mw0 - spray, M1 = st.air_kg + Mw1;
    /* The added mass of the gas that rises (the volume of its sphere at
     * ambient pressure; the spray's volume is neglected, as everywhere). */
    double A0 = w->k * amb.density_kg_m3 * (st.air_kg * RA + mv0 * RV) * T_eq / amb.pressure_Pa;
    out->energy_initial_J = H0 + M0 * phi0 + (M0 + A0) * kin0;
    w->kinetic0_J = (M1 + A0) * kin0;

    /* The ballistic part: specific energy of the gas above ambient air
     * (latent heat included: it is released as the expanding vapour
     * condenses). */
    double e_gas = (H0 - h_spray) / M1 - CPA * (amb.temperature_K - T_TRIPLE);
    SL_TRY_RETURN(e, ballistic_flight(atm, z_src, M1, e_gas, out, e));
    if (out->ballistic_fraction >= 1.0) {
        /* Fully ballistic: no rise through the air; the gas phase flies and
         * re-enters, the spray has fallen back. */
        out->regime = SL_REGIME_BALLISTIC;
        out->apex_time_s = 2.0 * out->launch_speed_m_s * sqrt(0.5) / gravity_m_s2(z_src);
        out->apex_altitude_m = out->top_altitude_m = out->apogee_m;
        out->apex_radius_m = out->reentry_range_m;
        out->apex_scale_height_m = out->scale_height_m;
        out->neutral_altitude_m = out->reentry_bottom_m;
        out->cloud_bottom_m = out->reentry_bottom_m;
        out->cloud_top_m = out->reentry_top_m;
        out->max_speed_m_s = out->launch_speed_m_s;
        out->water_final_kg = Mw1;
        out->water_fallout_kg = spray;
        out->water_entrained_kg = 0.0;
        out->air_kg = st.air_kg;
        out->vapor_kg = Mw1;
        out->temperature_apex_K = T_eq;
        out->energy_fallout_J = h_spray + spray * (phi0 + kin0);
        out->energy_final_J = out->energy_initial_J - out->energy_fallout_J;
        return SL_OK;
    }

    /* Scales of the state (the solver works on y/scale, tolerances rtol):
     * each mass on its own scale, so a little air in much steam (or the
     * reverse) is still followed to the tolerance. */
    double Ls = sl_max(st.radius_m, 1.0);
    double Us = sqrt(SL_USSA_G0_M_S2 * Ls);
    double Es = M1 * CPA * amb.temperature_K;
    /* The water on its own scale, or, when it is less, the water the air
     * would hold at the source's background humidity (at most a thousandth,
     * at least a millionth of the air): a little water in much air is then
     * still followed to the tolerance.  With the air's scale, 1e-6 of a dry
     * thermal's air was a few tenths of a per cent of its water; with a
     * thousandth of it, a dry air burst at 11 km that entrains all its water
     * (0.02 Tg in 2600 Tg of air) moved its water by 5.5e-4 when the
     * tolerance was halved, by 6e-5 with the humidity's scale (0.4 % more
     * instructions per bench member). */
    double q_src = sl_water_mixing_ratio_from_mole_fraction(sl_max(amb.h2o_mole_fraction, 0.0)); /* kg per kg dry air */
    double Sa = st.air_kg, Sw = sl_max(Mw1, sl_max(sl_min(q_src, 1.0e-3), 1.0e-6) * Sa);
    double sc[NY] = {Ls, Sa, Sw, (M1 + A0) * Us, Es, Es, Es, Sw, sl_max(spray, Sw), Es};
    memcpy(w->scale, sc, sizeof sc);

    double y0[NY] = {0};
    y0[IZ] = src->altitude_m;
    y0[IMA] = st.air_kg;
    y0[IMW] = Mw1;
    y0[IPI] = (M1 + A0) * w0;
    y0[IH] = H0 - h_spray;
    y0[IWOUT] = spray;
    y0[IEOUT] = h_spray + spray * (phi0 + kin0);
    for (int i = 0; i < NY; i++)
        w->y[i] = y0[i] / w->scale[i];

    diag d;
    if (diagnose(w, w->y, &d) != GSL_SUCCESS)
        SL_FAIL_RETURN(e, SL_ENUMERIC, "plume: the initial state of the source is not usable (T, masses)");
    double w_prev = d.w_m_s, f_prev = d.buoy_N;
    int have_neutral = 0;
    if (!(f_prev > 0.0)) {
        /* Never buoyant: neutral at the start. */
        have_neutral = 1;
        out->neutral_altitude_m = d.z_m;
        out->neutral_time_s = 0.0;
    }
    if (!(w_prev > 0.0) && !(f_prev > 0.0)) {
        /* Neither rising nor buoyant: it stays where it is. */
        out->apex_altitude_m = d.z_m;
        out->apex_radius_m = d.radius_m;
        out->apex_scale_height_m = out->scale_height_m;
        out->top_altitude_m = d.z_m + d.radius_m;
        out->cloud_bottom_m = d.z_m;
        out->cloud_top_m = d.z_m + d.radius_m;
        finish_budget(w, out, w->y, &d);
        if (blowout_at_start)
            out->regime = SL_REGIME_BLOWOUT;
        return SL_OK;
    }

    double t = 0.0;
    double tau = sqrt(Ls / SL_USSA_G0_M_S2);
    double tmax = pl->par.max_time_s;
    out->max_speed_m_s = sl_max(0.0, w_prev);
    sl_ode *ode = w->ode;
    sl_ode_event_mode(ode, EV_APEX, 1, 1);
    sl_ode_event_mode(ode, EV_NEUTRAL, 0, !have_neutral);
    sl_ode_event_mode(ode, EV_TOP, 1, 1);
    /* First trial: a tenth of the source's free-fall time sqrt(b/g) (1e-3
     * took four growing steps before the error set the size). */
    if (sl_ode_restart(ode, t, w->y, 0.1 * tau, e) != SL_OK)
        return solver_failure(w, e);
    int done = 0, hits_top = 0;
    while (!done) {
        if (t >= tmax)
            SL_FAIL_RETURN(e, SL_ENUMERIC, "plume: no apex within max_time_s = %g s (last altitude %g m, speed %g m/s)",
                           tmax, sl_ode_y(ode)[IZ] * w->scale[IZ], sl_ode_g(ode)[EV_APEX]);
        int kind;
        sl_ode_hits hits;
        if (sl_ode_step(ode, tmax, &kind, &hits, e) != SL_OK)
            return solver_failure(w, e);
        if (kind == SL_ODE_STEP_STUCK)
            SL_FAIL_RETURN(e, SL_ENUMERIC, "plume: ODE solver failed at t = %g s, altitude %g m (step too small)", t,
                           sl_ode_y(ode)[IZ] * w->scale[IZ]);
        out->n_steps++;
        t = sl_ode_t(ode);
        const double *g = sl_ode_g(ode);
        if (g[EV_APEX] > out->max_speed_m_s)
            out->max_speed_m_s = g[EV_APEX];
        for (size_t k = 0; k < hits.n; k++) {
            if (hits.event[k] == EV_NEUTRAL) {
                diag dn;
                sl_ode_dense(ode, hits.t[k], w->y_tmp);
                if (diagnose(w, w->y_tmp, &dn) != GSL_SUCCESS)
                    SL_FAIL_RETURN(e, SL_ENUMERIC, "plume: state not usable at the neutral level");
                out->neutral_altitude_m = dn.z_m;
                out->neutral_time_s = hits.t[k];
                have_neutral = 1;
                sl_ode_event_mode(ode, EV_NEUTRAL, 0, 0);
            } else if (hits.event[k] == EV_TOP) {
                out->regime = SL_REGIME_BLOWOUT;
                hits_top = 1;
            }
        }
        /* Stopped at the apex or the top of the profile; or at or above the
         * top at the end of a step without crossing it there. */
        if (hits.terminal || !(g[EV_TOP] > 0.0)) {
            if (!hits.terminal)
                out->regime = SL_REGIME_BLOWOUT;
            done = 1;
        }
    }
    memcpy(w->y, sl_ode_y(ode), sizeof w->y);
    if (diagnose(w, w->y, &d) != GSL_SUCCESS)
        SL_FAIL_RETURN(e, SL_ENUMERIC, "plume: state not usable at the %s",
                       out->regime == SL_REGIME_BLOWOUT ? "top of the profile" : "apex");
    if (hits_top)
        d.z_m = w->z_top_m; /* located to 1e-12 of the step: the centre is at the top and leaves the profile */
    out->apex_time_s = t;
    out->apex_altitude_m = d.z_m;
    out->apex_radius_m = d.radius_m;
    out->apex_scale_height_m = d.amb.pressure_Pa / (d.amb.density_kg_m3 * d.g_m_s2);
    /* Highest reach: apex + radius, but for a thermal wider than a few scale
     * heights the energetics: at its apex the gas has about the ambient
     * temperature, so its mass is stratified with the ambient scale height
     * and only e^-3 = 5 % of it lies more than SL_PLUME_WIDE_SCALE_HEIGHTS above the
     * centre (PRACTICE, no source for the 5 %); the two agree at b = 3 H. */
    out->top_altitude_m = d.z_m + sl_min(d.radius_m, SL_PLUME_WIDE_SCALE_HEIGHTS * out->apex_scale_height_m);
    finish_budget(w, out, w->y, &d);
    if (out->regime == SL_REGIME_BLOWOUT) {
        if (!have_neutral)
            out->neutral_altitude_m = d.z_m;
        out->top_altitude_m = sl_min(out->top_altitude_m, w->z_top_m);
        out->cloud_top_m = d.z_m;
        out->cloud_bottom_m = sl_max(zlo, d.z_m - d.radius_m);
    } else {
        /* The cloud rule: from the neutral level to the thermal's highest reach. */
        out->cloud_bottom_m = sl_max(zlo, sl_min(out->neutral_altitude_m, out->top_altitude_m));
        out->cloud_top_m = out->top_altitude_m;
        /* A thermal whose top reaches past the top of the atmosphere profile
         * has blown out of it as well (it has grown to many scale heights). */
        if (out->top_altitude_m > w->z_top_m) {
            out->regime = SL_REGIME_BLOWOUT;
            /* Beyond the profile the thermal's radius means nothing: report
             * the reach clipped at the top of the atmosphere profile. */
            out->top_altitude_m = out->cloud_top_m = w->z_top_m;
        }
    }
    if (blowout_at_start)
        out->regime = SL_REGIME_BLOWOUT;
    if (d.z_m >= w->z_top_m) {
        /* The thermal's centre left the atmosphere: what it carries flies on
         * ballistically (its top clipped at the profile top said nothing about
         * where the water goes). */
        out->ballistic_fraction = 1.0;
    }
    if (out->ballistic_fraction >= 1.0)
        out->regime = SL_REGIME_BALLISTIC;
    /* Highest reach: the water-weighted mean of the two parts. */
    double f = out->ballistic_fraction;
    out->top_altitude_m = (1.0 - f) * out->top_altitude_m + f * sl_max(out->apogee_m, out->top_altitude_m);
    return SL_OK;
}

/* ------------------------------------------------------------------ event */

/* Put AIR and WATER of a cloud layer [CB, CT] into the bands (freeze-out of
 * injection.c): the share below the lowest band is left out and tallied, a
 * layer reaching above the top band is pressed into it. */
static int add_layer(sl_plume *pl, sl_injection *inj, const sl_atmosphere *atm, double cb, double ct, double peak,
                     double air, double water, sl_err *e)
{
    if (!(water > 0.0))
        return SL_OK;
    double band_lo = inj->band_bottom_m[0], band_hi = inj->band_top_m[inj->n_bands - 1];
    double keep = 1.0;
    int tent = ct > cb && peak >= cb && peak <= ct;
    if (ct <= band_lo)
        keep = 0.0;
    else if (cb < band_lo) {
        if (!tent)
            keep = (ct - band_lo) / (ct - cb);
        else {
            /* The umbrella's mass share above the lowest band (placement by mass). */
            sl_young_cloud whole = {cb, ct, 0.0, 0.0, peak};
            double w_all, w_in;
            SL_TRY_RETURN(e, sl_injection_umbrella_weight(atm, &whole, cb, ct, &w_all, e));
            SL_TRY_RETURN(e, sl_injection_umbrella_weight(atm, &whole, band_lo, ct, &w_in, e));
            keep = w_all > 0.0 ? w_in / w_all : 0.0;
        }
    }
    pl->water_below_bands_kg += water * (1.0 - keep);
    if (keep == 0.0)
        return SL_OK;
    sl_young_cloud c;
    c.bottom_m = sl_min(sl_max(cb, band_lo), band_hi);
    c.top_m = sl_min(sl_max(ct, band_lo), band_hi);
    c.air_kg = air * keep;
    c.water_kg = water * keep;
    c.peak_m = tent ? sl_min(sl_max(peak, c.bottom_m), c.top_m) : NAN;
    sl_freeze_out fo;
    SL_TRY_RETURN(e, sl_injection_add_cloud_kept(inj, atm, &c, pl->par.ice_sediment_fraction, &fo, pl->levels, e));
    pl->water_sedimented_kg += fo.sedimented_kg;
    pl->water_air_humidity_kg += fo.background_kg;
    return SL_OK;
}

int sl_plume_solve(sl_plume *pl, const sl_atmosphere *atm, const sl_source_list *src, sl_injection *inj, sl_err *e)
{
    if (pl == NULL || pl->work == NULL || atm == NULL || src == NULL || inj == NULL || inj->n_bands == 0)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "sl_plume_solve: plume not initialised, null argument or profile without bands");
    if (src->n > SL_MAX_SOURCES)
        SL_FAIL_RETURN(e, SL_EDATA, "plume: %zu sources (valid range 0 to %d)", src->n, SL_MAX_SOURCES);
    sl_injection_clear(inj);
    inj->tropopause_altitude_m = atm->tropopause_altitude_m;
    pl->n_thermals = 0;
    pl->regime = SL_REGIME_THERMAL;
    pl->widest_thermal = 0.0;
    pl->plume_top_m = pl->cloud_bottom_m = pl->cloud_top_m = pl->neutral_altitude_m = NAN;
    pl->tropopause_altitude_m = atm->tropopause_altitude_m;
#define SL_WATER_BUDGET_ZERO(name, sign, label) pl->name##_kg = 0.0;
    SL_WATER_BUDGET_LINES(SL_WATER_BUDGET_ZERO)
#undef SL_WATER_BUDGET_ZERO
    pl->stratospheric_vapor_kg = pl->stratospheric_ice_kg = pl->water_below_bands_kg = 0.0;
    double most_water = -1.0, t_last = 0.0, area = 0.0;
    int any_wet = 0;
    for (size_t i = 0; i < src->n; i++) {
        sl_thermal *th = &pl->th[i];
        SL_TRY_RETURN(e, sl_plume_rise(pl, atm, &src->src[i], th, e));
        pl->n_thermals++;
        if (th->regime > pl->regime)
            pl->regime = th->regime;
        if (th->regime == SL_REGIME_THERMAL && th->apex_scale_height_m > 0.0 &&
            th->apex_radius_m / th->apex_scale_height_m > pl->widest_thermal)
            pl->widest_thermal = th->apex_radius_m / th->apex_scale_height_m;
        double water = th->vapor_kg + th->liquid_kg + th->ice_kg;
        if (!(pl->plume_top_m >= th->top_altitude_m))
            pl->plume_top_m = th->top_altitude_m;
        /* The combined cloud spans the thermals that carry water; a dry
         * thermal (a blown-out airburst fireball that entrained nothing)
         * says nothing about where the water is.  If none carries water,
         * every thermal counts. */
        int wet = water > 0.0;
        if (wet && !any_wet) {
            any_wet = 1;
            pl->cloud_bottom_m = pl->cloud_top_m = NAN;
        }
        if (wet || !any_wet) {
            /* Envelope of the thermal part's cloud and the ballistic part's layer. */
            double fb = th->ballistic_fraction;
            double cb = fb >= 1.0 ? th->reentry_bottom_m : fb > 0.0 ? sl_min(th->cloud_bottom_m, th->reentry_bottom_m)
                                                                     : th->cloud_bottom_m;
            double ct = fb >= 1.0 ? th->reentry_top_m : fb > 0.0 ? sl_max(th->cloud_top_m, th->reentry_top_m)
                                                                  : th->cloud_top_m;
            if (!(pl->cloud_bottom_m <= cb))
                pl->cloud_bottom_m = cb;
            if (!(pl->cloud_top_m >= ct))
                pl->cloud_top_m = ct;
        }
        if (water > most_water) {
            most_water = water;
            pl->neutral_altitude_m = th->neutral_altitude_m;
        }
        pl->water_source_kg += th->water_initial_kg;
        pl->water_background_kg += th->water_entrained_kg;
        pl->water_fallout_kg += th->water_fallout_kg;
        pl->water_rising_kg += water;
        t_last = sl_max(t_last, th->apex_time_s);
        /* The thermal part and the ballistic part, each in its layer. */
        double f = th->ballistic_fraction;
        /* Placement by mass: the thermal's umbrella is widest at its neutral-
         * buoyancy level and narrows to nothing at the top of the overshoot
         * (Morton, Taylor & Turner 1956; Sparks 1986; Woods 1988): a triangular
         * volume profile with its mode at z_N, times the ambient density. */
        SL_TRY_RETURN(e, add_layer(pl, inj, atm, th->cloud_bottom_m, th->cloud_top_m, th->neutral_altitude_m,
                                   th->air_kg * (1.0 - f), water * (1.0 - f), e));
        if (f > 0.0) {
            /* The re-entering gas mixes with the air that stopped it, as much
             * again as its own mass (ballistic_flight). */
            double air = 2.0 * th->air_kg + water;
            SL_TRY_RETURN(e, add_layer(pl, inj, atm, th->reentry_bottom_m, th->reentry_top_m, NAN, air * f, water * f,
                                       e));
        }
        area += (1.0 - f) * sl_min(SL_PI * th->apex_radius_m * th->apex_radius_m, SL_EARTH_AREA_M2) +
                f * sl_min(SL_PI * th->reentry_range_m * th->reentry_range_m, SL_EARTH_AREA_M2);
    }
    if (src->n == 0) /* nothing rose: report zeros, never NaN */
        pl->plume_top_m = pl->cloud_bottom_m = pl->cloud_top_m = pl->neutral_altitude_m = 0.0;
    inj->time_s = t_last;
    inj->cloud_area_m2 = sl_min(area, SL_EARTH_AREA_M2);
    /* The budget's last lines: the excess in the bands, split at the one
     * tropopause (the box model uses the same, strat.c). */
    /* Without a tropopause (a profile read from a file may have none) every band is below it. */
    double below = sl_injection_total_vapor_kg(inj) + sl_injection_total_ice_kg(inj);
    if (isfinite(atm->tropopause_altitude_m)) {
        pl->stratospheric_water_kg = sl_injection_mass_above_kg(inj, atm->tropopause_altitude_m);
        pl->stratospheric_vapor_kg = sl_injection_vapor_above_kg(inj, atm->tropopause_altitude_m);
        pl->stratospheric_ice_kg = sl_max(pl->stratospheric_water_kg - pl->stratospheric_vapor_kg, 0.0);
        /* Its own sum, not the bands less the stratospheric part: nothing
         * below the tropopause is 0, not the rounding of a difference. */
        below = sl_injection_mass_below_kg(inj, atm->tropopause_altitude_m);
    }
    pl->water_troposphere_kg = below + pl->water_below_bands_kg;
    return SL_OK;
}
