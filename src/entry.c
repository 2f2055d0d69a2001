/* entry: atmospheric entry, break-up and airburst of an impactor.
 *
 * Physics (SI units throughout).  The meteor equations for a point body on a
 * spherical non-rotating Earth of radius R (mean radius, units.h), gravity
 * g = g0 (R/(R+h))^2, flight-path angle gamma below the horizontal:
 *   dv/dt = -D/m + g sin(gamma),  D = 1/2 C_D rho_air pi r^2 v^2
 *   dgamma/dt = g cos(gamma)/v - v cos(gamma)/(R+h)
 *   dh/dt = -v sin(gamma),  dx/dt = v cos(gamma) R/(R+h)
 *   dm/dt = -pi r^2 min(C_H rho_air v^3 / 2, sigma T_r^4) / Q
 * (classical ablation equation, e.g. Bronshten 1983, with C_H the
 * heat-transfer coefficient and Q the heat of ablation; the heat flux is at
 * most the black-body flux of the shock layer at T_r, the limit reached by
 * the optically thick layers in front of large bodies, Svetsov, Nemtchinov &
 * Teterev 1995, so bodies of kilometres lose little mass).
 *
 * Break-up: the body stays intact while the ram pressure rho_air v^2 is below
 * its strength Y.  Then (breakup_model; auto picks by strength):
 *   debris cloud (pancake; weak rubble, Y below fragmenting_strength_Pa): the
 *     fragments spread sideways, r d2r/dt2 = C_s rho_air v^2/rho_body (Chyba,
 *     Thomas & Zahnle 1993, Nature 361, 40; Hills & Goda 1993, AJ 105, 1114;
 *     with C_s = C_D/4 the law of Collins, Melosh & Marcus 2005, MAPS 40, 817);
 *     when r reaches f_p times its first radius the cloud bursts: its kinetic
 *     energy is released over a short path below, falling off as exp(-d/L)
 *     with the depth d and L the dispersion length of Collins et al. eq. 16
 *     at the local density, 2 r sin(gamma) sqrt(rho_body/(C_D rho_air)); what
 *     is left at the sea surface goes to the sea.  A cloud that reaches the
 *     sea before f_p arrives with its speed there (their eq. 17 case).
 *   fragments (strong bodies, irons): the body splits into a debris cloud of
 *     mass fraction f_c (flown as above) and n equal pieces, which separate
 *     sideways at v sqrt(C_sep (R/r) rho_air/rho_body) (Passey & Melosh 1980,
 *     Icarus 42, 211) and fly on independently with the Weibull size-scaled
 *     strength Y (m_parent/m_piece)^alpha; pieces may break again for
 *     fragment_generations more times, then stay whole (after the
 *     fragment-cloud models, Wheeler, Register & Mathias 2017, Icarus 295,
 *     149).  Each set of equal pieces is one group: one trajectory times its
 *     count, so a body is at most 1 + 2 (generations + 1) groups.
 * Airburst: the body broke up and more energy went into the air than to the
 * sea (or out of the atmosphere); its altitude is the peak of dE/dz (the
 * fullest band refined by a parabola through its neighbours), the quantity
 * observed as peak brightness.  An imposed burst ([airburst] altitude_m,
 * energy_fraction), as hydrocode ensembles vary it, replaces the integration.
 *
 * Calibration (one, for the three events together; test_entry.c
 * calibration_against_three_events reruns it from scratch): with ablation on
 * (C_H = 0.03, T_r = 2e4 K, Q = 8 MJ/kg) in the built-in atmospheres of each
 * event's latitude and season, a grid over C_s (0.2-0.5), f_p (3.5-7), the
 * iron strength (100-145 MPa) and the number of pieces (3-6) minimises the
 * offsets, in units of half the published ranges, of
 *   Chelyabinsk 2013 (19 m, 3300 kg/m3, 19.16 km/s, 18.3 deg, subarctic
 *     winter): peak brightness 29.7 km (Brown et al. 2013);
 *   Tunguska 1908 (60 m, 3000 kg/m3, 15 km/s, 45 deg, subarctic summer):
 *     burst 5-10 km (Chyba et al. 1993; Boslough & Crawford 2008);
 *   Meteor Crater (40 m iron, 17 km/s, 45 deg, U.S. Standard): about half of
 *     the mass at about 12 km/s (Melosh & Collins 2005, Nature 434, 157).
 * Result: C_s = 0.3, f_p = 5, iron strength 100 MPa, 6 pieces; then the
 * peaks are 28.5 km and 7.8 km and the iron brings 0.68 of its mass at
 * 13.3 km/s (the pieces are slowed less than Melosh & Collins's flattened
 * body).  The constants the calibration does not fit (C_H, T_r, the
 * fragmenting strength 10 MPa, f_c = 0.5, alpha = 0.25, C_sep = 0.5) are
 * typical values recalled from the cited works (MEM), not checked against
 * them here; each has its key.  Pieces do not break again by default:
 * with the cloud fraction constant, each further break makes the energy at
 * the sea fall as bodies grow past the size where it starts, and Meteor
 * Crater's intact half argues for one break.
 *
 * Numerics: Dormand-Prince 5(4) (src/ode.c) on variables scaled by their
 * natural sizes, stepped here with the error control so that the derivative
 * at the end of a step is reused at the start of the next.  No cap on the
 * step size: the energy given to the air on a step is spread over the
 * altitude bands by a cubic Hermite curve in altitude (values and rates at
 * both ends), so the bands and the burst altitude do not depend on the step
 * sequence (76 steps for a typical ensemble member, 243 with the former
 * half-band cap).  Steps are at most a quarter of the start altitude along
 * the path, and at least 1e-10 of the crossing time (there the error
 * estimate is rounding and the step is taken).  Events (break-up, spread limit, sea level, leaving the
 * atmosphere, rest, ablated away) are found by Brent's method on the event
 * function along the step, the state inside the step coming from one step of
 * the same integrator from the step's start.  Energy bookkeeping: drag work,
 * the kinetic energy of the ablated mass and the gravity work are integrated
 * as extra state variables per group, so
 *   E0 + W_gravity = E_air + E_sea + E_carried_off
 * is an independent check of the solution.  The workspace is allocated once
 * and reused; nothing is allocated per step or per group. */
