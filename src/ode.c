/* ode: one ODE-with-events layer (include/steamloft/ode.h).
 *
 * The step-size logic follows gsl_odeiv2_evolve_apply (GSL 2.x): a trial
 * that leaves the domain is retried shorter, an error above the tolerance
 * retries with the step GSL's standard control proposes (the same formula,
 * hadjust below), an accepted step proposes the next one, but not a longer
 * one when a trial of this step was rejected (Hairer, Norsett & Wanner 1993,
 * Solving ODEs I, sec. II.4: facmax = 1 right after a rejection; 5 % fewer
 * plume and 7 % fewer entry right-hand sides on the bench ensemble, whose
 * right-hand sides have kinks at the tropopause and at phase changes); a
 * step that would pass t_end ends on it.  The stepper is Dormand-Prince
 * 5(4), whose last stage is the derivative at the step's end: it is the
 * first stage of the next step and the slope of the cubic Hermite
 * interpolant on which events are located. */
#include "steamloft/ode.h"

#include <gsl/gsl_errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

struct sl_ode {
    sl_ode_config cfg;
    long trials, rhs_calls;
    int rhs_status;
    double t, t_prev, h;
    int terminal[SL_ODE_MAX_EVENTS], active[SL_ODE_MAX_EVENTS];
    /* Vectors of dim doubles padded with zeros to STRIDE (dim rounded up to
     * even, so the stage sums of dp45_apply run in two-lane pairs; the pads
     * stay zero: every operation on them is 0 + h (sum of a 0)), in one
     * zeroed block of 14 stride + 3 (n_events + 1) doubles. */
    size_t stride;
    double *y, *f, *y_prev, *f_prev, *y_try, *f_try, *y_err, *y_tmp;
    double *k2, *k3, *k4, *k5, *k6, *y_stage; /* the stepper's stages */
    double *g, *g_prev, *g_tmp;
    double *block;
};

static int counted_rhs(double t, const double y[], double dydt[], void *params)
{
    sl_ode *o = params;
    o->rhs_calls++;
    int st = o->cfg.rhs(t, y, dydt, o->cfg.params);
    if (st != GSL_SUCCESS)
        o->rhs_status = st;
    return st;
}

/* The stage sums of the stepper, one helper per number of terms, each
 * element computed as the scalar expression y + h (a1 k1 + a2 k2 + ...),
 * left to right.  Their arguments are restrict and their length 2 PAIRS
 * (struct sl_ode: every vector padded with zeros to an even length), so that
 * gcc -O2 turns each loop into packed two-lane arithmetic: the same IEEE
 * operations on the same operands, bit for bit the scalar results, in about
 * half the instructions (the stepper was the largest single cost of the
 * entry and plume stages). */
static void stage1(size_t pairs, double *restrict ys, const double *restrict y, double h, double a1,
                   const double *restrict k1)
{
    for (size_t i = 0; i < 2 * pairs; i++)
        ys[i] = y[i] + h * a1 * k1[i];
}

static void stage2(size_t pairs, double *restrict ys, const double *restrict y, double h, double a1,
                   const double *restrict k1, double a2, const double *restrict k2)
{
    for (size_t i = 0; i < 2 * pairs; i++)
        ys[i] = y[i] + h * (a1 * k1[i] + a2 * k2[i]);
}

static void stage3(size_t pairs, double *restrict ys, const double *restrict y, double h, double a1,
                   const double *restrict k1, double a2, const double *restrict k2, double a3,
                   const double *restrict k3)
{
    for (size_t i = 0; i < 2 * pairs; i++)
        ys[i] = y[i] + h * (a1 * k1[i] + a2 * k2[i] + a3 * k3[i]);
}

