/* Unit tests for the units module: constants against their published values,
 * conversions, and the unit-suffix table. */
#include "sl_test.h"
#include "steamloft/units.h"
#include "steamloft/units_table.h"

START_TEST(test_ussa76_constants)
{
    /* U.S. Standard Atmosphere 1976 defining constants (NOAA-S/T 76-1562;
     * climate-facts.md section 7, SEEN). Exact comparison: these are defined values. */
    ck_assert(SL_USSA_G0_M_S2 == 9.80665);
    ck_assert(SL_USSA_RSTAR_J_KMOL_K == 8314.32);
    ck_assert(SL_USSA_M0_KG_KMOL == 28.9644);
    ck_assert(SL_USSA_R0_M == 6356766.0);
    ck_assert(SL_USSA_P0_PA == 101325.0);
    ck_assert(SL_USSA_T0_K == 288.15);
    /* Derived specific gas constant 287.053 J/kg/K and sea-level density
     * 1.2250 kg/m3 (USSA76 table, SEEN in climate-facts.md section 7); tolerance
     * half a unit in the last printed digit. */
    double r_air = SL_USSA_RSTAR_J_KMOL_K / SL_USSA_M0_KG_KMOL;
    SL_CK_ABS(r_air, 287.053, 0.0005);
    SL_CK_ABS(SL_USSA_P0_PA / (r_air * SL_USSA_T0_K), 1.2250, 0.00005);
}
END_TEST

START_TEST(test_codata)
{
    /* CODATA 2018 / SI 2019 exact constants (PRACTICE: the SI definition). */
    ck_assert(SL_AVOGADRO_PER_MOL == 6.02214076e23);
    ck_assert(SL_BOLTZMANN_J_K == 1.380649e-23);
    SL_CK_REL(SL_AVOGADRO_PER_MOL * SL_BOLTZMANN_J_K, SL_GAS_CONSTANT_J_MOL_K, 1e-9);
    /* USSA76 R* differs from CODATA by 13 ppm (known; USSA76 predates CODATA 2018). */
    SL_CK_REL(SL_USSA_RSTAR_J_KMOL_K / 1000.0, SL_GAS_CONSTANT_J_MOL_K, 2e-5);
    /* Molar-mass ratio water/air 0.622 (climate-facts.md section 1, CALC; the
     * classic epsilon = 0.622 of meteorology textbooks, MEM). */
    SL_CK_ABS(sl_mass_ratio_h2o_air(), 0.622, 0.0005);
}
END_TEST

START_TEST(test_conversions)
{
    /* 1 Mt TNT = 4.184e15 J (convention, impact-facts.md section 6, MEM-high). */
    ck_assert(sl_mt_to_j(1.0) == 4.184e15);
    SL_CK_REL(sl_j_to_mt(2.092e15), 0.5, 1e-15);
    /* 1 Tg = 1e9 kg; 146 Tg (Millan et al. 2022) round trip. */
    SL_CK_REL(sl_tg_to_kg(146.0), 1.46e11, 1e-15);
    SL_CK_REL(sl_kg_to_tg(sl_tg_to_kg(146.0)), 146.0, 1e-15);
    /* 1 ppmv = 1e-6 mol/mol. */
    SL_CK_REL(sl_ppmv_to_mole_fraction(4.0), 4.0e-6, 1e-15);
    SL_CK_REL(sl_mole_fraction_to_ppmv(7.4e-6), 7.4, 1e-14);
    /* 1 um precipitable = 1e-3 kg/m2 at 1000 kg/m3 (PRACTICE).  The AFGL
     * tropical column 1.86e-3 kg/m2 = 1.9 um (climate-facts.md section 1, CALC). */
    SL_CK_REL(sl_kg_m2_to_precip_um(1.86e-3), 1.86, 1e-12);
    SL_CK_REL(sl_precip_um_to_kg_m2(1.86), 1.86e-3, 1e-12);
    SL_CK_REL(sl_km_s_to_m_s(19.16), 19160.0, 1e-15);
    SL_CK_REL(sl_deg_to_rad(180.0), SL_PI, 1e-15);
    SL_CK_REL(sl_rad_to_deg(sl_deg_to_rad(18.0)), 18.0, 1e-14);
    SL_CK_REL(sl_s_to_years(sl_years_to_s(2.5)), 2.5, 1e-15);
    /* Julian year 365.25 d = 31 557 600 s (IAU, PRACTICE). */
    ck_assert(SL_S_PER_YEAR == 31557600.0);
    /* Earth area 5.10066e14 m2 for R1 = 6371008.8 m (climate-facts.md uses
     * 5.1007e14, CALC); tolerance 1e-5 from the quoted digits. */
    SL_CK_REL(SL_EARTH_AREA_M2, 5.1007e14, 1e-5);
}
END_TEST

START_TEST(test_unit_table)
{
    const sl_unit *u = sl_units_for_key("speed_km_s");
    ck_assert_ptr_nonnull(u);
    ck_assert_str_eq(u->suffix, "km_s");
    ck_assert(u->to_si == 1000.0);
    u = sl_units_for_key("density_kg_m3");
    ck_assert_ptr_nonnull(u);
    ck_assert_str_eq(u->suffix, "kg_m3");
    u = sl_units_for_key("energy_Mt");
    ck_assert_ptr_nonnull(u);
    ck_assert(u->to_si == 4.184e15);
    u = sl_units_for_key("angle_deg");
    ck_assert_ptr_nonnull(u);
    SL_CK_REL(45.0 * u->to_si, SL_PI / 4.0, 1e-15);
    ck_assert_ptr_null(sl_units_for_key("water_mass_fraction"));
    ck_assert_ptr_null(sl_units_for_key("m"));
    ck_assert_ptr_null(sl_units_lookup("furlong"));
}
END_TEST

static Suite *units_suite(void)
{
    Suite *s = suite_create("units");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, test_ussa76_constants);
    tcase_add_test(tc, test_codata);
    tcase_add_test(tc, test_conversions);
    tcase_add_test(tc, test_unit_table);
    suite_add_tcase(s, tc);
    return s;
}

SL_TEST_MAIN(units_suite)