#include "steamloft/entry.h"
#include "steamloft/minmax.h"
#include "steamloft/ode.h"
#include "steamloft/units.h"

#include <gsl/gsl_errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

enum {
    Y_V = 0, Y_M, Y_GAMMA, Y_H, Y_X, Y_R, Y_RDOT, Y_EDRAG, Y_EABL, Y_WGRAV, NY
};

enum { PHASE_INTACT = 0, PHASE_PANCAKE };

enum { EV_BREAKUP = 0, EV_SPREAD, EV_SEA, EV_LEAVE, EV_STALL, EV_GONE, N_EVENTS };

/* Stop when the debris has (almost) come to rest: below this speed the
 * piece is falling out, not flying (only a safety net: terminal speeds of
 * metre-sized stones are tens of m/s and more). */
static const double stall_speed_m_s = 1.0;
/* A piece ablated to this fraction of its mass is gone (its last kinetic
 * energy ends in the air where it went). */
static const double gone_mass_fraction = 1e-9;
/* Leaving the atmosphere: climbing this far above the start altitude. */
static const double leave_margin_m = 1000.0;
static const long max_steps = 2000000;
/* Stefan-Boltzmann constant, W m-2 K-4 (CODATA 2018, exact in the SI). */
static const double stefan_boltzmann = 5.670374419e-8;

struct sl_entry_work {
    sl_ode *ode;                  /* the ODE-with-events layer (ode.h) */
};

typedef struct rhs_ctx {
    const sl_entry_params *p;
    const sl_entry_air *air;
    sl_err *e;
    int phase;
    int air_failed;
    double strength_Pa;           /* of the pieces of the group flown (INFINITY: unbreakable) */
    double spread_limit_m;        /* radius at which the group's cloud bursts */
    double gone_mass_kg;
    double R_m;                   /* planet radius (INFINITY when flat) */
    double g0_m_s2;               /* 0 when flat_no_gravity */
    double ablation_k;            /* C_H / (2 Q) */
    double flux_cap_kg_s3;        /* sigma T_r^4 / Q: the ablation flux limit, kg/(m2 s) */
    double scale[NY];             /* the solver integrates y[i] / scale[i] */
    /* The density of the last right-hand side: the break-up event at the end
     * of a step is evaluated at the state whose derivative was just taken
     * (the last stage of the stepper), so its density is known (the query
     * is a function of the altitude alone). */
    double last_h_m, last_rho_kg_m3;
} rhs_ctx;

/* A group waiting to be flown: its state where it formed. */
typedef struct pending {
    double y[NY];
    double t;
    int phase;
    size_t index;                 /* in en->groups */
    double cloud_radius_m;        /* first radius of the cloud (pancake) */
    double lateral_speed_m_s;     /* sideways speed it separated with */
} pending;

static int air_density(rhs_ctx *c, double h, double *rho)
{
    int rc = c->air->density(c->air->ctx, h, rho, c->e);
    if (rc != SL_OK) {
        c->air_failed = 1;
        return GSL_EBADFUNC;
    }
    if (!isfinite(*rho) || *rho < 0) {
        /* GSL_EDOM: the solver retries the step shorter (ode.h) */
        /* a trial stage far outside the air (an overflowing extrapolation):
         * the step is refused and retried shorter; on an accepted state it is
         * an error */
        if (!(h < 0.0) || isnan(*rho)) {
            sl_err_set(c->e, SL_ENUMERIC, __func__, __LINE__,
                       "air density at %.1f m is not a finite non-negative number", h);
            c->air_failed = 1;
            return GSL_EBADFUNC;
        }
        return GSL_EDOM;
    }
    return GSL_SUCCESS;
}

static int rhs(double t, const double y[], double f[], void *params)
{
    (void)t;
    rhs_ctx *c = params;
    const sl_entry_params *p = c->p;
    double v = y[Y_V], m = y[Y_M], gam = y[Y_GAMMA], h = y[Y_H], r = y[Y_R];
    if (!(v > 0) || !(m > 0) || !(r > 0))
        return GSL_EDOM; /* a trial outside the domain: a shorter step */
    double rho;
    int st = air_density(c, h, &rho);
    if (st != GSL_SUCCESS)
        return st;
    c->last_h_m = h;
    c->last_rho_kg_m3 = rho;
    double Rh = c->R_m + h;
    double g = c->g0_m_s2 > 0 ? c->g0_m_s2 * (c->R_m / Rh) * (c->R_m / Rh) : 0.0;
    double area = SL_PI * r * r;
    double drag = 0.5 * p->drag_coefficient * rho * area * v * v;
    double sg = sin(gam), cg = cos(gam);
    /* Heat flux to the surface: C_H of the air's energy flux, at most the
     * black-body flux of the shock layer (the large-body limit). */
    double flux = sl_min(c->ablation_k * rho * v * v * v, c->flux_cap_kg_s3);
    double dm = -flux * area;

    f[Y_V] = -drag / m + g * sg;
    f[Y_GAMMA] = (g * cg) / v - (isfinite(c->R_m) ? v * cg / Rh : 0.0);
    f[Y_H] = -v * sg;
    f[Y_X] = isfinite(c->R_m) ? v * cg * c->R_m / Rh : v * cg;
    f[Y_M] = dm;
    if (c->phase == PHASE_INTACT) {
        f[Y_R] = r * dm / (3.0 * m);
        f[Y_RDOT] = 0.0;
    } else {
        f[Y_R] = y[Y_RDOT];
        f[Y_RDOT] = p->spread_coefficient * rho * v * v / (p->density_kg_m3 * r);
    }
    f[Y_EDRAG] = drag * v;
    f[Y_EABL] = -dm * 0.5 * v * v;
    f[Y_WGRAV] = m * g * v * sg;
    return GSL_SUCCESS;
}

/* Y = YS times the scales, YS = Y over them: restrict and NY (even) long,
 * so gcc -O2 vectorises them (the same products and quotients, the same
 * bits); through the rhs_ctx pointer it could not rule out that the output
 * overlaps the scales and kept them scalar. */
