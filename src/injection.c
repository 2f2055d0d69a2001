/* injection: the lofted water by altitude band.
 *
 * A profile is a set of contiguous altitude bands (geometric altitude above
 * mean sea level, m), each holding the mass of water vapour and of condensed
 * water (ice, and any liquid not yet frozen) in kg.  Masses are extensive
 * totals per band, not densities: a layer of mass M spread uniformly in
 * altitude over [z0, z1] gives each band the share M |band ∩ [z0,z1]| / (z1 - z0),
 * which conserves mass exactly (to rounding).  Altitudes are kept in m and
 * masses in kg; km and Tg appear only in files, converted on reading through
 * the units table.
 *
 * Files: CSV (header with unit-suffixed column names) or CF netCDF (altitude
 * coordinate with cell bounds, CF conventions section 7.1); the layouts are
 * documented in include/steamloft/injection.h.  Every error names the file and
 * the line (or netCDF variable), the column or key and the valid range.
 *
 * Freeze-out (sl_injection_add_cloud).  A young cloud left by a plume is a
 * layer of cloud air (dry mass A) carrying water W (all phases), spread
 * uniformly in altitude over its layer or, for a plume's umbrella, by mass:
 * a triangular volume profile peaked at the neutral level times the ambient
 * density (sl_injection_umbrella_weight).  In each band it is taken at the
 * ambient temperature and pressure there (the cloud has come to rest near its
 * neutral level).  It can hold vapour up to ice saturation,
 *   r_ice = eps e_ice(T) / (p - e_ice(T))  (kg per kg of dry air; Murphy & Koop 2005
 *   through the atmosphere module), so the band keeps V = min(W_b, A_b r_ice)
 * as vapour and the excess W_b - V forms ice.  A fraction f_s of that ice
 * sediments out of the layer and is removed (frozen_out); the rest stays as
 * ice in the band.  The band's vapour is then counted as the anomaly over the
 * background: the cloud air would hold A_b r_bg at the background mixing
 * ratio r_bg of that level anyway (it replaced air that did), so the band
 * receives max(V - A_b r_bg, 0) and the rest is tallied as background.  Water
 * is conserved exactly: W = anomaly + ice kept + sedimented + background.
 *
 * The sedimented fraction f_s is a parameter (scenario key
 * [plume] ice_sediment_fraction, default 0.5, PRACTICE).  Its end-members are
 * documented: in ordinary overshooting convection the ice crystals are small
 * (<= 20 um) and mostly sublimate again, hydrating rather than drying the
 * lower stratosphere (Jensen et al. 2007, JGR 112, D11209, SEEN abstract;
 * Corti et al. 2008, GRL 35, L10810, SEEN abstract), i.e. f_s near 0; with the
 * huge water excess of an impact plume the crystals grow large and fall, f_s
 * towards 1.  It is a leading uncertainty and meant to be varied in ensembles. */
#include "steamloft/injection.h"
#include "steamloft/minmax.h"

#include "steamloft/date.h"
#include "steamloft/infile.h"
#include "steamloft/units_table.h"
#include "steamloft/water.h"

#include <errno.h>
#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Altitudes accepted from files: sea level to 1000 km (PRACTICE: nothing the
 * tool models reaches higher; a larger number is almost surely a unit slip). */
#define MAX_FILE_ALTITUDE_M 1.0e6

static void set_empty_meta(sl_injection *inj)
{
    inj->tropopause_altitude_m = NAN;
    inj->latitude_deg = 0.0;
    inj->time_s = 0.0;
    inj->cloud_area_m2 = 0.0;
    inj->longitude_deg = NAN;
    inj->event_time_s = NAN;
    inj->month = 0;
}

int sl_injection_init_bands(sl_injection *inj, const double *edges_m, size_t n_edges, sl_err *e)
{
    if (inj == NULL || edges_m == NULL)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "sl_injection_init_bands: null argument");
    memset(inj, 0, sizeof *inj);
    set_empty_meta(inj);
    if (n_edges < 2)
        SL_FAIL_RETURN(e, SL_EDATA, "injection bands: %zu band edges given, need at least 2", n_edges);
    for (size_t i = 0; i < n_edges; i++) {
        if (!isfinite(edges_m[i]))
            SL_FAIL_RETURN(e, SL_EDATA, "injection bands: edge %zu is not a finite number", i);
        if (i > 0 && !(edges_m[i] > edges_m[i - 1]))
            SL_FAIL_RETURN(e, SL_EDATA,
                           "injection bands: edge %zu (%g m) is not above edge %zu (%g m); "
                           "edges must increase strictly",
                           i, edges_m[i], i - 1, edges_m[i - 1]);
    }
    size_t n = n_edges - 1;
    inj->band_bottom_m = malloc(n * sizeof(double));
    inj->band_top_m = malloc(n * sizeof(double));
    inj->vapor_kg = calloc(n, sizeof(double));
    inj->ice_kg = calloc(n, sizeof(double));
    if (!inj->band_bottom_m || !inj->band_top_m || !inj->vapor_kg || !inj->ice_kg) {
        sl_injection_free(inj);
        SL_FAIL_RETURN(e, SL_ENOMEM, "injection bands: out of memory for %zu bands", n);
    }
    for (size_t i = 0; i < n; i++) {
        inj->band_bottom_m[i] = edges_m[i];
        inj->band_top_m[i] = edges_m[i + 1];
    }
    inj->n_bands = n;
    return SL_OK;
}

int sl_injection_init_uniform(sl_injection *inj, double bottom_m, double top_m, double step_m, sl_err *e)
{
    if (!isfinite(bottom_m) || !isfinite(top_m) || !(top_m > bottom_m))
        SL_FAIL_RETURN(e, SL_EDATA, "injection bands: top %g m must lie above bottom %g m", top_m, bottom_m);
    if (!isfinite(step_m) || !(step_m > 0.0))
        SL_FAIL_RETURN(e, SL_EDATA, "injection bands: band width %g m must be positive", step_m);
    double span = (top_m - bottom_m) / step_m;
    if (span > 1.0e6)
        SL_FAIL_RETURN(e, SL_EDATA,
                       "injection bands: %g bands from %g m to %g m every %g m; valid range 1 to 1e6 bands",
                       ceil(span), bottom_m, top_m, step_m);
    /* A last band narrower than STEP_M closes the range when it does not divide evenly;
     * a remainder below 1e-9 of a step is rounding and is dropped. */
    size_t n = (size_t)ceil(span - 1.0e-9);
    if (n < 1)
        n = 1;
    double *edges = malloc((n + 1) * sizeof(double));
    if (edges == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "injection bands: out of memory for %zu bands", n);
    for (size_t i = 0; i < n; i++)
        edges[i] = bottom_m + (double)i * step_m;
    edges[n] = top_m;
    int rc = sl_injection_init_bands(inj, edges, n + 1, e);
    free(edges);
    SL_TRY_RETURN(e, rc);
    return SL_OK;
}

