/* atmosphere: vertical profiles of the background atmosphere.
 *
 * A profile is a table on geometric altitude z (m): temperature T (K),
 * pressure p (Pa), moist-air density rho (kg m-3), water-vapour mole fraction
 * x (mol/mol) and the squared buoyancy frequency N^2 (s-2).  Between levels it
 * is interpolated with monotone Steffen splines (Steffen 1990, A&A 239, 443;
 * GSL gsl_interp_steffen): T and x directly, p as ln p.  Steffen splines are
 * C1 and never overshoot the data, so N^2 is continuous for the plume ODEs and
 * x never goes negative.  Density is recomputed at a query from the
 * interpolated p, T and x (Dalton's law), so interpolated states are always
 * in the ideal-gas equation of state.
 *
 *   N^2 = (g/T) (dT/dz + g/cp)          (dry air, cp = 1004.64 J/kg/K)
 *   g(z) = g0 (r0 / (r0 + z))^2         (inverse-square, USSA76 g0 and r0)
 *   dp/dz = -rho g                      (hydrostatic balance)
 *
 * U.S. Standard Atmosphere 1976 (NOAA-S/T 76-1562): computed from its defining
 * constants (g0, R*, M0, r0, P0, T0) and its seven layers linear in
 * geopotential height H = r0 z/(r0 + z) up to 84.852 km (z = 86 km), with the
 * kinetic temperature T = T_M (M/M0) from the standard's molar-mass ratio
 * table between 80 and 86 km, and from 86 to 1000 km by the standard's own
 * upper-atmosphere definition (temperature segments and the diffusion
 * equations of N2, O, O2, Ar, He and H; see "above 86 km" below).  `us1976`
 * is the dry standard exactly (sea-level density 1.2250 kg/m3);
 * `us1976-humid` is its temperature and pressure with the background water
 * model below.
 *
 * Every profile carries the mean molar mass of its dry air: M0 to 80 km and
 * the standard's above (the composition of the air above the homopause is
 * the standard's for every profile read from a file or built in, since a
 * temperature and pressure column does not bring one); density and the
 * hydrostatic integration use it.
 *
 * Climate-zone profiles (tropical, mid-latitude summer and winter, sub-arctic
 * summer and winter) are our own piecewise-linear temperature profiles in
 * geometric altitude through a few nodes read from the AFGL reference
 * atmospheres (Anderson et al. 1986, AFGL-TR-86-0110; tables seen in the
 * pyrtlib transcription of those tables; see docs/references.md):
 * surface, tropopause, stratopause, mesopause and 120 km; above 120 km the
 * standard's thermosphere form T_inf - (T_inf - T120) exp(-lambda xi) from
 * the zone's own 120 km temperature (T_inf = 1000 K, lambda = 0.01875/km).
 * Pressure is integrated hydrostatically (moist air, the standard's molar
 * mass above 80 km, 4th-order Runge-Kutta, 4 steps per level) from the AFGL
 * surface pressure, to 1000 km.
 *
 * Background water (used when a profile does not bring its own):
 *  - troposphere: the fixed relative-humidity profile of Manabe & Wetherald
 *    (1967, J. Atmos. Sci. 24, 241), RH = 0.77 (p/ps - 0.02)/(1 - 0.02),
 *    over liquid water, capped at ice saturation below 273.16 K and never below
 *    the stratospheric entry value;
 *  - stratosphere: H2O = 7.4 ppmv - 2 CH4 (Hurst et al. 1999, JGR 104, 8191:
 *    H2O + 2 CH4 = 7.4 +- 0.5 ppmv, entry H2O 4.0 +- 0.3 ppmv, so entry CH4
 *    1.7 ppmv), with the oxidised fraction of methane growing with height
 *    above the tropopause dz as f = 1 - exp(-(dz/35 km)^2).  The 35 km scale
 *    is our fit to the AFGL water profiles (tropical 5.2 ppmv at 40 km and
 *    6.0 at 50 km, mid-latitude summer 4.7 ppmv at 30 km, all reproduced to
 *    0.1-0.2 ppmv);
 *  - mesosphere: above the stratopause the mixing ratio falls (photolysis)
 *    by the factor the AFGL tropical profile shows at the same height above
 *    its stratopause (50 km: 6.0 ppmv; 60 km 6.0, 65 km 5.4, 70 km 4.5, 75 km
 *    3.3, 80 km 2.1, 85 km 1.3, 90 km 0.85, 95 km 0.54, 100 km 0.40, 120 km
 *    0.20 ppmv; SEEN in the pyrtlib transcription), log-linear in between;
 *  - everywhere capped at saturation (ice below 273.16 K).
 *
 * Markers: the tropopause by the WMO (1957) lapse-rate rule: the lowest level
 * at or above 500 hPa (the 500 hPa floor, as in Reichler et al. 2003, keeps
 * surface inversions out) where the lapse rate falls to 2 K/km or less and the
 * mean lapse rate between it and every level within the next 2 km stays at or
 * below 2 K/km; the cold point (lowest temperature at or above 500 hPa and
 * below 30 km); the stratopause (highest temperature between the tropopause
 * and 70 km).  The background stratospheric water column is the vapour mass
 * per area between tropopause and stratopause (Simpson's rule on the
 * interpolants, 2 panels per level interval), and the burden that column
 * times the Earth's area. */
#include "atmosphere_internal.h"

#include "steamloft/units.h"
#include "steamloft/water.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* The interpolants: per level interval i, the Steffen cubic coefficients
 * (a, b, c, d: y = d + t (c + t (b + t a)), t = z - z_i) of temperature,
 * ln p and the water mole fraction, interleaved so one query reads one
 * cache line or two.  They are computed exactly as GSL's gsl_interp_steffen
 * computes its own (Steffen 1990; tests/test_atmosphere.c checks our values
 * bit for bit against gsl_interp_eval), and of the dry-air molar mass, but
 * evaluated here without the
 * library's per-call dispatch, with one interval search for all three and
 * the search position kept in a caller-owned sl_atmos_cursor. */
enum { SPL_T = 0, SPL_LNP = 4, SPL_X = 8, SPL_M = 12, SPL_STRIDE = 16 };
struct sl_atmosphere_splines {
    double *coef;            /* SPL_STRIDE per interval, n - 1 intervals */
    double *log_pressure_Pa; /* ln p at the levels */
    /* Start of the interval search: cell k of a uniform grid of step
     * 1/lut_inv_dz_m from the lowest level holds the interval of the cell's
     * lower edge, so a query walks up at most a level or two from there. */
    size_t *lut;
    size_t n_lut;
    double lut_inv_dz_m;
    /* Air-mass moments of cells: the level intervals, those wider than
     * MASS_NODE_DZ_M cut into equal cells (mass_sub[i] cells in interval i,
     * the first of them cell mass_node[i]); mass0 the integral of rho dz over
     * a cell, mass1 of z rho dz (sl_atmosphere_layer_mass).  Each cell lies
     * inside one interval, where the interpolants are polynomials.  Cells,
     * not running sums: a thin layer high up is then not the difference of
     * two sums over the whole column below it. */
    double *mass0, *mass1;
    size_t *mass_node, *mass_sub;
};

/* Largest node spacing of the mass-moment tables (m). */
#define MASS_NODE_DZ_M 500.0

const char *const sl_atmosphere_builtin_names[] = {
    "us1976",           "us1976-humid",     "tropical",         "midlatitude-summer", "midlatitude-winter",
    "subarctic-summer", "subarctic-winter", NULL};

/* ---- constants ---------------------------------------------------------- */

#define GMR_K_M (SL_USSA_G0_M_S2 * SL_USSA_M0_KG_KMOL / SL_USSA_RSTAR_J_KMOL_K) /* g0 M0 / R*, K/m */
#define R_DRY_USSA (SL_USSA_RSTAR_J_KMOL_K / SL_USSA_M0_KG_KMOL)              /* 287.053 J/kg/K */
/* Built-in level grid: 250 m to 150 km, 1 km to 300 km, 5 km to 1000 km. */
#define BUILTIN_TOP_M 1000000.0

/* Background water model parameters (sources in the file comment). */
#define RH_SURFACE 0.77            /* Manabe & Wetherald 1967 */
#define RH_Q_TOP 0.02              /* p/ps where their RH reaches zero */
#define H2O_ENTRY 4.0e-6           /* Hurst et al. 1999 */
#define H2O_TOTAL_HYDROGEN 7.4e-6  /* H2O + 2 CH4, Hurst et al. 1999 */
#define CH4_OXIDATION_SCALE_M 35.0e3

/* Mesospheric decline: ratio of the AFGL tropical water mixing ratio to its
 * stratopause value (6.0 ppmv at 50 km), every 5 km above the stratopause
 * from 0 to 50 km, and at 70 km (120 km). */
static const double meso_ratio[12] = {1.0,        1.0,         1.0,         0.9,          0.75,
                                      0.55,       0.35,        1.3 / 6.0,   0.85 / 6.0,   0.54 / 6.0,
                                      0.40 / 6.0, 0.20 / 6.0};
static double meso_factor(double dz_m)
{
    const double u = dz_m / 5000.0;
    if (u >= 10.0) {
        const double f = fmin((u - 10.0) / 4.0, 1.0); /* 50 -> 70 km above */
        return exp(log(meso_ratio[10]) + f * (log(meso_ratio[11]) - log(meso_ratio[10])));
    }
    const int i = (int)u;
    const double f = u - i;
    return exp(log(meso_ratio[i]) + f * (log(meso_ratio[i + 1]) - log(meso_ratio[i])));
}

double sl_atmosphere_gravity_m_s2(double altitude_m)
{
    const double r = SL_USSA_R0_M / (SL_USSA_R0_M + altitude_m);
    return SL_USSA_G0_M_S2 * r * r;
}

/* ---- U.S. Standard Atmosphere 1976 -------------------------------------- */

/* Layer bases in geopotential metres and lapse rates in K per geopotential
 * metre (NOAA-S/T 76-1562 Table 4; SEEN). */
static const double ussa_hb_m[8] = {0.0, 11000.0, 20000.0, 32000.0, 47000.0, 51000.0, 71000.0, 84852.0};
static const double ussa_lapse_K_m[7] = {-6.5e-3, 0.0, 1.0e-3, 2.8e-3, 0.0, -2.8e-3, -2.0e-3};

/* Molar-mass ratio M/M0 at 80.0, 80.5, ..., 86.0 km geometric (USSA76 Table 8;
 * from memory, consistent with the 186.87 K at 86 km seen in the notes). */
static const double ussa_m_ratio[13] = {1.000000, 0.999996, 0.999989, 0.999971, 0.999941,
                                        0.999909, 0.999870, 0.999829, 0.999786, 0.999741,
                                        0.999694, 0.999641, 0.999579};

/* Molecular-scale temperature and pressure at geopotential H (m), H in
 * [0, 84852]: base values are computed by chaining the layers from P0, T0. */
static void ussa_molecular(double h_m, double *tm_K, double *p_Pa)
{
    double tb = SL_USSA_T0_K, pb = SL_USSA_P0_PA;
    int k = 0;
    for (; k < 6; k++) {
        if (h_m < ussa_hb_m[k + 1])
            break;
        const double dh = ussa_hb_m[k + 1] - ussa_hb_m[k];
        const double l = ussa_lapse_K_m[k];
        const double tn = tb + l * dh;
        pb = l == 0.0 ? pb * exp(-GMR_K_M * dh / tb) : pb * pow(tb / tn, GMR_K_M / l);
        tb = tn;
    }
    const double dh = h_m - ussa_hb_m[k];
    const double l = ussa_lapse_K_m[k];
    const double t = tb + l * dh;
    *tm_K = t;
    *p_Pa = l == 0.0 ? pb * exp(-GMR_K_M * dh / tb) : pb * pow(tb / t, GMR_K_M / l);
}