static void stage4(size_t pairs, double *restrict ys, const double *restrict y, double h, double a1,
                   const double *restrict k1, double a2, const double *restrict k2, double a3,
                   const double *restrict k3, double a4, const double *restrict k4)
{
    for (size_t i = 0; i < 2 * pairs; i++)
        ys[i] = y[i] + h * (a1 * k1[i] + a2 * k2[i] + a3 * k3[i] + a4 * k4[i]);
}

static void stage5(size_t pairs, double *restrict ys, const double *restrict y, double h, double a1,
                   const double *restrict k1, double a2, const double *restrict k2, double a3,
                   const double *restrict k3, double a4, const double *restrict k4, double a5,
                   const double *restrict k5)
{
    for (size_t i = 0; i < 2 * pairs; i++)
        ys[i] = y[i] + h * (a1 * k1[i] + a2 * k2[i] + a3 * k3[i] + a4 * k4[i] + a5 * k5[i]);
}

/* The error estimate h (e1 k1 + e3 k3 + ... + e7 k7) into YERR, and Y
 * becomes the fifth-order solution YS. */
static void stage_error(size_t pairs, double *restrict yerr, double *restrict y, const double *restrict ys, double h,
                        const double *restrict k1, const double *restrict k3, const double *restrict k4,
                        const double *restrict k5, const double *restrict k6, const double *restrict k7)
{
    static const double e1 = 71.0 / 57600.0, e3 = -71.0 / 16695.0, e4 = 71.0 / 1920.0, e5 = -17253.0 / 339200.0,
                        e6 = 22.0 / 525.0, e7 = -1.0 / 40.0;
    for (size_t i = 0; i < 2 * pairs; i++) {
        yerr[i] = h * (e1 * k1[i] + e3 * k3[i] + e4 * k4[i] + e5 * k5[i] + e6 * k6[i] + e7 * k7[i]);
        y[i] = ys[i];
    }
}

/* One trial of Dormand & Prince (1980, J. Comput. Appl. Math. 6, 19) 5(4)
 * from (T, Y) over H, with K1 the derivative at the start: Y becomes the
 * fifth-order solution, YERR its difference from the embedded fourth-order
 * one (b - b^, the fifth- minus the fourth-order weights, in stage_error),
 * K7 the derivative at the end (the seventh stage; "first same as last").
 * Six right-hand-side calls.  Coefficients as in Hairer, Norsett & Wanner
 * (1993), Solving ODEs I, table II.5.2.  All vectors are the solver's own
 * (padded, struct sl_ode), none the same as another. */
static int dp45_apply(sl_ode *o, double t, double h, double *y, double *yerr, const double *k1, double *k7)
{
    static const double a21 = 1.0 / 5.0;
    static const double a31 = 3.0 / 40.0, a32 = 9.0 / 40.0;
    static const double a41 = 44.0 / 45.0, a42 = -56.0 / 15.0, a43 = 32.0 / 9.0;
    static const double a51 = 19372.0 / 6561.0, a52 = -25360.0 / 2187.0, a53 = 64448.0 / 6561.0, a54 = -212.0 / 729.0;
    static const double a61 = 9017.0 / 3168.0, a62 = -355.0 / 33.0, a63 = 46732.0 / 5247.0, a64 = 49.0 / 176.0,
                        a65 = -5103.0 / 18656.0;
    static const double b1 = 35.0 / 384.0, b3 = 500.0 / 1113.0, b4 = 125.0 / 192.0, b5 = -2187.0 / 6784.0,
                        b6 = 11.0 / 84.0;
    const size_t pairs = o->stride / 2;
    double *ys = o->y_stage, *k2 = o->k2, *k3 = o->k3, *k4 = o->k4, *k5 = o->k5, *k6 = o->k6;
    int st;
    stage1(pairs, ys, y, h, a21, k1);
    if ((st = counted_rhs(t + h / 5.0, ys, k2, o)) != GSL_SUCCESS)
        return st;
    stage2(pairs, ys, y, h, a31, k1, a32, k2);
    if ((st = counted_rhs(t + 0.3 * h, ys, k3, o)) != GSL_SUCCESS)
        return st;
    stage3(pairs, ys, y, h, a41, k1, a42, k2, a43, k3);
    if ((st = counted_rhs(t + 0.8 * h, ys, k4, o)) != GSL_SUCCESS)
        return st;
    stage4(pairs, ys, y, h, a51, k1, a52, k2, a53, k3, a54, k4);
    if ((st = counted_rhs(t + h * (8.0 / 9.0), ys, k5, o)) != GSL_SUCCESS)
        return st;
    stage5(pairs, ys, y, h, a61, k1, a62, k2, a63, k3, a64, k4, a65, k5);
    if ((st = counted_rhs(t + h, ys, k6, o)) != GSL_SUCCESS)
        return st;
    stage5(pairs, ys, y, h, b1, k1, b3, k3, b4, k4, b5, k5, b6, k6);
    if ((st = counted_rhs(t + h, ys, k7, o)) != GSL_SUCCESS)
        return st;
    stage_error(pairs, yerr, y, ys, h, k1, k3, k4, k5, k6, k7);
    return GSL_SUCCESS;
}