int sl_injection_add_layer(sl_injection *inj, double vapor_kg, double ice_kg, double bottom_m, double top_m, sl_err *e)
{
    if (inj == NULL || inj->n_bands == 0)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "sl_injection_add_layer: profile has no bands");
    if (!isfinite(vapor_kg) || !isfinite(ice_kg) || vapor_kg < 0.0 || ice_kg < 0.0)
        SL_FAIL_RETURN(e, SL_EDATA, "injection layer: vapour %g kg and ice %g kg must be finite and >= 0",
                       vapor_kg, ice_kg);
    double lo = inj->band_bottom_m[0], hi = inj->band_top_m[inj->n_bands - 1];
    if (!isfinite(bottom_m) || !isfinite(top_m) || top_m < bottom_m)
        SL_FAIL_RETURN(e, SL_EDATA, "injection layer: bottom %g m and top %g m must be finite, bottom <= top",
                       bottom_m, top_m);
    if (bottom_m < lo || top_m > hi)
        SL_FAIL_RETURN(e, SL_EDATA,
                       "injection layer %g-%g m lies outside the bands (valid range %g to %g m); "
                       "widen the band range",
                       bottom_m, top_m, lo, hi);
    if (vapor_kg == 0.0 && ice_kg == 0.0)
        return SL_OK;
    if (top_m == bottom_m) {
        /* A layer of zero thickness: everything goes into the band that holds
         * its altitude (the upper band when it sits on an edge, except at the top). */
        size_t k = inj->n_bands - 1;
        for (size_t i = 0; i < inj->n_bands; i++)
            if (bottom_m < inj->band_top_m[i]) {
                k = i;
                break;
            }
        inj->vapor_kg[k] += vapor_kg;
        inj->ice_kg[k] += ice_kg;
        return SL_OK;
    }
    double thick = top_m - bottom_m;
    double vap_left = vapor_kg, ice_left = ice_kg;
    size_t last = 0;
    for (size_t i = 0; i < inj->n_bands; i++) {
        double a = sl_max(bottom_m, inj->band_bottom_m[i]);
        double b = sl_min(top_m, inj->band_top_m[i]);
        if (b <= a)
            continue;
        double f = (b - a) / thick;
        inj->vapor_kg[i] += vapor_kg * f;
        inj->ice_kg[i] += ice_kg * f;
        vap_left -= vapor_kg * f;
        ice_left -= ice_kg * f;
        last = i;
    }
    /* The shares sum to 1 only to rounding; give the rounding residue to the
     * last band touched so the layer's mass is conserved to the last bit we can. */
    inj->vapor_kg[last] = sl_max(0.0, inj->vapor_kg[last] + vap_left);
    inj->ice_kg[last] = sl_max(0.0, inj->ice_kg[last] + ice_left);
    return SL_OK;
}

void sl_injection_clear(sl_injection *inj)
{
    if (inj == NULL)
        return;
    for (size_t i = 0; i < inj->n_bands; i++) {
        inj->vapor_kg[i] = 0.0;
        inj->ice_kg[i] = 0.0;
    }
}

double sl_injection_total_vapor_kg(const sl_injection *inj)
{
    double s = 0.0;
    for (size_t i = 0; inj != NULL && i < inj->n_bands; i++)
        s += inj->vapor_kg[i];
    return s;
}

double sl_injection_total_ice_kg(const sl_injection *inj)
{
    double s = 0.0;
    for (size_t i = 0; inj != NULL && i < inj->n_bands; i++)
        s += inj->ice_kg[i];
    return s;
}

/* The water of the bands on one side of ALTITUDE_M (BELOW: under it, else
 * above), the band holding it shared in proportion to height; vapour alone or
 * vapour + ice.  A NaN altitude gives 0 on either side. */
static double mass_on_side(const sl_injection *inj, double altitude_m, int below, int with_ice)
{
    double s = 0.0;
    for (size_t i = 0; inj != NULL && i < inj->n_bands; i++) {
        double b0 = inj->band_bottom_m[i], b1 = inj->band_top_m[i];
        double m = with_ice ? inj->vapor_kg[i] + inj->ice_kg[i] : inj->vapor_kg[i];
        int whole = below ? b1 <= altitude_m : altitude_m <= b0;
        int part = below ? b0 < altitude_m : altitude_m < b1;
        if (whole)
            s += m;
        else if (part)
            s += m * (below ? altitude_m - b0 : b1 - altitude_m) / (b1 - b0);
    }
    return s;
}

double sl_injection_mass_above_kg(const sl_injection *inj, double altitude_m)
{
    return mass_on_side(inj, altitude_m, 0, 1);
}

double sl_injection_mass_below_kg(const sl_injection *inj, double altitude_m)
{
    return mass_on_side(inj, altitude_m, 1, 1);
}

void sl_injection_free(sl_injection *inj)
{
    if (inj == NULL)
        return;
    free(inj->band_bottom_m);
    free(inj->band_top_m);
    free(inj->vapor_kg);
    free(inj->ice_kg);
    inj->band_bottom_m = inj->band_top_m = inj->vapor_kg = inj->ice_kg = NULL;
    inj->n_bands = 0;
}

double sl_injection_vapor_above_kg(const sl_injection *inj, double altitude_m)
{
    return mass_on_side(inj, altitude_m, 0, 0);
}

/* ---------------------------------------------------------------- freeze-out */

/* Ice-saturation and background mixing ratios (kg/kg dry air) at ALTITUDE_M,
 * the altitude clamped into the profile (above its top the top level is used). */
static int cloud_level(const sl_atmosphere *atm, double altitude_m, sl_atmos_cursor *cur, double *r_ice,
                       double *r_bg, sl_err *e)
{
    double z = sl_min(sl_max(altitude_m, atm->altitude_m[0]), atm->altitude_m[atm->n - 1]);
    sl_atmos_state a;
    /* sl_atmosphere_at's numbers, with the search carried from band to band. */
    SL_TRY_RETURN(e, sl_atmosphere_state(atm, z, cur, &a, e));
    double xi = sl_water_esat_ice_Pa(a.temperature_K) / a.pressure_Pa, xb = a.h2o_mole_fraction;
    *r_ice = xi >= 1.0 ? INFINITY : sl_water_mixing_ratio_from_mole_fraction(fmax(xi, 0.0));
    *r_bg = sl_water_mixing_ratio_from_mole_fraction(fmin(fmax(xb, 0.0), 0.999));
    return SL_OK;
}

/* Integral of the cloud's triangular profile (bottom to top, mode at
 * peak_m; it integrates to 1 over the layer) times rho_a over [Z0, Z1] on
 * one side of the mode: the tent is linear there, alpha + beta z, so the
 * integral is alpha M0 + beta M1 from the layer's air-mass moments
 * (sl_atmosphere_layer_mass; measured against fine Simpson sums on the
 * tropical profile, within 3e-11 per 1 km band, where 4-point
 * Gauss-Legendre on 500 m pieces straddling the profile's levels erred by up
 * to 4e-6 near the tropopause). */
static double umbrella_from_moments(const sl_young_cloud *c, double z0, double z1, double m0, double m1)
{
    double a = c->bottom_m, b = c->top_m, m = c->peak_m, zm = 0.5 * (z0 + z1);
    double alpha = 0.0, beta = 0.0;
    if (zm <= m) {
        if (m > a) {
            beta = 2.0 / ((b - a) * (m - a));
            alpha = -a * beta;
        }
    } else if (b > m) {
        beta = -2.0 / ((b - a) * (b - m));
        alpha = -b * beta;
    }
    return alpha * m0 + beta * m1;
}

static int umbrella_piece(const sl_atmosphere *atm, const sl_young_cloud *c, double z0, double z1,
                          sl_atmos_cursor *cur, double *w, sl_err *e)
{
    double m0, m1;
    SL_TRY_RETURN(e, sl_atmosphere_layer_mass(atm, z0, z1, cur, &m0, &m1, e));
    *w = umbrella_from_moments(c, z0, z1, m0, m1);
    return SL_OK;
}

/* sl_injection_umbrella_weight with the caller's search cursor (the cursor
 * only says where a search starts: the numbers are the same) and, for band I
 * = [Z0, Z1] covered whole by the cloud and not split at its mode, the band's
 * moments from LV (kept there on first use; LV NULL: computed). */