/* ---- U.S. Standard Atmosphere 1976 above 86 km ---------------------------
 *
 * NOAA-S/T 76-1562, part 1, sections 1.2.5-1.3 (equations quoted by number
 * from the standard's own text as we know it; the constants below are its
 * Tables 5-9).  Kinetic temperature in five geometric-altitude segments
 * (Z7..Z12 = 86, 91, 110, 120, 500, 1000 km): isothermal 186.8673 K to 91 km;
 * the ellipse T = Tc + A sqrt(1 - ((Z - 91 km)/a)^2) to 110 km (Tc =
 * 263.1905 K, A = -76.3232 K, a = -19.9429 km); +12 K/km to 120 km; above,
 * T = T_inf - (T_inf - T10) exp(-lambda xi), xi = (Z - Z10)(r0 + Z10)/(r0 + Z),
 * T_inf = 1000 K, T10 = 360 K, lambda = 0.01875 per km.
 *
 * Number densities of N2, O, O2, Ar and He from 86 km (Table 9 values) by
 * the standard's diffusion equation for species i,
 *   d ln n_i/dZ = -(1/T) dT/dZ - f_i - tau_i,
 *   f_i = g/(R* T) [D_i M_i + K M]/(D_i + K) + g/(R* T) D_i/(D_i + K) alpha_i R* (dT/dZ)/g,
 * with molecular diffusion D_i = a_i (T/273.15)^b_i / N, eddy diffusion K =
 * 120 m2/s to 95 km, 120 exp(1 - 400/(400 - (Z - 95)^2)) (Z in km) to 115 km,
 * 0 above; N the number density of N2 (for O and O2) or of N2 + O + O2 (for
 * Ar and He); M = M0 to 100 km, above it the molar mass of N2 (for O, O2) or
 * the mean of N2, O and O2 (for Ar, He); tau_i the standard's empirical
 * vertical-transport term Q (Z - U)^2 exp(-W (Z - U)^3) (+ q (u - Z)^2
 * exp(-w (u - Z)^3) for O below 97 km) of Table 7.  N2 itself follows
 * hydrostatics with M0 to 100 km and M(N2) above.  Hydrogen above 150 km from
 * the flux equation with n(H) = 8.0e10 m-3 at 500 km and escape flux phi =
 * 7.2e11 m-2 s-1:
 *   n_H(Z) = [n_H(500) - int_500^Z (phi/D_H)(T/T500)^(1+alpha_H) e^tau dZ]
 *            (T500/T)^(1+alpha_H) e^-tau,   tau = int_500^Z g M_H/(R* T) dZ,
 * and no hydrogen below 150 km.  Then p = n k T and rho = sum n_i m_i, with
 * the standard's k = 1.380622e-23 J/K and N_A = 6.022169e26 /kmol (R* = k N_A).
 * Our integration is 4th-order Runge-Kutta on steps of at most 100 m below
 * 150 km and 1 km above (halving them changes nothing in the sixth digit),
 * with the segment joints as step ends; it meets the standard's tables at
 * 90-1000 km within 5e-4 (tests/test_atmosphere.c). */

#define UZ7_M 86000.0
#define UZ_M100 100000.0
#define UZ10_M 120000.0
#define UZ_H_M 150000.0
#define UZ11_M 500000.0
#define USSA_TOP_M 1000000.0
#define UT7_K 186.8673
#define UT10_K 360.0
#define UTINF_K 1000.0
#define ULAMBDA_PER_M 0.01875e-3
#define UBOLTZMANN 1.380622e-23 /* J/K, the standard's value */
#define UAVOGADRO 6.022169e26   /* per kmol */

enum { SP_N2, SP_O, SP_O2, SP_AR, SP_HE, SP_H, N_SP };
static const double sp_molar_mass[N_SP] = {28.0134, 15.9994, 31.9988, 39.948, 4.0026, 1.00797};
static const double sp_n86[SP_H] = {1.129794e20, 8.6e16, 3.030898e19, 1.351400e18, 7.5817e14};
static const double sp_alpha[N_SP] = {0.0, 0.0, 0.0, 0.0, -0.40, -0.25};
static const double sp_a[N_SP] = {0.0, 6.986e20, 4.863e20, 4.487e20, 1.700e21, 3.305e21};
static const double sp_b[N_SP] = {0.0, 0.750, 0.750, 0.870, 0.691, 0.500};
/* Table 7: Q (km-3), U (km), W (km-3) for O, O2, Ar, He; q, u, w for O. */
static const double sp_Q[N_SP] = {0.0, -5.809644e-4, 1.366212e-4, 9.434079e-5, -2.457369e-4, 0.0};
static const double sp_U[N_SP] = {0.0, 56.90311, 86.0, 86.0, 86.0, 0.0};
static const double sp_W[N_SP] = {0.0, 2.706240e-5, 8.333333e-5, 8.333333e-5, 6.666667e-4, 0.0};
#define O_SMALL_Q -3.416248e-3
#define O_SMALL_U 97.0
#define O_SMALL_W 5.008765e-4
#define H_N500 8.0e10
#define H_PHI 7.2e11

/* Thermospheric temperature above 120 km from T120 at 120 km (the standard:
 * T120 = 360 K), and its derivative. */
static double thermo_T(double t120, double z_m, double *dtdz)
{
    const double r = (SL_USSA_R0_M + UZ10_M) / (SL_USSA_R0_M + z_m);
    const double xi = (z_m - UZ10_M) * r;
    const double ex = exp(-ULAMBDA_PER_M * xi);
    if (dtdz)
        *dtdz = ULAMBDA_PER_M * (UTINF_K - t120) * r * r * ex;
    return UTINF_K - (UTINF_K - t120) * ex;
}

/* Kinetic temperature above 86 km from the standard's defining segments. */
static double ussa_upper_T(double z_m, double *dtdz)
{
    double d = 0.0, t;
    if (z_m <= 91000.0) {
        t = UT7_K;
    } else if (z_m <= 110000.0) {
        const double a = -19942.9, u = (z_m - 91000.0) / a;
        const double root = sqrt(fmax(1e-300, 1.0 - u * u));
        t = 263.1905 - 76.3232 * root;
        d = 76.3232 / a * u / root;
    } else if (z_m <= UZ10_M) {
        t = 240.0 + 12.0e-3 * (z_m - 110000.0);
        d = 12.0e-3;
    } else {
        t = thermo_T(UT10_K, z_m, &d);
    }
    if (dtdz)
        *dtdz = d;
    return t;
}

static double eddy_K_m2_s(double z_m)
{
    if (z_m < 95000.0)
        return 120.0;
    if (z_m < 115000.0) {
        const double u = z_m * 1e-3 - 95.0;
        return 120.0 * exp(1.0 - 400.0 / (400.0 - u * u));
    }
    return 0.0;
}

/* The integrated state: ln n of N2, O, O2, Ar, He; tau and J of hydrogen
 * counted from 150 km (tau150 = int_150^Z g M_H/(R* T), J = int_150^Z
 * (phi/D_H)(T/T500)^(1+alpha_H) e^tau150). */
enum { UY_TAU = SP_H, UY_J, UY_N };

/* The parts of the right-hand side that depend on Z alone (temperature,
 * gravity, eddy diffusion, the diffusion coefficients' temperature powers,
 * the transport terms): computed once per distinct altitude, as a step's two
 * midpoint stages share one and its end is the next step's start.  Each is
 * the very expression the right-hand side used inline, so the profile is
 * the same to the bit; the powers and exponentials here were three quarters
 * of the integration's cost. */
typedef struct ussa_zterms {
    double z_m;          /* the altitude they are for (NaN: none yet) */
    double t, tp, gr, kz;
    double da[N_SP];     /* a_i (T/273.15)^b_i, i = O .. He and H */
    double tau_k[SP_H];  /* the transport term tau_i * 1e-3, i = O .. He */
    double h_pow;        /* (T/T500)^(1 + alpha_H) */
    int hydrogen;        /* Z >= 150 km */
} ussa_zterms;

static void ussa_zterms_at(double z_m, double t500, ussa_zterms *q)
{
    double tp, t = ussa_upper_T(z_m, &tp);
    const double g = sl_atmosphere_gravity_m_s2(z_m);
    q->z_m = z_m;
    q->t = t;
    q->tp = tp;
    q->gr = g / (SL_USSA_RSTAR_J_KMOL_K * t);
    q->kz = eddy_K_m2_s(z_m);
    const double zk = z_m * 1e-3;
    for (int i = SP_O; i < SP_H; i++) {
        q->da[i] = sp_a[i] * pow(t / 273.15, sp_b[i]);
        const double v = zk - sp_U[i];
        double tau = sp_Q[i] * v * v * exp(-sp_W[i] * v * v * v);
        if (i == SP_O && zk < O_SMALL_U) {
            const double w = O_SMALL_U - zk;
            tau += O_SMALL_Q * w * w * exp(-O_SMALL_W * w * w * w);
        }
        q->tau_k[i] = tau * 1e-3;
    }
    q->hydrogen = z_m >= UZ_H_M;
    q->da[SP_H] = q->h_pow = 0.0;
    if (q->hydrogen) {
        q->da[SP_H] = sp_a[SP_H] * pow(t / 273.15, sp_b[SP_H]);
        q->h_pow = pow(t / t500, 1.0 + sp_alpha[SP_H]);
    }
}

/* Right-hand side at the altitude of Q; ABOVE100 picks the side of the
 * 100 km switch of M. */
static void ussa_rhs(const ussa_zterms *q, const double *y, int above100, double *dy)
{
    const double t = q->t, tp = q->tp, gr = q->gr, kz = q->kz;
    double n[SP_H];
    for (int i = 0; i < SP_H; i++)
        n[i] = exp(y[i]);
    const double n3 = n[SP_N2] + n[SP_O] + n[SP_O2];
    const double m3 = (n[SP_N2] * sp_molar_mass[SP_N2] + n[SP_O] * sp_molar_mass[SP_O] +
                       n[SP_O2] * sp_molar_mass[SP_O2]) / n3;
    dy[SP_N2] = -tp / t - gr * (above100 ? sp_molar_mass[SP_N2] : SL_USSA_M0_KG_KMOL);
    for (int i = SP_O; i < SP_H; i++) {
        const int light = i == SP_O || i == SP_O2;
        const double nb = light ? n[SP_N2] : n3;
        const double mb = !above100 ? SL_USSA_M0_KG_KMOL : (light ? sp_molar_mass[SP_N2] : m3);
        const double d = q->da[i] / nb;
        const double f = gr * (d * sp_molar_mass[i] + kz * mb) / (d + kz) +
                         d / (d + kz) * sp_alpha[i] * tp / t;
        dy[i] = -tp / t - f - q->tau_k[i];
    }
    dy[UY_TAU] = dy[UY_J] = 0.0;
    if (q->hydrogen) {
        const double n5 = n3 + n[SP_AR] + n[SP_HE];
        const double dh = q->da[SP_H] / n5;
        dy[UY_TAU] = gr * sp_molar_mass[SP_H];
        dy[UY_J] = H_PHI / dh * q->h_pow * exp(y[UY_TAU]);
    }
}

/* One RK4 step from ZA to ZB.  Q_END holds the Z terms of the last step's
 * end, taken as this step's start when the altitude is the same, and is left
 * with this step's end. */