_Static_assert(NY % 2 == 0, "the scaling loops run in pairs");
static void times_scale(const double *restrict scale, const double *restrict ys, double *restrict y)
{
    for (int i = 0; i < NY; i++)
        y[i] = ys[i] * scale[i];
}

static void over_scale(const double *restrict scale, const double *restrict y, double *restrict ys)
{
    for (int i = 0; i < NY; i++)
        ys[i] = y[i] / scale[i];
}

/* The solver sees every variable divided by its natural size, so one error
 * control with absolute and relative tolerance tol fits all of them. */
static int rhs_scaled(double t, const double ys[], double fs[], void *params)
{
    rhs_ctx *c = params;
    double y[NY], f[NY];
    times_scale(c->scale, ys, y);
    int st = rhs(t, y, f, params);
    over_scale(c->scale, f, fs);
    return st;
}

static void to_scaled(const rhs_ctx *c, const double y[], double ys[])
{
    over_scale(c->scale, y, ys);
}

static void from_scaled(const rhs_ctx *c, const double ys[], double y[])
{
    times_scale(c->scale, ys, y);
}

/* Event functions: positive before the event, crossing zero at it. */
static int event_value(rhs_ctx *c, int ev, const double y[], double *out)
{
    switch (ev) {
    case EV_BREAKUP: {
        if (c->phase != PHASE_INTACT || !isfinite(c->strength_Pa)) {
            *out = 1.0;
            return GSL_SUCCESS;
        }
        double rho = c->last_rho_kg_m3;
        if (y[Y_H] != c->last_h_m && air_density(c, y[Y_H], &rho) != GSL_SUCCESS)
            return GSL_EBADFUNC;
        *out = (c->strength_Pa - rho * y[Y_V] * y[Y_V]) / c->strength_Pa;
        return GSL_SUCCESS;
    }
    case EV_SPREAD:
        *out = c->phase == PHASE_PANCAKE ? (c->spread_limit_m - y[Y_R]) / c->spread_limit_m : 1.0;
        return GSL_SUCCESS;
    case EV_SEA:
        *out = y[Y_H];
        return GSL_SUCCESS;
    case EV_LEAVE:
        *out = c->p->start_altitude_m + leave_margin_m - y[Y_H];
        return GSL_SUCCESS;
    case EV_STALL:
        *out = y[Y_V] - stall_speed_m_s;
        return GSL_SUCCESS;
    case EV_GONE:
        *out = y[Y_M] / c->gone_mass_kg - 1.0;
        return GSL_SUCCESS;
    }
    return GSL_EBADFUNC;
}

/* All event values of a scaled state (ode.h). */
static int events(double t, const double ys[], double g[], void *params)
{
    (void)t;
    rhs_ctx *c = params;
    double y[NY];
    from_scaled(c, ys, y);
    for (int ev = 0; ev < N_EVENTS; ev++) {
        int st = event_value(c, ev, y, &g[ev]);
        if (st != GSL_SUCCESS)
            return st;
    }
    return GSL_SUCCESS;
}

const char *sl_entry_mode_name(int mode)
{
    switch (mode) {
    case SL_ENTRY_MODE_INTACT: return "intact";
    case SL_ENTRY_MODE_PANCAKE: return "debris cloud (pancake)";
    case SL_ENTRY_MODE_FRAGMENTS: return "fragments";
    case SL_ENTRY_MODE_IMPOSED: return "imposed burst";
    }
    return "unknown";
}

static int check_params(const sl_entry_params *p, sl_err *e)
{
    const double pos[] = {p->diameter_m, p->density_kg_m3, p->speed_m_s, p->angle_rad,
                          p->strength_Pa, p->start_altitude_m, p->drag_coefficient,
                          p->heat_of_ablation_J_kg, p->spread_coefficient, p->band_width_m,
                          p->relative_tolerance, p->fragmenting_strength_Pa, p->separation_coefficient};
    const char *names[] = {"diameter", "density", "speed", "angle", "strength", "start altitude",
                           "drag coefficient", "heat of ablation", "spread coefficient",
                           "band width", "relative tolerance", "fragmenting strength",
                           "separation coefficient"};
    for (size_t i = 0; i < sizeof pos / sizeof pos[0]; i++)
        if (!(pos[i] > 0) || !isfinite(pos[i]))
            SL_FAIL_RETURN(e, SL_EDATA, "entry: %s must be a positive number (got %g)", names[i], pos[i]);
    if (!(p->heat_transfer_coefficient >= 0))
        SL_FAIL_RETURN(e, SL_EDATA, "entry: heat-transfer coefficient must be >= 0");
    if (!(p->burst_spread_factor > 1))
        SL_FAIL_RETURN(e, SL_EDATA, "entry: burst spread factor must exceed 1");
    if (p->angle_rad > 0.5 * SL_PI + 1e-12)
        SL_FAIL_RETURN(e, SL_EDATA, "entry: angle must be at most 90 degrees");
    if (p->breakup_model < SL_ENTRY_MODEL_AUTO || p->breakup_model > SL_ENTRY_MODEL_FRAGMENTS)
        SL_FAIL_RETURN(e, SL_EDATA, "entry: unknown break-up model %d", p->breakup_model);
    if (p->fragment_count < 2 || p->fragment_count > 16)
        SL_FAIL_RETURN(e, SL_EDATA, "entry: fragment count %d is not in 2-16", p->fragment_count);
    if (p->fragment_generations < 0 || p->fragment_generations > 5)
        SL_FAIL_RETURN(e, SL_EDATA, "entry: fragment generations %d is not in 0-5", p->fragment_generations);
    if (!(p->cloud_fraction >= 0 && p->cloud_fraction <= 0.95))
        SL_FAIL_RETURN(e, SL_EDATA, "entry: cloud fraction %g is not in 0-0.95", p->cloud_fraction);
    if (!(p->weibull_exponent >= 0 && p->weibull_exponent <= 0.5))
        SL_FAIL_RETURN(e, SL_EDATA, "entry: Weibull exponent %g is not in 0-0.5", p->weibull_exponent);
    return SL_OK;
}

