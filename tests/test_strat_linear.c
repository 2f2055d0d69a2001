/* The box model by its linear response (sl_strat_run_linear) against the
 * direct integration (sl_strat_run), which stays the reference: every scalar
 * result and every global series agree within 1e-9 relative (PRACTICE: the
 * two differ only in the order of the sums, ~1e-15; 1e-9 is the bar the
 * performance work promised for member outputs), for injections in the
 * tropics, across the tropical edge ramp, in both extratropics, with the
 * seasonal polar sink, with several internal steps per output step, with
 * nothing above the tropopause, and with an injection large enough for the
 * cold-point clip to act (where the direct path must be taken). */
#include "sl_test.h"

#include "steamloft/strat.h"
#include "steamloft/units.h"

#include <string.h>

#include "strat_fixture.h"

/* |a - b| <= 1e-9 max(|a|, |b|), or both below TINY (a zero against a rounding). */
static void close_to(const char *what, size_t i, double a, double b, double tiny)
{
    double scale = fmax(fabs(a), fabs(b));
    ck_assert_msg((isnan(a) && isnan(b)) || fabs(a - b) <= 1e-9 * scale || scale <= tiny,
                  "%s[%zu]: linear %.17g, direct %.17g", what, i, a, b);
}

/* Run both paths on MASS_KG spread over [Z0, Z1] at LAT_DEG; *SHORT gets 1
 * when the linear path took its short route (no detail series). */
static void compare(const fixture *f, const sl_strat_params *p, double mass_kg, double z0_m, double z1_m,
                    double lat_deg, int *short_path)
{
    sl_err e = {0};
    sl_strat_model m;
    sl_strat_result a, b;
    sl_strat_response rs;
    sl_injection inj;
    memset(&inj, 0, sizeof inj);
    ck_assert_int_eq(sl_strat_model_init(&m, p, f->atm, &e), SL_OK);
    ck_assert_int_eq(sl_strat_result_init(&a, &m, &e), SL_OK);
    ck_assert_int_eq(sl_strat_result_init(&b, &m, &e), SL_OK);
    ck_assert_int_eq(sl_strat_response_init(&rs, &m, &e), SL_OK);
    ck_assert_int_eq(sl_injection_init_uniform(&inj, 0.0, 100.0e3, 1.0e3, &e), SL_OK);
    ck_assert_int_eq(sl_injection_add_layer(&inj, mass_kg, 0.0, z0_m, z1_m, &e), SL_OK);
    inj.latitude_deg = lat_deg;
    ck_assert_msg(sl_strat_run_linear(&m, &rs, &inj, &a, &e) == SL_OK, "linear: %s", e.msg);
    ck_assert_msg(sl_strat_run(&m, &inj, &b, &e) == SL_OK, "direct: %s", e.msg);
    *short_path = !a.has_detail;
    ck_assert_int_eq(b.has_detail, 1);
    double tiny = 1e-12 * fmax(mass_kg, 1.0);
    close_to("injected", 0, a.injected_kg, b.injected_kg, tiny);
    close_to("initial_excess", 0, a.initial_excess_kg, b.initial_excess_kg, tiny);
    close_to("not_entered", 0, a.not_entered_kg, b.not_entered_kg, tiny);
    close_to("efolding", 0, a.efolding_s, b.efolding_s, 0.0);
    ck_assert_int_eq(a.efolding_extrapolated, b.efolding_extrapolated);
    close_to("residence", 0, a.mean_residence_s, b.mean_residence_s, 0.0);
    close_to("remaining_1y", 0, a.fraction_remaining_1y, b.fraction_remaining_1y, 1e-15);
    close_to("remaining_3y", 0, a.fraction_remaining_3y, b.fraction_remaining_3y, 1e-15);
    close_to("percent_peak", 0, a.percent_of_background_peak, b.percent_of_background_peak, 1e-20);
    close_to("anomaly_peak", 0, a.peak_global_anomaly_mole_fraction, b.peak_global_anomaly_mole_fraction, 1e-30);
    close_to("column_peak", 0, a.peak_global_column_kg_m2, b.peak_global_column_kg_m2, 1e-30);
    close_to("local_peak", 0, a.peak_local_column_kg_m2, b.peak_local_column_kg_m2, 1e-30);
    close_to("forcing_peak", 0, a.forcing_indicator_W_m2, b.forcing_indicator_W_m2, 1e-30);
    for (size_t i = 0; i < m.n_run; i++) {
        ck_assert(a.time_s[i] == b.time_s[i]);
        close_to("global_excess", i, a.global_excess_kg[i], b.global_excess_kg[i], tiny);
        close_to("percent", i, a.percent_of_background[i], b.percent_of_background[i], 1e-20);
        close_to("local_column", i, a.local_column_kg_m2[i], b.local_column_kg_m2[i], 1e-30);
        close_to("forcing", i, a.forcing_W_m2[i], b.forcing_W_m2[i], 1e-30);
    }
    for (size_t i = 0; i < a.n_early; i++)
        close_to("early_column", i, a.early_column_kg_m2[i], b.early_column_kg_m2[i], 1e-30);
    sl_injection_free(&inj);
    sl_strat_response_free(&rs);
    sl_strat_result_free(&a);
    sl_strat_result_free(&b);
    sl_strat_model_free(&m);
}