static void ussa_rk4(double za, double zb, double *y, double t500, ussa_zterms *q_end)
{
    const int above100 = 0.5 * (za + zb) > UZ_M100;
    double k1[UY_N], k2[UY_N], k3[UY_N], k4[UY_N], yt[UY_N];
    const double h = zb - za;
    ussa_zterms qm;
    if (!(q_end->z_m == za))
        ussa_zterms_at(za, t500, q_end);
    ussa_rhs(q_end, y, above100, k1);
    ussa_zterms_at(za + 0.5 * h, t500, &qm);
    for (int j = 0; j < UY_N; j++)
        yt[j] = y[j] + 0.5 * h * k1[j];
    ussa_rhs(&qm, yt, above100, k2);
    for (int j = 0; j < UY_N; j++)
        yt[j] = y[j] + 0.5 * h * k2[j];
    ussa_rhs(&qm, yt, above100, k3);
    for (int j = 0; j < UY_N; j++)
        yt[j] = y[j] + h * k3[j];
    ussa_zterms_at(zb, t500, q_end);
    ussa_rhs(q_end, yt, above100, k4);
    for (int j = 0; j < UY_N; j++)
        y[j] += h / 6.0 * (k1[j] + 2.0 * k2[j] + 2.0 * k3[j] + k4[j]);
}

/* Integrate from 86 km to the sorted altitudes Z[0..n-1] (each in 86-1000 km)
 * and give T, p, rho and the mean molar mass there (any output may be NULL).
 * WORK: 4 n doubles. */
static void ussa_upper(size_t n, const double *z, double *t_out, double *p_out, double *rho_out, double *m_out,
                       double *work)
{
    static const double joints[] = {91000.0, 95000.0, 97000.0, UZ_M100, 110000.0, 115000.0, UZ10_M, UZ_H_M, UZ11_M};
    const size_t nj = sizeof joints / sizeof joints[0];
    const double t500 = ussa_upper_T(UZ11_M, NULL);
    double y[UY_N];
    for (int i = 0; i < SP_H; i++)
        y[i] = log(sp_n86[i]);
    y[UY_TAU] = y[UY_J] = 0.0;
    double tau500 = 0.0, j500 = 0.0, zc = UZ7_M;
    /* Hydrogen needs the integrals up to 500 km. */
    const double zend = n == 0 ? UZ7_M : (z[n - 1] >= UZ_H_M ? fmax(z[n - 1], UZ11_M) : z[n - 1]);
    double *tau_at = work, *j_at = work + n, *nt_at = work + 2 * n, *mass_at = work + 3 * n;
    size_t k = 0, jn = 0;
    ussa_zterms q_end;
    q_end.z_m = NAN;
    for (;;) {
        while (k < n && z[k] <= zc + 1e-9) { /* requested altitudes reached */
            double nt = 0.0, mass = 0.0;
            for (int i = 0; i < SP_H; i++) {
                const double ni = exp(y[i]);
                nt += ni;
                mass += ni * sp_molar_mass[i];
            }
            tau_at[k] = y[UY_TAU];
            j_at[k] = y[UY_J];
            nt_at[k] = nt;
            mass_at[k] = mass;
            k++;
        }
        if (fabs(zc - UZ11_M) < 1e-6) {
            tau500 = y[UY_TAU];
            j500 = y[UY_J];
        }
        if (zc >= zend - 1e-9)
            break;
        while (jn < nj && joints[jn] <= zc + 1e-9)
            jn++;
        double znext = zend;
        if (jn < nj && joints[jn] < znext)
            znext = joints[jn];
        if (k < n && z[k] < znext)
            znext = z[k];
        const double hmax = zc < UZ_H_M ? 100.0 : 1000.0;
        int steps = (int)ceil((znext - zc) / hmax - 1e-9);
        if (steps < 1)
            steps = 1;
        const double h = (znext - zc) / steps;
        for (int s = 0; s < steps; s++)
            ussa_rk4(zc + s * h, s + 1 == steps ? znext : zc + (s + 1) * h, y, t500, &q_end);
        zc = znext;
    }
    for (size_t i = 0; i < n; i++) {
        const double t = ussa_upper_T(z[i], NULL);
        double nt = nt_at[i], mass = mass_at[i];
        if (z[i] >= UZ_H_M) {
            const double tau = tau_at[i] - tau500;
            const double nh = (H_N500 - (j_at[i] - j500) * exp(-tau500)) * pow(t500 / t, 1.0 + sp_alpha[SP_H]) *
                              exp(-tau);
            nt += nh;
            mass += nh * sp_molar_mass[SP_H];
        }
        if (t_out)
            t_out[i] = t;
        if (p_out)
            p_out[i] = nt * UBOLTZMANN * t;
        if (rho_out)
            rho_out[i] = mass / UAVOGADRO;
        if (m_out)
            m_out[i] = mass / nt;
    }
}

/* The standard's mean molar mass of air at geometric Z (kg/kmol): M0 to 80 km,
 * M0 times Table 8's ratio from 80 to 86 km; above 86 km use ussa_upper. */
static double ussa_low_molar_mass(double z_m)
{
    if (z_m <= 80000.0)
        return SL_USSA_M0_KG_KMOL;
    const double u = (fmin(z_m, 86000.0) - 80000.0) / 500.0;
    int i = (int)u;
    if (i > 11)
        i = 11;
    const double f = u - i;
    return SL_USSA_M0_KG_KMOL * (ussa_m_ratio[i] + f * (ussa_m_ratio[i + 1] - ussa_m_ratio[i]));
}

/* ussa_upper at N sorted altitudes Z above 86 km, through CACHE (may be
 * NULL): its values when it holds these very altitudes (the built-in level
 * grid is the same above 80 km for every built-in profile), else computed,
 * and kept in CACHE when it is still empty.  ussa_upper's value at each
 * altitude does not depend on which outputs are asked for, so a cached value
 * is the one a fresh integration gives, to the bit. */
static int ussa_upper_cached(size_t n, const double *z, double *t, double *p, double *rho, double *m,
                             sl_atmosphere_cache *c, sl_err *e)
{
    const int hit = c != NULL && c->n == n && memcmp(c->z, z, n * sizeof *z) == 0;
    if (!hit) {
        const int fill = c != NULL && c->n == 0;
        double *work = malloc(4 * n * sizeof(double));
        double *keep = fill ? malloc(5 * n * sizeof(double)) : NULL;
        if (!work || (fill && !keep)) {
            free(work);
            free(keep);
            SL_FAIL_RETURN(e, SL_ENOMEM, "U.S. Standard Atmosphere 1976: out of memory");
        }
        if (!fill) {
            ussa_upper(n, z, t, p, rho, m, work);
            free(work);
            return SL_OK;
        }
        memcpy(keep, z, n * sizeof(double));
        c->z = keep;
        c->t = keep + n;
        c->p = keep + 2 * n;
        c->rho = keep + 3 * n;
        c->m = keep + 4 * n;
        c->n = n;
        ussa_upper(n, z, c->t, c->p, c->rho, c->m, work);
        free(work);
    }
    if (t)
        memcpy(t, c->t, n * sizeof(double));
    if (p)
        memcpy(p, c->p, n * sizeof(double));
    if (rho)
        memcpy(rho, c->rho, n * sizeof(double));
    if (m)
        memcpy(m, c->m, n * sizeof(double));
    return SL_OK;
}

void sl_atmosphere_cache_free(sl_atmosphere_cache *c)
{
    if (c == NULL)
        return;
    free(c->z); /* one block: z, t, p, rho, m */
    memset(c, 0, sizeof *c);
}

/* T, p, rho and M of the standard at N sorted altitudes in 0-1000 km (above
 * 86 km through CACHE, see ussa_upper_cached; NULL: none). */
static int ussa_profile(size_t n, const double *z, double *t, double *p, double *rho, double *m,
                        sl_atmosphere_cache *cache, sl_err *e)
{
    size_t i = 0;
    for (; i < n && z[i] <= UZ7_M; i++) {
        const double h = SL_USSA_R0_M * z[i] / (SL_USSA_R0_M + z[i]);
        double tm, pp;
        ussa_molecular(fmin(h, ussa_hb_m[7]), &tm, &pp);
        const double mm = ussa_low_molar_mass(z[i]);
        if (t)
            t[i] = z[i] > 80000.0 ? tm * mm / SL_USSA_M0_KG_KMOL : tm;
        if (p)
            p[i] = pp;
        if (rho)
            rho[i] = pp * SL_USSA_M0_KG_KMOL / (SL_USSA_RSTAR_J_KMOL_K * tm);
        if (m)
            m[i] = mm;
    }
    if (i == n)
        return SL_OK;
    SL_TRY_RETURN(e, ussa_upper_cached(n - i, z + i, t ? t + i : NULL, p ? p + i : NULL, rho ? rho + i : NULL,
                                       m ? m + i : NULL, cache, e));
    return SL_OK;
}

int sl_atmosphere_us1976(double altitude_m, double *temperature_K, double *pressure_Pa,
                         double *density_kg_m3, sl_err *e)
{
    const double z = altitude_m;
    if (!(z >= 0.0 && z <= USSA_TOP_M))
        SL_FAIL_RETURN(e, SL_EDATA, "U.S. Standard Atmosphere 1976: altitude %.6g m outside 0 to %.0f m", z,
                       USSA_TOP_M);
    SL_TRY_RETURN(e, ussa_profile(1, &z, temperature_K, pressure_Pa, density_kg_m3, NULL, NULL, e));
    return SL_OK;
}

/* ---- climate-zone definitions ------------------------------------------- */

typedef struct zone_node {
    double altitude_km, temperature_K;
} zone_node;

typedef struct zone_def {
    const char *name;
    double surface_pressure_Pa;
    const zone_node *nodes;
    size_t n_nodes;
} zone_def;

/* Nodes read from the AFGL 1986 tables (SEEN, pyrtlib transcription): the
 * tropopause and stratopause heights and temperatures are the tables' own
 * (Anderson et al. 1986); the other nodes follow the tables at the
 * surface, 2-3 km, 20-47.5 km, the mesopause and 100-120 km. */
static const zone_node tropical_nodes[] = {
    {0, 299.7},    {17, 194.8}, {20, 206.7}, {30, 232.3}, {40, 254.0},  {47.5, 269.6},
    {50, 270.2},   {60, 253.1}, {70, 218.9}, {80, 184.8}, {85, 177.1},  {90, 177.0},
    {100, 190.7},  {110, 241.6}, {120, 380.0}};
static const zone_node mls_nodes[] = {
    {0, 294.2},   {2, 285.2},   {13, 215.8},  {17, 215.7},  {20, 219.2},  {25, 225.1},
    {30, 233.7},  {40, 257.5},  {47.5, 275.2}, {50, 275.7}, {60, 257.1},  {70, 218.1},
    {80, 174.1},  {85, 165.1},  {90, 165.0},  {100, 190.5}, {110, 262.4}, {120, 380.0}};
static const zone_node mlw_nodes[] = {
    {0, 272.2},   {3, 261.7},   {11, 219.2},  {19, 215.2},  {25, 215.2},  {30, 217.4},
    {40, 243.2},  {47.5, 265.1}, {50, 265.7}, {55, 260.6},  {60, 250.8},  {70, 230.7},
    {80, 210.1},  {85, 199.8},  {90, 199.5},  {100, 218.6}, {110, 259.5}, {120, 333.0}};
static const zone_node sas_nodes[] = {
    {0, 287.2},   {10, 225.2},  {23, 225.2},  {25, 228.1},  {30, 235.1},  {40, 262.1},
    {47.5, 276.2}, {50, 277.2}, {55, 274.0},  {60, 262.7},  {70, 216.6},  {80, 170.6},
    {85, 161.7},  {90, 161.6},  {100, 190.4}, {110, 270.1}, {120, 380.0}};
