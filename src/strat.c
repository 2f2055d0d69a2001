/* strat: stratospheric box model of an excess of water vapour.
 *
 * Boxes.  Three latitude regions (southern extratropics, tropics between
 * +-20 deg, northern extratropics; areas A_T = A_E sin 20 deg and A_X =
 * A_E (1 - sin 20 deg)/2 of the Earth's area A_E) times layers: the bottom
 * layer of a region starts at that region's WMO tropopause (from the
 * atmosphere module); the fixed edges above are 16 km (about 100 hPa), 20,
 * 25, 30, 35, 40, 50, 60, 70, 85 and 100 km, so the model reaches the
 * mesopause.  The 1-km bands of the injection profile are aggregated into
 * these boxes by altitude overlap (water above the top edge goes to the top
 * layer, water below a region's tropopause never enters the stratosphere).
 * Air mass m_b and background water w_b of each box are integrated from the
 * region's background profile (atmosphere module): m_b = A_r int rho dz,
 * w_b = A_r int rho x_H2O (M_H2O/M_air) dz.
 *
 * Transport: the leaky tropical pipe (Plumb 1996, JGR 101, 3957; Neu & Plumb
 * 1999, JGR 104, 19243).  The excess q_b (kg) obeys the linear system
 * dq/dt = A q, A built from air-mass fluxes (kg air/s) acting on the mixing
 * ratio q_b/m_b (upwind):
 *  - tropical upward mass flux across the tropopause F_tp = 1.018e10 kg/s,
 *    the annual-mean flux across 100 hPa (Seol & Yamazaki 1999, JMSJ 77, 985,
 *    SEEN).  A share f_deep rises on at constant speed (the deep branch):
 *    F(z) = f_deep F_tp rho(z)/rho(z_tp) through each edge above, zero at the
 *    model top; the rest turns poleward within the lowest tropical layer (the
 *    shallow branch into the lowermost stratosphere);
 *  - the divergence F(bottom) - F(top) of each tropical layer detrains, half
 *    into each extratropical region of the same layer;
 *  - the extratropics carry the returning air down: F(bottom of the tropical
 *    layer)/2 through the bottom of each extratropical layer, and F_tp/2 out
 *    through the extratropical tropopause (air mass is conserved in every box;
 *    a test checks it);
 *  - two-way mixing between the tropics and each extratropical region with an
 *    in-mixing time tau_in for tropical air (Neu & Plumb's entrainment; Volk
 *    et al. 1996, Science 272, 1763: mid-latitude air is entrained into the
 *    tropical lower stratosphere within about 13.5 months, SEEN);
 *  - vertical eddy diffusion in every column, K(z) = K_s below 30 km,
 *    growing by e every 10 km above (1-D model profiles grow from ~0.1-1 m2/s
 *    in the lower stratosphere to ~1e2 m2/s near the mesopause; Massie &
 *    Hunten 1981, JGR 86, 9859, magnitudes MEM-M), flux rho K A dq/dz
 *    between layer centres, and across the tropical tropopause;
 *  - the lowermost stratosphere (bottom extratropical box) is flushed by
 *    quasi-isentropic exchange with the troposphere: its total exit rate is
 *    1/tau_LMS with tau_LMS = 50 days, the residence of aircraft emissions
 *    deposited there (Gettelman 1999, PhD thesis, U. Washington, SEEN).
 * Air re-entering from the troposphere carries no excess: the cold tropical
 * tropopause sets the entry humidity (about 4.0 ppmv, Hurst et al. 1999, JGR
 * 104, 8191), so any returned excess is freeze-dried on re-entry.
 *
 * Calibration.  F_tp and tau_LMS are used as published.  f_deep, tau_in and
 * K_s are fitted (sl_strat_calibrate, Nelder-Mead on their logarithms, the
 * logit for f_deep; run it with `steamloft decay --calibrate`; tests/test_strat.c re-runs it and checks the
 * defaults below) to: mean age of air about 1 yr in the tropics at 20 km and
 * 4-5 yr in the extratropics at 25-40 km (Waugh & Hall 2002, Rev. Geophys. 40,
 * 1010, SEEN), slowest decay mode 3.8-5.3 yr (Ehhalt et al. 2004, JGR 109,
 * SEEN), tropical upwelling 0.2-0.4 mm/s at 20-30 km (Mote et al. 1996, JGR
 * 101, 3989, SEEN) and the in-mixing time of 13.5 months (Volk et al. 1996,
 * +-4 months), each misfit measured in units of half its published range.
 * The fit (tropical and us1976 profiles) gives f_deep = 0.71, tau_in = 12.8
 * months, K_s = 0.014 m2/s (below the <= 1 m2/s of Wofsy et al. 1994, SEEN)
 * with mean ages 0.84 yr (tropics, 20 km) and 4.4 yr (extratropics, 25-40
 * km), slowest mode 4.7 yr and upwelling 0.25 mm/s: every target inside its
 * published range.  The turnover of the air above 100 hPa, mass / F_tp, is
 * then 1.6 yr as Seol & Yamazaki found (a check, not a fit).  Mean age is the
 * steady solution of A (Gamma m) = -m (the age tracer ages one second per
 * second and enters with age zero), the slowest mode the eigenvalue of A
 * closest to zero (GSL nonsymmetric eigensolver).
 *
 * Sinks (each accumulated in its own absorbing state of the augmented
 * system, so the budget injected = remaining + sum of sinks closes to
 * rounding; tests check it at every output time):
 *  - return to the troposphere: the transport exits above;
 *  - cold tropical tropopause: the bottom tropical box holds at most
 *    S * x_ice(T_cp, p_cp) (ice saturation at the cold point, S = 1:
 *    deposition on existing cirrus; Jensen et al. 2013, PNAS 110, 2041, saw
 *    up to 1.7, SEEN, authors MEM-M); water above that freezes out after
 *    each internal step;
 *  - polar winter: the Antarctic vortex (poleward of 65 S, 14 % of the
 *    southern extratropics) falls below the frost point at 12-26 km from June
 *    to September and is dried to ice saturation, removing the excess it holds
 *    (observed for the Hunga water in 2023: the vortex took in 20-40 % more
 *    water and was reset to ice saturation, SEEN; authors Wohltmann et al.
 *    2024, GRL, MEM-M); the 65 S edge is MEM-M, the months MEM-H, the
 *    12-26 km range of polar ice clouds MEM-M; modelled as a first-order
 *    loss -ln(1 - f_v)/(4 months) on the southern boxes, weighted by the
 *    share of their air inside 12-26 km.  The Arctic rarely reaches the frost point, so
 *    its fraction is 0 by default (a parameter);
 *  - mesospheric photolysis by Lyman-alpha and 175-200 nm light: diurnal-mean
 *    lifetime 100 days at 70 km, e-folding every 6.2 km (days near 90 km,
 *    weeks at 75-80 km, months at 70 km, years below 60-65 km: Brasseur &
 *    Solomon 2005, Aeronomy of the Middle Atmosphere, ch. 4-5, numbers from
 *    memory); no net loss below 60 km where
 *    water is produced (Sonnemann & Grygalashvyly 2005, JGR,
 *    doi:10.1029/2004JD005593, SEEN: crossover near 65 km);
 *  - young-cloud freeze-out at t = 0, on request only (cloud_freeze_out; the
 *    injection stage already applies its own freeze-out rule to the plume's
 *    cloud, so the chain leaves it off): the cloud of area A0 (the profile's
 *    cloud_area_m2 or the default) holds at most ice saturation in each
 *    band; the water above that is ice that grows and falls out (fall speeds
 *    of ~1-5 km/day for 10-20 um crystals, Stokes fall speeds as in Pruppacher &
 *    Klett 1997, MEM) while
 *    the cloud spreads into drier air.
 *
 * Early spreading (local column anomaly): the cloud keeps its width sqrt(A0)
 * while wind shear stretches it around the latitude circle within
 * t_z = 14 days (Pinatubo's SO2 cloud took 22 days, Bluth et al. 1992, GRL
 * 19, 151; the Hunga plume about a week, both MEM-M), then it widens to the
 * whole latitude region by t_r = 90 days (Hunga water spread from 20.5 S to
 * Mauna Loa, 19.5 N, by April 2022: doi:10.1029/2022JD038100, SEEN).  When
 * the profile gives no cloud area, it is taken as the settled stratospheric
 * injection (as satellite estimates are) and the area is the default
 * (500 km across, the order of the Hunga umbrella cloud, MEM-M) or the
 * smallest area holding the water at ice saturation, whichever is larger.
 *
 * Time integration.  The system is linear with coefficients that are
 * constant within each calendar month (only the polar sink is seasonal), so
 * the exact solution over an internal step h is q(t+h) = exp(A_c h) q(t).  The
 * twelve propagators exp(A_c h) (GSL scaling and squaring, Moler & Van Loan
 * 1978) are computed once per model; a run is then 12 x 20 small matrix-vector
 * products: exact for the linear part (no step-size error, unlike an ODE
 * solver such as odeiv2, which the tests use as an independent check), cheap
 * (well under a millisecond for 20 years) and allocation-free.  Entries below zero from rounding are
 * set to zero and each column renormalised to sum 1, which keeps masses
 * non-negative and the budget closed.  The cold-point freeze-out is a
 * threshold (non-linear) and is applied after every internal step (operator
 * splitting, error O(h)).  Months are equal, 1/12 of a Julian year.
 *
 * Forcing indicator (coarse): 0.3 W/m2 per ppmv of a near-uniform increase
 * of stratospheric water (the upper end of the 0.1-0.3 range of Forster &
 * Shine 1999, GRL 26, 3309, and Solomon et al. 2010, Science 327, 1219, from
 * memory), larger for water near the tropopause and smaller higher up: per-box
 * weight exp(-(z - 16 km)/14 km), normalised so that a uniform increase above
 * 100 hPa gives 0.3 W/m2 per ppmv.  CALIBRATED on the 2022 Hunga water: with
 * 0.2 the 146 Tg at 22-27 km gave 0.078 W/m2, a third below the +0.12 W/m2
 * early forcing of Jenkins et al. 2023 (Nature Climate Change 13, 127; seen
 * in the source's abstract as reported); 0.3 gives about 0.115, inside 0.10-0.15.  The shape is PRACTICE (no published
 * forcing-per-layer kernel was found): 14 km makes water at 25-30 km count
 * about half as much as water at the tropopause.  It is an order-of-magnitude
 * indicator, not a radiative-transfer result.
 *
 * Percent of background: the stratospheric water burden that the Hunga
 * papers compare with (146 Tg ~ 10 %, Millán et al. 2022; 139 Tg = 8.9 %,
 * Xu et al. 2022) is 1.1-1.6 Pg, which is the water above ~100 hPa; we use
 * the background water above 16 km (the reference domain), and the global
 * mean anomaly is the excess over the air of that domain. */
#include "steamloft/strat.h"
#include "steamloft/minmax.h"
#include "steamloft/units.h"

#include <gsl/gsl_eigen.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_multimin.h>
#include <gsl/gsl_permutation.h>
#include <gsl/gsl_vector.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

const char *const sl_strat_sink_names[SL_STRAT_N_SINKS] = {
    "troposphere", "cold_point", "polar_winter", "photolysis", "cloud_freeze"};

#define MONTH_S (SL_S_PER_YEAR / 12.0)
#define FIXED_EDGE_M(i) (sl_km_to_m(fixed_edges_km[(i)]))
static const double fixed_edges_km[SL_STRAT_N_FIXED_EDGES] = SL_STRAT_EDGES_KM;

/* Reference domain: above 16 km (~100 hPa; USSA76 gives 103.5 hPa at 16 km). */
#define REFERENCE_BOTTOM_M 16.0e3
/* Layers of the polar winter vortex that reach the frost point: 12-26 km
 * (polar stratospheric ice clouds, MEM-M). */
#define PSC_BOTTOM_M 12.0e3
#define PSC_TOP_M 26.0e3
/* Months of the polar freeze (1-12): Antarctic June-September, Arctic
 * December-February (MEM-H for the Antarctic, MEM-M for the Arctic). */