START_TEST(test_linear_equals_direct)
{
    fixture f;
    fixture_init(&f);
    sl_strat_params p;
    sl_strat_params_default(&p);
    int sp = 0;
    /* Where: tropics, the edge ramp, both extratropics, the mesosphere. */
    const double lat[] = {0.0, 20.0, -21.0, 45.0, -70.0};
    for (size_t k = 0; k < sizeof lat / sizeof lat[0]; k++) {
        compare(&f, &p, 1.0e9, 18.0e3, 30.0e3, lat[k], &sp);
        ck_assert_msg(sp, "a 1 Tg injection at %g deg did not take the short path", lat[k]);
        compare(&f, &p, 1.0e9, 55.0e3, 80.0e3, lat[k], &sp);
        ck_assert_int_eq(sp, 1);
    }
    /* Seasonal polar sink (event in June) and three internal steps per output step. */
    sl_strat_params q = p;
    q.start_month = 6;
    compare(&f, &q, 5.0e10, 12.0e3, 26.0e3, -60.0, &sp);
    ck_assert_int_eq(sp, 1);
    q = p;
    q.step_s = 3.0 * SL_S_PER_YEAR / 12.0;
    compare(&f, &q, 1.0e9, 20.0e3, 40.0e3, 10.0, &sp);
    ck_assert_int_eq(sp, 1);
    /* Nothing above the tropopause: the direct path (which skips the products). */
    compare(&f, &p, 1.0e9, 0.0, 5.0e3, 0.0, &sp);
    ck_assert_int_eq(sp, 0);
    /* 1000 Tg just above the tropical tropopause: the cold point clips, the
     * response cannot be used, the result is the direct one. */
    compare(&f, &p, 1.0e12, 17.0e3, 19.0e3, 0.0, &sp);
    ck_assert_int_eq(sp, 0);
    fixture_free(&f);
}
END_TEST

START_TEST(test_response_for_other_model)
{
    fixture f;
    fixture_init(&f);
    sl_err e = {0};
    sl_strat_params p, q;
    sl_strat_params_default(&p);
    q = p;
    q.kzz_m2_s *= 2.0;
    sl_strat_model m, m2;
    sl_strat_result r;
    sl_strat_response rs;
    sl_injection inj;
    memset(&inj, 0, sizeof inj);
    ck_assert_int_eq(sl_strat_model_init(&m, &p, f.atm, &e), SL_OK);
    ck_assert_int_eq(sl_strat_model_init(&m2, &q, f.atm, &e), SL_OK);
    ck_assert_int_eq(sl_strat_result_init(&r, &m2, &e), SL_OK);
    ck_assert_int_eq(sl_strat_response_init(&rs, &m, &e), SL_OK);
    ck_assert_int_eq(sl_injection_init_uniform(&inj, 0.0, 100.0e3, 1.0e3, &e), SL_OK);
    ck_assert_int_eq(sl_injection_add_layer(&inj, 1e9, 0.0, 20e3, 30e3, &e), SL_OK);
    ck_assert_int_eq(sl_strat_run_linear(&m2, &rs, &inj, &r, &e), SL_EINTERNAL);
    sl_injection_free(&inj);
    sl_strat_response_free(&rs);
    sl_strat_response_free(&rs); /* safe twice */
    sl_strat_result_free(&r);
    sl_strat_model_free(&m);
    sl_strat_model_free(&m2);
    fixture_free(&f);
}
END_TEST