enum { HADJ_DEC = -1, HADJ_NIL = 0, HADJ_INC = 1 };

/* GSL's standard step control (gsl_odeiv2_control_standard_new with a_y = 1,
 * a_dydt = 0, for a method of order 5): r = max_i |err_i| / (atol + rtol
 * |y_i|); above 1.1 the step shrinks by 0.9 r^(-1/5), at most 5 times;
 * below 0.5 it grows by 0.9 r^(-1/6), at most 5 times. */
static int hadjust(const sl_ode *o, const double *y, const double *yerr, double *h)
{
    double rmax = 2.2250738585072014e-308; /* DBL_MIN, as GSL */
    for (size_t i = 0; i < o->cfg.dim; i++) {
        const double r = fabs(yerr[i]) / (o->cfg.rtol * fabs(y[i]) + o->cfg.atol);
        rmax = r > rmax ? r : rmax;
    }
    if (rmax > 1.1) {
        const double r = 0.9 / pow(rmax, 1.0 / 5.0);
        *h *= r < 0.2 ? 0.2 : r;
        return HADJ_DEC;
    }
    if (rmax < 0.5) {
        const double r = 0.9 / pow(rmax, 1.0 / 6.0);
        *h *= r > 5.0 ? 5.0 : (r < 1.0 ? 1.0 : r);
        return HADJ_INC;
    }
    return HADJ_NIL;
}

void sl_ode_free(sl_ode *ode)
{
    if (ode == NULL)
        return;
    free(ode->block);
    free(ode);
}

int sl_ode_init(sl_ode **out, const sl_ode_config *cfg, sl_err *e)
{
    *out = NULL;
    if (cfg == NULL || cfg->dim == 0 || cfg->rhs == NULL || cfg->n_events > SL_ODE_MAX_EVENTS ||
        (cfg->n_events > 0 && cfg->events == NULL))
        SL_FAIL_RETURN(e, SL_EINTERNAL, "ode: bad configuration (dimension, right-hand side or events)");
    if (!(cfg->rtol >= 0.0) || !(cfg->atol >= 0.0) || !(cfg->rtol + cfg->atol > 0.0))
        SL_FAIL_RETURN(e, SL_EINTERNAL, "ode: tolerances %g (absolute), %g (relative) are not usable", cfg->atol,
                       cfg->rtol);
    sl_ode *o = calloc(1, sizeof *o);
    if (o == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "ode: out of memory for the solver");
    o->cfg = *cfg;
    if (!(o->cfg.fail_shrink > 0.0 && o->cfg.fail_shrink < 1.0))
        o->cfg.fail_shrink = 0.5;
    if (!(o->cfg.event_xtol > 0.0))
        o->cfg.event_xtol = 1e-12;
    size_t m = cfg->n_events;
    o->stride = cfg->dim + cfg->dim % 2;
    size_t n = o->stride;
    o->block = calloc(14 * n + 3 * (m + 1), sizeof(double));
    if (o->block == NULL) {
        sl_ode_free(o);
        SL_FAIL_RETURN(e, SL_ENOMEM, "ode: out of memory for the solver");
    }
    double *p = o->block;
    double **vec[] = {&o->y,     &o->f,  &o->y_prev, &o->f_prev, &o->y_try, &o->f_try, &o->y_err,
                      &o->y_tmp, &o->k2, &o->k3,     &o->k4,     &o->k5,    &o->k6,    &o->y_stage};
    for (size_t i = 0; i < sizeof vec / sizeof vec[0]; i++, p += n)
        *vec[i] = p;
    o->g = p;
    o->g_prev = p + (m + 1);
    o->g_tmp = p + 2 * (m + 1);
    for (size_t i = 0; i < m; i++)
        o->terminal[i] = o->active[i] = 1;
    *out = o;
    return SL_OK;
}