static int ensure_work(sl_entry *en, const sl_entry_params *p, sl_err *e)
{
    size_t nb = (size_t)ceil((p->start_altitude_m + leave_margin_m) / p->band_width_m);
    if (nb < 1)
        nb = 1;
    if (en->band_energy_J == NULL || en->n_bands != nb) {
        free(en->band_energy_J);
        en->band_energy_J = calloc(nb, sizeof(double));
        if (en->band_energy_J == NULL) {
            en->n_bands = 0;
            SL_FAIL_RETURN(e, SL_ENOMEM, "entry: cannot allocate %zu bands", nb);
        }
        en->n_bands = nb;
    }
    memset(en->band_energy_J, 0, nb * sizeof(double));
    en->band_width_m = p->band_width_m;
    if (en->w == NULL) {
        sl_entry_work *w = calloc(1, sizeof *w);
        if (w == NULL)
            SL_FAIL_RETURN(e, SL_ENOMEM, "entry: cannot allocate the workspace");
        en->w = w;
    }
    if (en->w->ode == NULL) {
        /* Dormand-Prince 5(4) on the scaled state; a trial outside the
         * domain is retried four times shorter; at the smallest step an error
         * above the tolerance is rounding and the step is taken. */
        sl_ode_config oc = {.dim = NY, .rhs = rhs_scaled, .events = events,
                            .n_events = N_EVENTS, .atol = 1e-8, .rtol = 1e-8, .fail_shrink = 0.25,
                            .accept_at_h_min = 1, .event_xtol = 1e-12};
        SL_TRY_RETURN(e, sl_ode_init(&en->w->ode, &oc, e));
    }
    return SL_OK;
}

static size_t band_of(const sl_entry *en, double z)
{
    double i = floor(z / en->band_width_m);
    if (!(i >= 0))
        return 0;
    return i >= (double)en->n_bands ? en->n_bands - 1 : (size_t)i;
}

/* Put DE into the bands between H0 and H1 with the cumulative deposit
 * CUM(s) (s = 0 at H0, 1 at H1; CUM(0) = 0, CUM(1) = 1, monotonic), given
 * by the cubic Hermite coefficients (or linear when K is NULL).  Anything
 * the clamping to [0, top] leaves out goes into the band of H1, so the bands
 * always sum to the energy in the air. */
static double hermite_cum(const double k[4], double s)
{
    return ((k[3] * s + k[2]) * s + k[1]) * s + k[0];
}

static void deposit_profile(sl_entry *en, double h0, double h1, double de, const double *k)
{
    if (de == 0.0)
        return;
    double w = en->band_width_m, top = w * (double)en->n_bands;
    double lo = sl_min(sl_max(sl_min(h0, h1), 0.0), top), hi = sl_min(sl_max(sl_max(h0, h1), 0.0), top);
    double span = h1 - h0, done = 0.0;
    if (fabs(span) > 1e-9 * w && hi > lo) {
        size_t i0 = band_of(en, lo), i1 = band_of(en, hi);
        for (size_t i = i0; i <= i1; i++) {
            double b = sl_max(lo, (double)i * w), t = sl_min(hi, (double)(i + 1) * w);
            if (!(t > b))
                continue;
            double sb = (b - h0) / span, st = (t - h0) / span;
            double cb = k ? hermite_cum(k, sb) : sb, ct = k ? hermite_cum(k, st) : st;
            double part = de * fabs(ct - cb);
            en->band_energy_J[i] += part;
            done += part;
        }
    }
    en->band_energy_J[band_of(en, h1)] += de - done;
}

/* Energy DE given to the air on a step from altitude H0 to H1, with
 * deposition rates D0, D1 (J/s) and vertical speeds W0, W1 (m/s) at its
 * ends: cubic Hermite in altitude for the cumulative deposit, so the band
 * sums do not depend on where the steps fall; linear when the Hermite
 * curve is not monotonic (or the path turns within the step). */
static void deposit_step(sl_entry *en, double h0, double h1, double de, double d0, double d1, double w0, double w1)
{
    double span = h1 - h0;
    if (de <= 0.0 || fabs(span) < 1e-9 * en->band_width_m || !(w0 * span > 0) || !(w1 * span > 0)) {
        deposit_profile(en, h0, h1, de, NULL);
        return;
    }
    /* slopes of the cumulative fraction per unit s */
    double m0 = d0 / w0 * span / de, m1 = d1 / w1 * span / de;
    double k[4] = {0.0, m0, 3.0 - 2.0 * m0 - m1, m0 + m1 - 2.0};
    /* monotonic: derivative m0 + 2 k2 s + 3 k3 s^2 >= 0 on [0, 1] */
    int ok = m0 >= 0 && m1 >= 0;
    if (ok && k[3] != 0.0) {
        double sv = -k[2] / (3.0 * k[3]);
        if (sv > 0 && sv < 1 && k[1] + 2.0 * k[2] * sv + 3.0 * k[3] * sv * sv < 0)
            ok = 0;
    }
    deposit_profile(en, h0, h1, de, ok ? k : NULL);
}

static void reset_results(sl_entry *en)
{
    size_t nb = en->n_bands;
    double *bands = en->band_energy_J, bw = en->band_width_m;
    sl_entry_work *w = en->w;
    memset(en, 0, sizeof *en);
    en->n_bands = nb;
    en->band_energy_J = bands;
    en->band_width_m = bw;
    en->w = w;
    en->breakup_altitude_m = NAN;
    en->breakup_speed_m_s = NAN;
    en->spread_altitude_m = NAN;
    en->burst_altitude_m = NAN;
    en->peak_altitude_m = NAN;
}