static const zone_node saw_nodes[] = {
    {0, 257.2},   {1, 259.1},   {9, 217.2},   {15, 217.2},  {25, 211.2},  {30, 216.0},
    {40, 234.7},  {50, 259.3},  {55, 259.1},  {60, 250.9},  {70, 245.4},  {80, 223.9},
    {85, 213.1},  {90, 202.3},  {100, 218.5}, {110, 252.6}, {120, 333.0}};

#define ZONE(nm, ps, arr) {nm, ps, arr, sizeof arr / sizeof arr[0]}
static const zone_def zones[] = {
    ZONE("tropical", 101300.0, tropical_nodes),
    ZONE("midlatitude-summer", 101300.0, mls_nodes),
    ZONE("midlatitude-winter", 101800.0, mlw_nodes),
    ZONE("subarctic-summer", 101000.0, sas_nodes),
    ZONE("subarctic-winter", 101300.0, saw_nodes),
};

static double thermo_T(double t120, double z_m, double *dtdz);

/* The zone's temperature: linear between its nodes to 120 km, above it the
 * standard's thermosphere form from the zone's own 120 km temperature. */
static double zone_temperature(const zone_def *zd, double z_m)
{
    if (z_m > UZ10_M)
        return thermo_T(zd->nodes[zd->n_nodes - 1].temperature_K, z_m, NULL);
    const double zk = z_m * 1e-3;
    size_t i = 0;
    while (i + 2 < zd->n_nodes && zk > zd->nodes[i + 1].altitude_km)
        i++;
    const zone_node *a = &zd->nodes[i], *b = &zd->nodes[i + 1];
    return a->temperature_K + (b->temperature_K - a->temperature_K) * (zk - a->altitude_km) /
                                  (b->altitude_km - a->altitude_km);
}

/* ---- background water --------------------------------------------------- */

typedef struct water_ctx {
    double surface_pressure_Pa;
    double tropopause_m; /* NaN: no tropopause, tropospheric model throughout */
    double stratopause_m;
} water_ctx;

static double strat_h2o(double dz_m)
{
    const double u = dz_m / CH4_OXIDATION_SCALE_M;
    const double oxidised = 1.0 - exp(-u * u);
    const double ch4_entry = 0.5 * (H2O_TOTAL_HYDROGEN - H2O_ENTRY);
    return H2O_ENTRY + 2.0 * ch4_entry * oxidised;
}

/* The background water in two parts: what depends on the altitude and
 * temperature alone (the saturation pressures, the stratospheric mixing
 * ratio), and the rest, given the pressure.  The hydrostatic integration's
 * two midpoint stages share an altitude and a temperature, so they compute
 * the first part once.  Together they are the model's one expression: the
 * saturation pressure of the cap reuses the liquid or ice value already at
 * hand (sl_water_esat_Pa is one of those two functions at the same T). */
typedef struct water_tz {
    int troposphere;   /* below the tropopause (or none) */
    int ice_cap;       /* T below the triple point: capped at ice saturation */
    double e_liquid_Pa, e_ice_Pa; /* troposphere: e_s over liquid water and over ice (when ice_cap) */
    double x_strat;    /* above it: the mixing ratio */
    double e_sat_Pa;   /* sl_water_esat_Pa(T) */
} water_tz;

static void background_h2o_tz(const water_ctx *w, double z_m, double t_K, water_tz *q)
{
    q->troposphere = !isfinite(w->tropopause_m) || z_m < w->tropopause_m;
    q->ice_cap = t_K < SL_T_TRIPLE_K;
    if (q->troposphere) {
        q->e_liquid_Pa = sl_water_esat_liquid_Pa(t_K);
        q->e_ice_Pa = !(t_K >= SL_T_TRIPLE_K) ? sl_water_esat_ice_Pa(t_K) : NAN;
        q->e_sat_Pa = t_K >= SL_T_TRIPLE_K ? q->e_liquid_Pa : q->e_ice_Pa;
        q->x_strat = NAN;
    } else {
        if (!isfinite(w->stratopause_m) || z_m <= w->stratopause_m)
            q->x_strat = strat_h2o(z_m - w->tropopause_m);
        else
            q->x_strat = strat_h2o(w->stratopause_m - w->tropopause_m) * meso_factor(z_m - w->stratopause_m);
        q->e_sat_Pa = sl_water_esat_Pa(t_K);
        q->e_liquid_Pa = q->e_ice_Pa = NAN;
    }
}

static double background_h2o_p(const water_ctx *w, const water_tz *q, double p_Pa)
{
    double x;
    if (q->troposphere) {
        double rh = RH_SURFACE * (p_Pa / w->surface_pressure_Pa - RH_Q_TOP) / (1.0 - RH_Q_TOP);
        if (rh < 0.0)
            rh = 0.0;
        double ev = rh * q->e_liquid_Pa;
        if (q->ice_cap) {
            const double ei = q->e_ice_Pa;
            if (ev > ei)
                ev = ei;
        }
        x = ev / p_Pa;
        if (x < H2O_ENTRY)
            x = H2O_ENTRY;
    } else {
        x = q->x_strat;
    }
    const double xs = q->e_sat_Pa / p_Pa;
    if (isfinite(xs) && x > xs)
        x = xs;
    return x;
}

static double background_h2o(const water_ctx *w, double z_m, double t_K, double p_Pa)
{
    water_tz q;
    background_h2o_tz(w, z_m, t_K, &q);
    return background_h2o_p(w, &q, p_Pa);
}

/* ---- level arrays, hydrostatics, markers --------------------------------- */

static double dlnp_dz(double z_m, double t_K, double x, double mr)
{
    /* dp/dz = -rho g with rho = p [(1-x) mr/Rd + x/Rv] / T, mr = M_dry/M0. */
    return -sl_atmosphere_gravity_m_s2(z_m) * ((1.0 - x) * mr / SL_R_DRY_AIR_J_KG_K + x / SL_R_VAPOR_J_KG_K) / t_K;
}

/* Moist-air density with dry-air molar mass ratio MR = M_dry/M0; for MR = 1
 * exactly the value of sl_water_moist_air_density_kg_m3, bit for bit. */
static double moist_density(double p, double t, double x, double mr)
{
    const double pv = x * p;
    const double pd = p - pv;
    return pd / (SL_R_DRY_AIR_J_KG_K * t) * mr + pv / (SL_R_VAPOR_J_KG_K * t);
}

/* Water at (z, T, p) for the integrator: dry, given (linear in the interval
 * between levels i and i+1), or the background model. */
typedef struct water_src {
    int mode;              /* 0 dry, 1 background model, 2 given */
    const water_ctx *ctx;
    const double *x_levels;
} water_src;

static double water_at(const water_src *ws, const double *z, size_t i, double zq, double t, double p)
{
    if (ws->mode == 1)
        return background_h2o(ws->ctx, zq, t, p);
    if (ws->mode == 2) {
        const double f = (zq - z[i]) / (z[i + 1] - z[i]);
        return ws->x_levels[i] + f * (ws->x_levels[i + 1] - ws->x_levels[i]);
    }
    return 0.0;
}

/* Integrate ln p upward from p[0] with RK4, 4 steps per level interval, T
 * linear in z within each interval.  Only the background water model (mode
 * 1) depends on the stage pressure: for dry or given water WATER skips the
 * exponential (water_at does not read P then); for the model, the part that
 * depends on z and T alone is computed once per stage altitude (Q: the two
 * midpoint stages share theirs). */
#define MR(zq) (ma == mb ? ma : ma + (mb - ma) * ((zq) - z[i]) / (z[i + 1] - z[i]))
#define WATER(q, zq, tq, lq)                                                                               \
    (ws->mode == 0   ? 0.0                                                                                  \
     : ws->mode == 1 ? background_h2o_p(ws->ctx, &(q), exp(lq))                                            \
                     : water_at(ws, z, i, (zq), (tq), NAN))
static void integrate_pressure(size_t n, const double *z, const double *t, const double *m, const water_src *ws,
                               double *p)
{
    enum { SUB = 4 };
    double lp = log(p[0]);
    for (size_t i = 0; i + 1 < n; i++) {
        const double h = (z[i + 1] - z[i]) / SUB;
        /* molar-mass ratio, linear in the interval (exactly 1 below 80 km) */
        const double ma = m[i] / SL_USSA_M0_KG_KMOL, mb = m[i + 1] / SL_USSA_M0_KG_KMOL;
        for (int k = 0; k < SUB; k++) {
            const double za = z[i] + k * h;
            const double zb = za + 0.5 * h, zc = za + h;
            const double ta = t[i] + (t[i + 1] - t[i]) * (za - z[i]) / (z[i + 1] - z[i]);
            const double tb = t[i] + (t[i + 1] - t[i]) * (zb - z[i]) / (z[i + 1] - z[i]);
            const double tc = t[i] + (t[i + 1] - t[i]) * (zc - z[i]) / (z[i + 1] - z[i]);
            water_tz qa, qb, qc;
            if (ws->mode == 1) {
                background_h2o_tz(ws->ctx, za, ta, &qa);
                background_h2o_tz(ws->ctx, zb, tb, &qb);
                background_h2o_tz(ws->ctx, zc, tc, &qc);
            }
            const double k1 = dlnp_dz(za, ta, WATER(qa, za, ta, lp), MR(za));
            const double l2 = lp + 0.5 * h * k1;
            const double k2 = dlnp_dz(zb, tb, WATER(qb, zb, tb, l2), MR(zb));
            const double l3 = lp + 0.5 * h * k2;
            const double k3 = dlnp_dz(zb, tb, WATER(qb, zb, tb, l3), MR(zb));
            const double l4 = lp + h * k3;
            const double k4 = dlnp_dz(zc, tc, WATER(qc, zc, tc, l4), MR(zc));
            lp += h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
        }
        p[i + 1] = exp(lp);
    }
}
#undef WATER

#define TROPOPAUSE_FLOOR_PA 50000.0
#define WMO_LAPSE_K_M 2.0e-3
#define WMO_DEPTH_M 2000.0
#define COLD_POINT_TOP_M 30000.0
#define STRATOPAUSE_TOP_M 70000.0

/* Level markers from the level arrays only (interpolation-free). */
static void find_markers(sl_atmosphere *a)
{
    const size_t n = a->n;
    const double *z = a->altitude_m, *t = a->temperature_K, *p = a->pressure_Pa;
    a->tropopause_altitude_m = a->tropopause_temperature_K = a->tropopause_pressure_Pa = NAN;
    a->cold_point_altitude_m = a->cold_point_temperature_K = NAN;
    a->stratopause_altitude_m = a->stratopause_temperature_K = NAN;
    for (size_t i = 0; i + 1 < n; i++) {
        if (p[i] > TROPOPAUSE_FLOOR_PA)
            continue;
        const double lapse = -(t[i + 1] - t[i]) / (z[i + 1] - z[i]);
        if (lapse > WMO_LAPSE_K_M)
            continue;
        const double zt = z[i] + WMO_DEPTH_M;
        if (zt > z[n - 1])
            break; /* not 2 km of profile left above: the rule cannot be applied */
        int ok = 1;
        size_t j = i + 1;
        for (; j < n && z[j] <= zt; j++)
            if (-(t[j] - t[i]) / (z[j] - z[i]) > WMO_LAPSE_K_M) {
                ok = 0;
                break;
            }
        if (ok && j < n) { /* the point exactly 2 km above, linear between levels */
            const double tt = t[j - 1] + (t[j] - t[j - 1]) * (zt - z[j - 1]) / (z[j] - z[j - 1]);
            if (-(tt - t[i]) / WMO_DEPTH_M > WMO_LAPSE_K_M)
                ok = 0;
        }
        if (ok) {
            a->tropopause_altitude_m = z[i];
            a->tropopause_temperature_K = t[i];
            a->tropopause_pressure_Pa = p[i];
            break;
        }
    }
    for (size_t i = 0; i < n && z[i] <= COLD_POINT_TOP_M; i++) {
        if (p[i] > TROPOPAUSE_FLOOR_PA)
            continue;
        if (!(t[i] >= a->cold_point_temperature_K)) { /* true for NaN: first candidate */
            a->cold_point_altitude_m = z[i];
            a->cold_point_temperature_K = t[i];
        }
    }
    if (isfinite(a->tropopause_altitude_m)) {
        size_t best = n;
        for (size_t i = 0; i < n && z[i] <= STRATOPAUSE_TOP_M; i++)
            if (z[i] >= a->tropopause_altitude_m && (best == n || t[i] > t[best]))
                best = i;
        /* A maximum at the top of a profile that ends below 70 km is only the
         * end of the data, not a stratopause. */
        if (best < n && !(best == n - 1 && z[n - 1] < STRATOPAUSE_TOP_M) && best > 0 &&
            z[best] > a->tropopause_altitude_m) {
            a->stratopause_altitude_m = z[best];
            a->stratopause_temperature_K = t[best];
        }
    }
}

