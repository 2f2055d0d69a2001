/* Tests of the command-line helpers in src/cli.c that commands share:
 * `decay --between` (altitudes that look like kilometres are refused with
 * the fix), and where a scenario key came from in messages
 * (sl_scenario_where: file line, --set, table column, default). */
#include "sl_test.h"

#include "steamloft/cli.h"
#include "steamloft/scenario.h"

#include <string.h>

START_TEST(between_metres_accepted)
{
    sl_err e = {0};
    double b = -1, t = -1;
    ck_assert_int_eq(sl_cli_between_m("22000", "27000", 1e5, &b, &t, &e), SL_OK);
    ck_assert(b == 22000.0 && t == 27000.0);
    /* A layer from the ground up to a tropospheric height is metres too. */
    ck_assert_int_eq(sl_cli_between_m("0", "121", 1e5, &b, &t, &e), SL_OK);
    ck_assert(b == 0.0 && t == 121.0);
}
END_TEST

START_TEST(between_kilometres_refused_with_the_fix)
{
    sl_err e = {0};
    double b = -1, t = -1;
    ck_assert_int_eq(sl_cli_between_m("22", "27", 1e5, &b, &t, &e), SL_EUSAGE);
    ck_assert_msg(strstr(e.msg, "--between 22 27: the altitudes are in metres and these look like "
                                "kilometres; for 22 to 27 km write --between 22000 27000") != NULL,
                  "%s", e.msg);
    ck_assert_msg(b == -1 && t == -1, "outputs changed on an error");
    /* The top of the 120 m limit is still kilometres; fractions too. */
    ck_assert_int_eq(sl_cli_between_m("100", "120", 1e5, &b, &t, &e), SL_EUSAGE);
    ck_assert_msg(strstr(e.msg, "write --between 100000 120000") != NULL, "%s", e.msg);
    ck_assert_int_eq(sl_cli_between_m("17.5", "22.25", 1e5, &b, &t, &e), SL_EUSAGE);
    ck_assert_msg(strstr(e.msg, "write --between 17500 22250") != NULL, "%s", e.msg);
}
END_TEST

START_TEST(between_other_mistakes)
{
    sl_err e = {0};
    double b = -1, t = -1;
    ck_assert_int_eq(sl_cli_between_m("27000", "22000", 1e5, &b, &t, &e), SL_EUSAGE);
    ck_assert_msg(strstr(e.msg, "need 0 <= BOTTOM_M < TOP_M <= 100000 m") != NULL, "%s", e.msg);
    ck_assert_int_eq(sl_cli_between_m("-5", "20000", 1e5, &b, &t, &e), SL_EUSAGE);
    ck_assert_int_eq(sl_cli_between_m("20000", "150000", 1e5, &b, &t, &e), SL_EUSAGE);
    ck_assert_msg(strstr(e.msg, "--between 20000 150000") != NULL, "%s", e.msg);
    ck_assert_int_eq(sl_cli_between_m("20km", "25000", 1e5, &b, &t, &e), SL_EUSAGE);
    ck_assert_msg(strstr(e.msg, "--between BOTTOM_M: '20km' is not a finite number") != NULL, "%s",
                  e.msg);
    ck_assert_int_eq(sl_cli_between_m("20000", "nan", 1e5, &b, &t, &e), SL_EUSAGE);
    ck_assert_msg(strstr(e.msg, "--between TOP_M") != NULL, "%s", e.msg);
    ck_assert_msg(b == -1 && t == -1, "outputs changed on an error");
}
END_TEST

START_TEST(where_names_the_origin)
{
    sl_err e = {0};
    sl_scenario sc;
    const char *text = "[impactor]\ndiameter_m = 200\nspeed_km_s = 18\ndensity_kg_m3 = 2700\n[site]\nlatitude_deg = -8\n";
    ck_assert_msg(sl_scenario_read_string(&sc, "t.ini", text, &e) == SL_OK, "%s", e.msg);
    ck_assert_msg(sl_scenario_override(&sc, "site.atmosphere=tropical", &e) == SL_OK, "%s", e.msg);
    ck_assert_msg(sl_scenario_override_column(&sc, "impactor.angle_deg=30", &e) == SL_OK, "%s", e.msg);
    ck_assert_msg(sl_scenario_finish(&sc, &e) == SL_OK, "%s", e.msg);
    char at[SL_SCENARIO_PATH_LEN + 64];
    sl_scenario_where(&sc, SL_P_IMPACTOR_SPEED, at, sizeof at);
    ck_assert_str_eq(at, "t.ini:3: [impactor] speed_km_s");
    sl_scenario_where(&sc, SL_P_SITE_ATMOSPHERE, at, sizeof at);
    ck_assert_str_eq(at, "t.ini: --set site.atmosphere");
    sl_scenario_where(&sc, SL_P_IMPACTOR_ANGLE, at, sizeof at);
    ck_assert_str_eq(at, "t.ini: column impactor.angle_deg");
    sl_scenario_where(&sc, SL_P_SITE_OCEAN_DEPTH, at, sizeof at);
    ck_assert_str_eq(at, "t.ini: [site] ocean_depth_m");
    /* Truncated, never overrun. */
    char small[8];
    sl_scenario_where(&sc, SL_P_IMPACTOR_SPEED, small, sizeof small);
    ck_assert_str_eq(small, "t.ini:3");
}
END_TEST

static Suite *cli_suite(void)
{
    Suite *s = suite_create("cli");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, between_metres_accepted);
    tcase_add_test(tc, between_kilometres_refused_with_the_fix);
    tcase_add_test(tc, between_other_mistakes);
    tcase_add_test(tc, where_names_the_origin);
    suite_add_tcase(s, tc);
    return s;
}

SL_TEST_MAIN(cli_suite)
