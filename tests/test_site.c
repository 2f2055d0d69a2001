/* Tests of the site-aware defaults (site.c): the climate-zone choice from
 * latitude and month (band edges, seasons, the hemisphere flip, month 0) and
 * the zonal-mean sea-surface climatology of Neale & Hoskins (2000, Atmos.
 * Sci. Lett. 1, 101-107, "Qobs": 27 (1 - (sin^2 f + sin^4 f)/2) deg C, f = 1.5
 * latitude, 0 deg C beyond 60 deg; the formula SEEN in a published aquaplanet
 * configuration, MEM-high as the paper's), and a tropical site run through
 * the chain without an atmosphere key. */
#include "sl_test.h"

#include "steamloft/chain.h"
#include "steamloft/site.h"

#include <string.h>

START_TEST(test_zone_rule)
{
    /* The rule of site.h (PRACTICE: band edges halfway between the AFGL
     * reference latitudes 15, 45 and 60 deg; summer April-September north). */
    static const struct {
        double lat;
        int month;
        const char *want;
    } cases[] = {
        {5.0, 1, "tropical"},           {-29.9, 7, "tropical"},          {0.0, 0, "tropical"},
        {30.0, 7, "midlatitude-summer"}, {45.0, 1, "midlatitude-winter"}, {-45.0, 1, "midlatitude-summer"},
        {-45.0, 7, "midlatitude-winter"}, {52.4, 4, "midlatitude-summer"}, {52.5, 9, "subarctic-summer"},
        {65.0, 10, "subarctic-winter"}, {-70.0, 12, "subarctic-summer"}, {-70.0, 6, "subarctic-winter"},
        {45.0, 0, "us1976-humid"},      {-80.0, 0, "us1976-humid"},      {90.0, 3, "subarctic-winter"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char why[192];
        const char *got = sl_site_atmosphere(cases[i].lat, cases[i].month, why, sizeof why);
        ck_assert_msg(strcmp(got, cases[i].want) == 0, "lat %g month %d: %s, want %s", cases[i].lat,
                      cases[i].month, got, cases[i].want);
        ck_assert_msg(strstr(why, cases[i].want) != NULL, "reason '%s' does not name %s", why, cases[i].want);
    }
}
END_TEST

START_TEST(test_sea_surface_climatology)
{
    /* Qobs values worked by hand from the published formula (DERIVED):
     * equator 27 deg C; 30 deg: sin 45 = 0.7071, s^2 = 0.5, s^4 = 0.25,
     * 27 (1 - 0.375) = 16.875 deg C; 60 deg and beyond 0 deg C; symmetric. */
    char why[192];
    SL_CK_ABS(sl_site_sea_surface_K(0.0, 0, why, sizeof why), 300.15, 1e-9);
    ck_assert_msg(strstr(why, "Neale & Hoskins 2000") != NULL, "%s", why);
    SL_CK_ABS(sl_site_sea_surface_K(30.0, 0, NULL, 0), 290.025, 1e-9);
    SL_CK_ABS(sl_site_sea_surface_K(-30.0, 0, NULL, 0), 290.025, 1e-9);
    SL_CK_ABS(sl_site_sea_surface_K(60.0, 0, NULL, 0), 273.15, 1e-9);
    SL_CK_ABS(sl_site_sea_surface_K(-75.0, 0, NULL, 0), 273.15, 1e-9);
    /* Annual cycle (site.h, MEM of the monthly climatologies): the northern
     * mid-latitude oceans are about 6 K warmer in August than in February
     * (range 5-8 K, MEM); the southern ones warmest in February with a smaller
     * range (2-4 K, MEM); the equator within 1.5 K all year; the twelve months
     * average to the annual mean (a single harmonic, DERIVED, to rounding). */
    double nh = sl_site_sea_surface_K(40.0, 8, NULL, 0) - sl_site_sea_surface_K(40.0, 2, NULL, 0);
    double sh = sl_site_sea_surface_K(-40.0, 2, NULL, 0) - sl_site_sea_surface_K(-40.0, 8, NULL, 0);
    SL_CK_RANGE(nh, 5.0, 8.0);
    SL_CK_RANGE(sh, 2.0, 4.0);
    for (int m = 1; m <= 12; m++)
        SL_CK_ABS(sl_site_sea_surface_K(2.0, m, NULL, 0), sl_site_sea_surface_K(2.0, 0, NULL, 0), 1.5);
    double sum = 0.0;
    for (int m = 1; m <= 12; m++)
        sum += sl_site_sea_surface_K(25.0, m, NULL, 0);
    SL_CK_ABS(sum / 12.0, sl_site_sea_surface_K(25.0, 0, NULL, 0), 1e-9);
    /* Never below the freezing point of sea water (-1.8 deg C, PRACTICE). */
    SL_CK_ABS(sl_site_sea_surface_K(75.0, 2, NULL, 0), 273.15 - 1.0, 1e-9);
    ck_assert(sl_site_sea_surface_K(-80.0, 8, NULL, 0) >= 271.35 - 1e-9);
    /* Every latitude gives a value inside the scenario key's range (271-310 K). */
    for (double lat = -90.0; lat <= 90.0; lat += 0.5) {
        double t = sl_site_sea_surface_K(lat, 0, NULL, 0);
        ck_assert(t >= 271.0 && t <= 310.0);
    }
}
END_TEST

START_TEST(test_tropical_site_through_the_chain)
{
    /* A site at 5 deg N without an atmosphere or sea-surface key (the shipped
     * ensemble example's place): the chain runs on the tropical profile, with
     * the Qobs sea surface (299.92 K at 5 deg), and records why. */
    sl_scenario sc;
    sl_err e = {0};
    ck_assert_msg(sl_scenario_load_string(&sc, "tropic.ini",
                                          "[explosion]\nenergy_Mt = 1\n[site]\nlatitude_deg = 5\nmonth = 3\n",
                                          &e) == SL_OK,
                  "%s", e.msg);
    sl_chain ch = {0};
    ck_assert_msg(sl_chain_run(&sc, &ch, &e) == SL_OK, "%s", e.msg);
    ck_assert_str_eq(ch.atmosphere.name, "tropical");
    ck_assert(ch.site.atmosphere_derived && ch.site.sea_surface_derived);
    /* s = sin 7.5 deg: 26.766 deg C, plus the March cycle at 5 N: half-amplitude
     * 0.625 K times cos(2 pi (3 - 8)/12) = -0.866, -0.541 K (DERIVED). */
    SL_CK_ABS(ch.site.sea_surface_K, 299.916 - 0.541, 2e-3);
    ck_assert(strstr(ch.site.atmosphere_why, "tropical") != NULL);
    ck_assert(strstr(ch.site.sea_surface_why, "Neale & Hoskins 2000") != NULL);
    char line[640];
    ck_assert(sl_site_describe(&ch.site, &ch.atmosphere, line, sizeof line));
    ck_assert_msg(strstr(line, "no atmosphere given") && strstr(line, "no sea-surface"), "%s", line);
    /* A given key is kept and said so. */
    ck_assert_msg(sl_scenario_load_string(&sc, "given.ini",
                                          "[explosion]\nenergy_Mt = 1\n[site]\nlatitude_deg = 5\n"
                                          "atmosphere = subarctic-winter\nsea_surface_temperature_K = 280\n",
                                          &e) == SL_OK,
                  "%s", e.msg);
    ck_assert_msg(sl_chain_run(&sc, &ch, &e) == SL_OK, "%s", e.msg);
    ck_assert_str_eq(ch.atmosphere.name, "subarctic-winter");
    ck_assert(!ch.site.atmosphere_derived && !ch.site.sea_surface_derived);
    SL_CK_ABS(ch.site.sea_surface_K, 280.0, 1e-12);
    ck_assert(!sl_site_describe(&ch.site, &ch.atmosphere, line, sizeof line));
    sl_chain_free(&ch);
}
END_TEST

START_TEST(test_chain_switches_profiles)
{
    /* Members at different latitudes switch profiles (an ensemble over the
     * site): each run uses exactly the profile a fresh chain builds, the
     * built-ins set aside are taken back (no rebuild), and free releases all. */
    static const double lats[] = {5.0, 45.0, -65.0, 5.0, 45.0, 5.0};
    static const char *want[] = {"tropical", "midlatitude-summer", "subarctic-winter",
                                 "tropical", "midlatitude-summer", "tropical"};
    sl_chain ch = {0};
    sl_err e = {0};
    for (size_t k = 0; k < sizeof lats / sizeof lats[0]; k++) {
        char text[160];
        snprintf(text, sizeof text, "[explosion]\nenergy_Mt = 1\n[site]\nlatitude_deg = %g\nmonth = 7\n", lats[k]);
        sl_scenario sc;
        ck_assert_msg(sl_scenario_load_string(&sc, "m.ini", text, &e) == SL_OK, "%s", e.msg);
        ck_assert_msg(sl_chain_run(&sc, &ch, &e) == SL_OK, "%s", e.msg);
        ck_assert_str_eq(ch.atmosphere.name, want[k]);
        sl_atmosphere fresh;
        ck_assert_msg(sl_atmosphere_init(&fresh, want[k], &e) == SL_OK, "%s", e.msg);
        ck_assert_uint_eq(ch.atmosphere.n, fresh.n);
        for (size_t i = 0; i < fresh.n; i++)
            ck_assert(ch.atmosphere.pressure_Pa[i] == fresh.pressure_Pa[i] &&
                      ch.atmosphere.temperature_K[i] == fresh.temperature_K[i]);
        sl_atmosphere_free(&fresh);
    }
    sl_chain_free(&ch);
}
END_TEST

static Suite *site_suite(void)
{
    sl_err_gsl_handler_off();
    Suite *s = suite_create("site");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, test_zone_rule);
    tcase_add_test(tc, test_sea_surface_climatology);
    tcase_add_test(tc, test_tropical_site_through_the_chain);
    tcase_add_test(tc, test_chain_switches_profiles);
    suite_add_tcase(s, tc);
    return s;
}

SL_TEST_MAIN(site_suite)