static const int antarctic_months[12] = {0, 0, 0, 0, 0, 1, 1, 1, 1, 0, 0, 0};
static const int arctic_months[12] = {1, 1, 0, 0, 0, 0, 0, 0, 0, 0, 0, 1};
/* Height above 30 km over which K_zz grows by e (see the header comment). */
#define KZZ_GROWTH_BOTTOM_M 30.0e3
#define KZZ_GROWTH_SCALE_M 10.0e3
/* Quadrature cell for box integrals and the fine cloud tables (PRACTICE: the
 * atmosphere varies on the scale height, 6-8 km; 100-250 m cells integrate it
 * to well below 0.1 %). */
#define BOX_CELL_M 100.0
#define FINE_DZ_M 250.0
/* Thinnest box kept: a layer less than 500 m above the tropopause is merged
 * into the next one (PRACTICE). */
#define MIN_BOX_M 500.0

static double mass_ratio(void) { return SL_MOLAR_MASS_H2O_KG_MOL / SL_MOLAR_MASS_DRY_AIR_KG_MOL; }

/* Share of a hemisphere's extratropics poleward of LAT_DEG. */
static double polar_cap_fraction(double lat_deg, double edge_deg)
{
    return (1.0 - sin(sl_deg_to_rad(lat_deg))) / (1.0 - sin(sl_deg_to_rad(edge_deg)));
}

void sl_strat_params_default(sl_strat_params *p)
{
    memset(p, 0, sizeof *p);
    p->upflux_tropopause_kg_s = 1.018e10;      /* Seol & Yamazaki 1999, SEEN */
    /* Calibrated by sl_strat_calibrate on the built-in profiles (tropical for
     * the tropics, us1976 for the extratropics), started from 0.7, 1 yr and
     * 0.3 m2/s: `steamloft decay --calibrate` prints the fit and
     * tests/test_strat.c re-runs it and checks these values. */
    p->deep_branch_fraction = 0.7104;
    p->inmixing_time_s = 1.0672 * SL_S_PER_YEAR;
    p->kzz_m2_s = 0.01382;
    p->lms_residence_s = 50.0 * SL_S_PER_DAY;  /* Gettelman 1999, SEEN */
    p->tropics_edge_deg = 20.0;                /* edge of the tropical pipe (Plumb 1996) */
    p->edge_ramp_deg = 5.0;                    /* the subtropical barrier is not a line (PRACTICE) */
    p->cold_point_saturation_ratio = 1.0;
    p->antarctic_vortex_fraction = polar_cap_fraction(65.0, 20.0); /* DERIVED, 0.142 */
    p->arctic_vortex_fraction = 0.0;
    p->photolysis_lifetime_70km_s = 100.0 * SL_S_PER_DAY;
    p->photolysis_scale_height_m = 6.2e3;
    p->photolysis_bottom_m = 60.0e3;
    /* 500 km across (PRACTICE: the order of the Hunga umbrella cloud, MEM-M). */
    p->default_cloud_area_m2 = 2.0e11;
    p->cloud_freeze_out = 0;
    p->zonal_spread_time_s = 14.0 * SL_S_PER_DAY;
    p->region_spread_time_s = 90.0 * SL_S_PER_DAY;
    p->forcing_W_m2_per_mole_fraction = 0.3e6; /* 0.3 W m-2 per ppmv: CALIBRATED, see the header */
    p->forcing_scale_height_m = 14.0e3;
    p->span_s = 20.0 * SL_S_PER_YEAR;
    p->step_s = MONTH_S;
    p->start_month = 1;
}

int sl_strat_params_check(const sl_strat_params *p, sl_err *e)
{
    const struct {
        const char *name;
        double v, lo, hi;
    } c[] = {
        {"upflux_tropopause_kg_s", p->upflux_tropopause_kg_s, 1e8, 1e12},
        {"deep_branch_fraction", p->deep_branch_fraction, 0.01, 1.0},
        {"inmixing_time_s", p->inmixing_time_s, SL_S_PER_DAY, 100.0 * SL_S_PER_YEAR},
        {"kzz_m2_s", p->kzz_m2_s, 1e-4, 1e3},
        {"lms_residence_s", p->lms_residence_s, SL_S_PER_DAY, 100.0 * SL_S_PER_YEAR},
        {"tropics_edge_deg", p->tropics_edge_deg, 5.0, 40.0},
        {"edge_ramp_deg", p->edge_ramp_deg, 0.0, 10.0},
        {"cold_point_saturation_ratio", p->cold_point_saturation_ratio, 0.5, 3.0},
        {"antarctic_vortex_fraction", p->antarctic_vortex_fraction, 0.0, 0.9},
        {"arctic_vortex_fraction", p->arctic_vortex_fraction, 0.0, 0.9},
        {"photolysis_lifetime_70km_s", p->photolysis_lifetime_70km_s, 3600.0, 1e3 * SL_S_PER_YEAR},
        {"photolysis_scale_height_m", p->photolysis_scale_height_m, 1e3, 1e5},
        {"photolysis_bottom_m", p->photolysis_bottom_m, 30e3, 100e3},
        {"default_cloud_area_m2", p->default_cloud_area_m2, 1e6, SL_EARTH_AREA_M2},
        {"zonal_spread_time_s", p->zonal_spread_time_s, SL_S_PER_DAY, 365.0 * SL_S_PER_DAY},
        {"region_spread_time_s", p->region_spread_time_s, SL_S_PER_DAY, 2.0 * SL_S_PER_YEAR},
        {"forcing_W_m2_per_mole_fraction", p->forcing_W_m2_per_mole_fraction, 0.0, 1e7},
        {"forcing_scale_height_m", p->forcing_scale_height_m, 1e3, 1e6},
        {"span_s", p->span_s, SL_S_PER_DAY, 1000.0 * SL_S_PER_YEAR},
        {"step_s", p->step_s, 3600.0, SL_S_PER_YEAR},
    };
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++)
        if (!(c[i].v >= c[i].lo && c[i].v <= c[i].hi))
            SL_FAIL_RETURN(e, SL_EDATA, "strat parameter %s = %g is outside the valid range %g to %g (SI units)",
                           c[i].name, c[i].v, c[i].lo, c[i].hi);
    if (p->region_spread_time_s <= p->zonal_spread_time_s)
        SL_FAIL_RETURN(e, SL_EDATA, "strat parameter region_spread_time_s = %g must exceed zonal_spread_time_s = %g",
                       p->region_spread_time_s, p->zonal_spread_time_s);
    if (p->step_s > p->span_s)
        SL_FAIL_RETURN(e, SL_EDATA, "strat output step %g s is longer than the span %g s", p->step_s, p->span_s);
    /* Bounded memory: at most 1e5 output times (20 years of 2-hour steps). */
    if (p->span_s / p->step_s > 1.0e5)
        SL_FAIL_RETURN(e, SL_EDATA, "strat span %g s / step %g s gives more than 100000 output times; "
                       "use a longer step or a shorter span", p->span_s, p->step_s);
    if (p->cloud_freeze_out != 0 && p->cloud_freeze_out != 1)
        SL_FAIL_RETURN(e, SL_EDATA, "strat parameter cloud_freeze_out = %d must be 0 or 1", p->cloud_freeze_out);
    if (p->start_month < 0 || p->start_month > 12)
        SL_FAIL_RETURN(e, SL_EDATA, "strat parameter start_month = %d is outside the valid range 0 (unknown) to 12",
                       p->start_month);
    return SL_OK;
}

/* ------------------------------------------------------------------ geometry */

/* Geometry and everything that does not depend on the transport constants. */
typedef struct geom_extra {
    double edge_density[SL_STRAT_N_REGIONS][SL_STRAT_MAX_LAYERS]; /* rho at layer_top[k] */
    double tropopause_density[SL_STRAT_N_REGIONS];
    double psc_share[SL_STRAT_MAX_BOXES];       /* air share inside 12-26 km */
    double photolysis_rate[SL_STRAT_MAX_BOXES]; /* 1/s, air-mass weighted */
} geom_extra;

static int state_at(const sl_atmosphere *atm, double z_m, sl_atmos_state *st, sl_err *e)
{
    SL_TRY_RETURN(e, sl_atmosphere_at(atm, z_m, st, e));
    return SL_OK;
}

static double kzz_at(const sl_strat_params *p, double z_m)
{
    double above = z_m - KZZ_GROWTH_BOTTOM_M;
    return p->kzz_m2_s * exp(above > 0.0 ? above / KZZ_GROWTH_SCALE_M : 0.0);
}

static double photolysis_rate_at(const sl_strat_params *p, double z_m)
{
    if (z_m < p->photolysis_bottom_m)
        return 0.0;
    return exp((z_m - 70.0e3) / p->photolysis_scale_height_m) / p->photolysis_lifetime_70km_s;
}