/* Vapour mass per area between the tropopause and the stratopause. */
static int strat_water(sl_atmosphere *a, sl_err *e)
{
    a->strat_water_column_kg_m2 = a->strat_water_burden_kg = NAN;
    if (!isfinite(a->tropopause_altitude_m) || !isfinite(a->stratopause_altitude_m))
        return SL_OK;
    const double z0 = a->tropopause_altitude_m, z1 = a->stratopause_altitude_m;
    double sum = 0.0;
    for (size_t i = 0; i + 1 < a->n; i++) {
        const double lo = fmax(a->altitude_m[i], z0), hi = fmin(a->altitude_m[i + 1], z1);
        if (!(hi > lo))
            continue;
        double f[3];
        for (int k = 0; k < 3; k++) {
            sl_atmos_state s = {0};
            SL_TRY_RETURN(e, sl_atmosphere_state(a, lo + 0.5 * k * (hi - lo), NULL, &s, e)); /* no ice saturation needed */
            f[k] = s.h2o_mole_fraction * s.pressure_Pa / (SL_R_VAPOR_J_KG_K * s.temperature_K);
        }
        sum += (hi - lo) / 6.0 * (f[0] + 4.0 * f[1] + f[2]);
    }
    a->strat_water_column_kg_m2 = sum;
    a->strat_water_burden_kg = sum * SL_EARTH_AREA_M2;
    return SL_OK;
}

static int alloc_levels(sl_atmosphere *a, size_t n, sl_err *e)
{
    a->n = n;
    a->altitude_m = calloc(n, sizeof(double));
    a->temperature_K = calloc(n, sizeof(double));
    a->pressure_Pa = calloc(n, sizeof(double));
    a->density_kg_m3 = calloc(n, sizeof(double));
    a->h2o_mole_fraction = calloc(n, sizeof(double));
    a->n2_per_s2 = calloc(n, sizeof(double));
    a->molar_mass_kg_kmol = calloc(n, sizeof(double));
    a->sp = calloc(1, sizeof *a->sp);
    if (!a->altitude_m || !a->temperature_K || !a->pressure_Pa || !a->density_kg_m3 || !a->h2o_mole_fraction ||
        !a->n2_per_s2 || !a->molar_mass_kg_kmol || !a->sp)
        SL_FAIL_RETURN(e, SL_ENOMEM, "atmosphere: cannot allocate %zu levels", n);
    a->sp->log_pressure_Pa = calloc(n, sizeof(double));
    if (!a->sp->log_pressure_Pa)
        SL_FAIL_RETURN(e, SL_ENOMEM, "atmosphere: cannot allocate %zu levels", n);
    return SL_OK;
}

/* Sign as GSL's steffen_copysign(1.0, y): +1 for y >= 0 (also -0), -1 below. */
static double steffen_sign(double y)
{
    return y < 0.0 ? -1.0 : 1.0;
}

/* Steffen (1990) coefficients of Y on the levels of A into COEF + OFF (stride
 * SPL_STRIDE), in GSL's order of operations (gsl_interp_steffen, steffen.c),
 * so values agree with the library bit for bit.  YP: n scratch doubles. */
static void steffen_coefficients(const double *x, const double *y, size_t n, double *yp, double *coef, int off)
{
    yp[0] = (y[1] - y[0]) / (x[1] - x[0]);
    for (size_t i = 1; i + 1 < n; i++) {
        const double hi = x[i + 1] - x[i], him1 = x[i] - x[i - 1];
        const double si = (y[i + 1] - y[i]) / hi, sim1 = (y[i] - y[i - 1]) / him1;
        const double pi = (sim1 * hi + si * him1) / (him1 + hi);
        yp[i] = (steffen_sign(sim1) + steffen_sign(si)) * fmin(fabs(sim1), fmin(fabs(si), 0.5 * fabs(pi)));
    }
    yp[n - 1] = (y[n - 1] - y[n - 2]) / (x[n - 1] - x[n - 2]);
    for (size_t i = 0; i + 1 < n; i++) {
        const double hi = x[i + 1] - x[i];
        const double si = (y[i + 1] - y[i]) / hi;
        double *c = coef + i * SPL_STRIDE + off;
        c[0] = (yp[i] + yp[i + 1] - 2 * si) / hi / hi;
        c[1] = (3 * si - 2 * yp[i] - yp[i + 1]) / hi;
        c[2] = yp[i];
        c[3] = y[i];
    }
}

static inline void eval_tpx(const sl_atmosphere *atm, double z, sl_atmos_cursor *cur, double *t, double *lp,
                            double *x, double *mr, double *dtdz);
static double moist_density(double p, double t, double x, double mr);
static inline size_t find_interval(const sl_atmosphere *atm, double z, sl_atmos_cursor *cur);

/* The integrals of rho and z rho over [Z0, Z1] inside one level interval
 * (where the interpolants are cubics and the density smooth) and at most
 * MASS_NODE_DZ_M long: 4-point Gauss-Legendre (the density changes by < 8 %
 * over 500 m; measured within 3e-11 of fine Simpson sums per 1 km band). */
static void mass_piece(const sl_atmosphere *a, double z0, double z1, sl_atmos_cursor *cur, double *m0, double *m1)
{
    static const double x[4] = {-0.8611363115940526, -0.3399810435848563, 0.3399810435848563, 0.8611363115940526};
    static const double wt[4] = {0.3478548451374538, 0.6521451548625461, 0.6521451548625461, 0.3478548451374538};
    const double mid = 0.5 * (z0 + z1), half = 0.5 * (z1 - z0);
    double s0 = 0.0, s1 = 0.0;
    for (int j = 0; j < 4; j++) {
        double z = mid + half * x[j], t, lp, xh, mr;
        eval_tpx(a, z, cur, &t, &lp, &xh, &mr, NULL);
        double rho = moist_density(exp(lp), t, xh, mr);
        s0 += wt[j] * rho;
        s1 += wt[j] * rho * z;
    }
    *m0 = half * s0;
    *m1 = half * s1;
}

/* Edges of cell K of level interval I (struct sl_atmosphere_splines). */
static void cell_edges(const sl_atmosphere *a, size_t i, size_t k, double *za, double *zb)
{
    const size_t ns = a->sp->mass_sub[i];
    const double zi = a->altitude_m[i], zj = a->altitude_m[i + 1], h = (zj - zi) / (double)ns;
    *za = zi + (double)k * h;
    *zb = k + 1 == ns ? zj : zi + (double)(k + 1) * h;
}

/* Cell (interval I, cell K inside it) holding Z inside the profile. */
static void cell_of(const sl_atmosphere *a, double z, sl_atmos_cursor *cur, size_t *i, size_t *k)
{
    *i = find_interval(a, z, cur);
    const size_t ns = a->sp->mass_sub[*i];
    const double zi = a->altitude_m[*i], h = (a->altitude_m[*i + 1] - zi) / (double)ns;
    size_t c = (size_t)((z - zi) / h);
    *k = c >= ns ? ns - 1 : c;
}

/* The air-mass moments of the cells (struct sl_atmosphere_splines). */
static int build_mass_moments(sl_atmosphere *a, sl_err *e)
{
    struct sl_atmosphere_splines *sp = a->sp;
    const size_t ni = a->n - 1;
    sp->mass_node = malloc(ni * sizeof(size_t));
    sp->mass_sub = malloc(ni * sizeof(size_t));
    size_t cells = 0;
    if (sp->mass_node && sp->mass_sub)
        for (size_t i = 0; i < ni; i++) {
            const double h = a->altitude_m[i + 1] - a->altitude_m[i];
            sp->mass_node[i] = cells;
            sp->mass_sub[i] = h > MASS_NODE_DZ_M ? (size_t)ceil(h / MASS_NODE_DZ_M) : 1;
            cells += sp->mass_sub[i];
        }
    sp->mass0 = malloc((cells ? cells : 1) * sizeof(double));
    sp->mass1 = malloc((cells ? cells : 1) * sizeof(double));
    if (!sp->mass_node || !sp->mass_sub || !sp->mass0 || !sp->mass1)
        SL_FAIL_RETURN(e, SL_ENOMEM, "atmosphere '%s': cannot allocate the air-mass tables", a->name);
    sl_atmos_cursor cur = {0};
    for (size_t i = 0; i < ni; i++)
        for (size_t k = 0; k < sp->mass_sub[i]; k++) {
            const size_t j = sp->mass_node[i] + k;
            double za, zb;
            cell_edges(a, i, k, &za, &zb);
            mass_piece(a, za, zb, &cur, &sp->mass0[j], &sp->mass1[j]);
        }
    return SL_OK;
}

static int build_splines(sl_atmosphere *a, sl_err *e)
{
    struct sl_atmosphere_splines *sp = a->sp;
    for (size_t i = 0; i < a->n; i++)
        sp->log_pressure_Pa[i] = log(a->pressure_Pa[i]);
    sp->coef = malloc((a->n - 1) * SPL_STRIDE * sizeof(double));
    double *yp = malloc(a->n * sizeof(double));
    if (!sp->coef || !yp) {
        free(yp);
        SL_FAIL_RETURN(e, SL_ENOMEM, "atmosphere '%s': cannot allocate interpolants", a->name);
    }
    steffen_coefficients(a->altitude_m, a->temperature_K, a->n, yp, sp->coef, SPL_T);
    steffen_coefficients(a->altitude_m, sp->log_pressure_Pa, a->n, yp, sp->coef, SPL_LNP);
    steffen_coefficients(a->altitude_m, a->h2o_mole_fraction, a->n, yp, sp->coef, SPL_X);
    steffen_coefficients(a->altitude_m, a->molar_mass_kg_kmol, a->n, yp, sp->coef, SPL_M);
    free(yp);
    /* Four cells per mean level spacing. */
    const double z0 = a->altitude_m[0], span = a->altitude_m[a->n - 1] - z0;
    sp->n_lut = 4 * a->n;
    sp->lut_inv_dz_m = (double)sp->n_lut / span;
    sp->lut = malloc((sp->n_lut + 1) * sizeof(size_t));
    if (!sp->lut)
        SL_FAIL_RETURN(e, SL_ENOMEM, "atmosphere '%s': cannot allocate interpolants", a->name);
    for (size_t k = 0, i = 0; k <= sp->n_lut; k++) {
        const double zk = z0 + span * ((double)k / (double)sp->n_lut);
        while (i + 2 < a->n && a->altitude_m[i + 1] <= zk)
            i++;
        sp->lut[k] = i;
    }
    for (size_t i = 0; i + 1 < a->n; i++)
        for (int k = 0; k < SPL_STRIDE; k++)
            if (!isfinite(sp->coef[i * SPL_STRIDE + k]))
                SL_FAIL_RETURN(e, SL_EDATA, "atmosphere '%s': interpolation between levels %zu and %zu is not finite",
                               a->name, i + 1, i + 2);
    return build_mass_moments(a, e);
}