static int umbrella_weight(const sl_atmosphere *atm, const sl_young_cloud *c, double z0, double z1,
                           sl_atmos_cursor *cur, double *w, sl_cloud_levels *lv, size_t i, sl_err *e)
{
    *w = 0.0;
    double a = sl_max(z0, c->bottom_m), b = sl_min(z1, c->top_m);
    if (!(b > a))
        return SL_OK;
    double m = c->peak_m, w1 = 0.0, w2 = 0.0;
    if (m > a && m < b) {
        SL_TRY_RETURN(e, umbrella_piece(atm, c, a, m, cur, &w1, e));
        SL_TRY_RETURN(e, umbrella_piece(atm, c, m, b, cur, &w2, e));
    } else if (lv && a == z0 && b == z1) {
        if (!(lv->have[i] & 1u)) {
            SL_TRY_RETURN(e, sl_atmosphere_layer_mass(atm, z0, z1, cur, &lv->m0[i], &lv->m1[i], e));
            lv->have[i] |= 1u;
        }
        w1 = umbrella_from_moments(c, a, b, lv->m0[i], lv->m1[i]);
    } else
        SL_TRY_RETURN(e, umbrella_piece(atm, c, a, b, cur, &w1, e));
    *w = w1 + w2;
    return SL_OK;
}

int sl_injection_umbrella_weight(const sl_atmosphere *atm, const sl_young_cloud *c, double z0, double z1, double *w,
                                 sl_err *e)
{
    sl_atmos_cursor cur = {0};
    return umbrella_weight(atm, c, z0, z1, &cur, w, NULL, 0, e);
}

int sl_injection_add_cloud(sl_injection *inj, const sl_atmosphere *atm, const sl_young_cloud *c,
                           double sediment_fraction, sl_freeze_out *tally, sl_err *e)
{
    return sl_injection_add_cloud_kept(inj, atm, c, sediment_fraction, tally, NULL, e);
}

int sl_cloud_levels_bind(sl_cloud_levels *lv, const sl_atmosphere *atm, const sl_injection *inj, sl_err *e)
{
    size_t n = inj->n_bands;
    if (n > lv->cap) {
        sl_cloud_levels_free(lv);
        lv->have = calloc(n, 1);
        lv->m0 = malloc(n * sizeof(double));
        lv->m1 = malloc(n * sizeof(double));
        lv->r_ice = malloc(n * sizeof(double));
        lv->r_bg = malloc(n * sizeof(double));
        if (!lv->have || !lv->m0 || !lv->m1 || !lv->r_ice || !lv->r_bg) {
            sl_cloud_levels_free(lv);
            SL_FAIL_RETURN(e, SL_ENOMEM, "cloud levels: out of memory for %zu bands", n);
        }
        lv->cap = n;
    } else if (lv->atm != atm || lv->grid != inj->band_bottom_m || lv->n_bands != n) {
        memset(lv->have, 0, lv->cap);
    }
    lv->atm = atm;
    lv->grid = inj->band_bottom_m;
    lv->n_bands = n;
    return SL_OK;
}

void sl_cloud_levels_forget(sl_cloud_levels *lv)
{
    if (lv == NULL)
        return;
    if (lv->have)
        memset(lv->have, 0, lv->cap);
    lv->atm = NULL;
}

void sl_cloud_levels_free(sl_cloud_levels *lv)
{
    if (lv == NULL)
        return;
    free(lv->have);
    free(lv->m0);
    free(lv->m1);
    free(lv->r_ice);
    free(lv->r_bg);
    memset(lv, 0, sizeof *lv);
}

int sl_injection_add_cloud_kept(sl_injection *inj, const sl_atmosphere *atm, const sl_young_cloud *c,
                                double sediment_fraction, sl_freeze_out *tally, sl_cloud_levels *lv, sl_err *e)
{
    sl_freeze_out t = {0};
    if (inj == NULL || inj->n_bands == 0 || atm == NULL || atm->n < 2 || c == NULL)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "sl_injection_add_cloud: null argument or profile without bands");
    if (!isfinite(sediment_fraction) || sediment_fraction < 0.0 || sediment_fraction > 1.0)
        SL_FAIL_RETURN(e, SL_EDATA, "ice_sediment_fraction = %g is outside the valid range 0 to 1", sediment_fraction);
    if (!isfinite(c->air_kg) || !isfinite(c->water_kg) || c->air_kg < 0.0 || c->water_kg < 0.0)
        SL_FAIL_RETURN(e, SL_EDATA, "young cloud: air %g kg and water %g kg must be finite and >= 0", c->air_kg, c->water_kg);
    double lo = inj->band_bottom_m[0], hi = inj->band_top_m[inj->n_bands - 1];
    if (!isfinite(c->bottom_m) || !isfinite(c->top_m) || c->top_m < c->bottom_m || c->bottom_m < lo || c->top_m > hi)
        SL_FAIL_RETURN(e, SL_EDATA, "young cloud %g-%g m lies outside the bands (valid range %g to %g m)", c->bottom_m,
                       c->top_m, lo, hi);
    double thick = c->top_m - c->bottom_m;
    sl_atmos_cursor cur = {0};
    /* Kept values only where LV belongs to this profile and these bands. */
    if (!(lv && lv->atm == atm && lv->grid == inj->band_bottom_m && lv->n_bands == inj->n_bands))
        lv = NULL;
    int tent = thick > 0.0 && c->peak_m >= c->bottom_m && c->peak_m <= c->top_m;
    /* Placement by mass: the umbrella's weight of each band, normalised by
     * their sum (so the shares add up to 1 to rounding).  The weights are
     * kept for the placement below (on the stack, for up to WEIGHT_CACHE
     * bands; more are computed again, to the same values). */
    enum { WEIGHT_CACHE = 1024 };
    double wcache[WEIGHT_CACHE];
    int cached = inj->n_bands <= WEIGHT_CACHE;
    double wsum = 0.0;
    if (tent) {
        for (size_t i = 0; i < inj->n_bands; i++) {
            double wb;
            SL_TRY_RETURN(e, umbrella_weight(atm, c, inj->band_bottom_m[i], inj->band_top_m[i], &cur, &wb, lv, i, e));
            if (cached)
                wcache[i] = wb;
            wsum += wb;
        }
        if (!(wsum > 0.0))
            SL_FAIL_RETURN(e, SL_ENUMERIC, "young cloud %g-%g m: no air mass in its layer", c->bottom_m, c->top_m);
    }
    for (size_t i = 0; i < inj->n_bands && c->water_kg > 0.0; i++) {
        double a, b, f;
        if (thick > 0.0) {
            a = sl_max(c->bottom_m, inj->band_bottom_m[i]);
            b = sl_min(c->top_m, inj->band_top_m[i]);
            if (b <= a)
                continue;
            if (tent) {
                double wb;
                if (cached) /* the band clipped to the cloud: the same integral */
                    wb = wcache[i];
                else
                    SL_TRY_RETURN(e, umbrella_weight(atm, c, a, b, &cur, &wb, NULL, 0, e));
                f = wb / wsum;
            } else
                f = (b - a) / thick;
        } else {
            /* A thin sheet: all in the band holding it (the top band at the very top). */
            if (!(c->bottom_m < inj->band_top_m[i] || i + 1 == inj->n_bands))
                continue;
            a = b = c->bottom_m;
            f = 1.0;
        }
        double r_ice = 0.0, r_bg = 0.0;
        if (lv && thick > 0.0 && a == inj->band_bottom_m[i] && b == inj->band_top_m[i]) {
            if (!(lv->have[i] & 2u)) {
                SL_TRY_RETURN(e, cloud_level(atm, 0.5 * (a + b), &cur, &lv->r_ice[i], &lv->r_bg[i], e));
                lv->have[i] |= 2u;
            }
            r_ice = lv->r_ice[i];
            r_bg = lv->r_bg[i];
        } else
            SL_TRY_RETURN(e, cloud_level(atm, 0.5 * (a + b), &cur, &r_ice, &r_bg, e));
        double air = c->air_kg * f, water = c->water_kg * f;
        double vap = sl_min(water, air * r_ice);
        double ice = water - vap;
        double sed = ice * sediment_fraction;
        double anomaly = sl_max(vap - air * r_bg, 0.0);
        inj->vapor_kg[i] += anomaly;
        inj->ice_kg[i] += ice - sed;
        t.frozen_kg += ice;
        t.sedimented_kg += sed;
        t.background_kg += vap - anomaly;
        t.vapor_kg += anomaly;
        t.ice_kg += ice - sed;
        if (thick == 0.0)
            break;
    }
    if (tally)
        *tally = t;
    return SL_OK;
}