static int build_geometry(sl_strat_model *m, const sl_atmosphere *const atm[SL_STRAT_N_REGIONS], geom_extra *gx,
                          sl_err *e)
{
    const sl_strat_params *p = &m->par;
    double s_edge = sin(sl_deg_to_rad(p->tropics_edge_deg));
    m->region_area_m2[SL_STRAT_TROPICS] = SL_EARTH_AREA_M2 * s_edge;
    m->region_area_m2[SL_STRAT_SOUTH] = m->region_area_m2[SL_STRAT_NORTH] = SL_EARTH_AREA_M2 * (1.0 - s_edge) / 2.0;

    /* Model top: 100 km or the lowest top of the profiles, snapped to an edge. */
    double top_m = sl_km_to_m(fixed_edges_km[SL_STRAT_N_FIXED_EDGES - 1]);
    for (int r = 0; r < SL_STRAT_N_REGIONS; r++) {
        if (atm[r] == NULL || atm[r]->n < 2)
            SL_FAIL_RETURN(e, SL_EDATA, "strat: no background profile for region %d", r);
        double ptop = atm[r]->altitude_m[atm[r]->n - 1];
        if (ptop < top_m)
            top_m = ptop;
        double tp = atm[r]->tropopause_altitude_m;
        if (!isfinite(tp) || tp < 5.0e3 || tp > FIXED_EDGE_M(1) - MIN_BOX_M)
            SL_FAIL_RETURN(e, SL_EDATA,
                           "strat: profile '%s' has its tropopause at %.1f km; the box model needs it between 5 and %.1f km",
                           atm[r]->name, sl_m_to_km(tp), sl_m_to_km(FIXED_EDGE_M(1) - MIN_BOX_M));
        m->tropopause_m[r] = tp;
    }
    m->n_layers = 0;
    for (size_t i = 0; i < SL_STRAT_N_FIXED_EDGES && FIXED_EDGE_M(i) <= top_m + 1e-6; i++)
        m->layer_top_m[m->n_layers++] = FIXED_EDGE_M(i);
    if (m->n_layers < 7)
        SL_FAIL_RETURN(e, SL_EDATA, "strat: the background profiles end at %.1f km; the box model needs them up to at least %g km",
                       sl_m_to_km(top_m), fixed_edges_km[6]);

    sl_atmos_state st;
    size_t nb = 0;
    for (int r = 0; r < SL_STRAT_N_REGIONS; r++) {
        SL_TRY_RETURN(e, state_at(atm[r], m->tropopause_m[r], &st, e));
        gx->tropopause_density[r] = st.density_kg_m3;
        for (size_t k = 0; k < m->n_layers; k++) {
            m->box_of[r][k] = -1;
            SL_TRY_RETURN(e, state_at(atm[r], m->layer_top_m[k], &st, e));
            gx->edge_density[r][k] = st.density_kg_m3;
            /* The lowest box starts at the tropopause (a layer less than
             * MIN_BOX_M above it is merged into the next one). */
            if (m->layer_top_m[k] - m->tropopause_m[r] < MIN_BOX_M)
                continue;
            int first = k == 0 || m->layer_top_m[k - 1] - m->tropopause_m[r] < MIN_BOX_M;
            double bottom = first ? m->tropopause_m[r] : m->layer_top_m[k - 1];
            m->box_of[r][k] = (int)nb;
            m->box_region[nb] = r;
            m->box_layer[nb] = (int)k;
            m->box_bottom_m[nb] = bottom;
            m->box_top_m[nb] = m->layer_top_m[k];
            /* Midpoint quadrature of the column integrals. */
            size_t nc = (size_t)ceil((m->layer_top_m[k] - bottom) / BOX_CELL_M);
            double dz = (m->layer_top_m[k] - bottom) / (double)nc;
            double air = 0.0, water = 0.0, zair = 0.0, psc = 0.0, phot = 0.0;
            for (size_t c = 0; c < nc; c++) {
                double z = bottom + ((double)c + 0.5) * dz;
                SL_TRY_RETURN(e, state_at(atm[r], z, &st, e));
                double a = st.density_kg_m3 * dz;
                air += a;
                water += a * st.h2o_mole_fraction * mass_ratio();
                zair += a * z;
                if (z >= PSC_BOTTOM_M && z <= PSC_TOP_M)
                    psc += a;
                phot += a * photolysis_rate_at(p, z);
            }
            double area = m->region_area_m2[r];
            m->box_air_kg[nb] = air * area;
            m->box_background_kg[nb] = water * area;
            m->box_mid_m[nb] = zair / air;
            gx->psc_share[nb] = psc / air;
            gx->photolysis_rate[nb] = phot / air;
            m->box_in_reference[nb] = bottom >= REFERENCE_BOTTOM_M - 1.0;
            nb++;
        }
    }
    m->n_boxes = nb;
    m->tropics_tropopause_density_kg_m3 = gx->tropopause_density[SL_STRAT_TROPICS];
    for (size_t k = 0; k < m->n_layers; k++)
        m->tropics_top_density_kg_m3[k] = gx->edge_density[SL_STRAT_TROPICS][k];
    /* The pipe needs the extratropics to start no higher than the tropics. */
    int kT0 = -1, kX0 = -1;
    for (size_t k = 0; k < m->n_layers && kT0 < 0; k++)
        if (m->box_of[SL_STRAT_TROPICS][k] >= 0)
            kT0 = (int)k;
    for (size_t k = 0; k < m->n_layers && kX0 < 0; k++)
        if (m->box_of[SL_STRAT_SOUTH][k] >= 0 && m->box_of[SL_STRAT_NORTH][k] >= 0)
            kX0 = (int)k;
    if (kT0 < 0 || kX0 < 0 || kX0 > kT0)
        SL_FAIL_RETURN(e, SL_EDATA,
                       "strat: the extratropical tropopause (%.1f / %.1f km) must not be above the tropical one (%.1f km)",
                       sl_m_to_km(m->tropopause_m[SL_STRAT_SOUTH]), sl_m_to_km(m->tropopause_m[SL_STRAT_NORTH]),
                       sl_m_to_km(m->tropopause_m[SL_STRAT_TROPICS]));
    for (size_t k = (size_t)kX0; k < m->n_layers; k++)
        for (int r = 0; r < SL_STRAT_N_REGIONS; r++)
            if ((r != SL_STRAT_TROPICS || k >= (size_t)kT0) && m->box_of[r][k] < 0)
                SL_FAIL_RETURN(e, SL_EINTERNAL, "strat: layer %zu missing in region %d", k, r);

    m->reference_air_kg = m->reference_background_kg = m->background_total_kg = 0.0;
    for (size_t b = 0; b < nb; b++) {
        m->background_total_kg += m->box_background_kg[b];
        if (m->box_in_reference[b]) {
            m->reference_air_kg += m->box_air_kg[b];
            m->reference_background_kg += m->box_background_kg[b];
        }
    }
    /* Forcing weights, normalised over the reference domain. */
    double wsum = 0.0;
    for (size_t b = 0; b < nb; b++)
        if (m->box_in_reference[b])
            wsum += m->box_air_kg[b] * exp(-(m->box_mid_m[b] - REFERENCE_BOTTOM_M) / p->forcing_scale_height_m);
    double norm = wsum / m->reference_air_kg;
    for (size_t b = 0; b < nb; b++) {
        double s = p->forcing_W_m2_per_mole_fraction *
                   exp(-(m->box_mid_m[b] - REFERENCE_BOTTOM_M) / p->forcing_scale_height_m) / norm;
        /* W m-2 per kg of water: s * (mole fraction per kg in the reference air). */
        m->box_forcing_W_m2_per_kg[b] = s / (mass_ratio() * m->reference_air_kg);
    }
    /* Cold point: room for excess in the bottom tropical box. */
    int bt = m->box_of[SL_STRAT_TROPICS][kT0];
    const sl_atmosphere *at = atm[SL_STRAT_TROPICS];
    double zcp = isfinite(at->cold_point_altitude_m) ? at->cold_point_altitude_m : m->tropopause_m[SL_STRAT_TROPICS];
    SL_TRY_RETURN(e, state_at(at, zcp, &st, e));
    double x_bg = m->box_background_kg[bt] / (m->box_air_kg[bt] * mass_ratio());
    double room_x = p->cold_point_saturation_ratio * st.ice_saturation_mole_fraction - x_bg;
    m->cold_point_room_kg = (room_x > 0.0 ? room_x : 0.0) * mass_ratio() * m->box_air_kg[bt];

    /* Fine tables for the young cloud. */
    m->fine_dz_m = FINE_DZ_M;
    m->n_fine = (size_t)floor(m->layer_top_m[m->n_layers - 1] / FINE_DZ_M) + 1;
    m->fine_density_kg_m3 = malloc(sizeof(double) * SL_STRAT_N_REGIONS * m->n_fine);
    m->fine_room_kg_m3 = malloc(sizeof(double) * SL_STRAT_N_REGIONS * m->n_fine);
    if (!m->fine_density_kg_m3 || !m->fine_room_kg_m3)
        SL_FAIL_RETURN(e, SL_ENOMEM, "strat: out of memory for the cloud tables");
    for (int r = 0; r < SL_STRAT_N_REGIONS; r++) {
        for (size_t i = 0; i < m->n_fine; i++) {
            double z = sl_max((double)i * FINE_DZ_M, atm[r]->altitude_m[0]);
            SL_TRY_RETURN(e, state_at(atm[r], z, &st, e));
            double room = st.ice_saturation_mole_fraction - st.h2o_mole_fraction;
            m->fine_density_kg_m3[r * m->n_fine + i] = st.density_kg_m3;
            m->fine_room_kg_m3[r * m->n_fine + i] = st.density_kg_m3 * mass_ratio() * (room > 0.0 ? room : 0.0);
        }
    }
    return SL_OK;
}

/* ------------------------------------------------------------------ rates */

/* Move rate COEF (1/s) of tracer from box J to state I (a box or a sink). */
static void add_flow(double *A, size_t n, size_t i, size_t j, double coef)
{
    A[i * n + j] += coef;
    A[j * n + j] -= coef;
}

/* Two-way exchange of MU kg air/s between boxes I and J. */
static void add_mix(double *A, size_t n, const sl_strat_model *m, size_t i, size_t j, double mu)
{
    add_flow(A, n, i, j, mu / m->box_air_kg[j]);
    add_flow(A, n, j, i, mu / m->box_air_kg[i]);
}

static int lowest_layer(const sl_strat_model *m, int r)
{
    for (size_t k = 0; k < m->n_layers; k++)
        if (m->box_of[r][k] >= 0)
            return (int)k;
    return -1;
}

/* Tropical upward mass flux through the top of layer K (0 at the model top). */
static double upflux_top(const sl_strat_model *m, size_t k)
{
    if (k + 1 >= m->n_layers)
        return 0.0;
    const sl_strat_params *p = &m->par;
    return p->upflux_tropopause_kg_s * p->deep_branch_fraction * m->tropics_top_density_kg_m3[k] /
           m->tropics_tropopause_density_kg_m3;
}

/* Transport (with the troposphere exit) and photolysis into A (N x N, N =
 * n_aug), zeroed first.  WITH_PHOTOLYSIS = 0 gives the conserved tracer of
 * the age and slowest-mode diagnostics. */
static void build_rates(const sl_strat_model *m, const geom_extra *gx, double *A, size_t n, int with_photolysis)
{
    const sl_strat_params *p = &m->par;
    memset(A, 0, sizeof(double) * n * n);
    size_t trop = m->n_boxes + SL_STRAT_SINK_TROPOSPHERE;
    int kT0 = lowest_layer(m, SL_STRAT_TROPICS);
    /* Tropical pipe: upwelling and detrainment. */
    for (size_t k = (size_t)kT0; k < m->n_layers; k++) {
        size_t b = (size_t)m->box_of[SL_STRAT_TROPICS][k];
        double f_bot = k == (size_t)kT0 ? p->upflux_tropopause_kg_s : upflux_top(m, k - 1);
        double f_top = upflux_top(m, k);
        if (f_top > 0.0)
            add_flow(A, n, (size_t)m->box_of[SL_STRAT_TROPICS][k + 1], b, f_top / m->box_air_kg[b]);
        double detrain = f_bot - f_top;
        add_flow(A, n, (size_t)m->box_of[SL_STRAT_SOUTH][k], b, 0.5 * detrain / m->box_air_kg[b]);
        add_flow(A, n, (size_t)m->box_of[SL_STRAT_NORTH][k], b, 0.5 * detrain / m->box_air_kg[b]);
        /* In-mixing of extratropical air, tau_in for the tropical box. */
        double mu = 0.5 * m->box_air_kg[b] / p->inmixing_time_s;
        add_mix(A, n, m, b, (size_t)m->box_of[SL_STRAT_SOUTH][k], mu);
        add_mix(A, n, m, b, (size_t)m->box_of[SL_STRAT_NORTH][k], mu);
    }
    /* Extratropical downwelling and the exit. */
    const int ext[2] = {SL_STRAT_SOUTH, SL_STRAT_NORTH};
    for (int h = 0; h < 2; h++) {
        int r = ext[h];
        int k0 = lowest_layer(m, r);
        for (size_t k = (size_t)k0; k < m->n_layers; k++) {
            size_t b = (size_t)m->box_of[r][k];
            double f_bot_t = k > (size_t)kT0 ? upflux_top(m, k - 1) : p->upflux_tropopause_kg_s;
            double down = 0.5 * f_bot_t;
            size_t to = k == (size_t)k0 ? trop : (size_t)m->box_of[r][k - 1];
            add_flow(A, n, to, b, down / m->box_air_kg[b]);
            if (k == (size_t)k0) {
                /* Lowermost stratosphere: total exit rate 1/tau_LMS. */
                double extra = 1.0 / p->lms_residence_s - down / m->box_air_kg[b];
                if (extra > 0.0)
                    add_flow(A, n, trop, b, extra);
            }
        }
    }
    /* Vertical eddy diffusion in every column; across the tropical tropopause. */
    for (int r = 0; r < SL_STRAT_N_REGIONS; r++) {
        int k0 = lowest_layer(m, r);
        for (size_t k = (size_t)k0; k + 1 < m->n_layers; k++) {
            size_t b = (size_t)m->box_of[r][k], c = (size_t)m->box_of[r][k + 1];
            double mu = gx->edge_density[r][k] * kzz_at(p, m->layer_top_m[k]) * m->region_area_m2[r] /
                        (m->box_mid_m[c] - m->box_mid_m[b]);
            add_mix(A, n, m, b, c, mu);
        }
        if (r == SL_STRAT_TROPICS) {
            size_t b = (size_t)m->box_of[r][k0];
            double mu = gx->tropopause_density[r] * kzz_at(p, m->tropopause_m[r]) * m->region_area_m2[r] /
                        (m->box_mid_m[b] - m->tropopause_m[r]);
            add_flow(A, n, trop, b, mu / m->box_air_kg[b]);
        }
    }
    if (with_photolysis)
        for (size_t b = 0; b < m->n_boxes; b++)
            if (gx->photolysis_rate[b] > 0.0)
                add_flow(A, n, m->n_boxes + SL_STRAT_SINK_PHOTOLYSIS, b, gx->photolysis_rate[b]);
}