static int solve_imposed(sl_entry *en, const sl_entry_params *p, double m0, double e0)
{
    double f = p->imposed_burst_fraction;
    en->imposed = 1;
    en->mode = SL_ENTRY_MODE_IMPOSED;
    en->airburst = f > 0.0;
    en->burst_altitude_m = en->airburst ? p->imposed_burst_altitude_m : NAN;
    en->peak_altitude_m = p->imposed_burst_altitude_m;
    deposit_profile(en, p->imposed_burst_altitude_m, p->imposed_burst_altitude_m, f * e0, NULL);
    en->energy_air_drag_J = f * e0;
    en->energy_in_air_J = f * e0;
    en->reached_sea = f < 1.0;
    en->sea_mass_kg = (1.0 - f) * m0;
    en->sea_speed_m_s = en->reached_sea ? p->speed_m_s : 0.0;
    en->sea_energy_J = (1.0 - f) * e0;
    en->sea_angle_rad = p->angle_rad;
    en->sea_radius_m = 0.5 * p->diameter_m * cbrt(1.0 - f);
    en->energy_end_J = en->sea_energy_J;
    en->n_groups = 1;
    sl_entry_group *g = &en->groups[0];
    g->count = 1.0;
    g->piece_mass_kg = m0;
    g->strength_Pa = p->strength_Pa;
    g->start_altitude_m = p->start_altitude_m;
    g->end = en->reached_sea ? SL_ENTRY_END_SEA : SL_ENTRY_END_BURST;
    g->end_altitude_m = en->reached_sea ? 0.0 : p->imposed_burst_altitude_m;
    g->sea_mass_kg = en->sea_mass_kg;
    g->sea_speed_m_s = en->sea_speed_m_s;
    g->sea_energy_J = en->sea_energy_J;
    en->sea_pieces = en->reached_sea ? 1.0 : 0.0;
    en->sea_fragment_energy_J = en->sea_energy_J;
    en->energy_error_J = e0 - (en->energy_in_air_J + en->energy_end_J);
    return SL_OK;
}

/* Everything one solve needs besides the results. */
typedef struct solver {
    sl_entry *en;
    const sl_entry_params *p;
    rhs_ctx c;
    pending stack[SL_ENTRY_MAX_GROUPS];
    size_t n_stack;
    double sea_angle_weight;      /* sum of E gamma over what reached the sea */
    int fragments;                /* the body breaks into fragments (else pancake) */
} solver;

static int add_group(solver *s, const double y[NY], double t, int phase, int cloud, int generation,
                     double count, double strength, double lateral_speed, double lateral0, sl_err *e)
{
    sl_entry *en = s->en;
    if (en->n_groups >= SL_ENTRY_MAX_GROUPS || s->n_stack >= SL_ENTRY_MAX_GROUPS)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "entry: more than %d fragment groups", SL_ENTRY_MAX_GROUPS);
    size_t gi = en->n_groups++;
    sl_entry_group *g = &en->groups[gi];
    memset(g, 0, sizeof *g);
    g->cloud = cloud;
    g->generation = generation;
    g->count = count;
    g->piece_mass_kg = y[Y_M];
    g->strength_Pa = strength;
    g->start_altitude_m = y[Y_H];
    g->end_altitude_m = NAN;
    g->lateral_spread_m = lateral0;
    pending *q = &s->stack[s->n_stack++];
    memcpy(q->y, y, sizeof q->y);
    q->y[Y_EDRAG] = q->y[Y_EABL] = q->y[Y_WGRAV] = 0.0;
    q->t = t;
    q->phase = phase;
    q->index = gi;
    q->cloud_radius_m = y[Y_R];
    q->lateral_speed_m_s = lateral_speed;
    return SL_OK;
}

static void note_breakup(sl_entry *en, const double y[NY])
{
    if (!en->broke_up) {
        en->broke_up = 1;
        en->breakup_altitude_m = y[Y_H];
        en->breakup_speed_m_s = y[Y_V];
    }
}

/* A strong group breaks: a debris cloud and COUNT x n pieces with the
 * Weibull-scaled strength, separating at the Passey & Melosh speed. */
static int split(solver *s, const pending *q, const double y[NY], double t, sl_err *e)
{
    const sl_entry_params *p = s->p;
    const sl_entry_group *g = &s->en->groups[q->index];
    double fc = p->cloud_fraction, n = (double)p->fragment_count;
    double count = g->count, lateral0 = g->lateral_spread_m;
    int gen = g->generation + 1;
    double rho;
    if (air_density(&s->c, y[Y_H], &rho) != GSL_SUCCESS)
        return sl_err_push(e, e ? e->code : SL_ENUMERIC, __func__, __LINE__);
    double yc[NY];
    memcpy(yc, y, sizeof yc);
    if (fc > 0.0) {
        yc[Y_M] = fc * y[Y_M];
        yc[Y_RDOT] = 0.0;
        SL_TRY_RETURN(e, add_group(s, yc, t, PHASE_PANCAKE, 1, gen, count, NAN, 0.0, lateral0, e));
    }
    if (fc < 1.0) {
        double ratio = n / (1.0 - fc); /* parent mass / piece mass */
        yc[Y_M] = y[Y_M] / ratio;
        yc[Y_R] = y[Y_R] / cbrt(ratio);
        yc[Y_RDOT] = 0.0;
        double strength = gen <= p->fragment_generations ? g->strength_Pa * pow(ratio, p->weibull_exponent)
                                                         : INFINITY;
        double vt = y[Y_V] * sqrt(p->separation_coefficient * cbrt(ratio) * rho / p->density_kg_m3);
        SL_TRY_RETURN(e, add_group(s, yc, t, PHASE_INTACT, 0, gen, count * n, strength, vt, lateral0, e));
    }
    return SL_OK;
}

/* A debris cloud at its spread limit releases its kinetic energy over a
 * short path: the energy left falls off as exp(-d/L) with the depth d below
 * the burst, L the vertical length over which the cloud would spread by
 * another factor e (the dispersion length of Collins et al. 2005, eq. 16, at
 * the local density).  What is left at the sea surface goes to the sea
 * (when it is at least 1e-6 of the cloud's energy; less is given to the
 * lowest band). */