int sl_ode_set_tolerance(sl_ode *ode, double atol, double rtol, sl_err *e)
{
    if (!(atol >= 0.0) || !(rtol >= 0.0) || !(atol + rtol > 0.0))
        SL_FAIL_RETURN(e, SL_EINTERNAL, "ode: cannot set the tolerances %g (absolute), %g (relative)", atol, rtol);
    ode->cfg.atol = atol;
    ode->cfg.rtol = rtol;
    return SL_OK;
}

void sl_ode_set_params(sl_ode *ode, void *params)
{
    ode->cfg.params = params;
}

void sl_ode_set_step_limits(sl_ode *ode, double h_min, double h_max)
{
    ode->cfg.h_min = h_min;
    ode->cfg.h_max = h_max;
}

void sl_ode_event_mode(sl_ode *ode, size_t i, int terminal, int active)
{
    if (i < ode->cfg.n_events) {
        ode->terminal[i] = terminal;
        ode->active[i] = active;
    }
}

static int eval_events(sl_ode *o, double t, const double *y, double *g, sl_err *e)
{
    if (o->cfg.n_events == 0)
        return SL_OK;
    int st = o->cfg.events(t, y, g, o->cfg.params);
    if (st != GSL_SUCCESS)
        SL_FAIL_RETURN(e, SL_ENUMERIC, "ode: event functions failed at t = %.9g (%s)", t, gsl_strerror(st));
    return SL_OK;
}

int sl_ode_restart(sl_ode *ode, double t0, const double y0[], double h0, sl_err *e)
{
    size_t n = ode->cfg.dim;
    memcpy(ode->y, y0, n * sizeof(double));
    ode->t = ode->t_prev = t0;
    ode->h = h0;
    int st = counted_rhs(t0, ode->y, ode->f, ode);
    if (st != GSL_SUCCESS)
        SL_FAIL_RETURN(e, SL_ENUMERIC, "ode: right-hand side failed at the start, t = %.9g (%s)", t0,
                       gsl_strerror(st));
    memcpy(ode->y_prev, ode->y, n * sizeof(double));
    memcpy(ode->f_prev, ode->f, n * sizeof(double));
    SL_TRY_RETURN(e, eval_events(ode, t0, ode->y, ode->g, e));
    memcpy(ode->g_prev, ode->g, ode->cfg.n_events * sizeof(double));
    return SL_OK;
}

void sl_ode_dense(const sl_ode *o, double t, double y[])
{
    double h = o->t - o->t_prev;
    if (h == 0.0) {
        memcpy(y, o->y, o->cfg.dim * sizeof(double));
        return;
    }
    double s = (t - o->t_prev) / h;
    /* Cubic Hermite: (1-s) y0 + s y1 + s (s-1) [(1-2s)(y1-y0) + (s-1) h f0 + s h f1]. */
    double a = s * (s - 1.0), b = 1.0 - 2.0 * s, c = (s - 1.0) * h, d = s * h;
    for (size_t i = 0; i < o->cfg.dim; i++) {
        double y0 = o->y_prev[i], y1 = o->y[i], dy = y1 - y0;
        y[i] = y0 + s * dy + a * (b * dy + c * o->f_prev[i] + d * o->f[i]);
    }
}