/* Seasonal polar sink of calendar month CAL (0-11) into A (N x N). */
static void add_polar(const sl_strat_model *m, const geom_extra *gx, double *A, size_t n, int cal)
{
    const sl_strat_params *p = &m->par;
    size_t sink = m->n_boxes + SL_STRAT_SINK_POLAR_WINTER;
    for (size_t b = 0; b < m->n_boxes; b++) {
        /* start_month 0 (month unknown): the annual-mean rate in every month. */
        int annual = p->start_month == 0;
        double rate = 0.0;
        if (m->box_region[b] == SL_STRAT_SOUTH && (annual || antarctic_months[cal]) && p->antarctic_vortex_fraction > 0.0)
            rate = -log1p(-p->antarctic_vortex_fraction) / (annual ? SL_S_PER_YEAR : 4.0 * MONTH_S);
        else if (m->box_region[b] == SL_STRAT_NORTH && (annual || arctic_months[cal]) && p->arctic_vortex_fraction > 0.0)
            rate = -log1p(-p->arctic_vortex_fraction) / (annual ? SL_S_PER_YEAR : 3.0 * MONTH_S);
        if (rate > 0.0 && gx->psc_share[b] > 0.0)
            add_flow(A, n, sink, b, rate * gx->psc_share[b]);
    }
}

/* ------------------------------------------------------------------ diagnostics */

/* Mean age from the conserved-tracer matrix (n_boxes x n_boxes part of A, N = n). */
static int mean_age_from(const sl_strat_model *m, const double *A, size_t n, double *age_s, sl_err *e)
{
    size_t nb = m->n_boxes;
    gsl_matrix *M = gsl_matrix_alloc(nb, nb);
    gsl_vector *rhs = gsl_vector_alloc(nb), *x = gsl_vector_alloc(nb);
    gsl_permutation *perm = gsl_permutation_alloc(nb);
    int rc = SL_OK;
    if (!M || !rhs || !x || !perm) {
        rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "strat: out of memory for the age solve");
        goto done;
    }
    for (size_t i = 0; i < nb; i++) {
        for (size_t j = 0; j < nb; j++)
            gsl_matrix_set(M, i, j, A[i * n + j]);
        gsl_vector_set(rhs, i, -m->box_air_kg[i]);
    }
    int sign = 0;
    int st = gsl_linalg_LU_decomp(M, perm, &sign);
    if (st == GSL_SUCCESS)
        st = gsl_linalg_LU_solve(M, perm, rhs, x);
    if (st != GSL_SUCCESS) {
        rc = sl_err_set(e, SL_ENUMERIC, __func__, __LINE__, "strat: age-of-air solve failed: %s", gsl_strerror(st));
        goto done;
    }
    for (size_t i = 0; i < nb; i++) {
        age_s[i] = gsl_vector_get(x, i) / m->box_air_kg[i];
        if (!(age_s[i] > 0.0 && isfinite(age_s[i]))) {
            rc = sl_err_set(e, SL_ENUMERIC, __func__, __LINE__, "strat: non-physical mean age %g s in box %zu", age_s[i], i);
            goto done;
        }
    }
done:
    gsl_matrix_free(M);
    gsl_vector_free(rhs);
    gsl_vector_free(x);
    gsl_permutation_free(perm);
    return rc;
}

static int slowest_mode_from(const sl_strat_model *m, const double *A, size_t n, double *tau_s, sl_err *e)
{
    size_t nb = m->n_boxes;
    gsl_matrix *M = gsl_matrix_alloc(nb, nb);
    gsl_vector_complex *ev = gsl_vector_complex_alloc(nb);
    gsl_eigen_nonsymm_workspace *w = gsl_eigen_nonsymm_alloc(nb);
    int rc = SL_OK;
    if (!M || !ev || !w) {
        rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "strat: out of memory for the eigenvalues");
        goto done;
    }
    for (size_t i = 0; i < nb; i++)
        for (size_t j = 0; j < nb; j++)
            gsl_matrix_set(M, i, j, A[i * n + j]);
    int st = gsl_eigen_nonsymm(M, ev, w);
    if (st != GSL_SUCCESS) {
        rc = sl_err_set(e, SL_ENUMERIC, __func__, __LINE__, "strat: eigenvalues failed: %s", gsl_strerror(st));
        goto done;
    }
    double best = -INFINITY;
    for (size_t i = 0; i < nb; i++) {
        double re = GSL_REAL(gsl_vector_complex_get(ev, i));
        if (re > best)
            best = re;
    }
    if (!(best < 0.0)) {
        rc = sl_err_set(e, SL_ENUMERIC, __func__, __LINE__, "strat: transport has a non-decaying mode (%g 1/s)", best);
        goto done;
    }
    *tau_s = -1.0 / best;
done:
    gsl_matrix_free(M);
    gsl_vector_complex_free(ev);
    gsl_eigen_nonsymm_free(w);
    return rc;
}

/* The calibration targets from the model at its current parameters. */
static int diagnose(const sl_strat_model *m, const geom_extra *gx, double *A, size_t n, sl_strat_calibration *out,
                    sl_err *e)
{
    double age[SL_STRAT_MAX_BOXES];
    build_rates(m, gx, A, n, 0);
    SL_TRY_RETURN(e, mean_age_from(m, A, n, age, e));
    SL_TRY_RETURN(e, slowest_mode_from(m, A, n, &out->slowest_mode_s, e));
    /* Tropics at 20 km: linear in altitude between the tropical box centres. */
    double z_lo = -1.0, a_lo = 0.0, z_hi = -1.0, a_hi = 0.0;
    for (size_t b = 0; b < m->n_boxes; b++) {
        if (m->box_region[b] != SL_STRAT_TROPICS)
            continue;
        double z = m->box_mid_m[b];
        if (z <= 20.0e3 && (z_lo < 0.0 || z > z_lo)) {
            z_lo = z;
            a_lo = age[b];
        }
        if (z > 20.0e3 && (z_hi < 0.0 || z < z_hi)) {
            z_hi = z;
            a_hi = age[b];
        }
    }
    if (z_lo < 0.0 || z_hi < 0.0)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "strat: no tropical boxes around 20 km");
    out->age_tropics_20km_s = a_lo + (a_hi - a_lo) * (20.0e3 - z_lo) / (z_hi - z_lo);
    /* Extratropics 25-40 km, air-mass weighted. */
    double sa = 0.0, sm = 0.0;
    for (size_t b = 0; b < m->n_boxes; b++)
        if (m->box_region[b] != SL_STRAT_TROPICS && m->box_bottom_m[b] >= 25.0e3 - 1.0 && m->box_top_m[b] <= 40.0e3 + 1.0) {
            sa += age[b] * m->box_air_kg[b];
            sm += m->box_air_kg[b];
        }
    out->age_extratropics_25_40km_s = sa / sm;
    /* Tropical upwelling velocity F/(rho A_T) at the 20, 25 and 30 km edges. */
    double ws = 0.0;
    int nw = 0;
    for (size_t k = 0; k < m->n_layers; k++) {
        double z = m->layer_top_m[k];
        if (z >= 20.0e3 - 1.0 && z <= 30.0e3 + 1.0) {
            ws += upflux_top(m, k) / (gx->edge_density[SL_STRAT_TROPICS][k] * m->region_area_m2[SL_STRAT_TROPICS]);
            nw++;
        }
    }
    out->upwelling_20_30km_m_s = ws / nw;
    /* Misfits in units of half the published ranges. */
    double d1 = (out->age_tropics_20km_s / SL_S_PER_YEAR - 1.0) / 0.3;   /* "about 1 yr": +-0.3 (PRACTICE) */
    double d2 = (out->age_extratropics_25_40km_s / SL_S_PER_YEAR - 4.5) / 0.5; /* 4-5 yr */
    double d3 = (out->slowest_mode_s / SL_S_PER_YEAR - 4.55) / 0.75;     /* 3.8-5.3 yr */
    double d4 = (out->upwelling_20_30km_m_s - 0.3e-3) / 0.1e-3;          /* 0.2-0.4 mm/s */
    /* In-mixing of mid-latitude air into the tropical pipe within about 13.5
     * months (Volk et al. 1996, Science 272, 1763, SEEN): +-4 months (PRACTICE,
     * their number is one campaign's estimate). */
    double d5 = (m->par.inmixing_time_s / SL_S_PER_YEAR - 13.5 / 12.0) / (4.0 / 12.0);
    out->cost = d1 * d1 + d2 * d2 + d3 * d3 + d4 * d4 + d5 * d5;
    return SL_OK;
}

/* ------------------------------------------------------------------ model */

void sl_strat_model_free(sl_strat_model *m)
{
    if (m == NULL)
        return;
    free(m->rate);
    for (int c = 0; c < 12; c++)
        free(m->propagator[c]);
    free(m->fine_density_kg_m3);
    free(m->fine_room_kg_m3);
    m->rate = NULL;
    for (int c = 0; c < 12; c++)
        m->propagator[c] = NULL;
    m->fine_density_kg_m3 = m->fine_room_kg_m3 = NULL;
    m->n_boxes = m->n_aug = 0;
}

/* exp(A h) into P, cleaned: negatives from rounding set to 0, each column
 * renormalised to sum 1 (the exact propagator of a conservative Metzler
 * matrix is non-negative with unit column sums), and the columns of the
 * absorbing sink states (index >= N_BOXES, zero columns of A) set to unit
 * vectors, which they are exactly. */
static int propagator(const double *A, size_t n, size_t n_boxes, double h, double *P, sl_err *e)
{
    gsl_matrix *M = gsl_matrix_alloc(n, n), *E = gsl_matrix_alloc(n, n);
    if (!M || !E) {
        gsl_matrix_free(M);
        gsl_matrix_free(E);
        SL_FAIL_RETURN(e, SL_ENOMEM, "strat: out of memory for the propagator");
    }
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < n; j++)
            gsl_matrix_set(M, i, j, A[i * n + j] * h);
    int st = gsl_linalg_exponential_ss(M, E, GSL_PREC_DOUBLE);
    if (st != GSL_SUCCESS) {
        gsl_matrix_free(M);
        gsl_matrix_free(E);
        SL_FAIL_RETURN(e, SL_ENUMERIC, "strat: matrix exponential failed: %s", gsl_strerror(st));
    }
    for (size_t j = 0; j < n; j++) {
        double s = 0.0;
        for (size_t i = 0; i < n; i++) {
            double v = gsl_matrix_get(E, i, j);
            if (!isfinite(v)) {
                gsl_matrix_free(M);
                gsl_matrix_free(E);
                SL_FAIL_RETURN(e, SL_ENUMERIC, "strat: non-finite propagator entry (%zu, %zu)", i, j);
            }
            if (v < 0.0)
                v = 0.0;
            P[i * n + j] = v;
            s += v;
        }
        for (size_t i = 0; i < n; i++)
            P[i * n + j] = j < n_boxes ? P[i * n + j] / s : (i == j ? 1.0 : 0.0);
    }
    /* Store column-major (P[j * n + i] = element (i, j)) for the run loop. */
    for (size_t i = 0; i < n; i++)
        for (size_t j = i + 1; j < n; j++) {
            double t = P[i * n + j];
            P[i * n + j] = P[j * n + i];
            P[j * n + i] = t;
        }
    gsl_matrix_free(M);
    gsl_matrix_free(E);
    return SL_OK;
}