static int burst(solver *s, const pending *q, const double y[NY], sl_err *e)
{
    sl_entry *en = s->en;
    const sl_entry_params *p = s->p;
    sl_entry_group *g = &en->groups[q->index];
    double rho;
    if (air_density(&s->c, y[Y_H], &rho) != GSL_SUCCESS)
        return sl_err_push(e, e ? e->code : SL_ENUMERIC, __func__, __LINE__);
    double ek = g->count * 0.5 * y[Y_M] * y[Y_V] * y[Y_V];
    double sg = sl_max(sin(y[Y_GAMMA]), 1e-3);
    double len = 2.0 * q->cloud_radius_m * sg * sqrt(p->density_kg_m3 / (p->drag_coefficient * sl_max(rho, 1e-30)));
    double top = sl_max(y[Y_H], 0.0), w = en->band_width_m;
    double f_sea = exp(-top / len);
    if (f_sea < 1e-6)
        f_sea = 0.0;
    double e_sea = ek * f_sea, e_air = ek - e_sea, done = 0.0;
    size_t itop = band_of(en, top);
    for (size_t i = 0; i <= itop; i++) {
        double b = (double)i * w, t = sl_min(top, (double)(i + 1) * w);
        if (!(t > b))
            continue;
        double part = ek * (exp(-(top - t) / len) - exp(-(top - b) / len));
        en->band_energy_J[i] += part;
        done += part;
    }
    en->band_energy_J[0] += e_air - done; /* the tail below 1e-6, and rounding */
    en->energy_burst_J += e_air;
    en->energy_in_air_J += e_air;
    if (!en->spread_reached) {
        en->spread_reached = 1;
        en->spread_altitude_m = top;
    }
    g->end = SL_ENTRY_END_BURST;
    g->end_altitude_m = top;
    if (e_sea > 0.0) {
        double ms = g->count * y[Y_M] * f_sea;
        g->sea_mass_kg = ms;
        g->sea_energy_J = e_sea;
        g->sea_speed_m_s = y[Y_V];
        en->reached_sea = 1;
        en->sea_mass_kg += ms;
        en->sea_energy_J += e_sea;
        s->sea_angle_weight += e_sea * y[Y_GAMMA];
    }
    return SL_OK;
}

/* The end of a group that stopped (sea, leaving, at rest, ablated away). */
static void finish(solver *s, const pending *q, const double y[NY], int end, double t)
{
    sl_entry *en = s->en;
    sl_entry_group *g = &en->groups[q->index];
    double ek = g->count * 0.5 * y[Y_M] * y[Y_V] * y[Y_V];
    g->end = end;
    g->end_altitude_m = y[Y_H];
    g->lateral_spread_m += q->lateral_speed_m_s * (t - q->t);
    en->time_s = sl_max(en->time_s, t);
    en->ground_range_m = sl_max(en->ground_range_m, y[Y_X]);
    switch (end) {
    case SL_ENTRY_END_SEA:
        g->sea_mass_kg = g->count * y[Y_M];
        g->sea_speed_m_s = y[Y_V];
        g->sea_energy_J = ek;
        en->reached_sea = 1;
        en->sea_mass_kg += g->sea_mass_kg;
        en->sea_energy_J += ek;
        s->sea_angle_weight += ek * y[Y_GAMMA];
        if (!g->cloud) {
            en->sea_pieces += g->count;
            en->sea_fragment_energy_J += ek;
            en->sea_footprint_m = sl_max(en->sea_footprint_m, g->lateral_spread_m);
        }
        break;
    case SL_ENTRY_END_LEFT:
        en->left_atmosphere = 1;
        en->energy_carried_off_J += ek;
        break;
    case SL_ENTRY_END_AIR:
        /* At rest or ablated away aloft: the last of the motion ends in the air. */
        deposit_profile(en, y[Y_H], y[Y_H], ek, NULL);
        en->energy_in_air_J += ek;
        en->energy_air_drag_J += ek;
        break;
    default:
        break;
    }
}

/* Fly one group from its state where it formed to its end (or its split,
 * which pushes its children). */
