/* Tests of output_csv: the files are read back by code that shares nothing
 * with the writer: profile.csv by the injection module's prescribed-profile
 * reader (sl_injection_read, written independently for the `decay` input)
 * and the series by Python's csv module (/usr/bin/python3).  Numbers carry 10
 * significant digits, so a value read back is within 5e-10 relative of the
 * run's (half a unit in the 10th digit: DERIVED from the print format). */
#include "output_fixture.h"

#include "steamloft/injection.h"
#include "steamloft/output_csv.h"

/* The ensemble's number text: byte for byte the shortest of %.15g, %.16g,
 * %.17g that reads back (the loop it replaces, written out here), on
 * doubles from random bit patterns, random decimals of 15-17 digits (where
 * the rounding ties sit) and the edges. */
static void reference_text(char *buf, double x)
{
    for (int prec = 15; prec <= 17; prec++) {
        snprintf(buf, 40, "%.*g", prec, x);
        if (prec == 17 || strtod(buf, NULL) == x)
            break;
    }
}

START_TEST(number_text_matches_printf)
{
    unsigned long long s = 88172645463325252ULL;
    char a[40], b[40];
    long n_bad = 0;
    const double edge[] = {0.0, -0.0, 1.0, -1.0, 0.1, 1e-5, 1e-4, 9.9999999999999995e-5, 1e15, 1e16, 1e17,
                           999999999999999.9, 9999999999999999.0, 0.30000000000000004, 5e-324, 1.7976931348623157e308,
                           2.2250738585072014e-308, 123456789012345680.0, 0.5, 1.5e300, -2.5e-300};
    for (size_t i = 0; i < sizeof edge / sizeof edge[0]; i++) {
        reference_text(a, edge[i]);
        sl_csv_number_text(b, edge[i]);
        ck_assert_msg(strcmp(a, b) == 0, "%.17g: %s (printf) vs %s", edge[i], a, b);
    }
    for (long i = 0; i < 300000; i++) {
        s ^= s << 13;
        s ^= s >> 7;
        s ^= s << 17;
        double x;
        if (i % 3 == 0) {
            memcpy(&x, &s, sizeof x);
            if (!isfinite(x))
                continue;
        } else {
            /* a decimal of 15-17 digits with a random exponent: ties in the dropped digits */
            char t[48];
            int nd = 15 + (int)(s % 3);
            unsigned long long m = (s >> 8) % 100000000000000000ULL;
            int ex = (int)((s >> 3) % 40) - 20;
            snprintf(t, sizeof t, "%0*llue%d", nd, m % (nd == 15 ? 1000000000000000ULL : nd == 16 ? 10000000000000000ULL : 100000000000000000ULL), ex);
            x = strtod(t, NULL) * ((s & 1) ? -1.0 : 1.0);
        }
        reference_text(a, x);
        sl_csv_number_text(b, x);
        if (strcmp(a, b) != 0 && n_bad++ < 5)
            fprintf(stderr, "%.17g: %s (printf) vs %s\n", x, a, b);
    }
    ck_assert_int_eq(n_bad, 0);
    /* The range of the long-double fast path (1e-11 to 1e16): random
     * significands over every binary exponent there, the doubles next to
     * powers of ten, and decimals of 1-17 digits (short ones read back at 15
     * digits, 16- and 17-digit ones sit on the ties). */
    long n_fast = 0;
    for (long i = 0; i < 400000; i++) {
        s ^= s << 13;
        s ^= s >> 7;
        s ^= s << 17;
        double x;
        int kind = (int)(i % 4);
        if (kind < 2) {
            int be = -37 + (int)((s >> 52) % 91); /* 2^-37 ~ 7e-12 to 2^53 ~ 9e15 */
            x = ldexp(1.0 + (double)(s & 0xFFFFFFFFFFFFFULL) * 0x1p-52, be);
        } else if (kind == 2) {
            x = pow(10.0, (double)((int)(s % 27) - 11));
            for (int k = (int)((s >> 8) % 7) - 3; k != 0; k += k > 0 ? -1 : 1)
                x = nextafter(x, k > 0 ? INFINITY : 0.0);
        } else {
            char t[48];
            int nd = 1 + (int)(s % 17);
            unsigned long long m = (s >> 8) % 100000000000000000ULL, mod = 1;
            for (int k = 0; k < nd; k++)
                mod *= 10;
            snprintf(t, sizeof t, "%llue%d", m % mod, (int)((s >> 3) % 27) - 11 - nd);
            x = strtod(t, NULL);
            if (!(x >= 1e-11 && x < 1e16))
                continue;
        }
        x *= (s & 2) ? -1.0 : 1.0;
        n_fast++;
        reference_text(a, x);
        sl_csv_number_text(b, x);
        if (strcmp(a, b) != 0 && n_bad++ < 5)
            fprintf(stderr, "%.17g: %s (printf) vs %s\n", x, a, b);
    }
    ck_assert_msg(n_fast > 350000, "%ld", n_fast);
    ck_assert_int_eq(n_bad, 0);
}
END_TEST