int sl_strat_model_init(sl_strat_model *m, const sl_strat_params *p, const sl_atmosphere *const atm[SL_STRAT_N_REGIONS],
                        sl_err *e)
{
    memset(m, 0, sizeof *m);
    SL_TRY_RETURN(e, sl_strat_params_check(p, e));
    m->par = *p;
    geom_extra gx;
    memset(&gx, 0, sizeof gx);
    int rc = build_geometry(m, atm, &gx, e);
    if (rc != SL_OK) {
        sl_strat_model_free(m);
        return sl_err_push(e, rc, __func__, __LINE__);
    }
    size_t n = m->n_aug = m->n_boxes + SL_STRAT_N_SINKS;
    m->rate = calloc(n * n, sizeof(double));
    double *A = calloc(n * n, sizeof(double));
    for (int c = 0; c < 12; c++)
        m->propagator[c] = calloc(n * n, sizeof(double));
    int ok = m->rate && A;
    for (int c = 0; c < 12; c++)
        ok = ok && m->propagator[c];
    if (!ok) {
        free(A);
        sl_strat_model_free(m);
        SL_FAIL_RETURN(e, SL_ENOMEM, "strat: out of memory for the rate matrices");
    }
    /* Slowest mode of the conserved tracer. */
    build_rates(m, &gx, A, n, 0);
    rc = slowest_mode_from(m, A, n, &m->slowest_mode_s, e);
    if (rc == SL_OK) {
        build_rates(m, &gx, m->rate, n, 1);
        /* Time grid: output step split into equal internal steps <= 1 month. */
        m->substeps = (size_t)ceil(p->step_s / MONTH_S - 1e-9);
        if (m->substeps < 1)
            m->substeps = 1;
        m->internal_step_s = p->step_s / (double)m->substeps;
        m->n_out = (size_t)floor(p->span_s / p->step_s + 1e-9) + 1;
        size_t n3 = (size_t)ceil(3.0 * SL_S_PER_YEAR / p->step_s - 1e-9) + 2;
        m->n_run = m->n_out > n3 ? m->n_out : n3;
        /* Months with the same seasonal sinks share one exponential
         * (2 or 3 distinct ones instead of 12). */
        int key[12];
        for (int c = 0; c < 12 && rc == SL_OK; c++) {
            key[c] = p->start_month == 0 ? 0
                                         : (antarctic_months[c] && p->antarctic_vortex_fraction > 0.0) +
                                               2 * (arctic_months[c] && p->arctic_vortex_fraction > 0.0);
            int same = -1;
            for (int d = 0; d < c && same < 0; d++)
                if (key[d] == key[c])
                    same = d;
            if (same >= 0) {
                memcpy(m->propagator[c], m->propagator[same], sizeof(double) * n * n);
                continue;
            }
            memcpy(A, m->rate, sizeof(double) * n * n);
            add_polar(m, &gx, A, n, c);
            rc = propagator(A, n, m->n_boxes, m->internal_step_s, m->propagator[c], e);
        }
    }
    free(A);
    if (rc != SL_OK) {
        sl_strat_model_free(m);
        return sl_err_push(e, rc, __func__, __LINE__);
    }
    return SL_OK;
}

int sl_strat_mean_age(const sl_strat_model *m, double *age_s, sl_err *e)
{
    /* Rebuild the conserved-tracer matrix from the model rates: drop photolysis. */
    size_t n = m->n_aug;
    double *A = malloc(sizeof(double) * n * n);
    if (!A)
        SL_FAIL_RETURN(e, SL_ENOMEM, "strat: out of memory for the age solve");
    memcpy(A, m->rate, sizeof(double) * n * n);
    size_t ph = m->n_boxes + SL_STRAT_SINK_PHOTOLYSIS;
    for (size_t b = 0; b < m->n_boxes; b++) {
        A[b * n + b] += A[ph * n + b];
        A[ph * n + b] = 0.0;
    }
    int rc = mean_age_from(m, A, n, age_s, e);
    free(A);
    if (rc != SL_OK)
        return sl_err_push(e, rc, __func__, __LINE__);
    return SL_OK;
}

/* ------------------------------------------------------------------ calibration */

typedef struct fit_ctx {
    sl_strat_model *m;
    const geom_extra *gx;
    double *A;
    size_t n;
    sl_strat_calibration last;
    int failed;
} fit_ctx;

enum { N_FREE = 3 };

/* The free constants from their fit coordinates: logit of the deep-branch
 * fraction, logarithms of the others. */
static void set_free_params(sl_strat_params *p, const double *lx)
{
    p->deep_branch_fraction = 1.0 / (1.0 + exp(-lx[0]));
    p->inmixing_time_s = exp(lx[1]);
    p->kzz_m2_s = exp(lx[2]);
}

static void get_free_params(const sl_strat_params *p, double *lx)
{
    lx[0] = log(p->deep_branch_fraction / (1.0 - p->deep_branch_fraction));
    lx[1] = log(p->inmixing_time_s);
    lx[2] = log(p->kzz_m2_s);
}

static double fit_cost(const gsl_vector *x, void *vctx)
{
    fit_ctx *c = vctx;
    double lx[N_FREE];
    for (int i = 0; i < N_FREE; i++)
        lx[i] = gsl_vector_get(x, (size_t)i);
    set_free_params(&c->m->par, lx);
    if (sl_strat_params_check(&c->m->par, NULL) != SL_OK)
        return 1e30;
    sl_err e = {0};
    if (diagnose(c->m, c->gx, c->A, c->n, &c->last, &e) != SL_OK) {
        c->failed = 1;
        return 1e30;
    }
    return c->last.cost;
}

/* Geometry-only model for diagnostics and the fit. */
static int geometry_model(sl_strat_model *m, const sl_strat_params *p, const sl_atmosphere *const atm[SL_STRAT_N_REGIONS],
                          geom_extra *gx, double **A, sl_err *e)
{
    memset(m, 0, sizeof *m);
    SL_TRY_RETURN(e, sl_strat_params_check(p, e));
    m->par = *p;
    memset(gx, 0, sizeof *gx);
    int rc = build_geometry(m, atm, gx, e);
    if (rc != SL_OK) {
        sl_strat_model_free(m);
        return sl_err_push(e, rc, __func__, __LINE__);
    }
    m->n_aug = m->n_boxes + SL_STRAT_N_SINKS;
    *A = malloc(sizeof(double) * m->n_aug * m->n_aug);
    if (!*A) {
        sl_strat_model_free(m);
        SL_FAIL_RETURN(e, SL_ENOMEM, "strat: out of memory");
    }
    return SL_OK;
}

int sl_strat_diagnose(const sl_strat_params *p, const sl_atmosphere *const atm[SL_STRAT_N_REGIONS],
                      sl_strat_calibration *out, sl_err *e)
{
    sl_strat_model m;
    geom_extra gx;
    double *A = NULL;
    SL_TRY_RETURN(e, geometry_model(&m, p, atm, &gx, &A, e));
    memset(out, 0, sizeof *out);
    int rc = diagnose(&m, &gx, A, m.n_aug, out, e);
    free(A);
    sl_strat_model_free(&m);
    if (rc != SL_OK)
        return sl_err_push(e, rc, __func__, __LINE__);
    return SL_OK;
}

int sl_strat_calibrate(const sl_strat_params *base, const sl_atmosphere *const atm[SL_STRAT_N_REGIONS],
                       sl_strat_params *out, sl_strat_calibration *cal, sl_err *e)
{
    sl_strat_model m;
    geom_extra gx;
    double *A = NULL;
    SL_TRY_RETURN(e, geometry_model(&m, base, atm, &gx, &A, e));
    fit_ctx ctx = {&m, &gx, A, m.n_aug, {0, 0, 0, 0, 0, 0}, 0};
    gsl_multimin_function f = {fit_cost, N_FREE, &ctx};
    gsl_vector *x = gsl_vector_alloc(N_FREE), *step = gsl_vector_alloc(N_FREE);
    gsl_multimin_fminimizer *s = gsl_multimin_fminimizer_alloc(gsl_multimin_fminimizer_nmsimplex2, N_FREE);
    int rc = SL_OK;
    if (!x || !step || !s) {
        rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "strat: out of memory for the calibration");
        goto done;
    }
    double lx0[N_FREE];
    get_free_params(base, lx0);
    for (int i = 0; i < N_FREE; i++)
        gsl_vector_set(x, (size_t)i, lx0[i]);
    gsl_vector_set_all(step, 0.3);
    int st = gsl_multimin_fminimizer_set(s, &f, x, step);
    size_t it = 0;
    /* Converged when the simplex is 1e-4 across in log space (0.01 % in each
     * constant), far below the spread of the published targets. */
    while (st == GSL_SUCCESS && it < 2000) {
        it++;
        st = gsl_multimin_fminimizer_iterate(s);
        if (st != GSL_SUCCESS)
            break;
        if (gsl_multimin_test_size(gsl_multimin_fminimizer_size(s), 1e-4) == GSL_SUCCESS)
            break;
    }
    if (st != GSL_SUCCESS || ctx.failed) {
        rc = sl_err_set(e, SL_ENUMERIC, __func__, __LINE__, "strat: calibration failed after %zu iterations: %s", it,
                        ctx.failed ? "a diagnostic failed" : gsl_strerror(st));
        goto done;
    }
    double lx[N_FREE];
    for (int i = 0; i < N_FREE; i++)
        lx[i] = gsl_vector_get(s->x, (size_t)i);
    *out = *base;
    set_free_params(out, lx);
    set_free_params(&m.par, lx);
    rc = diagnose(&m, &gx, A, m.n_aug, cal, e);
    cal->iterations = it;
done:
    gsl_vector_free(x);
    gsl_vector_free(step);
    gsl_multimin_fminimizer_free(s);
    free(A);
    sl_strat_model_free(&m);
    return rc;
}

/* ------------------------------------------------------------------ result */

void sl_strat_result_free(sl_strat_result *r)
{
    if (r == NULL)
        return;
    free(r->time_s);
    free(r->box_excess_kg);
    free(r->sink_kg);
    free(r->global_excess_kg);
    free(r->global_anomaly_mole_fraction);
    free(r->layer_anomaly_mole_fraction);
    free(r->global_column_kg_m2);
    free(r->local_column_kg_m2);
    free(r->percent_of_background);
    free(r->forcing_W_m2);
    free(r->early_time_s);
    free(r->early_area_m2);
    free(r->early_column_kg_m2);
    free(r->work);
    free(r->linear);
    memset(r, 0, sizeof *r);
}

int sl_strat_result_init(sl_strat_result *r, const sl_strat_model *m, sl_err *e)
{
    memset(r, 0, sizeof *r);
    size_t nt = m->n_run;
    r->n_run = nt;
    r->n_times = m->n_out;
    r->n_boxes = m->n_boxes;
    r->n_layers = m->n_layers;
    r->n_early = (size_t)floor(m->par.region_spread_time_s / SL_S_PER_DAY) + 1;
    r->time_s = calloc(nt, sizeof(double));
    r->box_excess_kg = calloc(nt * m->n_boxes, sizeof(double));
    r->sink_kg = calloc(nt * SL_STRAT_N_SINKS, sizeof(double));
    r->global_excess_kg = calloc(nt, sizeof(double));
    r->global_anomaly_mole_fraction = calloc(nt, sizeof(double));
    r->layer_anomaly_mole_fraction = calloc(nt * m->n_layers, sizeof(double));
    r->global_column_kg_m2 = calloc(nt, sizeof(double));
    r->local_column_kg_m2 = calloc(nt, sizeof(double));
    r->percent_of_background = calloc(nt, sizeof(double));
    r->forcing_W_m2 = calloc(nt, sizeof(double));
    r->early_time_s = calloc(r->n_early, sizeof(double));
    r->early_area_m2 = calloc(r->n_early, sizeof(double));
    r->early_column_kg_m2 = calloc(r->n_early, sizeof(double));
    r->work = calloc(2 * m->n_aug, sizeof(double));
    r->linear = calloc(nt * SL_STRAT_RESPONSE_ROWS, sizeof(double));
    if (!r->linear || !r->time_s || !r->box_excess_kg || !r->sink_kg || !r->global_excess_kg || !r->global_anomaly_mole_fraction ||
        !r->layer_anomaly_mole_fraction || !r->global_column_kg_m2 || !r->local_column_kg_m2 ||
        !r->percent_of_background || !r->forcing_W_m2 || !r->early_time_s || !r->early_area_m2 ||
        !r->early_column_kg_m2 || !r->work) {
        sl_strat_result_free(r);
        SL_FAIL_RETURN(e, SL_ENOMEM, "strat: out of memory for the results");
    }
    return SL_OK;
}

/* ------------------------------------------------------------------ run */

/* Area of the young cloud A0 at latitude LAT_DEG once it has spread round
 * the latitude circle (see the header comment): once per run, not at every
 * output time (a cosine and a square root). */