/* ------------------------------------------------------------------ files */

/* Rows collected while reading, before the bands are built. */
typedef struct rows {
    size_t n, cap;
    double *bottom_m, *top_m, *vapor_kg, *ice_kg;
} rows;

static void rows_free(rows *r)
{
    free(r->bottom_m);
    free(r->top_m);
    free(r->vapor_kg);
    free(r->ice_kg);
    memset(r, 0, sizeof *r);
}

static int rows_push(rows *r, double b, double t, double v, double ice)
{
    if (r->n == r->cap) {
        size_t cap = r->cap ? 2 * r->cap : 128;
        double *nb = realloc(r->bottom_m, cap * sizeof(double));
        if (nb) r->bottom_m = nb;
        double *nt = realloc(r->top_m, cap * sizeof(double));
        if (nt) r->top_m = nt;
        double *nv = realloc(r->vapor_kg, cap * sizeof(double));
        if (nv) r->vapor_kg = nv;
        double *ni = realloc(r->ice_kg, cap * sizeof(double));
        if (ni) r->ice_kg = ni;
        if (!nb || !nt || !nv || !ni)
            return -1;
        r->cap = cap;
    }
    r->bottom_m[r->n] = b;
    r->top_m[r->n] = t;
    r->vapor_kg[r->n] = v;
    r->ice_kg[r->n] = ice;
    r->n++;
    return 0;
}

/* Build INJ from collected rows (already checked contiguous) and the
 * file's scalars in META (tropopause, latitude, time, cloud area). */
static int rows_to_injection(const rows *r, const sl_injection *meta, sl_injection *inj, sl_err *e)
{
    double *edges = malloc((r->n + 1) * sizeof(double));
    if (edges == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "injection file: out of memory for %zu bands", r->n);
    for (size_t i = 0; i < r->n; i++)
        edges[i] = r->bottom_m[i];
    edges[r->n] = r->top_m[r->n - 1];
    int rc = sl_injection_init_bands(inj, edges, r->n + 1, e);
    free(edges);
    SL_TRY_RETURN(e, rc);
    for (size_t i = 0; i < r->n; i++) {
        inj->vapor_kg[i] = r->vapor_kg[i];
        inj->ice_kg[i] = r->ice_kg[i];
    }
    inj->tropopause_altitude_m = meta->tropopause_altitude_m;
    inj->latitude_deg = meta->latitude_deg;
    inj->time_s = meta->time_s;
    inj->cloud_area_m2 = meta->cloud_area_m2;
    inj->longitude_deg = meta->longitude_deg;
    inj->event_time_s = meta->event_time_s;
    inj->month = meta->month;
    return SL_OK;
}

static char *trim(char *s)
{
    while (*s == ' ' || *s == '\t')
        s++;
    size_t n = strlen(s);
    while (n > 0 && (s[n - 1] == ' ' || s[n - 1] == '\t' || s[n - 1] == '\r' || s[n - 1] == '\n'))
        s[--n] = '\0';
    return s;
}

/* Parse the whole of TEXT as a finite decimal number (infile.h rules). */
static int parse_number(const char *text, double *out)
{
    return sl_infile_parse_double(text, out);
}

/* Column roles in a CSV header. */
enum { COL_NONE = -1, COL_BOTTOM, COL_TOP, COL_VAPOR, COL_ICE, N_ROLES };
static const char *const role_names[N_ROLES] = {"bottom", "top", "vapor", "ice"};

/* Role and SI factor of header NAME, e.g. "bottom_km" -> COL_BOTTOM, 1000. */
static int header_role(const char *name, double *factor)
{
    static const struct {
        const char *name;
        int role;
        const char *unit_suffix;
    } accepted[] = {
        {"bottom_m", COL_BOTTOM, "m"}, {"bottom_km", COL_BOTTOM, "km"},
        {"top_m", COL_TOP, "m"},       {"top_km", COL_TOP, "km"},
        {"vapor_kg", COL_VAPOR, "kg"}, {"vapor_Tg", COL_VAPOR, "Tg"},
        {"mass_kg", COL_VAPOR, "kg"},  {"mass_Tg", COL_VAPOR, "Tg"},
        {"ice_kg", COL_ICE, "kg"},     {"ice_Tg", COL_ICE, "Tg"},
    };
    for (size_t i = 0; i < sizeof accepted / sizeof accepted[0]; i++)
        if (strcmp(name, accepted[i].name) == 0) {
            const sl_unit *u = sl_units_lookup(accepted[i].unit_suffix);
            *factor = u ? u->to_si : NAN;
            return accepted[i].role;
        }
    return COL_NONE;
}

#define CSV_COLUMNS "bottom_m|bottom_km, top_m|top_km, vapor_kg|vapor_Tg (or mass_kg|mass_Tg), optional ice_kg|ice_Tg"
#define CSV_META "tropopause_altitude_m|_km, latitude_deg, time_s|_days, cloud_area_m2, event_month"

/* "# key = value" metadata into META (event_month into *EVENT_MONTH); a
 * comment without '=' is ignored. */
static int csv_meta(char *body, sl_injection *meta, int *event_month, const char *path, size_t line, sl_err *e)
{
    char *eq = strchr(body, '=');
    if (eq == NULL)
        return SL_OK;
    /* Metadata is "# KEY = VALUE" with KEY one word of letters, digits and
     * '_'; any other comment (prose that happens to hold an '=') is ignored. */
    char *k0 = body;
    while (*k0 == ' ' || *k0 == '\t')
        k0++;
    char *k1 = k0;
    while (*k1 == '_' || (*k1 >= 'a' && *k1 <= 'z') || (*k1 >= 'A' && *k1 <= 'Z') || (*k1 >= '0' && *k1 <= '9'))
        k1++;
    char *k2 = k1;
    while (*k2 == ' ' || *k2 == '\t')
        k2++;
    if (k1 == k0 || k2 != eq)
        return SL_OK;
    *eq = '\0';
    char *key = trim(body), *val = trim(eq + 1);
    static const struct {
        const char *key;
        const char *unit_suffix; /* NULL: value used as is */
        double lo, hi;           /* valid range in the key's own unit */
    } known[] = {
        {"tropopause_altitude_m", "m", 0.0, 1.0e5},
        {"tropopause_altitude_km", "km", 0.0, 100.0},
        {"latitude_deg", NULL, -90.0, 90.0},
        {"time_s", "s", 0.0, 1.0e10},
        {"time_days", "days", 0.0, 1.0e5},
        {"cloud_area_m2", NULL, 0.0, 1.0e15},
        {"event_month", NULL, 0.0, 12.0},
    };
    for (size_t i = 0; i < sizeof known / sizeof known[0]; i++) {
        if (strcmp(key, known[i].key) != 0)
            continue;
        double v;
        if (parse_number(val, &v) != 0 || v < known[i].lo || v > known[i].hi)
            SL_FAIL_RETURN(e, SL_EDATA, "%s:%zu: %s = '%s' is not a number in the valid range %g to %g",
                           path, line, key, val, known[i].lo, known[i].hi);
        double f = 1.0;
        if (known[i].unit_suffix) {
            const sl_unit *u = sl_units_lookup(known[i].unit_suffix);
            if (u == NULL)
                SL_FAIL_RETURN(e, SL_EINTERNAL, "units table lacks '%s'", known[i].unit_suffix);
            f = u->to_si;
        }
        v *= f;
        if (strcmp(key, "event_month") == 0) {
            if (v != floor(v))
                SL_FAIL_RETURN(e, SL_EDATA, "%s:%zu: event_month = '%s' is not a whole number 0 to 12", path, line, val);
            *event_month = (int)v;
        } else if (strncmp(key, "tropopause", 10) == 0)
            meta->tropopause_altitude_m = v;
        else if (strncmp(key, "latitude", 8) == 0)
            meta->latitude_deg = v;
        else if (strncmp(key, "time", 4) == 0)
            meta->time_s = v;
        else
            meta->cloud_area_m2 = v;
        return SL_OK;
    }
    /* "# something = x" with an unknown key is most likely a typo of a metadata key. */
    SL_FAIL_RETURN(e, SL_EDATA, "%s:%zu: unknown metadata key '%s' (known: " CSV_META ")", path, line, key);
}