static int fly(solver *s, pending *q, long *n_steps, sl_err *e)
{
    sl_entry *en = s->en;
    const sl_entry_params *p = s->p;
    sl_entry_work *w = en->w;
    rhs_ctx *c = &s->c;
    sl_entry_group *g = &en->groups[q->index];
    double y[NY], y0[NY], ys[NY], f_sea[NY];
    memcpy(y, q->y, sizeof y);
    double t = q->t;

    c->phase = q->phase;
    c->strength_Pa = g->cloud ? INFINITY : g->strength_Pa;
    c->spread_limit_m = p->burst_spread_factor * q->cloud_radius_m;
    /* ablated away: below 1e-9 of the group's mass, or below what the
     * tolerance resolves in the scaled mass */
    c->gone_mass_kg = sl_max(gone_mass_fraction, 10.0 * p->relative_tolerance) * y[Y_M];
    double ek0 = 0.5 * y[Y_M] * y[Y_V] * y[Y_V];
    const double scale[NY] = {y[Y_V], y[Y_M], 1.0, p->start_altitude_m, p->start_altitude_m,
                              y[Y_R], 0.01 * y[Y_V], ek0, ek0, ek0};
    memcpy(c->scale, scale, sizeof scale);
    sl_ode *ode = w->ode;

    /* First trial: a tenth of the time to cross the start altitude for the
     * body at the top of the atmosphere, where the air is thin (the trial is
     * then rarely rejected: 2 % fewer instructions per bench member with the
     * plume's first step below than with 1e-3), a thousandth for a fragment
     * formed in the air. */
    double h_step = (q->t == 0.0 ? 0.1 : 1e-3) * p->start_altitude_m / y[Y_V];
    const double h_min = 1e-10 * p->start_altitude_m / p->speed_m_s; /* ~0.5 ns */
    /* at most a quarter of the start altitude along the path per step: keeps
     * trial stages of loose tolerances inside the air (rarely binding) */
    const double h_max = 0.25 * p->start_altitude_m / y[Y_V];
    sl_ode_set_step_limits(ode, h_min, h_max);
    int start = 1, check_break = 1, broke = 0;
    sl_err oe; /* the solver's message (E keeps the air's when that failed) */
    sl_err_clear(&oe);
    for (;;) {
        /* Already past its strength (at the start, or at a break-up event): break now. */
        double gb = 1.0;
        if (check_break && !broke && event_value(c, EV_BREAKUP, y, &gb) != GSL_SUCCESS)
            return sl_err_push(e, e ? e->code : SL_ENUMERIC, __func__, __LINE__);
        check_break = 0;
        if (gb <= 0.0 || broke) {
            broke = 0;
            note_breakup(en, y);
            if (s->fragments) {
                en->energy_air_drag_J += g->count * y[Y_EDRAG];
                en->energy_ablation_J += g->count * y[Y_EABL];
                en->gravity_work_J += g->count * y[Y_WGRAV];
                en->energy_in_air_J += g->count * (y[Y_EDRAG] + y[Y_EABL]);
                en->time_s = sl_max(en->time_s, t);
                g->end = SL_ENTRY_END_SPLIT;
                g->end_altitude_m = y[Y_H];
                g->lateral_spread_m += q->lateral_speed_m_s * (t - q->t);
                return split(s, q, y, t, e);
            }
            c->phase = PHASE_PANCAKE;
            g->cloud = 1;
            y[Y_RDOT] = 0.0;
            q->cloud_radius_m = y[Y_R];
            c->spread_limit_m = p->burst_spread_factor * y[Y_R];
            start = 1;
        }
        if (start) {
            to_scaled(c, y, ys);
            if (sl_ode_restart(ode, t, ys, h_step, &oe) != SL_OK) {
                if (c->air_failed)
                    return sl_err_push(e, e ? e->code : SL_ENUMERIC, __func__, __LINE__);
                SL_FAIL_RETURN(e, SL_ENUMERIC, "entry: bad state at %.0f m, %.1f m/s", y[Y_H], y[Y_V]);
            }
            start = 0;
        }
        /* One accepted step, with the earliest event crossed on it. */
        long trials0 = sl_ode_trials(ode);
        int kind;
        sl_ode_hits hits;
        int rc = sl_ode_step(ode, INFINITY, &kind, &hits, &oe);
        *n_steps += sl_ode_trials(ode) - trials0;
        if (c->air_failed)
            return sl_err_push(e, e ? e->code : SL_ENUMERIC, __func__, __LINE__);
        if (rc != SL_OK) {
            if (e)
                *e = oe;
            return sl_err_push(e, rc, __func__, __LINE__);
        }
        if (*n_steps > max_steps)
            SL_FAIL_RETURN(e, SL_ENUMERIC, "entry: more than %ld steps (at %.0f m, %.1f m/s)", max_steps, y[Y_H],
                           y[Y_V]);
        h_step = sl_ode_h(ode);
        from_scaled(c, sl_ode_y_prev(ode), y0);
        double t0 = sl_ode_t_prev(ode);
        if (kind == SL_ODE_STEP_STUCK) {
            /* every trial left the physical domain (mass or speed <= 0) down to the smallest step */
            if (y0[Y_M] < 1e-3 * g->piece_mass_kg || y0[Y_V] < 10.0 * stall_speed_m_s) {
                /* all but gone, or at rest: it ends here */
                en->energy_air_drag_J += g->count * y0[Y_EDRAG];
                en->energy_ablation_J += g->count * y0[Y_EABL];
                en->gravity_work_J += g->count * y0[Y_WGRAV];
                en->energy_in_air_J += g->count * (y0[Y_EDRAG] + y0[Y_EABL]);
                finish(s, q, y0, SL_ENTRY_END_AIR, t0);
                return SL_OK;
            }
            SL_FAIL_RETURN(e, SL_ENUMERIC, "entry: ODE solver failed (no step is small enough) at %.0f m, %.1f m/s",
                           y0[Y_H], y0[Y_V]);
        }
        from_scaled(c, sl_ode_y(ode), y);
        t = sl_ode_t(ode);
        int first = hits.terminal ? (int)hits.event[hits.n - 1] : -1;
        const double *f0 = sl_ode_dydt_prev(ode), *f1 = sl_ode_dydt(ode);
        if (first == EV_SEA) {
            y[Y_H] = 0.0; /* the root is found to 1e-12 of the step; pin it */
            to_scaled(c, y, ys);
            if (rhs_scaled(t, ys, f_sea, c) != GSL_SUCCESS) {
                if (c->air_failed)
                    return sl_err_push(e, e ? e->code : SL_ENUMERIC, __func__, __LINE__);
                SL_FAIL_RETURN(e, SL_ENUMERIC, "entry: bad state at an event near %.0f m", y[Y_H]);
            }
            f1 = f_sea;
        }

        /* Energy given to the air on this step, spread by the Hermite curve. */
        const double se = c->scale[Y_EDRAG], sh = c->scale[Y_H];
        double de = g->count * ((y[Y_EDRAG] + y[Y_EABL]) - (y0[Y_EDRAG] + y0[Y_EABL]));
        deposit_step(en, y0[Y_H], y[Y_H], de, g->count * se * (f0[Y_EDRAG] + f0[Y_EABL]),
                     g->count * se * (f1[Y_EDRAG] + f1[Y_EABL]), sh * f0[Y_H], sh * f1[Y_H]);

        if (first < 0)
            continue;
        if (first == EV_BREAKUP) {
            broke = 1; /* handled at the top of the loop (the state is at the strength) */
            continue;
        }
        en->energy_air_drag_J += g->count * y[Y_EDRAG];
        en->energy_ablation_J += g->count * y[Y_EABL];
        en->gravity_work_J += g->count * y[Y_WGRAV];
        en->energy_in_air_J += g->count * (y[Y_EDRAG] + y[Y_EABL]);
        switch (first) {
        case EV_SPREAD:
            g->lateral_spread_m += q->lateral_speed_m_s * (t - q->t);
            en->time_s = sl_max(en->time_s, t);
            return burst(s, q, y, e);
        case EV_SEA:
            finish(s, q, y, SL_ENTRY_END_SEA, t);
            return SL_OK;
        case EV_LEAVE:
            finish(s, q, y, SL_ENTRY_END_LEFT, t);
            return SL_OK;
        default:
            finish(s, q, y, SL_ENTRY_END_AIR, t);
            return SL_OK;
        }
    }
}

/* Peak of dE/dz from the bands: the fullest band, refined by the parabola
 * through it and its neighbours. */