START_TEST(profile_reads_back_as_injection)
{
    build_fixture(0);
    F.view.title = "a title with key = value inside"; /* must not become metadata */
    mk_tmp();
    char dir[400], path[500];
    snprintf(dir, sizeof dir, "%s/csv", tmpdir);
    sl_err e = {0};
    ck_assert_msg(sl_output_csv_write(&F.view, dir, 0, &e) == SL_OK, "%s", e.msg);
    ck_assert_int_eq(count_entries(dir), 4); /* profile, background, series, series_layers */

    snprintf(path, sizeof path, "%s/profile.csv", dir);
    sl_injection inj = {0};
    ck_assert_msg(sl_injection_read(&inj, path, &e) == SL_OK, "reader: %s", e.msg);
    ck_assert_uint_eq(inj.n_bands, NB);
    double sum = 0;
    for (size_t i = 0; i < NB; i++) {
        SL_CK_ABS(inj.band_bottom_m[i], F.bottom[i], 1e-6); /* whole km: exact in 10 digits */
        SL_CK_ABS(inj.band_top_m[i], F.top[i], 1e-6);
        SL_CK_REL(inj.vapor_kg[i], F.vap[i], 5e-10);
        SL_CK_REL(inj.ice_kg[i], F.ice[i], 5e-10);
        sum += inj.vapor_kg[i];
    }
    SL_CK_REL(sum, F.total_vapor_kg, 5e-10); /* the profile sums to the run's total */
    SL_CK_REL(inj.tropopause_altitude_m, F.inj.tropopause_altitude_m, 1e-12);
    SL_CK_REL(inj.latitude_deg, F.inj.latitude_deg, 1e-12);
    SL_CK_REL(inj.time_s, F.inj.time_s, 1e-12);
    SL_CK_REL(inj.cloud_area_m2, F.inj.cloud_area_m2, 1e-12);
    sl_injection_free(&inj);

    /* Unit header and caution. */
    char out[4096], cmd[1200];
    snprintf(cmd, sizeof cmd, "grep -v '^#' '%s' | head -1; grep -c 'Screening estimate' '%s'",
             path, path);
    ck_assert_int_eq(run_cmd(cmd, out, sizeof out), 0);
    ck_assert_str_eq(out, "bottom_km,top_km,vapor_Tg,ice_Tg\n1\n");
    rm_tmp();
}
END_TEST

/* The series files, read by Python's csv module. */
START_TEST(series_read_by_python)
{
    build_fixture(0);
    mk_tmp();
    char dir[400];
    snprintf(dir, sizeof dir, "%s/csv", tmpdir);
    sl_err e = {0};
    ck_assert_msg(sl_output_csv_write(&F.view, dir, 0, &e) == SL_OK, "%s", e.msg);
    char cmd[2000], out[4096];
    snprintf(cmd, sizeof cmd,
             "/usr/bin/python3 -c \"\n"
             "import csv\n"
             "rows = [r for r in csv.DictReader(l for l in open('%s/series.csv') if not l.startswith('#'))]\n"
             "r = rows[36]\n"
             "print(len(rows), r['time_years'], r['global_excess_Tg'], r['removed_transport_Tg'],"
             " r['removed_photolysis_Tg'], r['column_anomaly_precip_um'])\n"
             "lay = [r for r in csv.DictReader(l for l in open('%s/series_layers.csv') if not l.startswith('#'))]\n"
             "print(len(lay), ' '.join(k for k in lay[0].keys()))\n"
             "print(lay[7 * %d + 4]['excess_Tg_20N_90N'])\n"
             "\"",
             dir, dir, NL);
    ck_assert_int_eq(run_cmd(cmd, out, sizeof out), 0);
    int nrows, nlay;
    double yr, glob_tg, tr_tg, ph_tg, col_um, exc_tg;
    char keys[512];
    ck_assert_int_eq(sscanf(out, "%d %lf %lf %lf %lf %lf %d %511[^\n] %lf", &nrows, &yr, &glob_tg,
                            &tr_tg, &ph_tg, &col_um, &nlay, keys, &exc_tg), 9);
    ck_assert_int_eq(nrows, NT);
    SL_CK_REL(yr, 3.0, 1e-12); /* row 36 = 36 months of Julian years */
    SL_CK_REL(glob_tg * 1e9, F.glob[36], 5e-10);
    /* Mass closure survives the file: remaining + removed = injected 100 Tg (fixture budget). */
    SL_CK_REL(glob_tg + tr_tg + ph_tg, 100.0, 2e-9);
    /* Precipitable depth: kg m-2 / 1000 kg m-3 in um (DERIVED from the definition). */
    SL_CK_REL(col_um, F.col[36] * 1e3, 5e-10);
    ck_assert_int_eq(nlay, NT * NL);
    ck_assert_str_eq(keys, "time_days layer_bottom_km layer_top_km mole_fraction_anomaly_ppmv "
                           "excess_Tg_90S_20S excess_Tg_20S_20N excess_Tg_20N_90N");
    SL_CK_REL(exc_tg * 1e9, F.excess[(7 * NR + 2) * NL + 4], 5e-10);
    rm_tmp();
}
END_TEST