static double zonal_area(double a0, double lat_deg, double region_area)
{
    double width = sqrt(a0);
    double circle = 2.0 * SL_PI * SL_EARTH_MEAN_RADIUS_M * cos(sl_deg_to_rad(lat_deg));
    double a_zonal = width * circle;
    if (a_zonal < a0)
        a_zonal = a0;
    if (a_zonal > region_area)
        a_zonal = region_area;
    return a_zonal;
}

/* Area of the young cloud at time T (see the header comment); A_ZONAL from
 * zonal_area. */
static double cloud_area(const sl_strat_params *p, double a0, double a_zonal, double region_area, double t_s)
{
    if (t_s <= p->zonal_spread_time_s)
        return a0 + (a_zonal - a0) * t_s / p->zonal_spread_time_s;
    if (t_s <= p->region_spread_time_s)
        return a_zonal + (region_area - a_zonal) * (t_s - p->zonal_spread_time_s) /
                             (p->region_spread_time_s - p->zonal_spread_time_s);
    return region_area;
}

/* Water the cloud of area A0 can hold above background over [z0, z1] in region R (kg). */
static double cloud_room_kg(const sl_strat_model *m, int r, double a0, double z0, double z1)
{
    double room = 0.0, dz = m->fine_dz_m;
    const double *t = m->fine_room_kg_m3 + (size_t)r * m->n_fine;
    /* Trapezoid rule on the fine nodes, cells cut at z0 and z1. */
    if (!(z1 > z0))
        return 0.0;
    size_t i0 = (size_t)sl_max(0.0, floor(z0 / dz)), i1 = (size_t)sl_max(0.0, ceil(z1 / dz));
    if (i1 + 1 > m->n_fine)
        i1 = m->n_fine - 1;
    for (size_t i = i0; i < i1; i++) {
        double lo = (double)i * dz, hi = lo + dz;
        double a = sl_max(lo, z0), b = sl_min(hi, z1);
        if (b > a)
            room += 0.5 * (t[i] + t[i + 1]) * (b - a);
    }
    return room * a0;
}

/* Distribute MASS uniformly over [z0, z1] into region R's boxes of Y;
 * returns the part below the tropopause TP.  TP is the injection's own
 * tropopause when it has one (the plume stage's: one tropopause for the plume
 * stage and the box model, issue 12), else the region's.  Water above TP but
 * below the region's lowest box goes into that box, water above the top box
 * into the top box, so every kilogram above TP enters. */
static double place(const sl_strat_model *m, int r, double mass, double z0, double z1, double tp, double *y)
{
    double below = 0.0, width = z1 - z0;
    int top_box = -1, bottom_box = m->box_of[r][lowest_layer(m, r)];
    for (size_t k = m->n_layers; k-- > 0;)
        if (m->box_of[r][k] >= 0) {
            top_box = m->box_of[r][k];
            break;
        }
    if (z0 < tp)
        below += mass * (sl_min(z1, tp) - z0) / width;
    double za = sl_max(z0, tp); /* the part above the tropopause starts here */
    if (za >= z1)
        return below;
    double ztop = m->box_top_m[top_box], zbot = m->box_bottom_m[bottom_box];
    if (z1 > ztop)
        y[top_box] += mass * (z1 - sl_max(za, ztop)) / width;
    if (za < zbot)
        y[bottom_box] += mass * (sl_min(z1, zbot) - za) / width;
    for (size_t b = 0; b < m->n_boxes; b++) {
        if (m->box_region[b] != r)
            continue;
        double a = sl_max(za, m->box_bottom_m[b]), c = sl_min(z1, m->box_top_m[b]);
        if (c > a)
            y[b] += mass * (c - a) / width;
    }
    return below;
}

static void cold_point_clip(const sl_strat_model *m, double *y)
{
    int b = m->box_of[SL_STRAT_TROPICS][lowest_layer(m, SL_STRAT_TROPICS)];
    if (y[b] > m->cold_point_room_kg) {
        y[m->n_boxes + SL_STRAT_SINK_COLD_POINT] += y[b] - m->cold_point_room_kg;
        y[b] = m->cold_point_room_kg;
    }
}

/* The global series of row I from the excess Q (kg), the forcing F (W m-2)
 * and the excess per region COL (kg); the young cloud of area A0 (zonal area
 * A_ZONAL) in region CLOUD_REGION. */
static void record_series(const sl_strat_model *m, sl_strat_result *r, size_t i, double t_s, double q, double f,
                          const double col[SL_STRAT_N_REGIONS], double a0, double a_zonal, int cloud_region)
{
    r->time_s[i] = t_s;
    r->global_excess_kg[i] = q;
    r->global_anomaly_mole_fraction[i] = q / (m->reference_air_kg * mass_ratio());
    r->global_column_kg_m2[i] = q / SL_EARTH_AREA_M2;
    r->percent_of_background[i] = 100.0 * q / m->reference_background_kg;
    r->forcing_W_m2[i] = f;
    double local = 0.0;
    for (int g = 0; g < SL_STRAT_N_REGIONS; g++)
        local = sl_max(local, col[g] / m->region_area_m2[g]);
    if (a0 > 0.0 && t_s < m->par.region_spread_time_s)
        local = sl_max(local, q / cloud_area(&m->par, a0, a_zonal, m->region_area_m2[cloud_region], t_s));
    r->local_column_kg_m2[i] = local;
}

static void record(const sl_strat_model *m, sl_strat_result *r, size_t i, double t_s, const double *y, double a0,
                   double a_zonal, int cloud_region)
{
    size_t nb = m->n_boxes;
    double q = 0.0, f = 0.0;
    double col[SL_STRAT_N_REGIONS] = {0.0, 0.0, 0.0};
    for (size_t b = 0; b < nb; b++) {
        r->box_excess_kg[i * nb + b] = y[b];
        q += y[b];
        f += m->box_forcing_W_m2_per_kg[b] * y[b];
        col[m->box_region[b]] += y[b];
    }
    for (int s = 0; s < SL_STRAT_N_SINKS; s++)
        r->sink_kg[i * SL_STRAT_N_SINKS + s] = y[nb + s];
    for (size_t k = 0; k < m->n_layers; k++) {
        double qk = 0.0, mk = 0.0;
        for (int g = 0; g < SL_STRAT_N_REGIONS; g++)
            if (m->box_of[g][k] >= 0) {
                qk += y[m->box_of[g][k]];
                mk += m->box_air_kg[m->box_of[g][k]];
            }
        r->layer_anomaly_mole_fraction[i * m->n_layers + k] = qk / (mk * mass_ratio());
    }
    record_series(m, r, i, t_s, q, f, col, a0, a_zonal, cloud_region);
}

/* Q at time T by log-linear interpolation of the global excess (n points). */
static double excess_at(const sl_strat_result *r, size_t n, double t_s)
{
    for (size_t i = 1; i < n; i++) {
        if (r->time_s[i] >= t_s) {
            double q0 = r->global_excess_kg[i - 1], q1 = r->global_excess_kg[i];
            double w = (t_s - r->time_s[i - 1]) / (r->time_s[i] - r->time_s[i - 1]);
            if (q0 > 0.0 && q1 > 0.0)
                return q0 * pow(q1 / q0, w);
            return q0 + (q1 - q0) * w;
        }
    }
    return r->global_excess_kg[n - 1];
}

/* The calendar month (0-11) of time T_S after the event. */
static int calendar_month(const sl_strat_model *m, double t_s)
{
    int start = m->par.start_month > 0 ? m->par.start_month - 1 : 0;
    return (int)(((long)start + (long)floor(t_s / MONTH_S)) % 12);
}

/* OUT[0 .. 2 PAIRS) += C0 Y0 + C1 Y1 + C2 Y2 + C3 Y3, element by element in
 * that order: a trip count known to be even, so gcc -O2 packs it into
 * two-lane arithmetic (the same operations per element, the same bits; with
 * the odd length of the state it stayed scalar, and this loop is nearly all
 * of the linear response's set-up). */
static void add_columns4(size_t pairs, double *restrict out, const double *restrict c0, const double *restrict c1,
                         const double *restrict c2, const double *restrict c3, double y0, double y1, double y2,
                         double y3)
{
    for (size_t a = 0; a < 2 * pairs; a++)
        out[a] += c0[a] * y0 + c1[a] * y1 + c2[a] * y2 + c3[a] * y3;
}

/* Two passes of add_columns4 in one (columns C[0..3], then C[4..7]): OUT is
 * read and written once per eight columns, each element still getting
 * (OUT + the first four terms) + the next four, in the order of two passes. */
static void add_columns8(size_t pairs, double *restrict out, const double *restrict c0, size_t n,
                         const double *restrict y)
{
    const double *restrict c1 = c0 + n, *restrict c2 = c1 + n, *restrict c3 = c2 + n, *restrict c4 = c3 + n,
                           *restrict c5 = c4 + n, *restrict c6 = c5 + n, *restrict c7 = c6 + n;
    const double y0 = y[0], y1 = y[1], y2 = y[2], y3 = y[3], y4 = y[4], y5 = y[5], y6 = y[6], y7 = y[7];
    for (size_t a = 0; a < 2 * pairs; a++) {
        const double first = out[a] + (c0[a] * y0 + c1[a] * y1 + c2[a] * y2 + c3[a] * y3);
        out[a] = first + (c4[a] * y4 + c5[a] * y5 + c6[a] * y6 + c7[a] * y7);
    }
}

/* OUT = P Y for the augmented state (n values, the first NB boxes), as a sum
 * of columns (stored contiguously, so the inner loop vectorises; an odd last
 * element on its own, in the same order of operations).  The sink columns of
 * P are unit vectors: sinks keep their value plus what flows in. */
static void propagate(const double *P, size_t n, size_t nb, const double *y, double *restrict out)
{
    for (size_t a = 0; a < nb; a++) /* the boxes: sums of columns */
        out[a] = 0.0;
    for (size_t a = nb; a < n; a++) /* the sinks: their value, plus what flows in */
        out[a] = y[a];
    const size_t pairs = n / 2, last = n - 1;
    size_t b = 0;
    for (; b + 8 <= nb; b += 8) { /* eight columns per pass over OUT, summed as two groups of four */
        const double *restrict c0 = P + b * n;
        add_columns8(pairs, out, c0, n, y + b);
        if (n % 2)
            for (size_t g = 0; g < 8; g += 4)
                out[last] += c0[g * n + last] * y[b + g] + c0[(g + 1) * n + last] * y[b + g + 1] +
                             c0[(g + 2) * n + last] * y[b + g + 2] + c0[(g + 3) * n + last] * y[b + g + 3];
    }
    for (; b + 4 <= nb; b += 4) { /* four columns per pass over OUT */
        const double *restrict c0 = P + b * n, *restrict c1 = c0 + n, *restrict c2 = c1 + n,
                               *restrict c3 = c2 + n;
        const double y0 = y[b], y1 = y[b + 1], y2b = y[b + 2], y3 = y[b + 3];
        add_columns4(pairs, out, c0, c1, c2, c3, y0, y1, y2b, y3);
        if (n % 2)
            out[last] += c0[last] * y0 + c1[last] * y1 + c2[last] * y2b + c3[last] * y3;
    }
    for (; b < nb; b++) {
        const double *restrict col = P + b * n;
        const double yb = y[b];
        for (size_t a = 0; a < n; a++)
            out[a] += col[a] * yb;
    }
}

static int integrate(const sl_strat_model *m, sl_strat_result *r, double a0, double lat_deg, int rc_cloud, sl_err *e);

static int check_result(const sl_strat_model *m, const sl_strat_result *r, sl_err *e)
{
    if (r->n_boxes != m->n_boxes || r->n_run != m->n_run || r->work == NULL)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "strat: result was not initialised for this model");
    return SL_OK;
}

