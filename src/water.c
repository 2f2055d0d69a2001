/* water: thermodynamics of water substance.
 *
 * Saturation vapour pressure over plane ice (Murphy & Koop 2005, QJRMS 131,
 * 1539, their eq. 7, valid above 110 K):
 *     ln e_i = 9.550426 - 5723.265/T + 3.53068 ln T - 0.00728332 T      [Pa, K]
 * Over plane liquid water: below the triple point (supercooled water) Murphy &
 * Koop eq. 10 (123-332 K); at and above the triple point the IAPWS 1992
 * saturation equation of Wagner & Pruss (J. Phys. Chem. Ref. Data 22, 783,
 * 1993), which reproduces IAPWS-95 to 1e-4 up to the critical point, whereas
 * Murphy & Koop eq. 10 drifts to 0.6 % high by 373 K (measured against
 * python3-iapws, tests/test_water.c).  Both give 611.657 Pa at 273.16 K, so the
 * switch is continuous to 4e-8.
 *     ln(p/pc) = (Tc/T)(a1 t + a2 t^1.5 + a3 t^3 + a4 t^3.5 + a5 t^4 + a6 t^7.5),
 *     t = 1 - T/Tc, Tc = 647.096 K, pc = 22.064 MPa.
 * Frost point: the exact inverse of eq. 7 by Newton iteration, started from
 * Murphy & Koop's explicit eq. 8 (which alone is off by up to 0.01 K).
 * Latent heats: sublimation from Murphy & Koop eq. 5 (J/mol, T > 30 K),
 *     L_s = 46782.5 + 35.8925 T - 0.07414 T^2 + 541.5 exp[-(T/123.75)^2];
 * vaporisation below 273.16 K from Murphy & Koop eq. 9 (supercooled water,
 * 236-273 K, used below 236 K as an extrapolation),
 *     L_v = 56579 - 42.212 T + exp[0.1149 (281.6 - T)];
 * at and above 273.16 K a quartic in u = (T - 273.15 K)/100 K that we fitted
 * to IAPWS-95 (h'' - h' from python3-iapws, 80 points 273.16-500 K; largest
 * misfit 4.2e-5 relative); fusion = sublimation - vaporisation.
 * Moist air: Dalton's law with the ideal-gas constants of water.h, virtual
 * temperature Tv = T (1 + r/eps)/(1 + r) = T (1 + q (1/eps - 1)), eps = M_w/M_d.
 * Sea water: heat 1 kg of sea water from T0 to the boiling point of pure water
 * at p, then evaporate its fresh-water fraction (1 - S); the salt stays behind.
 * The specific heat of sea water is taken linear in salinity between pure water
 * (4186 J/kg/K) and standard sea water (3991.87 J/kg/K at S = 35.165 g/kg, the
 * TEOS-10 cp0, memory).  The boiling-point elevation (about 0.5 K at 35 g/kg)
 * and the heat of dilution change the result by less than 0.1 % and are left
 * out.  Units: SI throughout (K, Pa, J/kg).
 *
 * Constants of water.h: R_dry = R-star over M0 of USSA76 (287.053, SEEN in the notes);
 * R_vapor = 8.314462618/0.01801528 = 461.52 (CODATA 2018, IUPAC weights);
 * cp of dry air 1004.64 J/kg/K, of vapour 1865, liquid 4186 and ice near
 * 0 C 2106 J/kg/K are common textbook values (PRACTICE, e.g. Rogers & Yau
 * 1989; from memory); triple point 273.16 K, 611.657 Pa (IAPWS R14-08). */
#include "steamloft/water.h"

#include "steamloft/units.h"

#include <math.h>
#include <stddef.h>

/* Molar mass of water, kg/mol (units.h); mass ratio water/dry air. */
#define M_W SL_MOLAR_MASS_H2O_KG_MOL
#define EPS_W (SL_MOLAR_MASS_H2O_KG_MOL / SL_MOLAR_MASS_DRY_AIR_KG_MOL)

double sl_water_esat_ice_Pa(double temperature_K)
{
    const double t = temperature_K;
    if (!(t > 0.0))
        return NAN;
    return exp(9.550426 - 5723.265 / t + 3.53068 * log(t) - 0.00728332 * t);
}

/* ln(e_s / p_c) of Wagner & Pruss (1993) at T (K), and its first and second
 * derivatives in T (analytic, from the same six terms): one expression for
 * the pressure and for its slopes. */