/* Event I on the last step: g_prev[i] > 0 >= g[i].  Illinois regula falsi
 * on the interpolant; the upper end of the final bracket. */
static int locate(sl_ode *o, size_t i, double *t_out, sl_err *e)
{
    double a = o->t_prev, b = o->t, fa = o->g_prev[i], fb = o->g[i];
    double xtol = o->cfg.event_xtol * fabs(b - a);
    int side = 0;
    for (int it = 0; it < 200 && fb != 0.0 && fabs(b - a) > xtol; it++) {
        double c = (a * fb - b * fa) / (fb - fa);
        if (!(c > a && c < b))
            c = 0.5 * (a + b);
        if (!(c > a && c < b))
            break; /* adjacent doubles */
        sl_ode_dense(o, c, o->y_tmp);
        SL_TRY_RETURN(e, eval_events(o, c, o->y_tmp, o->g_tmp, e));
        double fc = o->g_tmp[i];
        if (!isfinite(fc))
            SL_FAIL_RETURN(e, SL_ENUMERIC, "ode: event %zu is not finite at t = %.9g", i, c);
        if (fc <= 0.0) {
            b = c;
            fb = fc;
            if (side == -1)
                fa *= 0.5;
            side = -1;
        } else {
            a = c;
            fa = fc;
            if (side == 1)
                fb *= 0.5;
            side = 1;
        }
    }
    *t_out = b;
    return SL_OK;
}

static int find_events(sl_ode *o, sl_ode_hits *hits, sl_err *e)
{
    hits->n = 0;
    hits->terminal = 0;
    size_t m = o->cfg.n_events;
    if (m == 0)
        return SL_OK;
    SL_TRY_RETURN(e, eval_events(o, o->t, o->y, o->g, e));
    for (size_t i = 0; i < m; i++) {
        if (!o->active[i] || !(o->g_prev[i] > 0.0 && o->g[i] <= 0.0))
            continue;
        double te = o->t;
        SL_TRY_RETURN(e, locate(o, i, &te, e));
        /* insert in time order (a terminal event first among equal times) */
        size_t k = hits->n;
        while (k > 0 && (hits->t[k - 1] > te || (hits->t[k - 1] == te && o->terminal[i] && !o->terminal[hits->event[k - 1]]))) {
            hits->t[k] = hits->t[k - 1];
            hits->event[k] = hits->event[k - 1];
            k--;
        }
        hits->t[k] = te;
        hits->event[k] = i;
        hits->n++;
    }
    for (size_t k = 0; k < hits->n; k++)
        if (o->terminal[hits->event[k]]) {
            hits->n = k + 1;
            hits->terminal = 1;
            break;
        }
    return SL_OK;
}

/* Move the state to the terminal event at TE: one step of the stepper from
 * the start of the last step, then derivative and events there. */
static int to_event(sl_ode *o, double te, sl_err *e)
{
    size_t n = o->cfg.dim;
    double h = te - o->t_prev;
    memcpy(o->y_try, o->y_prev, n * sizeof(double));
    if (h != 0.0) {
        int st = dp45_apply(o, o->t_prev, h, o->y_try, o->y_err, o->f_prev, o->f_try);
        if (st != GSL_SUCCESS)
            SL_FAIL_RETURN(e, SL_ENUMERIC, "ode: step to the event at t = %.9g failed (%s)", te, gsl_strerror(st));
    } else {
        memcpy(o->f_try, o->f_prev, n * sizeof(double));
    }
    memcpy(o->y, o->y_try, n * sizeof(double));
    memcpy(o->f, o->f_try, n * sizeof(double));
    o->t = te;
    return eval_events(o, te, o->y, o->g, e);
}