/* ---- the injection table of `run --injection-table` (model_inputs.c)
 *
 * Recognised by its header, exactly TABLE_COLUMNS: one row per band and
 * species, bands bottom to top, the rows of one band adjacent.  The species
 * of a band are summed into its vapour and ice; a gap between two bands
 * becomes a band without water.  Latitude, longitude and event time must be
 * the same on every row; the month follows from the event time unless the
 * file says "# event_month = M" (the table of a run without a [site] date
 * carries a nominal time and says the month that run used, 0 for none; the
 * time is then left unknown). */
#define TABLE_COLUMNS "event_time_utc,latitude_deg,longitude_deg,bottom_m,top_m,bottom_hPa,top_hPa,species,mass_kg,duration_s,radius_m"
enum { T_TIME, T_LAT, T_LON, T_BOTTOM, T_TOP, T_PBOT, T_PTOP, T_SPECIES, T_MASS, T_DURATION, T_RADIUS, T_NCOLS };

typedef struct table_state {
    int have_event;        /* the first row's event is in lat, lon, time */
    double lat, lon, time_s;
    unsigned species_seen; /* bit 0 vapour, bit 1 ice, in the last band */
} table_state;

/* Is the header in FIELDS the injection table's?  1 yes, 0 no; a header that
 * starts like one but differs is an error naming the valid form. */
static int table_header(char **fields, size_t nf, const char *path, size_t line, int *rc, sl_err *e)
{
    static const char *const names[T_NCOLS] = {"event_time_utc", "latitude_deg", "longitude_deg", "bottom_m",
                                               "top_m", "bottom_hPa", "top_hPa", "species", "mass_kg",
                                               "duration_s", "radius_m"};
    if (nf == 0 || strcmp(fields[0], names[0]) != 0)
        return 0;
    for (size_t c = 0; c < T_NCOLS; c++)
        if (c >= nf || strcmp(fields[c], names[c]) != 0) {
            *rc = sl_err_set(e, SL_EDATA, __func__, __LINE__,
                             "%s:%zu: column %zu of an injection table header is '%s'; the header must be exactly " TABLE_COLUMNS,
                             path, line, c + 1, c < nf ? fields[c] : "(missing)");
            return 1;
        }
    if (nf != T_NCOLS)
        *rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%zu: %zu columns; the injection table header is exactly " TABLE_COLUMNS,
                         path, line, nf);
    return 1;
}

/* One table row into R (summed into its band) and the event into TS. */
static int table_row(char **fields, size_t nf, table_state *ts, rows *r, const char *path, size_t line, sl_err *e)
{
    static const char *const names[T_NCOLS] = {"event_time_utc", "latitude_deg", "longitude_deg", "bottom_m",
                                               "top_m", "bottom_hPa", "top_hPa", "species", "mass_kg",
                                               "duration_s", "radius_m"};
    static const struct {
        double lo, hi;
        const char *range;
    } lim[T_NCOLS] = {
        [T_LAT] = {-90.0, 90.0, "-90 to 90"},
        [T_LON] = {-360.0, 720.0, "-360 to 720"},
        [T_BOTTOM] = {0.0, MAX_FILE_ALTITUDE_M, "0 to 1e6 m"},
        [T_TOP] = {0.0, MAX_FILE_ALTITUDE_M, "0 to 1e6 m"},
        [T_PBOT] = {0.0, 2.0e3, "0 to 2000 hPa"},
        [T_PTOP] = {0.0, 2.0e3, "0 to 2000 hPa"},
        [T_MASS] = {0.0, INFINITY, "0 to inf kg"},
        [T_DURATION] = {0.0, INFINITY, "above 0 s"},
        [T_RADIUS] = {0.0, INFINITY, "0 to inf m"},
    };
    if (nf != T_NCOLS)
        SL_FAIL_RETURN(e, SL_EDATA, "%s:%zu: %zu fields, the injection table has %d columns (" TABLE_COLUMNS ")", path,
                       line, nf, T_NCOLS);
    double v[T_NCOLS] = {0};
    if (sl_date_parse(fields[T_TIME], &v[T_TIME]) != 0)
        SL_FAIL_RETURN(e, SL_EDATA, "%s:%zu: column 1 (event_time_utc): '%s' is not %s", path, line, fields[T_TIME],
                       SL_DATE_FORMS);
    for (int c = T_LAT; c < T_NCOLS; c++) {
        if (c == T_SPECIES)
            continue;
        if (parse_number(fields[c], &v[c]) != 0 || v[c] < lim[c].lo || v[c] > lim[c].hi ||
            (c == T_DURATION && !(v[c] > 0.0)))
            SL_FAIL_RETURN(e, SL_EDATA, "%s:%zu: column %d (%s): '%s' is not a decimal number in the valid range %s", path,
                           line, c + 1, names[c], fields[c], lim[c].range);
    }
    int ice;
    if (strcmp(fields[T_SPECIES], "water_vapour") == 0)
        ice = 0;
    else if (strcmp(fields[T_SPECIES], "ice") == 0)
        ice = 1;
    else
        SL_FAIL_RETURN(e, SL_EDATA, "%s:%zu: column %d (species): '%s' is not a species (valid: water_vapour, ice)", path,
                       line, T_SPECIES + 1, fields[T_SPECIES]);
    if (!ts->have_event) {
        ts->have_event = 1;
        ts->lat = v[T_LAT], ts->lon = v[T_LON], ts->time_s = v[T_TIME];
    } else {
        static const int same[3] = {T_TIME, T_LAT, T_LON};
        const double first[3] = {ts->time_s, ts->lat, ts->lon};
        for (int k = 0; k < 3; k++)
            if (v[same[k]] != first[k])
                SL_FAIL_RETURN(e, SL_EDATA,
                               "%s:%zu: column %d (%s): '%s' differs from the first row's; one event per table, "
                               "the same time, latitude and longitude on every row",
                               path, line, same[k] + 1, names[same[k]], fields[same[k]]);
    }
    double b = v[T_BOTTOM], t = v[T_TOP], m = v[T_MASS];
    if (!(t > b))
        SL_FAIL_RETURN(e, SL_EDATA, "%s:%zu: column 5 (top_m): band top %g m is not above its bottom %g m", path, line, t, b);
    if (r->n > 0 && b == r->bottom_m[r->n - 1] && t == r->top_m[r->n - 1]) {
        if (ts->species_seen & (1u << ice))
            SL_FAIL_RETURN(e, SL_EDATA, "%s:%zu: column 8 (species): %s repeats in the band %g-%g m (one row per band and species)",
                           path, line, fields[T_SPECIES], b, t);
        ts->species_seen |= 1u << ice;
        (ice ? r->ice_kg : r->vapor_kg)[r->n - 1] += m;
        return SL_OK;
    }
    if (r->n > 0 && b < r->top_m[r->n - 1])
        SL_FAIL_RETURN(e, SL_EDATA,
                       "%s:%zu: column 4 (bottom_m): band bottom %g m lies below the previous band's top %g m; bands "
                       "bottom to top, without overlap, the rows of one band adjacent",
                       path, line, b, r->top_m[r->n - 1]);
    if (r->n > 0 && b > r->top_m[r->n - 1] && rows_push(r, r->top_m[r->n - 1], b, 0.0, 0.0) != 0)
        SL_FAIL_RETURN(e, SL_ENOMEM, "%s:%zu: out of memory", path, line);
    if (rows_push(r, b, t, ice ? 0.0 : m, ice ? m : 0.0) != 0)
        SL_FAIL_RETURN(e, SL_ENOMEM, "%s:%zu: out of memory", path, line);
    ts->species_seen = 1u << ice;
    return SL_OK;
}