static double wp_log(double t, double *d1, double *d2)
{
    static const double tc = 647.096;
    static const double a1 = -7.85951783, a2 = 1.84408259, a3 = -11.7866497, a4 = 22.6807411,
                        a5 = -15.9618719, a6 = 1.80122502;
    const double th = 1.0 - t / tc;
    const double s = sqrt(th);
    const double th3 = th * th * th;
    const double P = a1 * th + a2 * th * s + a3 * th3 + a4 * th3 * s + a5 * th3 * th + a6 * th3 * th3 * th * s;
    if (d1) {
        const double th2 = th * th;
        /* dP/dth and d2P/dth2; d(th)/dT = -1/tc. */
        const double P1 = a1 + 1.5 * a2 * s + 3.0 * a3 * th2 + 3.5 * a4 * th2 * s + 4.0 * a5 * th3 +
                          7.5 * a6 * th3 * th3 * s;
        const double P2 = 0.75 * a2 / s + 6.0 * a3 * th + 8.75 * a4 * th * s + 12.0 * a5 * th2 +
                          48.75 * a6 * th3 * th2 * s;
        /* g = (tc/T) P: g' = -(tc P / T + P1) / T, g'' = 2 tc P / T^3 + 2 P1 / T^2 + P2 / (tc T). */
        *d1 = -(tc * P / t + P1) / t;
        *d2 = 2.0 * tc * P / (t * t * t) + 2.0 * P1 / (t * t) + P2 / (tc * t);
    }
    return tc / t * P;
}

double sl_water_esat_slopes_Pa(double temperature_K, double *dln_dT, double *d2ln_dT2)
{
    const double t = temperature_K;
    if (!(t > 0.0) || t >= 647.096) {
        *dln_dT = *d2ln_dT2 = NAN;
        return NAN;
    }
    if (t >= SL_T_TRIPLE_K)
        return 22.064e6 * exp(wp_log(t, dln_dT, d2ln_dT2));
    /* Murphy & Koop eq. 7 differentiated. */
    *dln_dT = 5723.265 / (t * t) + 3.53068 / t - 0.00728332;
    *d2ln_dT2 = -2.0 * 5723.265 / (t * t * t) - 3.53068 / (t * t);
    return sl_water_esat_ice_Pa(t);
}

/* Murphy & Koop 2005 eq. 10, liquid and supercooled water. */
static double esat_liquid_mk(double t)
{
    const double lt = log(t);
    return exp(54.842763 - 6763.22 / t - 4.210 * lt + 0.000367 * t +
               tanh(0.0415 * (t - 218.8)) * (53.878 - 1331.22 / t - 9.44523 * lt + 0.014025 * t));
}

/* IAPWS 1992 (Wagner & Pruss 1993) saturation pressure over liquid water. */
static double esat_liquid_wp(double t)
{
    return 22.064e6 * exp(wp_log(t, NULL, NULL));
}

double sl_water_esat_liquid_Pa(double temperature_K)
{
    const double t = temperature_K;
    if (!(t > 0.0) || t >= 647.096)
        return NAN;
    return t < SL_T_TRIPLE_K ? esat_liquid_mk(t) : esat_liquid_wp(t);
}

double sl_water_esat_Pa(double temperature_K)
{
    return temperature_K >= SL_T_TRIPLE_K ? sl_water_esat_liquid_Pa(temperature_K)
                                          : sl_water_esat_ice_Pa(temperature_K);
}

double sl_water_frost_point_K(double vapor_pressure_Pa)
{
    if (!(vapor_pressure_Pa > 0.0) || !isfinite(vapor_pressure_Pa))
        return NAN;
    const double lp = log(vapor_pressure_Pa);
    /* Murphy & Koop eq. 8 as the start, then Newton on eq. 7 in log space:
     * f(T) = ln e_i(T) - ln p, f'(T) = 5723.265/T^2 + 3.53068/T - 0.00728332. */
    double t = (1.814625 * lp + 6190.134) / (29.120 - lp);
    for (int i = 0; i < 4; i++) {
        const double f = 9.550426 - 5723.265 / t + 3.53068 * log(t) - 0.00728332 * t - lp;
        const double df = 5723.265 / (t * t) + 3.53068 / t - 0.00728332;
        t -= f / df;
    }
    return t;
}