int sl_strat_run_boxes(const sl_strat_model *m, const double *box_kg, sl_strat_result *r, sl_err *e)
{
    SL_TRY_RETURN(e, check_result(m, r, e));
    memset(r->work, 0, sizeof(double) * 2 * m->n_aug);
    for (size_t b = 0; b < m->n_boxes; b++) {
        if (!(box_kg[b] >= 0.0 && isfinite(box_kg[b])))
            SL_FAIL_RETURN(e, SL_EDATA, "strat: box %zu mass %g kg must be finite and >= 0", b, box_kg[b]);
        r->work[b] = box_kg[b];
    }
    r->not_entered_kg = 0.0;
    SL_TRY_RETURN(e, integrate(m, r, 0.0, 0.0, SL_STRAT_TROPICS, e));
    r->has_detail = 1;
    return SL_OK;
}

/* Latitude: tropics, the hemisphere's extratropics (*RX), or a linear split
 * across the ramp around the edge: the tropical share of an injection at
 * LAT_DEG (the rest goes to *RX). */
static double latitude_split(const sl_strat_params *p, double lat_deg, int *rx)
{
    double alat = fabs(lat_deg), w_t;
    if (p->edge_ramp_deg > 0.0)
        w_t = sl_min(1.0, sl_max(0.0, (p->tropics_edge_deg + p->edge_ramp_deg - alat) / (2.0 * p->edge_ramp_deg)));
    else
        w_t = alat <= p->tropics_edge_deg ? 1.0 : 0.0;
    *rx = lat_deg < 0.0 ? SL_STRAT_SOUTH : SL_STRAT_NORTH;
    return w_t;
}

unsigned sl_strat_regions_of_latitude(const sl_strat_params *p, double latitude_deg)
{
    /* Exactly initial_state's choice: place() into the tropics when w_t > 0,
     * into the extratropics RX when w_t < 1, nowhere else. */
    int rx;
    const double w_t = latitude_split(p, latitude_deg, &rx);
    unsigned mask = 0;
    if (w_t > 0.0)
        mask |= 1u << SL_STRAT_TROPICS;
    if (w_t < 1.0)
        mask |= 1u << rx;
    return mask;
}

/* The state at t = 0 in r->work (boxes and sinks) for injection INJ: the
 * latitude split, the young cloud's area and (on request) its freeze-out,
 * the bands placed into the boxes.  *A0 and *RC_CLOUD get the cloud's area
 * and region. */
static int initial_state(const sl_strat_model *m, const sl_injection *inj, sl_strat_result *r, double *a0_out,
                         int *rc_out, sl_err *e)
{
    if (!(inj->latitude_deg >= -90.0 && inj->latitude_deg <= 90.0))
        SL_FAIL_RETURN(e, SL_EDATA, "strat: injection latitude %g deg is outside the valid range -90 to 90", inj->latitude_deg);
    if (!(inj->cloud_area_m2 >= 0.0 && inj->cloud_area_m2 <= SL_EARTH_AREA_M2))
        SL_FAIL_RETURN(e, SL_EDATA, "strat: cloud area %g m2 is outside the valid range 0 to %g", inj->cloud_area_m2,
                       SL_EARTH_AREA_M2);
    const sl_strat_params *p = &m->par;
    size_t nb = m->n_boxes, n = m->n_aug;
    double *y = r->work;
    memset(y, 0, sizeof(double) * 2 * n);

    int rx;
    const double w_t = latitude_split(p, inj->latitude_deg, &rx);
    int rc_cloud = w_t >= 0.5 ? SL_STRAT_TROPICS : rx;
    /* Cloud area: the profile's, else the default or the smallest area that
     * holds the water at ice saturation, whichever is larger.  Freeze-out
     * at t = 0 only on request (cloud_freeze_out): the injection stage has
     * already frozen out what its cloud could not hold, with its own rule
     * for the ice; a profile from a file is the settled injection unless
     * the user asks otherwise. */
    int freeze = p->cloud_freeze_out;
    double a0 = inj->cloud_area_m2 > 0.0 ? inj->cloud_area_m2 : p->default_cloud_area_m2;
    if (!freeze && !(inj->cloud_area_m2 > 0.0)) {
        double need = 0.0, tp = isfinite(inj->tropopause_altitude_m) ? inj->tropopause_altitude_m
                                                                     : m->tropopause_m[rc_cloud];
        for (size_t i = 0; i < inj->n_bands; i++) {
            double z0 = inj->band_bottom_m[i], z1 = inj->band_top_m[i];
            double water = inj->vapor_kg[i] + inj->ice_kg[i];
            if (z1 > tp && z1 > z0 && water > 0.0 && isfinite(water)) {
                double lo = sl_max(z0, tp);
                double room_m2 = cloud_room_kg(m, rc_cloud, 1.0, lo, z1);
                double area = room_m2 > 0.0 ? water * (z1 - lo) / (z1 - z0) / room_m2 : 0.0;
                need = sl_max(need, area);
            }
        }
        a0 = sl_max(a0, need);
    }
    a0 = sl_min(a0, m->region_area_m2[rc_cloud]);
    /* One tropopause: the injection's (the plume stage's) when it has one. */
    double tp_inj = inj->tropopause_altitude_m;
    double not_entered = 0.0, frozen = 0.0;
    for (size_t i = 0; i < inj->n_bands; i++) {
        double z0 = inj->band_bottom_m[i], z1 = inj->band_top_m[i];
        double water = inj->vapor_kg[i] + inj->ice_kg[i];
        if (!(inj->vapor_kg[i] >= 0.0 && inj->ice_kg[i] >= 0.0 && isfinite(water)))
            SL_FAIL_RETURN(e, SL_EDATA, "strat: injection band %zu (%g-%g m): masses must be finite and >= 0", i, z0, z1);
        if (!(z1 > z0))
            SL_FAIL_RETURN(e, SL_EDATA, "strat: injection band %zu has top %g m <= bottom %g m", i, z1, z0);
        if (water == 0.0)
            continue;
        /* Young-cloud freeze-out above the tropopause (the injection's). */
        double tp = isfinite(tp_inj) ? tp_inj : m->tropopause_m[rc_cloud];
        double keep = 1.0;
        if (freeze && z1 > tp) {
            double lo = sl_max(z0, tp);
            double above = water * (z1 - lo) / (z1 - z0);
            double room = cloud_room_kg(m, rc_cloud, a0, lo, z1);
            if (above > room) {
                frozen += above - room;
                keep = 1.0 - (above - room) / water;
            }
        }
        double wk = water * keep;
        if (w_t > 0.0)
            not_entered += place(m, SL_STRAT_TROPICS, wk * w_t, z0, z1,
                                 isfinite(tp_inj) ? tp_inj : m->tropopause_m[SL_STRAT_TROPICS], y);
        if (w_t < 1.0)
            not_entered += place(m, rx, wk * (1.0 - w_t), z0, z1, isfinite(tp_inj) ? tp_inj : m->tropopause_m[rx], y);
    }
    y[nb + SL_STRAT_SINK_CLOUD_FREEZE] = frozen;
    r->not_entered_kg = not_entered;
    *a0_out = a0;
    *rc_out = rc_cloud;
    return SL_OK;
}

int sl_strat_run(const sl_strat_model *m, const sl_injection *inj, sl_strat_result *r, sl_err *e)
{
    SL_TRY_RETURN(e, check_result(m, r, e));
    double a0 = 0.0;
    int rc_cloud = SL_STRAT_TROPICS;
    SL_TRY_RETURN(e, initial_state(m, inj, r, &a0, &rc_cloud, e));
    SL_TRY_RETURN(e, integrate(m, r, a0, inj->latitude_deg, rc_cloud, e));
    r->has_detail = 1;
    return SL_OK;
}

/* The scalar results from the recorded series (global excess, percent of
 * background, columns, forcing) of R, for an initial excess Q0 (kg) and the
 * young cloud (area A0, zonal area A_ZONAL, region). */
static void series_scalars(const sl_strat_model *m, sl_strat_result *r, double q0, double a0, double a_zonal,
                           int rc_cloud)
{
    const sl_strat_params *p = &m->par;
    size_t nr = m->n_run, no = m->n_out;
    r->efolding_s = 0.0;
    r->efolding_extrapolated = 0;
    r->mean_residence_s = 0.0;
    r->fraction_remaining_1y = r->fraction_remaining_3y = 0.0;
    if (q0 > 0.0) {
        double target = q0 * exp(-1.0);
        int found = 0;
        for (size_t i = 1; i < nr && !found; i++) {
            double qa = r->global_excess_kg[i - 1], qb = r->global_excess_kg[i];
            if (qb <= target) {
                double ta = r->time_s[i - 1], tb = r->time_s[i];
                r->efolding_s = (qa > 0.0 && qb > 0.0) ? ta + (tb - ta) * log(qa / target) / log(qa / qb)
                                                       : ta + (tb - ta) * (qa - target) / (qa - qb);
                found = 1;
            }
        }
        /* Tail rate from the last year (or the last step when shorter). */
        size_t back = (size_t)ceil(SL_S_PER_YEAR / p->step_s);
        if (back >= nr)
            back = nr - 1;
        double qe = r->global_excess_kg[nr - 1], qs = r->global_excess_kg[nr - 1 - back];
        double lambda = (qe > 0.0 && qs > qe) ? log(qs / qe) / (r->time_s[nr - 1] - r->time_s[nr - 1 - back]) : 0.0;
        if (!found) {
            r->efolding_extrapolated = 1;
            r->efolding_s = lambda > 0.0 ? r->time_s[nr - 1] + log(qe / target) / lambda : r->time_s[nr - 1];
        }
        double integral = 0.0;
        for (size_t i = 1; i < nr; i++)
            integral += 0.5 * (r->global_excess_kg[i - 1] + r->global_excess_kg[i]) * (r->time_s[i] - r->time_s[i - 1]);
        if (lambda > 0.0)
            integral += qe / lambda;
        r->mean_residence_s = integral / q0;
        r->fraction_remaining_1y = excess_at(r, nr, SL_S_PER_YEAR) / q0;
        r->fraction_remaining_3y = excess_at(r, nr, 3.0 * SL_S_PER_YEAR) / q0;
    }
    r->percent_of_background_peak = r->peak_global_anomaly_mole_fraction = 0.0;
    r->peak_global_column_kg_m2 = r->peak_local_column_kg_m2 = r->forcing_indicator_W_m2 = 0.0;
    for (size_t i = 0; i < no; i++) {
        r->percent_of_background_peak = sl_max(r->percent_of_background_peak, r->percent_of_background[i]);
        r->peak_global_anomaly_mole_fraction =
            sl_max(r->peak_global_anomaly_mole_fraction, r->global_anomaly_mole_fraction[i]);
        r->peak_global_column_kg_m2 = sl_max(r->peak_global_column_kg_m2, r->global_column_kg_m2[i]);
        r->peak_local_column_kg_m2 = sl_max(r->peak_local_column_kg_m2, r->local_column_kg_m2[i]);
        r->forcing_indicator_W_m2 = sl_max(r->forcing_indicator_W_m2, r->forcing_W_m2[i]);
    }
    /* Early phase, daily. */
    for (size_t i = 0; i < r->n_early; i++) {
        double t = (double)i * SL_S_PER_DAY;
        double a = a0 > 0.0 ? cloud_area(p, a0, a_zonal, m->region_area_m2[rc_cloud], t) : SL_EARTH_AREA_M2;
        r->early_time_s[i] = t;
        r->early_area_m2[i] = a;
        r->early_column_kg_m2[i] = excess_at(r, nr, t) / a;
        r->peak_local_column_kg_m2 = sl_max(r->peak_local_column_kg_m2, r->early_column_kg_m2[i]);
    }
}

/* Integrate from the state in r->work (boxes and sinks at t = 0) and fill
 * every output of R.  A0 <= 0: no young cloud (local column from the regions). */