static void find_peak(sl_entry *en)
{
    size_t ib = 0;
    for (size_t i = 1; i < en->n_bands; i++)
        if (en->band_energy_J[i] > en->band_energy_J[ib])
            ib = i;
    double w = en->band_width_m, eb = en->band_energy_J[ib];
    if (!(eb > 0))
        return;
    double off = 0.0;
    if (ib > 0 && ib + 1 < en->n_bands) {
        double a = en->band_energy_J[ib - 1], b = en->band_energy_J[ib + 1];
        double den = a - 2.0 * eb + b;
        if (den < 0)
            off = sl_min(0.5, sl_max(-0.5, 0.5 * (a - b) / den));
    }
    en->peak_deposition_J_m = eb / w;
    en->peak_altitude_m = ((double)ib + 0.5 + off) * w;
}

int sl_entry_solve(sl_entry *en, const sl_entry_params *p, const sl_entry_air *air, sl_err *e)
{
    SL_TRY_RETURN(e, check_params(p, e));
    SL_TRY_RETURN(e, ensure_work(en, p, e));
    reset_results(en);
    sl_entry_work *w = en->w;

    double r0 = 0.5 * p->diameter_m;
    double m0 = p->density_kg_m3 * (4.0 / 3.0) * SL_PI * r0 * r0 * r0;
    double e0 = 0.5 * m0 * p->speed_m_s * p->speed_m_s;
    en->initial_mass_kg = m0;
    en->initial_energy_J = e0;

    if (isfinite(p->imposed_burst_altitude_m)) {
        double f = p->imposed_burst_fraction;
        if (!(f >= 0 && f <= 1) || !(p->imposed_burst_altitude_m >= 0))
            SL_FAIL_RETURN(e, SL_EDATA, "entry: imposed burst needs altitude >= 0 and fraction in [0, 1]");
        return solve_imposed(en, p, m0, e0);
    }

    solver s;
    memset(&s, 0, sizeof s);
    s.en = en;
    s.p = p;
    s.c = (rhs_ctx){.p = p, .air = air, .e = e, .phase = PHASE_INTACT, .air_failed = 0, .last_h_m = NAN,
                    .R_m = p->flat_no_gravity ? INFINITY : SL_EARTH_MEAN_RADIUS_M,
                    .g0_m_s2 = p->flat_no_gravity ? 0.0 : SL_USSA_G0_M_S2,
                    .ablation_k = p->heat_transfer_coefficient / (2.0 * p->heat_of_ablation_J_kg),
                    .flux_cap_kg_s3 = p->radiation_temperature_K > 0
                                          ? stefan_boltzmann * pow(p->radiation_temperature_K, 4) /
                                                p->heat_of_ablation_J_kg
                                          : INFINITY};
    s.fragments = p->breakup_model == SL_ENTRY_MODEL_FRAGMENTS ||
                  (p->breakup_model == SL_ENTRY_MODEL_AUTO && p->strength_Pa >= p->fragmenting_strength_Pa);
    double tol = p->relative_tolerance;
    SL_TRY_RETURN(e, sl_ode_set_tolerance(w->ode, tol, tol, e));
    sl_ode_set_params(w->ode, &s.c);

    double y[NY] = {0};
    y[Y_V] = p->speed_m_s;
    y[Y_M] = m0;
    y[Y_GAMMA] = p->angle_rad;
    y[Y_H] = p->start_altitude_m;
    y[Y_R] = r0;
    SL_TRY_RETURN(e, add_group(&s, y, 0.0, PHASE_INTACT, 0, 0, 1.0, p->strength_Pa, 0.0, 0.0, e));
    while (s.n_stack > 0) {
        pending q = s.stack[--s.n_stack];
        SL_TRY_RETURN(e, fly(&s, &q, &en->n_steps, e));
    }

    en->mode = !en->broke_up ? SL_ENTRY_MODE_INTACT : s.fragments ? SL_ENTRY_MODE_FRAGMENTS : SL_ENTRY_MODE_PANCAKE;
    if (en->reached_sea) {
        en->sea_speed_m_s = en->sea_mass_kg > 0 ? sqrt(2.0 * en->sea_energy_J / en->sea_mass_kg) : 0.0;
        en->sea_angle_rad = en->sea_energy_J > 0 ? s.sea_angle_weight / en->sea_energy_J : p->angle_rad;
        en->sea_radius_m = cbrt(3.0 * en->sea_mass_kg / (4.0 * SL_PI * p->density_kg_m3));
    }
    en->energy_end_J = en->sea_energy_J + en->energy_carried_off_J;
    en->energy_error_J = (e0 + en->gravity_work_J) - (en->energy_in_air_J + en->energy_end_J);
    find_peak(en);

    /* Airburst: the body broke up and more of its energy went into the air
     * than reached the sea. */
    if (en->broke_up && en->energy_in_air_J > en->sea_energy_J && en->energy_in_air_J > en->energy_carried_off_J) {
        en->airburst = 1;
        en->burst_altitude_m = en->peak_altitude_m;
    }
    return SL_OK;
}

double sl_entry_energy_between(const sl_entry *en, double bottom_m, double top_m)
{
    double sum = 0.0, w = en->band_width_m;
    for (size_t i = 0; i < en->n_bands; i++) {
        double b = sl_max(bottom_m, (double)i * w), t = sl_min(top_m, (double)(i + 1) * w);
        if (t > b)
            sum += en->band_energy_J[i] * (t - b) / w;
    }
    return sum;
}

double sl_entry_deposition_centroid_m(const sl_entry *en)
{
    double sum = 0.0, moment = 0.0, w = en->band_width_m;
    for (size_t i = 0; i < en->n_bands; i++) {
        sum += en->band_energy_J[i];
        moment += en->band_energy_J[i] * ((double)i + 0.5) * w;
    }
    return sum > 0.0 ? moment / sum : NAN;
}

void sl_entry_free(sl_entry *en)
{
    if (en == NULL)
        return;
    if (en->w) {
        sl_ode_free(en->w->ode);
        free(en->w);
    }
    free(en->band_energy_J);
    memset(en, 0, sizeof *en);
}