double sl_water_latent_sublimation_J_kg(double temperature_K)
{
    const double t = temperature_K;
    const double x = t / 123.75;
    return (46782.5 + 35.8925 * t - 0.07414 * t * t + 541.5 * exp(-x * x)) / M_W;
}

double sl_water_latent_vaporization_J_kg(double temperature_K)
{
    const double t = temperature_K;
    if (t < SL_T_TRIPLE_K)
        return (56579.0 - 42.212 * t + exp(0.1149 * (281.6 - t))) / M_W;
    /* Quartic fitted by us to IAPWS-95 (see the file comment). */
    const double u = (t - 273.15) / 100.0;
    return 2.5008418254e+06 +
           u * (-2.3629694217e+05 + u * (7.9015939059e+02 + u * (-6.4020584735e+03 + u * -2.5302649944e+03)));
}

double sl_water_latent_fusion_J_kg(double temperature_K)
{
    return sl_water_latent_sublimation_J_kg(temperature_K) -
           sl_water_latent_vaporization_J_kg(temperature_K);
}

double sl_water_virtual_temperature_K(double temperature_K, double specific_humidity)
{
    /* Tv = T (1 + q (1/eps - 1)) = T / (1 - x (1 - eps)): the temperature
     * dry air would need to have the density of the moist air at the same
     * pressure (x the mole fraction). */
    return temperature_K * (1.0 + specific_humidity * (1.0 / EPS_W - 1.0));
}

double sl_water_moist_air_density_kg_m3(double pressure_Pa, double temperature_K, double h2o_mole_fraction)
{
    const double pv = h2o_mole_fraction * pressure_Pa;
    const double pd = pressure_Pa - pv;
    return pd / (SL_R_DRY_AIR_J_KG_K * temperature_K) + pv / (SL_R_VAPOR_J_KG_K * temperature_K);
}

double sl_water_mixing_ratio_from_mole_fraction(double x) { return EPS_W * x / (1.0 - x); }
double sl_water_mole_fraction_from_mixing_ratio(double r) { return r / (EPS_W + r); }
double sl_water_specific_humidity_from_mixing_ratio(double r) { return r / (1.0 + r); }
double sl_water_mixing_ratio_from_specific_humidity(double q) { return q / (1.0 - q); }

/* Boiling temperature of pure water at pressure p: invert the IAPWS 1992
 * saturation curve by Newton's method on ln p (d ln p/dT from a centred
 * difference; the curve is smooth and monotone, 6 steps reach 1e-10 K). */
double sl_water_boiling_point_K(double p)
{
    if (!(p >= 600.0 && p < 22.064e6)) /* from just below the triple point */
        return NAN;
    const double lp = log(p);
    double t = 373.15 + 28.0 * (lp - log(101325.0)); /* rough start */
    if (t < SL_T_TRIPLE_K)
        t = SL_T_TRIPLE_K;
    if (t > 640.0)
        t = 640.0;
    for (int i = 0; i < 30; i++) {
        const double h = 1e-3;
        const double f = log(esat_liquid_wp(t)) - lp;
        const double df = (log(esat_liquid_wp(t + h)) - log(esat_liquid_wp(t - h))) / (2.0 * h);
        double step = f / df;
        if (step > 50.0)
            step = 50.0;
        if (step < -50.0)
            step = -50.0;
        t -= step;
        if (t < 260.0)
            t = 260.0;
        if (t > 646.0)
            t = 646.0;
        if (fabs(step) < 1e-10)
            break;
    }
    return t;
}

double sl_water_seawater_vaporization_J_kg(double sea_temperature_K, double salinity_g_kg, double pressure_Pa)
{
    if (!(pressure_Pa >= SL_P_TRIPLE_PA && pressure_Pa < 22.0e6) || !(salinity_g_kg >= 0.0) ||
        !(salinity_g_kg < 300.0) || !(sea_temperature_K >= 250.0 && sea_temperature_K < 647.0))
        return NAN;
    const double s = salinity_g_kg * 1e-3;                     /* kg salt per kg sea water */
    const double cp_sw = SL_CP_LIQUID_J_KG_K + (3991.86795711963 - SL_CP_LIQUID_J_KG_K) * salinity_g_kg / 35.16504;
    const double tb = sl_water_boiling_point_K(pressure_Pa);
    const double heat_up = tb > sea_temperature_K ? cp_sw * (tb - sea_temperature_K) : 0.0;
    return (heat_up + (1.0 - s) * sl_water_latent_vaporization_J_kg(tb)) / (1.0 - s);
}
