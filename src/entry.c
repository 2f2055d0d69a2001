/* entry: atmospheric entry, breakup and airburst of an impactor.
 *
 * Physics (SI units throughout).  The meteor equations for a point body on a
 * spherical non-rotating Earth of radius R (mean radius, units.h), gravity
 * g = g0 (R/(R+h))^2, flight-path angle gamma below the horizontal:
 *   dv/dt = -D/m + g sin(gamma),  D = 1/2 C_D rho_air pi r^2 v^2
 *   dgamma/dt = g cos(gamma)/v - v cos(gamma)/(R+h)
 *   dh/dt = -v sin(gamma),  dx/dt = v cos(gamma) R/(R+h)
 *   dm/dt = -C_H rho_air pi r^2 v^3 / (2 Q)       (classical ablation equation;
 *           C_H heat-transfer coefficient, Q heat of ablation; e.g. Bronshten 1983)
 * Phases:
 *   intact   r = (3 m / (4 pi rho_body))^(1/3), i.e. dr/dt = r (dm/dt) / (3 m);
 *   pancake  after the ram pressure rho_air v^2 first reaches the strength Y the
 *            fragments spread sideways, r d2r/dt2 = C_s rho_air v^2/rho_body
 *            (the "pancake" model of Chyba, Thomas & Zahnle 1993, Nature 361, 40
 *            and Hills & Goda 1993, AJ 105, 1114; with C_s = C_D/4 it is the
 *            spreading law d2L/dt2 = C_D rho v^2/(rho_i L) of Collins, Melosh &
 *            Marcus 2005, MAPS 40, 817, for the diameter L = 2 r);
 *   dispersed once r reaches f_p r0 (Collins et al. take f_p = 7) the cloud
 *            keeps its radius and is slowed as a whole.
 * Airburst criterion: the body broke up and either its cloud reached f_p r0
 * above the sea or its energy deposition dE/dz peaked above the sea (the rate
 * on arrival at the sea is below half the peak).  The burst altitude is the
 * altitude of peak dE/dz, the quantity observed as peak brightness.
 * An imposed burst ([airburst] altitude_m, energy_fraction), as hydrocode
 * ensembles vary it, replaces the integration: the fraction f of the initial
 * kinetic energy is released in the band of that altitude and the rest of the
 * body (mass fraction 1 - f) reaches the sea at the entry speed and angle.
 *
 * Numerics: GSL odeiv2, Runge-Kutta-Fehlberg 4(5) on variables scaled by their
 * natural sizes, so one absolute/relative tolerance fits all (an 8th-order
 * method gave the same answers at twice the cost, the steps being set by the
 * band limit).  Each step is limited to half a band in altitude so that the
 * per-band deposition (spread linearly in altitude within a step) is sharp
 * and the peak of dE/dz is located to a quarter band.  Events
 * are found by Brent's method on the event function along the step, the
 * state inside the step coming from one step of the same integrator from the
 * step's start.  Energy bookkeeping: the drag work, the kinetic energy of the
 * ablated mass and the gravity work are integrated as extra state variables,
 * so E0 + W = air + ablation + E_end is an independent check of the solution.
 * The workspace is allocated once and reused; the right-hand side allocates
 * nothing. */
#include "steamloft/entry.h"
#include "steamloft/units.h"

#include <gsl/gsl_errno.h>
#include <gsl/gsl_odeiv2.h>
#include <gsl/gsl_roots.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

enum {
    Y_V = 0, Y_M, Y_GAMMA, Y_H, Y_X, Y_R, Y_RDOT, Y_EDRAG, Y_EABL, Y_WGRAV, NY
};

enum { PHASE_INTACT = 0, PHASE_PANCAKE, PHASE_DISPERSED };

enum { EV_BREAKUP = 0, EV_SPREAD, EV_SEA, EV_LEAVE, EV_STALL, N_EVENTS };

/* Stop when the debris has (almost) come to rest: below this speed the
 * cloud is falling out, not flying (only a safety net: terminal speeds of
 * debris clouds are hundreds of m/s). */