/* A response built for some regions only (sl_strat_response_init_regions,
 * what an ensemble at one site shares between its threads): the columns it
 * has are the full response's bit for bit, the others zero; it covers the
 * latitudes that inject only into its regions (tropics at 0 deg; the edge
 * ramp needs the tropics and that hemisphere's extratropics), gives the full
 * response's results there, and is refused elsewhere (SL_EINTERNAL), never
 * silently used. */
START_TEST(test_partial_response)
{
    fixture f;
    fixture_init(&f);
    sl_err e = {0};
    sl_strat_params p;
    sl_strat_params_default(&p);
    sl_strat_model m;
    sl_strat_response full, part;
    sl_strat_result a, b;
    ck_assert_int_eq(sl_strat_model_init(&m, &p, f.atm, &e), SL_OK);
    ck_assert_int_eq(sl_strat_result_init(&a, &m, &e), SL_OK);
    ck_assert_int_eq(sl_strat_result_init(&b, &m, &e), SL_OK);
    ck_assert_int_eq(sl_strat_response_init(&full, &m, &e), SL_OK);
    unsigned tropics = sl_strat_regions_of_latitude(&p, 0.0);
    ck_assert_uint_eq(tropics, 1u << SL_STRAT_TROPICS);
    unsigned ramp_n = sl_strat_regions_of_latitude(&p, p.tropics_edge_deg);
    ck_assert_uint_eq(ramp_n, (1u << SL_STRAT_TROPICS) | (1u << SL_STRAT_NORTH));
    ck_assert_uint_eq(sl_strat_regions_of_latitude(&p, -60.0), 1u << SL_STRAT_SOUTH);
    ck_assert_int_eq(sl_strat_response_init_regions(&part, &m, tropics, &e), SL_OK);
    ck_assert_uint_eq(part.regions, tropics);
    size_t nk = m.n_run * SL_STRAT_RESPONSE_ROWS, n_built = 0;
    for (size_t bx = 0; bx < m.n_boxes; bx++) {
        const double *cf = full.rows + bx * nk, *cp = part.rows + bx * nk;
        int built = 0;
        for (size_t k = 0; k < nk; k++)
            built |= cp[k] != 0.0;
        if (built) {
            n_built++;
            ck_assert_msg(memcmp(cf, cp, nk * sizeof *cf) == 0, "box %zu: the partial column differs", bx);
        }
    }
    ck_assert_msg(n_built > 0 && n_built < m.n_boxes, "%zu of %zu columns built", n_built, m.n_boxes);
    ck_assert(sl_strat_response_covers(&part, 0.0));
    ck_assert(!sl_strat_response_covers(&part, p.tropics_edge_deg));
    ck_assert(!sl_strat_response_covers(&part, -60.0));
    ck_assert(sl_strat_response_covers(&full, -60.0));
    sl_injection inj;
    memset(&inj, 0, sizeof inj);
    ck_assert_int_eq(sl_injection_init_uniform(&inj, 0.0, 100.0e3, 1.0e3, &e), SL_OK);
    ck_assert_int_eq(sl_injection_add_layer(&inj, 1.0e9, 0.0, 18.0e3, 30.0e3, &e), SL_OK);
    inj.latitude_deg = 0.0;
    ck_assert_msg(sl_strat_run_linear(&m, &part, &inj, &a, &e) == SL_OK, "%s", e.msg);
    ck_assert_msg(sl_strat_run_linear(&m, &full, &inj, &b, &e) == SL_OK, "%s", e.msg);
    ck_assert(a.efolding_s == b.efolding_s && a.percent_of_background_peak == b.percent_of_background_peak);
    for (size_t i = 0; i < m.n_run; i++)
        ck_assert(a.global_excess_kg[i] == b.global_excess_kg[i]);
    inj.latitude_deg = -60.0;
    ck_assert_int_eq(sl_strat_run_linear(&m, &part, &inj, &a, &e), SL_EINTERNAL);
    sl_injection_free(&inj);
    sl_strat_response_free(&part);
    sl_strat_response_free(&full);
    sl_strat_result_free(&a);
    sl_strat_result_free(&b);
    sl_strat_model_free(&m);
    fixture_free(&f);
}
END_TEST

static Suite *strat_linear_suite(void)
{
    Suite *s = suite_create("strat_linear");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, test_linear_equals_direct);
    tcase_add_test(tc, test_response_for_other_model);
    tcase_add_test(tc, test_partial_response);
    suite_add_tcase(s, tc);
    return s;
}

SL_TEST_MAIN(strat_linear_suite)