static void copy_str(char *dst, size_t cap, const char *src)
{
    snprintf(dst, cap, "%s", src ? src : "");
}

/* Dry-air molar mass at the levels: MOLAR_MASS when given, else M0 below
 * 80 km and, when USSA_COMPOSITION, the standard's mean molar mass above (the
 * composition of the air above the homopause follows the standard), else M0. */
static int fill_molar_mass(sl_atmosphere *atm, const double *molar_mass, int ussa_composition, sl_err *e)
{
    const size_t n = atm->n;
    if (molar_mass) {
        for (size_t i = 0; i < n; i++)
            if (!(molar_mass[i] > 1.0 && molar_mass[i] <= 50.0))
                SL_FAIL_RETURN(e, SL_EDATA, "atmosphere '%s': level %zu: molar mass %g kg/kmol is not within 1 to 50",
                               atm->name, i + 1, molar_mass[i]);
        memcpy(atm->molar_mass_kg_kmol, molar_mass, n * sizeof(double));
        return SL_OK;
    }
    size_t i0 = 0;
    for (size_t i = 0; i < n; i++) {
        atm->molar_mass_kg_kmol[i] = SL_USSA_M0_KG_KMOL;
        if (atm->altitude_m[i] <= 80000.0)
            i0 = i + 1;
    }
    if (!ussa_composition || i0 == n)
        return SL_OK;
    if (atm->altitude_m[n - 1] > USSA_TOP_M)
        SL_FAIL_RETURN(e, SL_EDATA, "atmosphere '%s': levels above %.0f km (the top of the standard's composition)",
                       atm->name, USSA_TOP_M * 1e-3);
    SL_TRY_RETURN(e, ussa_profile(n - i0, atm->altitude_m + i0, NULL, NULL, NULL, atm->molar_mass_kg_kmol + i0,
                                  NULL, e));
    return SL_OK;
}

static int build_body(sl_atmosphere *atm, const char *name, const char *source, size_t n,
                      const double *altitude_m, const double *temperature_K, const double *pressure_Pa,
                      const double *h2o_mole_fraction, int water_mode, const double *molar_mass,
                      int ussa_composition, sl_err *e)
{
    const char *nm = name ? name : "profile";
    if (n < 3)
        SL_FAIL_RETURN(e, SL_EDATA, "atmosphere '%s': %zu levels, need at least 3", nm, n);
    if (!altitude_m || !temperature_K)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "atmosphere '%s': altitude or temperature array missing", nm);
    for (size_t i = 0; i < n; i++) {
        if (!isfinite(altitude_m[i]) || !(altitude_m[i] >= -1000.0 && altitude_m[i] <= 1.0e6))
            SL_FAIL_RETURN(e, SL_EDATA, "atmosphere '%s': level %zu: altitude %g m is not within -1000 to 1e6 m",
                           nm, i + 1, altitude_m[i]);
        if (i > 0 && !(altitude_m[i] > altitude_m[i - 1]))
            SL_FAIL_RETURN(e, SL_EDATA,
                           "atmosphere '%s': level %zu: altitude %g m is not above the previous level (%g m); "
                           "altitudes must increase strictly",
                           nm, i + 1, altitude_m[i], altitude_m[i - 1]);
        if (!(temperature_K[i] >= 50.0 && temperature_K[i] <= 2000.0))
            SL_FAIL_RETURN(e, SL_EDATA, "atmosphere '%s': level %zu: temperature %g K is not within 50 to 2000 K",
                           nm, i + 1, temperature_K[i]);
        if (pressure_Pa) {
            if (!(pressure_Pa[i] > 0.0 && pressure_Pa[i] <= 2.0e5))
                SL_FAIL_RETURN(e, SL_EDATA,
                               "atmosphere '%s': level %zu: pressure %g Pa is not within 0 (exclusive) to 2e5 Pa",
                               nm, i + 1, pressure_Pa[i]);
            if (i > 0 && !(pressure_Pa[i] < pressure_Pa[i - 1]))
                SL_FAIL_RETURN(e, SL_EDATA,
                               "atmosphere '%s': level %zu: pressure %g Pa does not fall with altitude "
                               "(%g Pa below)",
                               nm, i + 1, pressure_Pa[i], pressure_Pa[i - 1]);
        }
        if (h2o_mole_fraction && !(h2o_mole_fraction[i] >= 0.0 && h2o_mole_fraction[i] < 0.5))
            SL_FAIL_RETURN(e, SL_EDATA,
                           "atmosphere '%s': level %zu: water mole fraction %g is not within 0 to 0.5", nm, i + 1,
                           h2o_mole_fraction[i]);
    }
    memset(atm, 0, sizeof *atm);
    copy_str(atm->name, sizeof atm->name, nm);
    copy_str(atm->source, sizeof atm->source, source);
    SL_TRY_RETURN(e, alloc_levels(atm, n, e));
    memcpy(atm->altitude_m, altitude_m, n * sizeof(double));
    memcpy(atm->temperature_K, temperature_K, n * sizeof(double));
    SL_TRY_RETURN(e, fill_molar_mass(atm, molar_mass, ussa_composition, e));
    const double *mm = atm->molar_mass_kg_kmol;

    water_src ws = {0, NULL, h2o_mole_fraction};
    if (h2o_mole_fraction) {
        ws.mode = 2;
        memcpy(atm->h2o_mole_fraction, h2o_mole_fraction, n * sizeof(double));
    }
    if (pressure_Pa) {
        memcpy(atm->pressure_Pa, pressure_Pa, n * sizeof(double));
    } else {
        atm->pressure_Pa[0] = SL_USSA_P0_PA;
        /* Dry first when the water model needs the tropopause (it needs p). */
        water_src dry = {0, NULL, NULL};
        integrate_pressure(n, atm->altitude_m, atm->temperature_K, mm, ws.mode == 2 ? &ws : &dry,
                           atm->pressure_Pa);
    }
    if (!h2o_mole_fraction && water_mode == SL_ATM_WATER_BACKGROUND) {
        find_markers(atm);
        water_ctx ctx = {atm->pressure_Pa[0], atm->tropopause_altitude_m, atm->stratopause_altitude_m};
        if (!pressure_Pa) { /* moist hydrostatics with the model water, markers again */
            water_src bg = {1, &ctx, NULL};
            integrate_pressure(n, atm->altitude_m, atm->temperature_K, mm, &bg, atm->pressure_Pa);
            find_markers(atm);
            ctx.tropopause_m = atm->tropopause_altitude_m;
            ctx.stratopause_m = atm->stratopause_altitude_m;
        }
        for (size_t i = 0; i < n; i++)
            atm->h2o_mole_fraction[i] =
                background_h2o(&ctx, atm->altitude_m[i], atm->temperature_K[i], atm->pressure_Pa[i]);
    }
    for (size_t i = 0; i < n; i++)
        atm->density_kg_m3[i] = moist_density(atm->pressure_Pa[i], atm->temperature_K[i], atm->h2o_mole_fraction[i],
                                              mm[i] / SL_USSA_M0_KG_KMOL);
    SL_TRY_RETURN(e, build_splines(atm, e));
    for (size_t i = 0; i < n; i++) {
        sl_atmos_state s = {0};
        SL_TRY_RETURN(e, sl_atmosphere_state(atm, atm->altitude_m[i], NULL, &s, e)); /* N^2 only */
        atm->n2_per_s2[i] = s.n2_per_s2;
    }
    find_markers(atm);
    SL_TRY_RETURN(e, strat_water(atm, e));
    return SL_OK;
}

static int build_full(sl_atmosphere *atm, const char *name, const char *source, size_t n,
                      const double *altitude_m, const double *temperature_K, const double *pressure_Pa,
                      const double *h2o_mole_fraction, int water_mode, const double *molar_mass,
                      int ussa_composition, sl_err *e)
{
    /* On failure nothing stays allocated: ATM is left zeroed. */
    memset(atm, 0, sizeof *atm);
    const int rc = build_body(atm, name, source, n, altitude_m, temperature_K, pressure_Pa, h2o_mole_fraction,
                              water_mode, molar_mass, ussa_composition, e);
    if (rc != SL_OK) {
        sl_atmosphere_free(atm);
        return sl_err_push(e, rc, __func__, __LINE__);
    }
    atm->join_altitude_m = NAN;
    return SL_OK;
}

int sl_atmosphere_build_(sl_atmosphere *atm, const char *name, const char *source, size_t n,
                         const double *altitude_m, const double *temperature_K, const double *pressure_Pa,
                         const double *h2o_mole_fraction, int water_mode, sl_err *e)
{
    const int rc = build_full(atm, name, source, n, altitude_m, temperature_K, pressure_Pa, h2o_mole_fraction,
                              water_mode, NULL, 1, e);
    if (rc != SL_OK) {
        sl_atmosphere_free(atm);
        return sl_err_push(e, rc, __func__, __LINE__);
    }
    return SL_OK;
}

int sl_atmosphere_init_levels(sl_atmosphere *atm, const char *name, size_t n, const double *altitude_m,
                              const double *temperature_K, const double *pressure_Pa_or_NULL,
                              const double *h2o_mole_fraction_or_NULL, sl_err *e)
{
    char source[256];
    snprintf(source, sizeof source, "%zu levels given by the caller%s%s", n,
             pressure_Pa_or_NULL ? "" : ", pressure hydrostatic from 101325 Pa",
             h2o_mole_fraction_or_NULL ? "" : ", dry");
    SL_TRY_RETURN(e, build_full(atm, name, source, n, altitude_m, temperature_K, pressure_Pa_or_NULL,
                                h2o_mole_fraction_or_NULL, SL_ATM_WATER_DRY, NULL, 0, e));
    return SL_OK;
}

/* ---- built-in profiles ---------------------------------------------------- */

static int cmp_double(const void *a, const void *b)
{
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* The built-in level grid: every 250 m to 150 km, 1 km to 300 km and 5 km to
 * 1000 km, plus the KINKS (joints of the defining segments), so the splines
 * bend only next to a joint. */
static int builtin_grid(const double *kinks, size_t nk, double **z_out, size_t *n_out, sl_err *e)
{
    const size_t ng = 600 + 150 + 140 + 1;
    double *z = malloc((ng + nk) * sizeof(double));
    if (!z)
        SL_FAIL_RETURN(e, SL_ENOMEM, "atmosphere: cannot allocate the level grid");
    size_t m = 0;
    for (size_t i = 0; i < 600; i++)
        z[m++] = i * 250.0;
    for (size_t i = 0; i < 150; i++)
        z[m++] = 150000.0 + i * 1000.0;
    for (size_t i = 0; i <= 140; i++)
        z[m++] = 300000.0 + i * 5000.0;
    for (size_t k = 0; k < nk; k++)
        z[m++] = kinks[k];
    qsort(z, m, sizeof(double), cmp_double);
    size_t u = 0;
    for (size_t i = 0; i < m; i++)
        if (u == 0 || z[i] - z[u - 1] > 1e-6)
            z[u++] = z[i];
    *z_out = z;
    *n_out = u;
    return SL_OK;
}

/* us1976 (HUMID 0): the dry standard, T, p, rho and M exactly as the standard
 * defines them.  us1976-humid: the same temperature and pressure with the
 * background water model (the moist density is then 0.5 % lower at sea level). */
static int init_us1976(sl_atmosphere *atm, int humid, sl_atmosphere_cache *cache, sl_err *e)
{
    double kinks[7];
    for (int k = 1; k < 7; k++) /* geometric altitudes of the geopotential layer bases */
        kinks[k - 1] = SL_USSA_R0_M * ussa_hb_m[k] / (SL_USSA_R0_M - ussa_hb_m[k]);
    kinks[6] = 80000.0;
    double *z = NULL, *buf = NULL;
    size_t n = 0;
    int rc = builtin_grid(kinks, 7, &z, &n, e);
    if (rc == SL_OK) {
        buf = malloc(3 * n * sizeof(double));
        if (!buf)
            rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "atmosphere: cannot allocate us1976 levels");
    }
    if (rc == SL_OK)
        rc = ussa_profile(n, z, buf, buf + n, NULL, buf + 2 * n, cache, e);
    if (rc == SL_OK)
        rc = build_full(atm, humid ? "us1976-humid" : "us1976",
                        humid ? "U.S. Standard Atmosphere 1976 (NOAA-S/T 76-1562) temperature and pressure, "
                                "0-1000 km, from its defining constants and layers; steamloft background water model"
                              : "U.S. Standard Atmosphere 1976 (NOAA-S/T 76-1562), dry, 0-1000 km, from its defining "
                                "constants, layers and (above 86 km) species diffusion equations",
                        n, z, buf, buf + n, NULL, humid ? SL_ATM_WATER_BACKGROUND : SL_ATM_WATER_DRY, buf + 2 * n, 0,
                        e);
    free(z);
    free(buf);
    return rc == SL_OK ? SL_OK : sl_err_push(e, rc, __func__, __LINE__);
}

