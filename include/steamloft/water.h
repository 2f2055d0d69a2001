/* water: thermodynamics of water substance for the plume and the freeze-out.
 * Saturation vapour pressure over ice and over liquid (Murphy & Koop 2005,
 * QJRMS 131, 1539), frost point, latent heats with their temperature
 * dependence, virtual temperature, moist-air density, humidity conversions,
 * and the heat needed to turn sea water into vapour (salt stays behind).
 * Pure functions of their arguments: no state, no allocation. */
#ifndef STEAMLOFT_WATER_H
#define STEAMLOFT_WATER_H

/* Specific heats and gas constants used throughout (sources in water.c). */
#define SL_CP_DRY_AIR_J_KG_K 1004.64   /* dry air at constant pressure */
#define SL_CP_VAPOR_J_KG_K 1865.0      /* water vapour, near 0-100 C */
#define SL_CP_LIQUID_J_KG_K 4186.0     /* liquid water */
#define SL_CP_ICE_J_KG_K 2106.0        /* ice near 0 C */
#define SL_R_DRY_AIR_J_KG_K 287.053    /* USSA76 R-star over M0 */
#define SL_R_VAPOR_J_KG_K 461.52       /* R / M_H2O */
#define SL_T_TRIPLE_K 273.16
#define SL_P_TRIPLE_PA 611.657

/* All functions return NaN for arguments outside their physical domain
 * (non-positive temperature or pressure, ...). */

/* Saturation vapour pressure over plane ice, Pa (Murphy & Koop eq. 7), T > 110 K. */
double sl_water_esat_ice_Pa(double temperature_K);
/* Over plane liquid water, Pa: supercooled (below 273.16 K) Murphy & Koop
 * eq. 10 (123-273.16 K); at and above 273.16 K the IAPWS 1992 equation of
 * Wagner & Pruss (to the critical point 647.096 K). */
double sl_water_esat_liquid_Pa(double temperature_K);
/* Over liquid above 273.16 K, over ice below: the phase the plume condenses into. */
double sl_water_esat_Pa(double temperature_K);
/* The same pressure as sl_water_esat_Pa (to the last bit), with the first and
 * second derivatives of its logarithm in T (K^-1, K^-2) from the same
 * equations, for Newton-type solves; NaN outside 0-647.096 K. */
double sl_water_esat_slopes_Pa(double temperature_K, double *dln_dT, double *d2ln_dT2);
/* Frost point for water partial pressure E_PA, K: the exact inverse of
 * sl_water_esat_ice_Pa (Newton, started from Murphy & Koop eq. 8). */
double sl_water_frost_point_K(double vapor_pressure_Pa);
/* Boiling point of pure water at pressure P (611.657 Pa - 22 MPa), K: the
 * inverse of sl_water_esat_liquid_Pa above the triple point. */
double sl_water_boiling_point_K(double pressure_Pa);
/* Latent heats, J kg-1, as functions of temperature: sublimation Murphy & Koop
 * eq. 5; vaporisation Murphy & Koop eq. 9 below 273.16 K and a fit to IAPWS-95
 * from 273.16 to 500 K; fusion their difference. */
double sl_water_latent_vaporization_J_kg(double temperature_K);
double sl_water_latent_sublimation_J_kg(double temperature_K);
double sl_water_latent_fusion_J_kg(double temperature_K);
/* Virtual temperature for specific humidity Q (kg/kg of moist air), K. */
double sl_water_virtual_temperature_K(double temperature_K, double specific_humidity);
/* Density of moist air, kg m-3, from p, T and the water mole fraction. */
double sl_water_moist_air_density_kg_m3(double pressure_Pa, double temperature_K, double h2o_mole_fraction);
/* Conversions between water mole fraction x, mass mixing ratio r (kg per kg of
 * dry air) and specific humidity q (kg per kg of moist air). */
double sl_water_mixing_ratio_from_mole_fraction(double x);
double sl_water_mole_fraction_from_mixing_ratio(double r);
double sl_water_specific_humidity_from_mixing_ratio(double r);
double sl_water_mixing_ratio_from_specific_humidity(double q);
/* Heat to take 1 kg of sea water of SALINITY_G_KG from T0 to vapour at the
 * boiling point and pressure P (salt left behind), J per kg of vapour. */
double sl_water_seawater_vaporization_J_kg(double sea_temperature_K, double salinity_g_kg, double pressure_Pa);

#endif
