/* units: physical constants and the conversions used at the input/output
 * boundary.  Inside the program everything is SI with the unit in the name;
 * other units (km, km/s, degrees, Mt TNT, Tg, ppmv, precipitable micrometres,
 * years, days) exist only where a value enters or leaves, and they are
 * converted here and nowhere else.
 *
 * Each constant names its source and whether the value is exact by
 * definition, seen in the source, or quoted from memory. */
#ifndef STEAMLOFT_UNITS_H
#define STEAMLOFT_UNITS_H

/* ---- Defining constants of the U.S. Standard Atmosphere 1976
 *      (NOAA-S/T 76-1562, Table 2; SEEN). */
#define SL_USSA_G0_M_S2 9.80665              /* standard gravity, m s-2 (exact, also CGPM 1901) */
#define SL_USSA_RSTAR_J_KMOL_K 8314.32       /* gas constant used by USSA76, J kmol-1 K-1 */
#define SL_USSA_M0_KG_KMOL 28.9644           /* sea-level mean molar mass of air, kg kmol-1 */
#define SL_USSA_R0_M 6356766.0               /* Earth radius for geopotential, m */
#define SL_USSA_P0_PA 101325.0               /* sea-level pressure, Pa */
#define SL_USSA_T0_K 288.15                  /* sea-level temperature, K */

/* ---- CODATA 2018 (SI 2019 exact values; NIST, seen in common practice). */
#define SL_AVOGADRO_PER_MOL 6.02214076e23    /* exact */
#define SL_BOLTZMANN_J_K 1.380649e-23        /* exact */
#define SL_GAS_CONSTANT_J_MOL_K 8.314462618  /* N_A k, exact to the digits shown */

/* ---- Molar masses. */
#define SL_MOLAR_MASS_DRY_AIR_KG_MOL 0.0289644 /* USSA76 M0 in kg mol-1 */
#define SL_MOLAR_MASS_H2O_KG_MOL 0.01801528    /* IUPAC atomic weights H 1.00794, O 15.9994 (memory) */

/* ---- Earth.  Mean radius R1 of the IUGG/GRS80 ellipsoid (Moritz 2000,
 *      memory); the sphere's area 4 pi R1^2 is used for global burdens. */
#define SL_EARTH_MEAN_RADIUS_M 6371008.8
#define SL_EARTH_AREA_M2 (4.0 * 3.14159265358979323846 * SL_EARTH_MEAN_RADIUS_M * SL_EARTH_MEAN_RADIUS_M)

/* ---- Conventions. */
#define SL_J_PER_MT_TNT 4.184e15             /* 1 Mt TNT, convention (1 kt = 4.184e12 J) */
#define SL_KG_PER_TG 1.0e9                   /* teragram */
#define SL_S_PER_DAY 86400.0
#define SL_DAYS_PER_YEAR 365.25              /* Julian year, IAU convention */
#define SL_S_PER_YEAR (SL_DAYS_PER_YEAR * SL_S_PER_DAY)
#define SL_RHO_LIQUID_WATER_KG_M3 1000.0     /* convention for precipitable water depth */
#define SL_PI 3.14159265358979323846

/* ---- Conversions at the boundary. */
static inline double sl_km_to_m(double km) { return km * 1.0e3; }
static inline double sl_m_to_km(double m) { return m * 1.0e-3; }
static inline double sl_km_s_to_m_s(double km_s) { return km_s * 1.0e3; }
static inline double sl_m_s_to_km_s(double m_s) { return m_s * 1.0e-3; }
static inline double sl_deg_to_rad(double deg) { return deg * (SL_PI / 180.0); }
static inline double sl_rad_to_deg(double rad) { return rad * (180.0 / SL_PI); }
static inline double sl_mt_to_j(double mt) { return mt * SL_J_PER_MT_TNT; }
static inline double sl_j_to_mt(double j) { return j / SL_J_PER_MT_TNT; }
static inline double sl_tg_to_kg(double tg) { return tg * SL_KG_PER_TG; }
static inline double sl_kg_to_tg(double kg) { return kg / SL_KG_PER_TG; }
static inline double sl_ppmv_to_mole_fraction(double ppmv) { return ppmv * 1.0e-6; }
static inline double sl_mole_fraction_to_ppmv(double x) { return x * 1.0e6; }
static inline double sl_hpa_to_pa(double hpa) { return hpa * 100.0; }
static inline double sl_pa_to_hpa(double pa) { return pa * 0.01; }
static inline double sl_days_to_s(double d) { return d * SL_S_PER_DAY; }
static inline double sl_s_to_days(double s) { return s / SL_S_PER_DAY; }
static inline double sl_years_to_s(double y) { return y * SL_S_PER_YEAR; }
static inline double sl_s_to_years(double s) { return s / SL_S_PER_YEAR; }
/* Precipitable depth of a water column: 1 um of liquid water = 1e-3 kg m-2. */
static inline double sl_kg_m2_to_precip_um(double kg_m2) { return kg_m2 / SL_RHO_LIQUID_WATER_KG_M3 * 1.0e6; }
static inline double sl_precip_um_to_kg_m2(double um) { return um * 1.0e-6 * SL_RHO_LIQUID_WATER_KG_M3; }
/* Mass mixing ratio of water in dry air <-> mole fraction of water. */
static inline double sl_mass_ratio_h2o_air(void) { return SL_MOLAR_MASS_H2O_KG_MOL / SL_MOLAR_MASS_DRY_AIR_KG_MOL; }

#endif