static int read_csv(char *text, const char *path, sl_injection *inj, sl_err *e)
{
    sl_injection meta;
    memset(&meta, 0, sizeof meta);
    set_empty_meta(&meta);
    rows r = {0};
    char *buf = NULL, *cursor = text;
    size_t line = 0;
    int col_role[16];
    double col_factor[16];
    size_t n_cols = 0;
    int have_header = 0, is_table = 0, event_month = -1;
    table_state ts = {0};
    int rc = SL_OK;
    while (sl_infile_next_line(&cursor, &buf)) {
        line++;
        if (sl_infile_content_len(buf, "#", 0) > SL_INFILE_MAX_LINE) {
            rc = sl_err_set(e, SL_EDATA, __func__, __LINE__,
                            "%s:%zu: line longer than %d characters (comments and line ends not counted)", path, line,
                            SL_INFILE_MAX_LINE);
            goto done;
        }
        char *s = trim(buf);
        if (*s == '\0')
            continue;
        if (*s == '#') {
            rc = csv_meta(s + 1, &meta, &event_month, path, line, e);
            if (rc != SL_OK)
                goto done;
            continue;
        }
        /* Split on commas. */
        char *fields[16];
        size_t nf = 0;
        char *p = s;
        for (;;) {
            if (nf == 16) {
                rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%zu: more than 16 columns (expected " CSV_COLUMNS ")", path, line);
                goto done;
            }
            char *comma = strchr(p, ',');
            if (comma)
                *comma = '\0';
            fields[nf++] = trim(p);
            if (!comma)
                break;
            p = comma + 1;
        }
        if (!have_header && (is_table = table_header(fields, nf, path, line, &rc, e)) != 0) {
            if (rc != SL_OK)
                goto done;
            have_header = 1;
            continue;
        }
        if (is_table) {
            rc = table_row(fields, nf, &ts, &r, path, line, e);
            if (rc != SL_OK)
                goto done;
            continue;
        }
        if (!have_header) {
            int seen[N_ROLES] = {0};
            for (size_t c = 0; c < nf; c++) {
                col_role[c] = header_role(fields[c], &col_factor[c]);
                if (col_role[c] == COL_NONE) {
                    rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%zu: unknown column '%s' in the header (expected " CSV_COLUMNS ")",
                                    path, line, fields[c]);
                    goto done;
                }
                if (seen[col_role[c]]++) {
                    rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%zu: column '%s' repeats the %s column", path, line, fields[c],
                                    role_names[col_role[c]]);
                    goto done;
                }
            }
            for (int k = COL_BOTTOM; k <= COL_VAPOR; k++)
                if (!seen[k]) {
                    rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%zu: header lacks a %s column (expected " CSV_COLUMNS ")", path,
                                    line, role_names[k]);
                    goto done;
                }
            n_cols = nf;
            have_header = 1;
            continue;
        }
        if (nf != n_cols) {
            rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%zu: %zu fields, the header has %zu columns", path, line, nf, n_cols);
            goto done;
        }
        double v[N_ROLES] = {NAN, NAN, NAN, 0.0};
        for (size_t c = 0; c < nf; c++) {
            double x;
            if (parse_number(fields[c], &x) != 0) {
                rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%zu: column %zu (%s): '%s' is not a finite number", path, line,
                                c + 1, role_names[col_role[c]], fields[c]);
                goto done;
            }
            x *= col_factor[c];
            if ((col_role[c] == COL_VAPOR || col_role[c] == COL_ICE) && x < 0.0) {
                rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%zu: column %zu (%s): mass %s is negative (valid range 0 to inf)",
                                path, line, c + 1, role_names[col_role[c]], fields[c]);
                goto done;
            }
            if ((col_role[c] == COL_BOTTOM || col_role[c] == COL_TOP) && (x < 0.0 || x > MAX_FILE_ALTITUDE_M)) {
                rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%zu: column %zu (%s): altitude %s is outside the valid range 0 to %g m",
                                path, line, c + 1, role_names[col_role[c]], fields[c], MAX_FILE_ALTITUDE_M);
                goto done;
            }
            v[col_role[c]] = x;
        }
        if (!(v[COL_TOP] > v[COL_BOTTOM])) {
            rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%zu: band top %g m is not above its bottom %g m", path, line, v[COL_TOP],
                            v[COL_BOTTOM]);
            goto done;
        }
        if (r.n > 0 && v[COL_BOTTOM] != r.top_m[r.n - 1]) {
            rc = sl_err_set(e, SL_EDATA, __func__, __LINE__,
                            "%s:%zu: band bottom %g m differs from the previous band's top %g m; bands must be "
                            "contiguous, bottom to top",
                            path, line, v[COL_BOTTOM], r.top_m[r.n - 1]);
            goto done;
        }
        if (rows_push(&r, v[COL_BOTTOM], v[COL_TOP], v[COL_VAPOR], v[COL_ICE]) != 0) {
            rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "%s:%zu: out of memory", path, line);
            goto done;
        }
    }
    if (!have_header || r.n == 0) {
        rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%zu: no %s found (a header " CSV_COLUMNS " and one row per band, or "
                        "an injection table: " TABLE_COLUMNS ")", path,
                        line, have_header ? "bands" : "header");
        goto done;
    }
    if (is_table) {
        meta.latitude_deg = ts.lat;
        meta.longitude_deg = ts.lon;
        meta.event_time_s = ts.time_s;
        sl_date_fields df;
        sl_date_split(ts.time_s, &df);
        meta.month = df.month;
    }
    if (event_month >= 0) { /* the file says the month; a table's time is then nominal */
        meta.month = event_month;
        if (is_table)
            meta.event_time_s = NAN;
    }
    rc = rows_to_injection(&r, &meta, inj, e);
done:
    rows_free(&r);
    if (rc != SL_OK)
        sl_err_push(e, rc, __func__, __LINE__);
    return rc;
}

/* ---- netCDF */