START_TEST(refuses_overwrite_and_missing_parent)
{
    build_fixture(0);
    mk_tmp();
    char dir[400], bad[500];
    snprintf(dir, sizeof dir, "%s/csv", tmpdir);
    sl_err e = {0};
    ck_assert_int_eq(sl_output_csv_write(&F.view, dir, 0, &e), SL_OK);
    struct stat before, after;
    char prof[500];
    snprintf(prof, sizeof prof, "%s/profile.csv", dir);
    ck_assert_int_eq(stat(prof, &before), 0);
    int rc = sl_output_csv_write(&F.view, dir, 0, &e);
    ck_assert_int_eq(rc, SL_ECANTCREAT);
    ck_assert_int_eq(sl_err_exit_code(rc), 73);
    ck_assert_msg(strstr(e.msg, "profile.csv") && strstr(e.msg, "--force"), "%s", e.msg);
    ck_assert_int_eq(count_entries(dir), 4);
    ck_assert_int_eq(stat(prof, &after), 0);
    ck_assert(before.st_ino == after.st_ino); /* the same file, untouched */
    ck_assert_int_eq(sl_output_csv_write(&F.view, dir, 1, &e), SL_OK); /* --force */
    ck_assert_int_eq(count_entries(dir), 4);

    snprintf(bad, sizeof bad, "%s/missing/parent/csv", tmpdir);
    rc = sl_output_csv_write(&F.view, bad, 0, &e);
    ck_assert_int_eq(rc, SL_ECANTCREAT);
    ck_assert_msg(strstr(e.msg, "missing/parent") != NULL, "names the path: %s", e.msg);
    ck_assert_int_eq(count_entries(tmpdir), 1); /* only csv/ */
    rm_tmp();
}
END_TEST

/* Without a series or atmosphere only the profile is written. */
START_TEST(profile_only)
{
    build_fixture(0);
    F.view.series = NULL;
    F.view.atm = NULL;
    mk_tmp();
    sl_err e = {0};
    ck_assert_msg(sl_output_csv_write(&F.view, tmpdir, 0, &e) == SL_OK, "%s", e.msg);
    ck_assert_int_eq(count_entries(tmpdir), 1);
    rm_tmp();
}
END_TEST

/* The shipped prescribed-profile example loads and holds what its comment says. */
START_TEST(example_profile_loads)
{
    char path[600];
    snprintf(path, sizeof path, "%s/examples/injection-profile.csv", srcdir());
    sl_injection inj = {0};
    sl_err e = {0};
    ck_assert_msg(sl_injection_read(&inj, path, &e) == SL_OK, "%s", e.msg);
    SL_CK_REL(sl_injection_total_vapor_kg(&inj), 60e9, 1e-12); /* "60 Tg of water vapour" */
    SL_CK_REL(sl_injection_total_ice_kg(&inj), 6e9, 1e-12);    /* "6 Tg of ice" */
    SL_CK_REL(inj.tropopause_altitude_m, 16500.0, 1e-12);
    sl_injection_free(&inj);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("output_csv");
    TCase *tc = tcase_create("csv");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, profile_reads_back_as_injection);
    tcase_add_test(tc, series_read_by_python);
    tcase_add_test(tc, refuses_overwrite_and_missing_parent);
    tcase_add_test(tc, profile_only);
    tcase_add_test(tc, example_profile_loads);
    tcase_add_test(tc, number_text_matches_printf);
    suite_add_tcase(s, tc);
    return s;
}

SL_TEST_MAIN(suite)