static const double stall_speed_m_s = 1.0;
/* Leaving the atmosphere: climbing this far above the start altitude. */
static const double leave_margin_m = 1000.0;
static const long max_steps = 2000000;

struct sl_entry_work {
    gsl_odeiv2_step *step;        /* adaptive integration */
    gsl_odeiv2_control *control;
    gsl_odeiv2_evolve *evolve;
    gsl_odeiv2_step *probe;       /* single steps inside an accepted step (events) */
    gsl_root_fsolver *root;
};

typedef struct rhs_ctx {
    const sl_entry_params *p;
    const sl_entry_air *air;
    sl_err *e;
    int phase;
    int air_failed;
    double r0_m;
    double R_m;                   /* planet radius (INFINITY when flat) */
    double g0_m_s2;               /* 0 when flat_no_gravity */
    double ablation_k;            /* C_H / (2 Q) */
    double scale[NY];             /* the solver integrates y[i] / scale[i] */
} rhs_ctx;

static int air_density(rhs_ctx *c, double h, double *rho)
{
    int rc = c->air->density(c->air->ctx, h, rho, c->e);
    if (rc != SL_OK || !isfinite(*rho) || *rho < 0) {
        if (rc == SL_OK)
            sl_err_set(c->e, SL_ENUMERIC, __func__, __LINE__,
                       "air density at %.1f m is not a finite non-negative number", h);
        c->air_failed = 1;
        return GSL_EBADFUNC;
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
        return GSL_EBADFUNC;
    double rho;
    if (air_density(c, h, &rho) != GSL_SUCCESS)
        return GSL_EBADFUNC;
    double Rh = c->R_m + h;
    double g = c->g0_m_s2 > 0 ? c->g0_m_s2 * (c->R_m / Rh) * (c->R_m / Rh) : 0.0;
    double area = SL_PI * r * r;
    double drag = 0.5 * p->drag_coefficient * rho * area * v * v;
    double sg = sin(gam), cg = cos(gam);
    double dm = -c->ablation_k * rho * area * v * v * v;

    f[Y_V] = -drag / m + g * sg;
    f[Y_GAMMA] = (g * cg) / v - (isfinite(c->R_m) ? v * cg / Rh : 0.0);
    f[Y_H] = -v * sg;
    f[Y_X] = isfinite(c->R_m) ? v * cg * c->R_m / Rh : v * cg;
    f[Y_M] = dm;
    switch (c->phase) {
    case PHASE_INTACT:
        f[Y_R] = r * dm / (3.0 * m);
        f[Y_RDOT] = 0.0;
        break;
    case PHASE_PANCAKE:
        f[Y_R] = y[Y_RDOT];
        f[Y_RDOT] = p->spread_coefficient * rho * v * v / (p->density_kg_m3 * r);
        break;
    default:
        f[Y_R] = 0.0;
        f[Y_RDOT] = 0.0;
        break;
    }
    f[Y_EDRAG] = drag * v;
    f[Y_EABL] = -dm * 0.5 * v * v;
    f[Y_WGRAV] = m * g * v * sg;
    return GSL_SUCCESS;
}

/* The solver sees every variable divided by its natural size, so one error
 * control with absolute and relative tolerance tol fits all of them. */
static int rhs_scaled(double t, const double ys[], double fs[], void *params)
{
    rhs_ctx *c = params;
    double y[NY], f[NY];
    for (int i = 0; i < NY; i++)
        y[i] = ys[i] * c->scale[i];
    int st = rhs(t, y, f, params);
    for (int i = 0; i < NY; i++)
        fs[i] = f[i] / c->scale[i];
    return st;
}

static void to_scaled(const rhs_ctx *c, const double y[], double ys[])
{
    for (int i = 0; i < NY; i++)
        ys[i] = y[i] / c->scale[i];
}

static void from_scaled(const rhs_ctx *c, const double ys[], double y[])
{
    for (int i = 0; i < NY; i++)
        y[i] = ys[i] * c->scale[i];
}

/* Event functions: positive before the event, crossing zero at it. */
static int event_value(rhs_ctx *c, int ev, const double y[], double *out)
{
    switch (ev) {
    case EV_BREAKUP: {
        if (c->phase != PHASE_INTACT) {
            *out = 1.0;
            return GSL_SUCCESS;
        }
        double rho;
        if (air_density(c, y[Y_H], &rho) != GSL_SUCCESS)
            return GSL_EBADFUNC;
        *out = (c->p->strength_Pa - rho * y[Y_V] * y[Y_V]) / c->p->strength_Pa;
        return GSL_SUCCESS;
    }
    case EV_SPREAD:
        *out = c->phase == PHASE_PANCAKE ? (c->p->burst_spread_factor * c->r0_m - y[Y_R]) / c->r0_m : 1.0;
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
    }
    return GSL_EBADFUNC;
}

typedef struct probe_ctx {
    sl_entry_work *w;
    gsl_odeiv2_system *sys;
    rhs_ctx *c;
    const double *y0;
    double t0;
    int ev;
    double *ytmp;
    double *yerr;
    int failed;
} probe_ctx;

/* State at t0 + tau by one step of the probe integrator from y0. */
static int probe_state(probe_ctx *q, double tau, double *y)
{
    if (tau == 0.0) {
        memcpy(y, q->y0, NY * sizeof(double));
        return GSL_SUCCESS;
    }
    double ys[NY];
    to_scaled(q->c, q->y0, ys);
    gsl_odeiv2_step_reset(q->w->probe);
    int st = gsl_odeiv2_step_apply(q->w->probe, q->t0, tau, ys, q->yerr, NULL, NULL, q->sys);
    from_scaled(q->c, ys, y);
    return st;
}

static double probe_fn(double tau, void *params)
{
    probe_ctx *q = params;
    double g = 0.0;
    if (probe_state(q, tau, q->ytmp) != GSL_SUCCESS || event_value(q->c, q->ev, q->ytmp, &g) != GSL_SUCCESS) {
        q->failed = 1;
        return GSL_NAN;
    }
    return g;
}

/* Find tau in (0, dt] where event EV crosses zero.  Returns GSL status. */
static int locate_event(probe_ctx *q, double dt, double *tau_out)
{
    gsl_function F = {probe_fn, q};
    double lo = 0.0, hi = dt;
    int status = gsl_root_fsolver_set(q->w->root, &F, lo, hi);
    if (status != GSL_SUCCESS)
        return status;
    for (int it = 0; it < 200; it++) {
        status = gsl_root_fsolver_iterate(q->w->root);
        if (status != GSL_SUCCESS || q->failed)
            return status != GSL_SUCCESS ? status : GSL_EBADFUNC;
        lo = gsl_root_fsolver_x_lower(q->w->root);
        hi = gsl_root_fsolver_x_upper(q->w->root);
        if (gsl_root_test_interval(lo, hi, 1e-12, 1e-12) == GSL_SUCCESS)
            break;
    }
    /* Take the upper end so the event has happened (g <= 0) at the new state. */
    *tau_out = hi;
    return GSL_SUCCESS;
}

static int check_params(const sl_entry_params *p, sl_err *e)
{
    const double pos[] = {p->diameter_m, p->density_kg_m3, p->speed_m_s, p->angle_rad,
                          p->strength_Pa, p->start_altitude_m, p->drag_coefficient,
                          p->heat_of_ablation_J_kg, p->spread_coefficient, p->band_width_m,
                          p->relative_tolerance};
    const char *names[] = {"diameter", "density", "speed", "angle", "strength", "start altitude",
                           "drag coefficient", "heat of ablation", "spread coefficient",
                           "band width", "relative tolerance"};
    for (size_t i = 0; i < sizeof pos / sizeof pos[0]; i++)
        if (!(pos[i] > 0) || !isfinite(pos[i]))
            SL_FAIL_RETURN(e, SL_EDATA, "entry: %s must be a positive number (got %g)", names[i], pos[i]);
    if (!(p->heat_transfer_coefficient >= 0))
        SL_FAIL_RETURN(e, SL_EDATA, "entry: heat-transfer coefficient must be >= 0");
    if (!(p->burst_spread_factor > 1))
        SL_FAIL_RETURN(e, SL_EDATA, "entry: burst spread factor must exceed 1");
    if (p->angle_rad > 0.5 * SL_PI + 1e-12)
        SL_FAIL_RETURN(e, SL_EDATA, "entry: angle must be at most 90 degrees");
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
        w->step = gsl_odeiv2_step_alloc(gsl_odeiv2_step_rkf45, NY);
        w->probe = gsl_odeiv2_step_alloc(gsl_odeiv2_step_rkf45, NY);
        w->evolve = gsl_odeiv2_evolve_alloc(NY);
        w->root = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
        w->control = gsl_odeiv2_control_y_new(1e-8, 1e-8);
        if (!w->step || !w->probe || !w->evolve || !w->root || !w->control)
            SL_FAIL_RETURN(e, SL_ENOMEM, "entry: cannot allocate the ODE workspace");
    }
    return SL_OK;
}