#define NCK(call, what)                                                                           \
    do {                                                                                          \
        int nc_st_ = (call);                                                                      \
        if (nc_st_ != NC_NOERR) {                                                                 \
            rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s: %s: %s", path, (what), nc_strerror(nc_st_)); \
            goto done;                                                                            \
        }                                                                                         \
    } while (0)

/* Text attribute NAME of VARID into BUF (empty when absent). */
static int nc_text_att(int ncid, int varid, const char *name, char *buf, size_t cap)
{
    nc_type t;
    size_t len;
    buf[0] = '\0';
    if (nc_inq_att(ncid, varid, name, &t, &len) != NC_NOERR)
        return 0;
    if (t != NC_CHAR || len + 1 > cap)
        return -1;
    if (nc_get_att_text(ncid, varid, name, buf) != NC_NOERR)
        return -1;
    buf[len] = '\0';
    char *s = buf;
    while (*s == ' ')
        s++;
    memmove(buf, s, strlen(s) + 1);
    size_t n = strlen(buf);
    while (n > 0 && buf[n - 1] == ' ')
        buf[--n] = '\0';
    return 1;
}

/* SI factor for the units attribute of VAR among the accepted UNITS (NULL-terminated). */
static int nc_units_factor(int ncid, int varid, const char *path, const char *var, const char *const *accepted,
                           const double *factors, double *factor, sl_err *e)
{
    char u[128];
    if (nc_text_att(ncid, varid, "units", u, sizeof u) != 1)
        SL_FAIL_RETURN(e, SL_EDATA, "%s: netCDF variable %s: no text 'units' attribute", path, var);
    for (size_t i = 0; accepted[i]; i++)
        if (strcmp(u, accepted[i]) == 0) {
            *factor = factors[i];
            return SL_OK;
        }
    char list[128] = "";
    for (size_t i = 0; accepted[i]; i++) {
        strncat(list, i ? ", " : "", sizeof list - strlen(list) - 1);
        strncat(list, accepted[i], sizeof list - strlen(list) - 1);
    }
    SL_FAIL_RETURN(e, SL_EDATA, "%s: netCDF variable %s: units '%s' not accepted (valid: %s)", path, var, u, list);
}

/* Optional scalar variable NAME: read and scale it into OUT when present. */
static int nc_scalar(int ncid, const char *path, const char *name, const char *const *accepted, const double *factors,
                     double lo_si, double hi_si, double *out, sl_err *e)
{
    int varid, ndims;
    if (nc_inq_varid(ncid, name, &varid) != NC_NOERR)
        return SL_OK;
    if (nc_inq_varndims(ncid, varid, &ndims) != NC_NOERR || ndims != 0) {
        /* In a full steamloft output file "time" is the box-model time axis,
         * not the profile's time (that one is injection_time there). */
        if (strcmp(name, "time") == 0 && ndims == 1)
            return SL_OK;
        SL_FAIL_RETURN(e, SL_EDATA, "%s: netCDF variable %s: must be a scalar", path, name);
    }
    double f, v;
    SL_TRY_RETURN(e, nc_units_factor(ncid, varid, path, name, accepted, factors, &f, e));
    int st = nc_get_var_double(ncid, varid, &v);
    if (st != NC_NOERR)
        SL_FAIL_RETURN(e, SL_EDATA, "%s: netCDF variable %s: %s", path, name, nc_strerror(st));
    v *= f;
    if (!isfinite(v) || v < lo_si || v > hi_si)
        SL_FAIL_RETURN(e, SL_EDATA, "%s: netCDF variable %s: value %g (SI) outside the valid range %g to %g", path, name,
                       v, lo_si, hi_si);
    *out = v;
    return SL_OK;
}

/* Optional global attributes of steamloft's own files: event_month (1-12)
 * and, unless event_time_is_nominal says "yes", event_time (ISO 8601 UTC). */
static int nc_event_meta(int ncid, const char *path, sl_injection *meta, sl_err *e)
{
    size_t len = 0;
    int month = 0;
    if (nc_inq_attlen(ncid, NC_GLOBAL, "event_month", &len) == NC_NOERR) {
        if (len != 1 || nc_get_att_int(ncid, NC_GLOBAL, "event_month", &month) != NC_NOERR || month < 0 || month > 12)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: global attribute event_month: need one integer 0-12", path);
        meta->month = month;
    }
    char text[64], nominal[8] = "";
    if (nc_inq_attlen(ncid, NC_GLOBAL, "event_time_is_nominal", &len) == NC_NOERR && len < sizeof nominal &&
        nc_get_att_text(ncid, NC_GLOBAL, "event_time_is_nominal", nominal) == NC_NOERR)
        nominal[len] = '\0';
    if (strcmp(nominal, "no") == 0 && nc_inq_attlen(ncid, NC_GLOBAL, "event_time", &len) == NC_NOERR) {
        double t;
        if (len >= sizeof text || nc_get_att_text(ncid, NC_GLOBAL, "event_time", text) != NC_NOERR ||
            (text[len] = '\0', sl_date_parse(text, &t)) != 0)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: global attribute event_time: not %s", path, SL_DATE_FORMS);
        meta->event_time_s = t;
        if (meta->month == 0) {
            sl_date_fields f;
            sl_date_split(t, &f);
            meta->month = f.month;
        }
    }
    return SL_OK;
}

/* Mass variable NAME(altitude) in kg or Tg into OUT (n values). */
static int nc_mass(int ncid, int dimid, size_t n, const char *path, const char *name, int required, double *out, sl_err *e)
{
    static const char *const units[] = {"kg", "Tg", NULL};
    static const double factors[] = {1.0, 1.0e9};
    int varid, ndims, dims[NC_MAX_VAR_DIMS];
    if (nc_inq_varid(ncid, name, &varid) != NC_NOERR) {
        if (required)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: netCDF variable %s(altitude) is missing (water vapour mass per band, kg)",
                           path, name);
        for (size_t i = 0; i < n; i++)
            out[i] = 0.0;
        return SL_OK;
    }
    if (nc_inq_varndims(ncid, varid, &ndims) != NC_NOERR || ndims != 1 ||
        nc_inq_vardimid(ncid, varid, dims) != NC_NOERR || dims[0] != dimid)
        SL_FAIL_RETURN(e, SL_EDATA, "%s: netCDF variable %s: must have the single dimension altitude", path, name);
    double f;
    SL_TRY_RETURN(e, nc_units_factor(ncid, varid, path, name, units, factors, &f, e));
    int st = nc_get_var_double(ncid, varid, out);
    if (st != NC_NOERR)
        SL_FAIL_RETURN(e, SL_EDATA, "%s: netCDF variable %s: %s", path, name, nc_strerror(st));
    double fill;
    int has_fill = nc_get_att_double(ncid, varid, "_FillValue", &fill) == NC_NOERR;
    for (size_t i = 0; i < n; i++) {
        if (!isfinite(out[i]) || (has_fill && out[i] == fill) || out[i] < 0.0)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: netCDF variable %s[%zu] = %g: masses must be finite and >= 0, no missing values",
                           path, name, i, out[i]);
        out[i] *= f;
    }
    return SL_OK;
}