static int init_zone(sl_atmosphere *atm, const zone_def *zd, sl_atmosphere_cache *cache, sl_err *e)
{
    double kinks[32];
    size_t nk = 0;
    for (size_t k = 0; k < zd->n_nodes && nk < 32; k++)
        kinks[nk++] = zd->nodes[k].altitude_km * 1e3;
    double *z = NULL, *t = NULL;
    size_t n = 0;
    SL_TRY_RETURN(e, builtin_grid(kinks, nk, &z, &n, e));
    double *buf = malloc(3 * n * sizeof(double));
    if (!buf) {
        free(z);
        SL_FAIL_RETURN(e, SL_ENOMEM, "atmosphere: cannot allocate %s levels", zd->name);
    }
    t = buf;
    double *p = buf + n, *mm = buf + 2 * n;
    for (size_t i = 0; i < n; i++)
        t[i] = zone_temperature(zd, z[i]);
    char source[256];
    snprintf(source, sizeof source,
             "steamloft climate-zone profile: piecewise-linear temperature through AFGL 1986 "
             "(AFGL-TR-86-0110) nodes to 120 km, USSA76 thermosphere form to 1000 km, hydrostatic from %.0f Pa "
             "with the USSA76 molar mass; background water model",
             zd->surface_pressure_Pa);
    /* Composition (dry molar mass) of the standard at the zone's levels. */
    size_t i0 = 0;
    while (i0 < n && z[i0] <= 80000.0)
        mm[i0++] = SL_USSA_M0_KG_KMOL;
    int rc = ussa_profile(n - i0, z + i0, NULL, NULL, NULL, mm + i0, cache, e);
    if (rc == SL_OK) {
        sl_atmosphere tmp;
        memset(&tmp, 0, sizeof tmp);
        /* Pass 1: dry hydrostatics for the markers the water model needs. */
        p[0] = zd->surface_pressure_Pa;
        water_src dry = {0, NULL, NULL};
        integrate_pressure(n, z, t, mm, &dry, p);
        tmp.n = n;
        tmp.altitude_m = z;
        tmp.temperature_K = t;
        tmp.pressure_Pa = p;
        find_markers(&tmp);
        /* Pass 2: moist hydrostatics with the background water. */
        water_ctx ctx = {zd->surface_pressure_Pa, tmp.tropopause_altitude_m, tmp.stratopause_altitude_m};
        water_src bg = {1, &ctx, NULL};
        integrate_pressure(n, z, t, mm, &bg, p);
        rc = build_full(atm, zd->name, source, n, z, t, p, NULL, SL_ATM_WATER_BACKGROUND, mm, 0, e);
    }
    free(z);
    free(buf);
    return rc == SL_OK ? SL_OK : sl_err_push(e, rc, __func__, __LINE__);
}

/* ---- low user columns joined onto a climate zone ------------------------
 *
 * A profile file that ends below the built-in top (1000 km) -- a reanalysis
 * column ending at 1 hPa, about 48 km, say -- is continued upward with the
 * climate-zone profile whose temperatures match the column best (least RMS
 * difference at the column's own levels), so that nothing downstream depends
 * on where the file ends.  The join is smooth: above the column's top z_j
 * the temperature is the zone's plus the offset at z_j fading linearly to
 * zero over JOIN_BLEND_M; the water is the zone's times the ratio at z_j,
 * fading to 1 the same way; the pressure is integrated hydrostatically
 * upward from the column's top pressure (moist air, the standard's molar
 * mass above 80 km), so p is continuous and in hydrostatic balance across the
 * join.  join_altitude_m and the source line record it. */
#define JOIN_BLEND_M 10000.0

static int join_low_column(sl_atmosphere *atm, sl_atmosphere_cache *cache, sl_err *e)
{
    const size_t nu = atm->n;
    const double zj = atm->altitude_m[nu - 1];
    if (!(zj < BUILTIN_TOP_M - 1.0))
        return SL_OK;
    size_t best = 0;
    double best_rms = INFINITY;
    for (size_t k = 0; k < sizeof zones / sizeof zones[0]; k++) {
        double sum = 0.0;
        for (size_t i = 0; i < nu; i++) {
            const double d = atm->temperature_K[i] - zone_temperature(&zones[k], atm->altitude_m[i]);
            sum += d * d;
        }
        if (sum < best_rms) {
            best_rms = sum;
            best = k;
        }
    }
    best_rms = sqrt(best_rms / (double)nu);
    sl_atmosphere zone;
    SL_TRY_RETURN(e, init_zone(&zone, &zones[best], cache, e));
    size_t k0 = 0;
    while (k0 < zone.n && zone.altitude_m[k0] <= zj + 1.0)
        k0++;
    const size_t n = nu + (zone.n - k0);
    double *buf = malloc(4 * n * sizeof(double));
    if (!buf) {
        sl_atmosphere_free(&zone);
        SL_FAIL_RETURN(e, SL_ENOMEM, "atmosphere '%s': out of memory joining the profile", atm->name);
    }
    double *z = buf, *t = buf + n, *p = buf + 2 * n, *x = buf + 3 * n;
    memcpy(z, atm->altitude_m, nu * sizeof(double));
    memcpy(t, atm->temperature_K, nu * sizeof(double));
    memcpy(p, atm->pressure_Pa, nu * sizeof(double));
    memcpy(x, atm->h2o_mole_fraction, nu * sizeof(double));
    sl_atmos_state zs = {0};
    int rc = sl_atmosphere_state(&zone, zj, NULL, &zs, e);
    const double dt = atm->temperature_K[nu - 1] - zs.temperature_K;
    const double ratio = zs.h2o_mole_fraction > 0.0 ? atm->h2o_mole_fraction[nu - 1] / zs.h2o_mole_fraction : 1.0;
    for (size_t k = k0, i = nu; rc == SL_OK && k < zone.n; k++, i++) {
        const double w = fmax(0.0, 1.0 - (zone.altitude_m[k] - zj) / JOIN_BLEND_M);
        z[i] = zone.altitude_m[k];
        t[i] = zone.temperature_K[k] + dt * w;
        x[i] = zone.h2o_mole_fraction[k] * (1.0 + (ratio - 1.0) * w);
    }
    /* Hydrostatic pressure from the column's top level upward. */
    double *mm = NULL;
    if (rc == SL_OK) {
        mm = malloc((n - nu + 1) * sizeof(double));
        if (!mm)
            rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "atmosphere: out of memory joining the profile");
    }
    if (rc == SL_OK) {
        const double *zu = z + nu - 1;
        const size_t m = n - nu + 1;
        size_t i0 = 0;
        while (i0 < m && zu[i0] <= 80000.0)
            mm[i0++] = SL_USSA_M0_KG_KMOL;
        rc = ussa_profile(m - i0, zu + i0, NULL, NULL, NULL, mm + i0, cache, e);
        if (rc == SL_OK) {
            water_src ws = {2, NULL, x + nu - 1};
            integrate_pressure(m, zu, t + nu - 1, mm, &ws, p + nu - 1);
        }
    }
    if (rc == SL_OK) {
        char suffix[128], source[256];
        snprintf(suffix, sizeof suffix, "; joined at %.6g km onto %s (best match, RMS %.2g K; offset %.3g K over %.0f km)",
                 zj * 1e-3, zones[best].name, best_rms, dt, JOIN_BLEND_M * 1e-3);
        snprintf(source, sizeof source, "%.*s%s", (int)(sizeof source - 1 - strlen(suffix)), atm->source, suffix);
        char name[64];
        snprintf(name, sizeof name, "%s", atm->name);
        sl_atmosphere joined;
        rc = build_full(&joined, name, source, n, z, t, p, x, SL_ATM_WATER_DRY, NULL, 1, e);
        if (rc == SL_OK) {
            joined.join_altitude_m = zj;
            snprintf(joined.joined_onto, sizeof joined.joined_onto, "%s", zones[best].name);
            sl_atmosphere_free(atm);
            *atm = joined;
        }
    }
    free(mm);
    free(buf);
    sl_atmosphere_free(&zone);
    return rc == SL_OK ? SL_OK : sl_err_push(e, rc, __func__, __LINE__);
}

/* Is PATH a netCDF file (classic "CDF\001|\002|\005" or HDF5 signature)? */
static int looks_like_netcdf(const char *path, int *is_nc)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return -1;
    unsigned char b[8] = {0};
    size_t got = fread(b, 1, sizeof b, f);
    fclose(f);
    *is_nc = (got >= 4 && b[0] == 'C' && b[1] == 'D' && b[2] == 'F' && (b[3] == 1 || b[3] == 2 || b[3] == 5)) ||
             (got >= 8 && memcmp(b, "\211HDF\r\n\032\n", 8) == 0);
    return 0;
}

int sl_atmosphere_init(sl_atmosphere *atm, const char *name_or_path, sl_err *e)
{
    SL_TRY_RETURN(e, sl_atmosphere_init_cached(atm, name_or_path, NULL, e));
    return SL_OK;
}

int sl_atmosphere_init_cached(sl_atmosphere *atm, const char *name_or_path, sl_atmosphere_cache *cache, sl_err *e)
{
    if (!atm || !name_or_path)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "sl_atmosphere_init: NULL argument");
    memset(atm, 0, sizeof *atm);
    if (strcmp(name_or_path, "us1976") == 0 || strcmp(name_or_path, "us1976-humid") == 0) {
        SL_TRY_RETURN(e, init_us1976(atm, name_or_path[6] == '-', cache, e));
        return SL_OK;
    }
    for (size_t k = 0; k < sizeof zones / sizeof zones[0]; k++)
        if (strcmp(name_or_path, zones[k].name) == 0) {
            SL_TRY_RETURN(e, init_zone(atm, &zones[k], cache, e));
            return SL_OK;
        }
    int is_nc = 0;
    if (looks_like_netcdf(name_or_path, &is_nc) != 0)
        SL_FAIL_RETURN(e, SL_ENOINPUT,
                       "atmosphere '%s' is neither a built-in profile (us1976, us1976-humid, tropical, midlatitude-summer, "
                       "midlatitude-winter, subarctic-summer, subarctic-winter) nor a readable file",
                       name_or_path);
    if (is_nc)
        SL_TRY_RETURN(e, sl_atmosphere_read_netcdf_(atm, name_or_path, e));
    else
        SL_TRY_RETURN(e, sl_atmosphere_read_text_(atm, name_or_path, e));
    const int rc = join_low_column(atm, cache, e);
    if (rc != SL_OK) {
        sl_atmosphere_free(atm);
        return sl_err_push(e, rc, __func__, __LINE__);
    }
    return SL_OK;
}