/* Spread the energy DE deposited while going from H0 to H1 over the bands,
 * linearly in altitude. */
static void deposit(sl_entry *en, double h0, double h1, double de)
{
    if (de == 0.0)
        return;
    double w = en->band_width_m;
    double top = w * (double)en->n_bands;
    double lo = fmin(h0, h1), hi = fmax(h0, h1);
    lo = fmin(fmax(lo, 0.0), top);
    hi = fmin(fmax(hi, 0.0), top);
    if (hi - lo <= 1e-9 * w) {
        size_t i = (size_t)fmin(floor(lo / w), (double)en->n_bands - 1);
        en->band_energy_J[i] += de;
        return;
    }
    size_t i0 = (size_t)fmin(floor(lo / w), (double)en->n_bands - 1);
    size_t i1 = (size_t)fmin(floor(hi / w), (double)en->n_bands - 1);
    for (size_t i = i0; i <= i1; i++) {
        double b = fmax(lo, (double)i * w), t = fmin(hi, (double)(i + 1) * w);
        if (t > b)
            en->band_energy_J[i] += de * (t - b) / (hi - lo);
    }
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
    en->airburst = f > 0.0;
    en->burst_altitude_m = en->airburst ? p->imposed_burst_altitude_m : NAN;
    en->peak_altitude_m = p->imposed_burst_altitude_m;
    deposit(en, p->imposed_burst_altitude_m, p->imposed_burst_altitude_m, f * e0);
    en->energy_air_drag_J = f * e0;
    en->energy_in_air_J = f * e0;
    en->reached_sea = f < 1.0;
    en->sea_mass_kg = (1.0 - f) * m0;
    en->sea_speed_m_s = en->reached_sea ? p->speed_m_s : 0.0;
    en->sea_energy_J = (1.0 - f) * e0;
    en->sea_angle_rad = p->angle_rad;
    en->sea_radius_m = 0.5 * p->diameter_m * cbrt(1.0 - f);
    en->energy_end_J = en->sea_energy_J;
    en->energy_error_J = e0 - (en->energy_in_air_J + en->energy_end_J);
    return SL_OK;
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

    rhs_ctx c = {.p = p, .air = air, .e = e, .phase = PHASE_INTACT, .air_failed = 0, .r0_m = r0,
                 .R_m = p->flat_no_gravity ? INFINITY : SL_EARTH_MEAN_RADIUS_M,
                 .g0_m_s2 = p->flat_no_gravity ? 0.0 : SL_USSA_G0_M_S2,
                 .ablation_k = p->heat_transfer_coefficient / (2.0 * p->heat_of_ablation_J_kg)};
    gsl_odeiv2_system sys = {rhs_scaled, NULL, NY, &c};

    double y[NY] = {0}, y0[NY], ytmp[NY], yerr[NY];
    y[Y_V] = p->speed_m_s;
    y[Y_M] = m0;
    y[Y_GAMMA] = p->angle_rad;
    y[Y_H] = p->start_altitude_m;
    y[Y_R] = r0;

    /* Error scales: the natural size of each variable. */
    const double scale[NY] = {p->speed_m_s, m0, 1.0, p->start_altitude_m, p->start_altitude_m,
                              r0, 0.01 * p->speed_m_s, e0, e0, e0};
    memcpy(c.scale, scale, sizeof scale);
    double tol = p->relative_tolerance;
    if (gsl_odeiv2_control_init(w->control, tol, tol, 1.0, 0.0) != GSL_SUCCESS)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "entry: cannot set the tolerance %g", tol);
    gsl_odeiv2_evolve_reset(w->evolve);
    gsl_odeiv2_step_reset(w->step);

    double t = 0.0;
    double h_step = 1e-3 * p->start_altitude_m / p->speed_m_s;
    double last_rate = 0.0; /* dE/dz on the last step */
    int done = 0;
    probe_ctx q = {w, &sys, &c, y0, 0.0, 0, ytmp, yerr, 0};

    while (!done) {
        if (++en->n_steps > max_steps)
            SL_FAIL_RETURN(e, SL_ENUMERIC, "entry: more than %ld steps (at %.0f m, %.1f m/s)",
                           max_steps, y[Y_H], y[Y_V]);
        memcpy(y0, y, sizeof y);
        double t0 = t;
        double vz = fabs(y[Y_V] * sin(y[Y_GAMMA])) + 1e-3;
        double dt_max = 0.5 * p->band_width_m / vz;
        double ys[NY];
        to_scaled(&c, y, ys);
        int st = gsl_odeiv2_evolve_apply(w->evolve, w->control, w->step, &sys, &t, t0 + dt_max, &h_step, ys);
        from_scaled(&c, ys, y);
        if (c.air_failed)
            return sl_err_push(e, e ? e->code : SL_ENUMERIC, __func__, __LINE__);
        if (st != GSL_SUCCESS)
            SL_FAIL_RETURN(e, SL_ENUMERIC, "entry: ODE solver failed (%s) at %.0f m, %.1f m/s",
                           gsl_strerror(st), y0[Y_H], y0[Y_V]);
        if (h_step > dt_max)
            h_step = dt_max;

        /* Earliest event crossed on this step. */
        int first = -1;
        double tau_first = t - t0;
        for (int ev = 0; ev < N_EVENTS; ev++) {
            double g0, g1;
            if (event_value(&c, ev, y0, &g0) != GSL_SUCCESS || event_value(&c, ev, y, &g1) != GSL_SUCCESS)
                return sl_err_push(e, e ? e->code : SL_ENUMERIC, __func__, __LINE__);
            if (!(g0 > 0.0 && g1 <= 0.0))
                continue;
            double tau;
            q.t0 = t0;
            q.ev = ev;
            q.failed = 0;
            int rs = locate_event(&q, t - t0, &tau);
            if (rs != GSL_SUCCESS || q.failed) {
                if (c.air_failed)
                    return sl_err_push(e, e ? e->code : SL_ENUMERIC, __func__, __LINE__);
                SL_FAIL_RETURN(e, SL_ENUMERIC, "entry: event location failed near %.0f m", y0[Y_H]);
            }
            if (first < 0 || tau < tau_first) {
                first = ev;
                tau_first = tau;
            }
        }
        if (first >= 0) {
            q.t0 = t0;
            if (probe_state(&q, tau_first, y) != GSL_SUCCESS)
                SL_FAIL_RETURN(e, SL_ENUMERIC, "entry: state at an event failed near %.0f m", y0[Y_H]);
            t = t0 + tau_first;
            if (first == EV_SEA)
                y[Y_H] = 0.0; /* the root is found to 1e-12 of the step; pin it */
        }

        /* Energy given to the air on this step, per band and as a rate. */
        double de = (y[Y_EDRAG] + y[Y_EABL]) - (y0[Y_EDRAG] + y0[Y_EABL]);
        deposit(en, y0[Y_H], y[Y_H], de);
        double dz = fabs(y0[Y_H] - y[Y_H]);
        if (dz > 0.0) {
            last_rate = de / dz;
            if (last_rate > en->peak_deposition_J_m) {
                en->peak_deposition_J_m = last_rate;
                en->peak_altitude_m = 0.5 * (y0[Y_H] + y[Y_H]);
            }
        }

        switch (first) {
        case EV_BREAKUP:
            en->broke_up = 1;
            en->breakup_altitude_m = y[Y_H];
            en->breakup_speed_m_s = y[Y_V];
            c.phase = PHASE_PANCAKE;
            y[Y_RDOT] = 0.0;
            gsl_odeiv2_evolve_reset(w->evolve);
            break;
        case EV_SPREAD:
            en->spread_reached = 1;
            en->spread_altitude_m = y[Y_H];
            c.phase = PHASE_DISPERSED;
            y[Y_RDOT] = 0.0;
            gsl_odeiv2_evolve_reset(w->evolve);
            break;
        case EV_SEA:
            en->reached_sea = 1;
            done = 1;
            break;
        case EV_LEAVE:
            en->left_atmosphere = 1;
            done = 1;
            break;
        case EV_STALL:
            done = 1;
            break;
        default:
            break;
        }
    }

    double ke_end = 0.5 * y[Y_M] * y[Y_V] * y[Y_V];
    en->time_s = t;
    en->ground_range_m = y[Y_X];
    en->energy_air_drag_J = y[Y_EDRAG];
    en->energy_ablation_J = y[Y_EABL];
    en->gravity_work_J = y[Y_WGRAV];
    en->energy_in_air_J = y[Y_EDRAG] + y[Y_EABL];
    if (en->reached_sea) {
        en->sea_speed_m_s = y[Y_V];
        en->sea_mass_kg = y[Y_M];
        en->sea_energy_J = ke_end;
        en->sea_angle_rad = y[Y_GAMMA];
        en->sea_radius_m = y[Y_R];
        en->energy_end_J = ke_end;
    } else if (en->left_atmosphere) {
        en->energy_end_J = ke_end;
    } else {
        /* Stalled aloft: the last of the motion ends in the air there. */
        deposit(en, y[Y_H], y[Y_H], ke_end);
        en->energy_in_air_J += ke_end;
        en->energy_air_drag_J += ke_end;
        en->energy_end_J = 0.0;
    }
    en->energy_error_J = (e0 + en->gravity_work_J) - (en->energy_in_air_J + en->energy_end_J);

    /* Airburst: broke up, and the cloud reached f_p r0 above the sea or the
     * deposition rate peaked above the sea (on arrival it is below half the
     * peak).  A body that never broke up is not an airburst. */
    int peak_aloft = !en->reached_sea || last_rate < 0.5 * en->peak_deposition_J_m;
    if (en->broke_up && (en->spread_reached || peak_aloft) && !en->left_atmosphere) {
        en->airburst = 1;
        en->burst_altitude_m = en->peak_altitude_m;
    }
    return SL_OK;
}

double sl_entry_energy_between(const sl_entry *en, double bottom_m, double top_m)
{
    double sum = 0.0, w = en->band_width_m;
    for (size_t i = 0; i < en->n_bands; i++) {
        double b = fmax(bottom_m, (double)i * w), t = fmin(top_m, (double)(i + 1) * w);
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
        if (en->w->step)
            gsl_odeiv2_step_free(en->w->step);
        if (en->w->probe)
            gsl_odeiv2_step_free(en->w->probe);
        if (en->w->control)
            gsl_odeiv2_control_free(en->w->control);
        if (en->w->evolve)
            gsl_odeiv2_evolve_free(en->w->evolve);
        if (en->w->root)
            gsl_root_fsolver_free(en->w->root);
        free(en->w);
    }
    free(en->band_energy_J);
    memset(en, 0, sizeof *en);
}