static int read_netcdf(const char *path, sl_injection *inj, sl_err *e)
{
    int ncid = -1, rc = SL_OK;
    rows r = {0};
    double *z = NULL, *bnds = NULL;
    SL_TRY_RETURN(e, sl_infile_nc_precheck(path, e));
    int st = nc_open(path, NC_NOWRITE, &ncid);
    if (st != NC_NOERR)
        SL_FAIL_RETURN(e, SL_EDATA, "%s: cannot open as netCDF: %s", path, nc_strerror(st));
    int dimid, zid, bid, ndims, dims[NC_MAX_VAR_DIMS];
    size_t n, nv;
    NCK(nc_inq_dimid(ncid, "altitude", &dimid), "dimension altitude (the band coordinate)");
    NCK(nc_inq_dimlen(ncid, dimid, &n), "dimension altitude");
    if (n == 0) {
        rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s: dimension altitude has length 0 (need at least one band)", path);
        goto done;
    }
    NCK(nc_inq_varid(ncid, "altitude", &zid), "coordinate variable altitude");
    /* The buffers below hold N values: the coordinate must lie on exactly
     * the altitude dimension (a 2-D or longer altitude would overrun them). */
    NCK(nc_inq_varndims(ncid, zid, &ndims), "altitude");
    if (ndims == 1)
        NCK(nc_inq_vardimid(ncid, zid, dims), "altitude");
    if (ndims != 1 || dims[0] != dimid) {
        rc = sl_err_set(e, SL_EDATA, __func__, __LINE__,
                        "%s: netCDF variable altitude: must be the coordinate altitude(altitude), one dimension; "
                        "it has %d dimension%s%s",
                        path, ndims, ndims == 1 ? "" : "s", ndims == 1 ? " other than altitude" : "");
        goto done;
    }
    static const char *const zunits[] = {"m", "km", NULL};
    static const double zfactors[] = {1.0, 1.0e3};
    double zf;
    rc = nc_units_factor(ncid, zid, path, "altitude", zunits, zfactors, &zf, e);
    if (rc != SL_OK)
        goto done;
    char bname[NC_MAX_NAME + 1];
    if (nc_text_att(ncid, zid, "bounds", bname, sizeof bname) != 1) {
        rc = sl_err_set(e, SL_EDATA, __func__, __LINE__,
                        "%s: netCDF variable altitude: no 'bounds' attribute; band edges are required (CF section 7.1)", path);
        goto done;
    }
    st = nc_inq_varid(ncid, bname, &bid);
    if (st != NC_NOERR) {
        rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s: netCDF variable %s (named by altitude:bounds): %s", path, bname,
                        nc_strerror(st));
        goto done;
    }
    NCK(nc_inq_varndims(ncid, bid, &ndims), bname);
    if (ndims != 2) {
        rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s: netCDF variable %s: must have dimensions (altitude, 2)", path, bname);
        goto done;
    }
    NCK(nc_inq_vardimid(ncid, bid, dims), bname);
    NCK(nc_inq_dimlen(ncid, dims[1], &nv), bname);
    if (dims[0] != dimid || nv != 2) {
        rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s: netCDF variable %s: must have dimensions (altitude, 2)", path, bname);
        goto done;
    }
    z = malloc(n * sizeof(double));
    bnds = malloc(2 * n * sizeof(double));
    r.bottom_m = malloc(n * sizeof(double));
    r.top_m = malloc(n * sizeof(double));
    r.vapor_kg = malloc(n * sizeof(double));
    r.ice_kg = malloc(n * sizeof(double));
    if (!z || !bnds || !r.bottom_m || !r.top_m || !r.vapor_kg || !r.ice_kg) {
        rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "%s: out of memory for %zu bands", path, n);
        goto done;
    }
    r.n = r.cap = n;
    NCK(nc_get_var_double(ncid, zid, z), "altitude");
    NCK(nc_get_var_double(ncid, bid, bnds), bname);
    /* CF 7.1: bounds inherit the coordinate's units. */
    for (size_t i = 0; i < n; i++) {
        double b0 = bnds[2 * i] * zf, b1 = bnds[2 * i + 1] * zf, zc = z[i] * zf;
        if (!isfinite(b0) || !isfinite(b1) || b0 < 0.0 || b1 > MAX_FILE_ALTITUDE_M || !(b1 > b0)) {
            rc = sl_err_set(e, SL_EDATA, __func__, __LINE__,
                            "%s: netCDF variable %s[%zu] = (%g, %g) m: need bottom < top within 0 to %g m, increasing", path,
                            bname, i, b0, b1, MAX_FILE_ALTITUDE_M);
            goto done;
        }
        if (!(zc >= b0 && zc <= b1)) {
            rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s: netCDF variable altitude[%zu] = %g m lies outside its bounds %g-%g m",
                            path, i, zc, b0, b1);
            goto done;
        }
        if (i > 0 && b0 != r.top_m[i - 1]) {
            rc = sl_err_set(e, SL_EDATA, __func__, __LINE__,
                            "%s: netCDF variable %s[%zu]: bottom %g m differs from the previous top %g m; bands must be "
                            "contiguous and increasing",
                            path, bname, i, b0, r.top_m[i - 1]);
            goto done;
        }
        r.bottom_m[i] = b0;
        r.top_m[i] = b1;
    }
    rc = nc_mass(ncid, dimid, n, path, "vapor_mass", 1, r.vapor_kg, e);
    if (rc == SL_OK)
        rc = nc_mass(ncid, dimid, n, path, "ice_mass", 0, r.ice_kg, e);
    if (rc != SL_OK)
        goto done;
    sl_injection meta;
    memset(&meta, 0, sizeof meta);
    set_empty_meta(&meta);
    {
        static const char *const lat_u[] = {"degrees_north", "degree_north", "degrees", NULL};
        static const double lat_f[] = {1.0, 1.0, 1.0};
        static const char *const area_u[] = {"m2", "m^2", NULL};
        static const double area_f[] = {1.0, 1.0};
        static const char *const t_u[] = {"s", "days", "d", NULL};
        static const double t_f[] = {1.0, 86400.0, 86400.0};
        rc = nc_scalar(ncid, path, "tropopause_altitude", zunits, zfactors, 0.0, 1.0e5, &meta.tropopause_altitude_m, e);
        if (rc == SL_OK)
            rc = nc_scalar(ncid, path, "latitude", lat_u, lat_f, -90.0, 90.0, &meta.latitude_deg, e);
        if (rc == SL_OK)
            rc = nc_scalar(ncid, path, "cloud_area", area_u, area_f, 0.0, 1.0e15, &meta.cloud_area_m2, e);
        if (rc == SL_OK)
            rc = nc_scalar(ncid, path, "time", t_u, t_f, 0.0, 1.0e10, &meta.time_s, e);
        static const char *const lon_u[] = {"degrees_east", "degree_east", "degrees", NULL};
        if (rc == SL_OK)
            rc = nc_scalar(ncid, path, "longitude", lon_u, lat_f, -360.0, 720.0, &meta.longitude_deg, e);
        if (rc == SL_OK)
            rc = nc_event_meta(ncid, path, &meta, e);
        if (rc != SL_OK)
            goto done;
    }
    rc = rows_to_injection(&r, &meta, inj, e);
done:
    if (ncid >= 0)
        nc_close(ncid);
    free(z);
    free(bnds);
    rows_free(&r);
    if (rc != SL_OK)
        sl_err_push(e, rc, __func__, __LINE__);
    return rc;
}

int sl_injection_read(sl_injection *inj, const char *path, sl_err *e)
{
    if (inj == NULL || path == NULL)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "sl_injection_read: null argument");
    memset(inj, 0, sizeof *inj);
    set_empty_meta(inj);
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        SL_FAIL_RETURN(e, SL_ENOINPUT, "%s: cannot open injection profile: %s", path, strerror(errno));
    unsigned char magic[4] = {0};
    size_t got = fread(magic, 1, 4, f);
    /* netCDF classic/64-bit/CDF-5 start with "CDF" and a version byte;
     * netCDF-4 files are HDF5 files, which start with "\x89HDF". */
    int is_nc = got == 4 && ((magic[0] == 'C' && magic[1] == 'D' && magic[2] == 'F' && magic[3] >= 1 && magic[3] <= 5) ||
                             (magic[0] == 0x89 && magic[1] == 'H' && magic[2] == 'D' && magic[3] == 'F'));
    if (is_nc) {
        fclose(f);
        SL_TRY_RETURN(e, read_netcdf(path, inj, e));
        return SL_OK;
    }
    fclose(f);
    char *text = NULL;
    size_t len = 0;
    SL_TRY_RETURN(e, sl_infile_read_text(path, "injection profile", SL_INFILE_MAX_BYTES, &text, &len, e));
    int rc = read_csv(text, path, inj, e);
    free(text);
    SL_TRY_RETURN(e, rc);
    return SL_OK;
}