/* ---- queries ------------------------------------------------------------ */

/* Index i of the level interval holding Z (z_i <= Z < z_(i+1); the top level
 * belongs to the last interval), the interval gsl_interp_bsearch finds,
 * when the cursor's interval does not hold Z: a walk up from the look-up
 * table's cell.  Z is inside the profile (check_query).  Out of line, so the
 * cursor's test below stays small enough to be inlined into every query. */
static size_t find_interval_walk(const sl_atmosphere *atm, double z, sl_atmos_cursor *cur)
{
    const double *za = atm->altitude_m;
    const size_t n = atm->n;
    const struct sl_atmosphere_splines *sp = atm->sp;
    size_t k = (size_t)((z - za[0]) * sp->lut_inv_dz_m);
    if (k > sp->n_lut)
        k = sp->n_lut;
    size_t i = sp->lut[k];
    /* Rounding of the cell edge can put the table's interval one above Z. */
    while (i > 0 && z < za[i])
        i--;
    while (i + 2 < n && z >= za[i + 1])
        i++;
    if (cur)
        cur->interval = i;
    return i;
}

/* The same interval: the cursor's if it still holds Z, else the walk. */
static inline size_t find_interval(const sl_atmosphere *atm, double z, sl_atmos_cursor *cur)
{
    if (cur) {
        const double *za = atm->altitude_m;
        const size_t n = atm->n, i = cur->interval;
        if (i + 1 < n && z >= za[i] && (z < za[i + 1] || i + 2 == n))
            return i;
    }
    return find_interval_walk(atm, z, cur);
}

/* The messages of check_query, out of line (never taken in a good run). */
static int query_failed(const sl_atmosphere *atm, double altitude_m, sl_err *e)
{
    if (!atm || !atm->sp || !atm->sp->coef || atm->n < 3)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "atmosphere query: profile not initialised");
    const double *za = atm->altitude_m;
    SL_FAIL_RETURN(e, SL_EDATA, "altitude %.6g m is outside atmosphere profile '%s' (%.6g to %.6g m)",
                   altitude_m, atm->name, za[0], za[atm->n - 1]);
}

static inline int check_query(const sl_atmosphere *atm, double altitude_m, sl_err *e)
{
    if (atm && atm->sp && atm->sp->coef && atm->n >= 3 && altitude_m >= atm->altitude_m[0] &&
        altitude_m <= atm->altitude_m[atm->n - 1])
        return SL_OK;
    return query_failed(atm, altitude_m, e);
}

/* Interpolated T, ln p and x (and dT/dz when DTDZ is not NULL) at Z;
 * inline, so the density-only query computes no dT/dz. */
static inline void eval_tpx(const sl_atmosphere *atm, double z, sl_atmos_cursor *cur, double *t, double *lp,
                            double *x, double *mr, double *dtdz)
{
    const size_t i = find_interval(atm, z, cur);
    const double dz = z - atm->altitude_m[i];
    const double *c = atm->sp->coef + i * SPL_STRIDE;
    *t = c[SPL_T + 3] + dz * (c[SPL_T + 2] + dz * (c[SPL_T + 1] + dz * c[SPL_T]));
    *lp = c[SPL_LNP + 3] + dz * (c[SPL_LNP + 2] + dz * (c[SPL_LNP + 1] + dz * c[SPL_LNP]));
    *x = c[SPL_X + 3] + dz * (c[SPL_X + 2] + dz * (c[SPL_X + 1] + dz * c[SPL_X]));
    *mr = (c[SPL_M + 3] + dz * (c[SPL_M + 2] + dz * (c[SPL_M + 1] + dz * c[SPL_M]))) / SL_USSA_M0_KG_KMOL;
    if (dtdz)
        *dtdz = c[SPL_T + 2] + dz * (2 * c[SPL_T + 1] + dz * 3 * c[SPL_T]);
}

int sl_atmosphere_density(const sl_atmosphere *atm, double altitude_m, sl_atmos_cursor *cur,
                          double *density_kg_m3, sl_err *e)
{
    SL_TRY_RETURN(e, check_query(atm, altitude_m, e));
    double t, lp, x, mr;
    eval_tpx(atm, altitude_m, cur, &t, &lp, &x, &mr, NULL);
    *density_kg_m3 = moist_density(exp(lp), t, x, mr);
    return SL_OK;
}

/* The state at Z without ice saturation; N^2 and gravity only when WITH_N2.
 * Always inlined, so each query is compiled for its constant WITH_N2 and the
 * plume's computes no dT/dz (a called helper cost half the saving: 1.0 % of
 * the bench member's instructions instead of 1.5 %). */
static inline __attribute__((always_inline)) int state_at(const sl_atmosphere *atm, double altitude_m,
                                                          sl_atmos_cursor *cur, sl_atmos_state *out,
                                                          int with_n2, sl_err *e)
{
    SL_TRY_RETURN(e, check_query(atm, altitude_m, e));
    double t, dtdz = 0.0, lp, x, mr;
    eval_tpx(atm, altitude_m, cur, &t, &lp, &x, &mr, with_n2 ? &dtdz : NULL);
    const double p = exp(lp);
    out->altitude_m = altitude_m;
    out->temperature_K = t;
    out->pressure_Pa = p;
    out->h2o_mole_fraction = x;
    out->density_kg_m3 = moist_density(p, t, x, mr);
    out->ice_saturation_mole_fraction = NAN;
    if (with_n2) {
        const double g = sl_atmosphere_gravity_m_s2(altitude_m);
        out->n2_per_s2 = g / t * (dtdz + g / SL_CP_DRY_AIR_J_KG_K);
        out->gravity_m_s2 = g;
    } else
        out->n2_per_s2 = out->gravity_m_s2 = NAN;
    return SL_OK;
}

int sl_atmosphere_air(const sl_atmosphere *atm, double altitude_m, sl_atmos_cursor *cur, sl_atmos_state *out,
                      sl_err *e)
{
    return state_at(atm, altitude_m, cur, out, 0, e);
}

int sl_atmosphere_state(const sl_atmosphere *atm, double altitude_m, sl_atmos_cursor *cur, sl_atmos_state *out,
                        sl_err *e)
{
    return state_at(atm, altitude_m, cur, out, 1, e);
}

int sl_atmosphere_layer_mass(const sl_atmosphere *atm, double z0, double z1, sl_atmos_cursor *cur, double *m0,
                             double *m1, sl_err *e)
{
    *m0 = *m1 = NAN;
    if (!atm || !atm->sp || !atm->sp->mass0)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "layer mass: profile not initialised");
    if (!isfinite(z0) || !isfinite(z1) || z1 < z0)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "layer mass: bad layer %g to %g m", z0, z1);
    const double zlo = atm->altitude_m[0], zhi = atm->altitude_m[atm->n - 1];
    double s0 = 0.0, s1 = 0.0;
    /* Outside the profile: the density of its end level, held constant. */
    for (int side = 0; side < 2; side++) {
        const double ze = side ? zhi : zlo;
        const double a = side ? fmax(z0, zhi) : z0, b = side ? z1 : fmin(z1, zlo);
        if (b > a) {
            double t, lp, x, mr;
            eval_tpx(atm, ze, cur, &t, &lp, &x, &mr, NULL);
            const double rho = moist_density(exp(lp), t, x, mr);
            s0 += rho * (b - a);
            s1 += 0.5 * rho * (b - a) * (b + a);
        }
    }
    const double a = fmax(z0, zlo), b = fmin(z1, zhi);
    if (b > a) {
        size_t ia, ka, ib, kb;
        cell_of(atm, a, cur, &ia, &ka);
        cell_of(atm, b, cur, &ib, &kb);
        const size_t ja = atm->sp->mass_node[ia] + ka, jb = atm->sp->mass_node[ib] + kb;
        double p0, p1;
        if (ja == jb) {
            mass_piece(atm, a, b, cur, &p0, &p1);
            s0 += p0;
            s1 += p1;
        } else {
            double ca, cb, da, db;
            cell_edges(atm, ia, ka, &ca, &cb);
            if (a == ca) { /* the first cell whole */
                p0 = atm->sp->mass0[ja];
                p1 = atm->sp->mass1[ja];
            } else /* the rest of it */
                mass_piece(atm, a, cb, cur, &p0, &p1);
            s0 += p0;
            s1 += p1;
            for (size_t j = ja + 1; j < jb; j++) {
                s0 += atm->sp->mass0[j];
                s1 += atm->sp->mass1[j];
            }
            cell_edges(atm, ib, kb, &da, &db);
            if (b > da) { /* the start of the last cell */
                mass_piece(atm, da, b, cur, &p0, &p1);
                s0 += p0;
                s1 += p1;
            }
        }
    }
    *m0 = s0;
    *m1 = s1;
    return SL_OK;
}

int sl_atmosphere_altitude_of_pressure(const sl_atmosphere *atm, double pressure_Pa, double *altitude_m, sl_err *e)
{
    if (!atm || !atm->sp || !atm->sp->coef || atm->n < 3)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "atmosphere query: profile not initialised");
    const double *p = atm->pressure_Pa;
    const size_t n = atm->n;
    if (!(pressure_Pa <= p[0] && pressure_Pa >= p[n - 1]))
        SL_FAIL_RETURN(e, SL_EDATA, "pressure %.6g Pa is outside atmosphere profile '%s' (%.6g to %.6g Pa)",
                       pressure_Pa, atm->name, p[n - 1], p[0]);
    size_t lo = 0, hi = n - 1; /* p[lo] >= target >= p[hi] */
    while (hi > lo + 1) {
        const size_t mid = (lo + hi) / 2;
        if (p[mid] >= pressure_Pa)
            lo = mid;
        else
            hi = mid;
    }
    const double target = log(pressure_Pa);
    double za = atm->altitude_m[lo], zb = atm->altitude_m[hi];
    for (int it = 0; it < 200 && zb - za > 1e-9; it++) {
        const double zm = 0.5 * (za + zb);
        double t, lp, x, mr;
        eval_tpx(atm, zm, NULL, &t, &lp, &x, &mr, NULL);
        if (lp > target)
            za = zm;
        else
            zb = zm;
    }
    *altitude_m = 0.5 * (za + zb);
    return SL_OK;
}

int sl_atmosphere_at(const sl_atmosphere *atm, double altitude_m, sl_atmos_state *out, sl_err *e)
{
    SL_TRY_RETURN(e, sl_atmosphere_state(atm, altitude_m, NULL, out, e));
    out->ice_saturation_mole_fraction = sl_water_esat_ice_Pa(out->temperature_K) / out->pressure_Pa;
    return SL_OK;
}

void sl_atmosphere_free(sl_atmosphere *atm)
{
    if (!atm)
        return;
    if (atm->sp) {
        free(atm->sp->coef);
        free(atm->sp->lut);
        free(atm->sp->mass0);
        free(atm->sp->mass1);
        free(atm->sp->mass_node);
        free(atm->sp->mass_sub);
        free(atm->sp->log_pressure_Pa);
        free(atm->sp);
    }
    free(atm->altitude_m);
    free(atm->temperature_K);
    free(atm->pressure_Pa);
    free(atm->density_kg_m3);
    free(atm->h2o_mole_fraction);
    free(atm->n2_per_s2);
    free(atm->molar_mass_kg_kmol);
    memset(atm, 0, sizeof *atm);
}