int sl_ode_step(sl_ode *o, double t_end, int *kind, sl_ode_hits *hits, sl_err *e)
{
    size_t n = o->cfg.dim;
    const sl_ode_config *c = &o->cfg;
    double t0 = o->t, h = o->h;
    *kind = SL_ODE_STEP_OK;
    hits->n = 0;
    hits->terminal = 0;
    memcpy(o->y_prev, o->y, n * sizeof(double));
    memcpy(o->f_prev, o->f, n * sizeof(double));
    memcpy(o->g_prev, o->g, c->n_events * sizeof(double));
    o->t_prev = t0;
    int final = 0, rejected = 0;
    for (;;) {
        o->trials++;
        if (c->h_max > 0.0 && h > c->h_max)
            h = c->h_max;
        final = isfinite(t_end) && h >= t_end - t0;
        if (final)
            h = t_end - t0;
        memcpy(o->y_try, o->y_prev, n * sizeof(double));
        o->rhs_status = GSL_SUCCESS;
        int st = dp45_apply(o, t0, h, o->y_try, o->y_err, o->f_prev, o->f_try);
        if (st != GSL_SUCCESS) {
            if (st != GSL_EDOM)
                SL_FAIL_RETURN(e, SL_ENUMERIC, "ode: step from t = %.9g failed (%s)", t0, gsl_strerror(st));
            double h_new = h * c->fail_shrink;
            if (c->h_min > 0.0 ? !(h_new > c->h_min) : t0 + h_new == t0) {
                o->h = h_new;
                *kind = SL_ODE_STEP_STUCK;
                return SL_OK;
            }
            h = h_new;
            continue;
        }
        double h_new = h;
        int adj = hadjust(o, o->y_try, o->y_err, &h_new);
        if (adj == HADJ_DEC) {
            if (c->h_min > 0.0 && h > c->h_min) {
                h = fmax(h_new, c->h_min);
                rejected = 1;
                continue;
            }
            if (c->h_min <= 0.0 && h_new < h && t0 + h_new != t0) {
                h = h_new;
                rejected = 1;
                continue;
            }
            if (!c->accept_at_h_min)
                SL_FAIL_RETURN(e, SL_ENUMERIC, "ode: tolerance not reachable at t = %.9g (step %g)", t0, h);
            h_new = c->h_min > 0.0 ? c->h_min : h;
        }
        if (rejected && h_new > h)
            h_new = h;
        o->h = h_new;
        break;
    }
    memcpy(o->y, o->y_try, n * sizeof(double));
    memcpy(o->f, o->f_try, n * sizeof(double));
    o->t = final ? t_end : t0 + h;
    if (final)
        *kind = SL_ODE_STEP_AT_END;
    SL_TRY_RETURN(e, find_events(o, hits, e));
    if (hits->terminal)
        SL_TRY_RETURN(e, to_event(o, hits->t[hits->n - 1], e));
    return SL_OK;
}

double sl_ode_t(const sl_ode *o) { return o->t; }
const double *sl_ode_y(const sl_ode *o) { return o->y; }
const double *sl_ode_dydt(const sl_ode *o) { return o->f; }
const double *sl_ode_g(const sl_ode *o) { return o->g; }
double sl_ode_t_prev(const sl_ode *o) { return o->t_prev; }
double sl_ode_h(const sl_ode *o) { return o->h; }
const double *sl_ode_y_prev(const sl_ode *o) { return o->y_prev; }
const double *sl_ode_dydt_prev(const sl_ode *o) { return o->f_prev; }
long sl_ode_trials(const sl_ode *o) { return o->trials; }
long sl_ode_rhs_count(const sl_ode *o) { return o->rhs_calls; }
int sl_ode_rhs_status(const sl_ode *o) { return o->rhs_status; }