static int integrate(const sl_strat_model *m, sl_strat_result *r, double a0, double lat_deg, int rc_cloud, sl_err *e)
{
    const sl_strat_params *p = &m->par;
    size_t nb = m->n_boxes, n = m->n_aug;
    double *y = r->work, *y2 = r->work + n;
    const double a_zonal = zonal_area(a0, lat_deg, m->region_area_m2[rc_cloud]);
    cold_point_clip(m, y);
    double injected = 0.0;
    for (size_t j = 0; j < n; j++)
        injected += y[j];
    r->injected_kg = injected;
    double q0 = 0.0;
    for (size_t b = 0; b < nb; b++)
        q0 += y[b];
    r->initial_excess_kg = q0;

    /* Integrate. */
    double h = m->internal_step_s;
    double worst = 0.0;
    record(m, r, 0, 0.0, y, a0, a_zonal, rc_cloud);
    /* Nothing above the tropopause (no water entered): the state stays zero,
     * so the propagator products are skipped (0 * P = 0 exactly). */
    int empty = injected == 0.0;
    for (size_t i = 1; i < m->n_run; i++) {
        for (size_t s = 0; s < m->substeps && !empty; s++) {
            double tmid = ((double)((i - 1) * m->substeps + s) + 0.5) * h;
            propagate(m->propagator[calendar_month(m, tmid)], n, nb, y, y2);
            double *tmp = y;
            y = y2;
            y2 = tmp;
            cold_point_clip(m, y);
        }
        record(m, r, i, (double)i * p->step_s, y, a0, a_zonal, rc_cloud);
        double tot = 0.0;
        for (size_t j = 0; j < n; j++) {
            if (y[j] < 0.0)
                SL_FAIL_RETURN(e, SL_EINTERNAL, "strat: negative mass %g kg in state %zu at step %zu", y[j], j, i);
            tot += y[j];
        }
        if (injected > 0.0)
            worst = sl_max(worst, fabs(tot - injected) / injected);
    }
    r->budget_max_rel_error = worst;
    /* Conservation to rounding: 1e-12 allows ~1e4 roundings of 1e-16 (PRACTICE). */
    if (worst > 1e-12)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "strat: mass budget off by %.3g of the injection", worst);

    series_scalars(m, r, q0, a0, a_zonal, rc_cloud);
    return SL_OK;
}

int sl_strat_params_equal(const sl_strat_params *a, const sl_strat_params *b)
{
    /* A new field must be added here too: the static assertion below counts
     * the struct's size as 20 doubles and 2 ints (with padding). */
#define SAME(f) if (a->f != b->f) return 0
    SAME(upflux_tropopause_kg_s);
    SAME(deep_branch_fraction);
    SAME(inmixing_time_s);
    SAME(kzz_m2_s);
    SAME(lms_residence_s);
    SAME(tropics_edge_deg);
    SAME(edge_ramp_deg);
    SAME(cold_point_saturation_ratio);
    SAME(antarctic_vortex_fraction);
    SAME(arctic_vortex_fraction);
    SAME(photolysis_lifetime_70km_s);
    SAME(photolysis_scale_height_m);
    SAME(photolysis_bottom_m);
    SAME(default_cloud_area_m2);
    SAME(cloud_freeze_out);
    SAME(zonal_spread_time_s);
    SAME(region_spread_time_s);
    SAME(forcing_W_m2_per_mole_fraction);
    SAME(forcing_scale_height_m);
    SAME(span_s);
    SAME(step_s);
    SAME(start_month);
#undef SAME
    return 1;
}
_Static_assert(sizeof(sl_strat_params) == 20 * sizeof(double) + 2 * sizeof(double),
               "sl_strat_params changed: update sl_strat_params_equal");

/* ------------------------------------------------------------------ linear response */

/* Rows of the response: what record_series needs, plus the total mass. */
enum { RESP_EXCESS = 0, RESP_FORCING, RESP_REGION0, RESP_TOTAL = RESP_REGION0 + SL_STRAT_N_REGIONS, RESP_ROWS };
_Static_assert((int)RESP_ROWS == (int)SL_STRAT_RESPONSE_ROWS, "SL_STRAT_RESPONSE_ROWS");

void sl_strat_response_free(sl_strat_response *rs)
{
    if (rs == NULL)
        return;
    free(rs->rows);
    free(rs->clip);
    free(rs->clip_max);
    memset(rs, 0, sizeof *rs);
}

/* Between the clips the model is y(t_i) = P_i ... P_1 y(0), linear in the
 * t = 0 state: integrate a unit mass from each box once and keep the rows
 * the outputs need (excess, forcing, excess per region, total) at every
 * output time, and the tropical bottom box after every internal step (to
 * tell whether the cold-point clip would act). */
int sl_strat_response_init(sl_strat_response *rs, const sl_strat_model *m, sl_err *e)
{
    SL_TRY_RETURN(e, sl_strat_response_init_regions(rs, m, SL_STRAT_ALL_REGIONS, e));
    return SL_OK;
}

int sl_strat_response_covers(const sl_strat_response *rs, double latitude_deg)
{
    return (sl_strat_regions_of_latitude(&rs->par, latitude_deg) & ~rs->regions) == 0;
}

/* Each column is the integration of a unit mass from its own box alone, so
 * leaving out the columns of boxes an injection cannot reach changes none
 * of the others; those stay zero (and meet zero masses in the products). */
int sl_strat_response_init_regions(sl_strat_response *rs, const sl_strat_model *m, unsigned regions, sl_err *e)
{
    memset(rs, 0, sizeof *rs);
    size_t nb = m->n_boxes, n = m->n_aug, nr = m->n_run, ns = (nr - 1) * m->substeps;
    rs->n_boxes = nb;
    rs->n_run = nr;
    rs->n_steps = ns;
    rs->par = m->par;
    rs->regions = regions & SL_STRAT_ALL_REGIONS;
    rs->rows = calloc(nr * RESP_ROWS * nb, sizeof(double));
    rs->clip = calloc((ns ? ns : 1) * nb, sizeof(double));
    rs->clip_max = calloc(nb ? nb : 1, sizeof(double));
    double *y = calloc(2 * n, sizeof(double));
    if (!rs->rows || !rs->clip || !rs->clip_max || !y) {
        free(y);
        sl_strat_response_free(rs);
        SL_FAIL_RETURN(e, SL_ENOMEM, "strat: out of memory for the linear response");
    }
    int bt = m->box_of[SL_STRAT_TROPICS][lowest_layer(m, SL_STRAT_TROPICS)];
    double h = m->internal_step_s;
    for (size_t b = 0; b < nb; b++) {
        if (!(rs->regions & (1u << m->box_region[b])))
            continue;
        double *u = y, *u2 = y + n;
        memset(y, 0, 2 * n * sizeof(double));
        u[b] = 1.0;
        rs->clip_max[b] = u[bt];
        for (size_t i = 0; i < nr; i++) {
            if (i > 0)
                for (size_t s = 0; s < m->substeps; s++) {
                    size_t k = (i - 1) * m->substeps + s;
                    propagate(m->propagator[calendar_month(m, ((double)k + 0.5) * h)], n, nb, u, u2);
                    double *t = u;
                    u = u2;
                    u2 = t;
                    rs->clip[k * nb + b] = u[bt];
                    rs->clip_max[b] = sl_max(rs->clip_max[b], u[bt]);
                }
            /* Column b of the response (what a unit mass in box b gives). */
            double *row = rs->rows + b * nr * RESP_ROWS + i * RESP_ROWS;
            double q = 0.0, f = 0.0, tot = 0.0;
            for (size_t a = 0; a < nb; a++) {
                q += u[a];
                f += m->box_forcing_W_m2_per_kg[a] * u[a];
                row[RESP_REGION0 + (size_t)m->box_region[a]] += u[a];
            }
            for (size_t a = 0; a < n; a++)
                tot += u[a];
            row[RESP_EXCESS] = q;
            row[RESP_FORCING] = f;
            row[RESP_TOTAL] = tot;
        }
    }
    free(y);
    return SL_OK;
}

/* OUT += A COL over 2 PAIRS values: restrict and of even length, so gcc -O2
 * turns it into packed two-lane arithmetic (the same operations per
 * element, the same bits; a trip count it cannot tell is even keeps it
 * scalar). */
static void add_scaled(size_t pairs, double *restrict out, const double *restrict col, double a)
{
    for (size_t k = 0; k < 2 * pairs; k++)
        out[k] += col[k] * a;
}
_Static_assert(RESP_ROWS % 2 == 0, "add_scaled runs over pairs of the response's rows");

static double dot(const double *restrict a, const double *restrict b, size_t n)
{
    double s = 0.0;
    for (size_t i = 0; i < n; i++)
        s += a[i] * b[i];
    return s;
}

/* 1 when the cold-point clip would act on the state Y at t = 0 or after
 * some internal step: the bound from each box's largest share first (one
 * dot product), the steps one by one only when the bound allows it. */
static int would_clip(const sl_strat_model *m, const sl_strat_response *rs, const double *y)
{
    int bt = m->box_of[SL_STRAT_TROPICS][lowest_layer(m, SL_STRAT_TROPICS)];
    double room = m->cold_point_room_kg;
    size_t nb = m->n_boxes;
    if (y[bt] > room)
        return 1;
    if (dot(rs->clip_max, y, nb) <= room)
        return 0;
    for (size_t k = 0; k < rs->n_steps; k++)
        if (dot(rs->clip + k * nb, y, nb) > room)
            return 1;
    return 0;
}

int sl_strat_run_linear(const sl_strat_model *m, const sl_strat_response *rs, const sl_injection *inj,
                        sl_strat_result *r, sl_err *e)
{
    SL_TRY_RETURN(e, check_result(m, r, e));
    if (rs->rows == NULL || rs->n_boxes != m->n_boxes || rs->n_run != m->n_run ||
        !sl_strat_params_equal(&rs->par, &m->par))
        SL_FAIL_RETURN(e, SL_EINTERNAL, "strat: the linear response was not built for this model");
    double a0 = 0.0;
    int rc_cloud = SL_STRAT_TROPICS;
    SL_TRY_RETURN(e, initial_state(m, inj, r, &a0, &rc_cloud, e));
    if (!sl_strat_response_covers(rs, inj->latitude_deg))
        SL_FAIL_RETURN(e, SL_EINTERNAL, "strat: the linear response lacks the regions of latitude %g deg",
                       inj->latitude_deg);
    size_t nb = m->n_boxes, n = m->n_aug;
    const double *y = r->work;
    double q0 = 0.0, sinks0 = 0.0;
    for (size_t b = 0; b < nb; b++)
        q0 += y[b];
    for (size_t j = nb; j < n; j++)
        sinks0 += y[j];
    if (!(q0 > 0.0) || would_clip(m, rs, y)) {
        /* Nothing entered (the direct path skips the products), or the
         * cold point clips: the direct integration. */
        SL_TRY_RETURN(e, integrate(m, r, a0, inj->latitude_deg, rc_cloud, e));
        r->has_detail = 1;
        return SL_OK;
    }
    double injected = q0 + sinks0, worst = 0.0;
    r->injected_kg = injected;
    r->initial_excess_kg = q0;
    /* All rows at once, R y as a sum of the response's columns (contiguous,
     * so the inner loop vectorises); boxes without water are skipped. */
    size_t nk = m->n_run * RESP_ROWS;
    double *out = r->linear;
    memset(out, 0, nk * sizeof *out);
    for (size_t b = 0; b < nb; b++) {
        const double yb = y[b];
        if (yb == 0.0)
            continue;
        add_scaled(m->n_run * (RESP_ROWS / 2), out, rs->rows + b * nk, yb);
    }
    const double a_zonal = zonal_area(a0, inj->latitude_deg, m->region_area_m2[rc_cloud]);
    for (size_t i = 0; i < m->n_run; i++) {
        const double *row = out + i * RESP_ROWS;
        double q = i == 0 ? q0 : row[RESP_EXCESS];
        double f = row[RESP_FORCING];
        double col[SL_STRAT_N_REGIONS];
        for (int g = 0; g < SL_STRAT_N_REGIONS; g++)
            col[g] = row[RESP_REGION0 + (size_t)g];
        double tot = row[RESP_TOTAL] + sinks0;
        record_series(m, r, i, (double)i * m->par.step_s, q, f, col, a0, a_zonal, rc_cloud);
        worst = sl_max(worst, fabs(tot - injected) / injected);
    }
    r->budget_max_rel_error = worst;
    if (worst > 1e-12)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "strat: mass budget off by %.3g of the injection", worst);
    series_scalars(m, r, q0, a0, a_zonal, rc_cloud);
    r->has_detail = 0;
    return SL_OK;
}
