/* ode: one ODE-with-events layer for the stages that integrate in time
 * (entry.c, plume.c).
 *
 * The embedded Runge-Kutta pair of Dormand & Prince 5(4) with the standard
 * error control of GSL (|err_i| <= atol + rtol |y_i|, the step rule of
 * gsl_odeiv2_control_standard_new, with no growth of the next step after a
 * rejected trial) advances the state one accepted step at a time.  Its last
 * stage is the derivative at the end of the step, which is the first stage
 * of the next one, so every trial costs six right-hand-side calls (GSL's
 * pairs used before, Runge-Kutta-Fehlberg 4(5) for the entry and Cash-Karp
 * 4(5) for the plume, cost six too, but the Dormand-Prince pair's smaller
 * error constants take fewer trials: 5.5 % fewer instructions per bench
 * member), and the cubic Hermite interpolant through the two end states and
 * their derivatives (Hairer, Norsett & Wanner 1993, Solving ODEs I, sec.
 * II.6) is the step's dense output at no extra cost.
 *
 * Events are sign changes of user functions g_i(t, y): an event happens on
 * a step when g_i goes from > 0 at the step's start to <= 0 at its end.  Its
 * time is located by the Illinois variant of regula falsi (Dowell & Jarratt
 * 1971, BIT 11) on g_i evaluated along the interpolant, never by re-stepping
 * the ODE: a root costs a few evaluations of g, none of the right-hand side.
 * The located time is the upper end of a bracket narrower than xtol of the
 * step, so the event has happened (g_i <= 0 on the interpolant) there.
 *
 * A terminal event stops the integration: the state is moved to the event
 * by one single step of the stepper from the step's start (the stepper's own
 * accuracy, not the interpolant's) and the derivative there is evaluated;
 * the caller may then change its equations and call sl_ode_restart.  A
 * non-terminal event is reported with its time and integration goes on from
 * the step's end; sl_ode_dense gives its state.  Events can be switched off.
 *
 * All memory is allocated by sl_ode_init; nothing is allocated per step or
 * per solve.  Functions return an SL_ status and fill the sl_err; the GSL
 * error handler must be off (the program turns it off in main and tests).
 * The right-hand side returns a GSL status: GSL_SUCCESS, or GSL_EDOM for a
 * trial state outside the domain (the step is retried shorter), or any other
 * value for a failure (the solve stops). */
#ifndef STEAMLOFT_ODE_H
#define STEAMLOFT_ODE_H

#include "steamloft/err.h"

#include <stddef.h>

typedef int sl_ode_rhs_fn(double t, const double y[], double dydt[], void *params);
/* All event values at (t, y) into g[0..n_events-1]; GSL status. */
typedef int sl_ode_event_fn(double t, const double y[], double g[], void *params);

enum { SL_ODE_MAX_EVENTS = 8 };

typedef struct sl_ode_config {
    size_t dim;                 /* state size */
    sl_ode_rhs_fn *rhs;
    sl_ode_event_fn *events;    /* NULL when n_events == 0 */
    size_t n_events;            /* at most SL_ODE_MAX_EVENTS */
    void *params;               /* passed to rhs and events */
    double atol, rtol;          /* error control (absolute, relative) */
    double h_min;               /* smallest step (0: none) */
    double h_max;               /* largest step (0: none) */
    double fail_shrink;         /* step factor after a trial outside the domain (0.5 when 0) */
    int accept_at_h_min;        /* 1: at h_min an error above the tolerance is accepted (rounding) */
    double event_xtol;          /* bracket width that ends the root search, relative to the step (1e-12 when 0) */
} sl_ode_config;

typedef struct sl_ode sl_ode;

/* Events found on one step, in time order; a terminal one is last. */
typedef struct sl_ode_hits {
    size_t n;
    size_t event[SL_ODE_MAX_EVENTS];
    double t[SL_ODE_MAX_EVENTS];
    int terminal;               /* 1: the last hit is terminal, the state is at it */
} sl_ode_hits;

enum {
    SL_ODE_STEP_OK = 0,         /* an accepted step */
    SL_ODE_STEP_AT_END,         /* the step ended on t_end */
    SL_ODE_STEP_STUCK           /* a trial outside the domain at h_min (state unchanged) */
};

int sl_ode_init(sl_ode **ode, const sl_ode_config *cfg, sl_err *e);
void sl_ode_free(sl_ode *ode);
int sl_ode_set_tolerance(sl_ode *ode, double atol, double rtol, sl_err *e);
/* Change the pointer passed to rhs and events, or the step limits (0: none). */
void sl_ode_set_params(sl_ode *ode, void *params);
void sl_ode_set_step_limits(sl_ode *ode, double h_min, double h_max);
/* Mark event I terminal (1) or not (0), active (1) or switched off (0). */
void sl_ode_event_mode(sl_ode *ode, size_t i, int terminal, int active);
/* Start (or start again) at (t0, y0) with first trial step h0 > 0: evaluates
 * the derivative and the events there. */
int sl_ode_restart(sl_ode *ode, double t0, const double y0[], double h0, sl_err *e);
/* One accepted step, towards t_end at most (INFINITY: no end).  *kind is one
 * of SL_ODE_STEP_*; hits lists the events crossed.  A status other than SL_OK
 * is a failure of the right-hand side, events or stepper (the message names
 * the time); *rhs_status is the last GSL status of the right-hand side. */
int sl_ode_step(sl_ode *ode, double t_end, int *kind, sl_ode_hits *hits, sl_err *e);
/* State at T inside the last step from its interpolant. */
void sl_ode_dense(const sl_ode *ode, double t, double y[]);

/* Current time, state, derivative and event values (after a terminal event:
 * at the event); start of the last step and its state and derivative. */
double sl_ode_t(const sl_ode *ode);
const double *sl_ode_y(const sl_ode *ode);
const double *sl_ode_dydt(const sl_ode *ode);
const double *sl_ode_g(const sl_ode *ode);
double sl_ode_t_prev(const sl_ode *ode);
double sl_ode_h(const sl_ode *ode);           /* the next trial step */
const double *sl_ode_y_prev(const sl_ode *ode);
const double *sl_ode_dydt_prev(const sl_ode *ode);
/* Step trials since sl_ode_init (accepted and rejected), right-hand-side evaluations. */
long sl_ode_trials(const sl_ode *ode);
long sl_ode_rhs_count(const sl_ode *ode);
/* GSL status of the last failing right-hand-side call (GSL_SUCCESS if none). */
int sl_ode_rhs_status(const sl_ode *ode);

#endif
