/* Tests of output_nc and outfile: the netCDF file is read back by readers
 * that share no code with steamloft (python3-netcdf4 via
 * tests/tools/nc_check.py, ncdump, CDO), and the safe-output rules (no
 * overwrite without force, missing or read-only directory, no partial file)
 * are exercised on the real file system.
 *
 * The fixture (tests/output_fixture.h) is a synthetic run, not physics under
 * test.  What is checked is that its numbers survive the trip through the
 * file exactly (double precision, so rounding only) with the CF metadata that
 * climate tools rely on. */
#include "output_fixture.h"

#include "steamloft/injection.h"
#include "steamloft/outfile.h"
#include "steamloft/output_nc.h"

#include <errno.h>

/* Write expectations derived from the fixture and run the independent reader. */
static int check_with_python(const char *nc, const char *format, int layers_equal_bands)
{
    char ex[512];
    snprintf(ex, sizeof ex, "%s/expect.txt", tmpdir);
    FILE *f = fopen(ex, "w");
    ck_assert_ptr_nonnull(f);
    fprintf(f, "format %s\n", format);
    /* Masses in the file equal the run's to double rounding: written as doubles. */
    for (int i = 0; i < NB; i += 7) {
        fprintf(f, "var vapor_mass %d %.17g 1e-15\n", i, F.vap[i]);
        fprintf(f, "var ice_mass %d %.17g 1e-15\n", i, F.ice[i]);
        fprintf(f, "var altitude_bnds %d %.17g 0\n", 2 * i, F.bottom[i]);
        fprintf(f, "var altitude_bnds %d %.17g 0\n", 2 * i + 1, F.top[i]);
    }
    fprintf(f, "var total_vapor_mass 0 %.17g 1e-13\n", F.total_vapor_kg);
    fprintf(f, "sum vapor_mass 1.0e11 1e-12\n");
    fprintf(f, "var tropopause_altitude 0 16500 0\n");
    /* Vapour + ice above 16.5 km: bands 17.. in full plus half of band 16. */
    double strat = 0.5 * (F.vap[16] + F.ice[16]);
    for (int i = 17; i < NB; i++)
        strat += F.vap[i] + F.ice[i];
    fprintf(f, "var stratospheric_water 0 %.17g 1e-13\n", strat);
    fprintf(f, "var cloud_vapor_mass_content 25 %.17g 1e-15\n", F.vap[25] / 2.0e11);
    fprintf(f, "var air_temperature 3 250 0\nvar air_pressure 10 %.17g 1e-15\n", F.p[10]);
    fprintf(f, "var latitude 0 -20.5 0\n");
    fprintf(f, "var time 12 %.17g 1e-13\n", 365.25); /* 12 months of a Julian year, in days */
    fprintf(f, "var lat 1 0 0\nvar lat_bnds 5 90 0\n");
    fprintf(f, "var global_excess_water_mass 36 %.17g 1e-15\n", F.glob[36]);
    fprintf(f, "var excess_water_mass %d %.17g 1e-15\n", (7 * NR + 2) * (int)F.series.n_layer + 4,
            F.excess[(7 * NR + 2) * F.series.n_layer + 4]);
    fprintf(f, "var removed_photolysis 60 %.17g 1e-15\n", F.sink[NT + 60]);
    fprintf(f, "var efolding_time 0 %.17g 0\n", F.scalars[0].value);
    fprintf(f, "att . Conventions CF-1.11\n");
    fprintf(f, "att . scenario_impactor_diameter_m 300\n");
    fprintf(f, "att . scenario_impactor_type stony\n");
    fprintf(f, "att . scenario_file my scenario.ini\n");
    fprintf(f, "att . scenario_parameter_origins impactor.diameter_m: file; impactor.type: file; "
               "atmosphere.profile: default\n");
    fprintf(f, "att altitude positive up\natt altitude axis Z\natt altitude bounds altitude_bnds\n");
    fprintf(f, "att buoyancy_frequency_squared standard_name square_of_brunt_vaisala_frequency_in_air\n");
    fprintf(f, "att vapor_mass_content units kg m-2\n");
    fprintf(f, "att h2o_mole_fraction standard_name mole_fraction_of_water_vapor_in_air\n");
    fprintf(f, "att time units days since 2000-01-01 00:00:00\natt time calendar standard\n");
    fprintf(f, "att lat bounds lat_bnds\n");
    fprintf(f, "%s layer\n", layers_equal_bands ? "hasnot" : "has");
    fclose(f);
    char cmd[1400];
    snprintf(cmd, sizeof cmd, "/usr/bin/python3 %s/tests/tools/nc_check.py '%s' '%s' 2>&1",
             srcdir(), nc, ex);
    return run_cmd(cmd, NULL, 0);
}

START_TEST(netcdf4_read_back)
{
    build_fixture(0);
    mk_tmp();
    char nc[400];
    snprintf(nc, sizeof nc, "%s/out.nc", tmpdir);
    sl_err e = {0};
    sl_nc_options o = {SL_NC_NETCDF4_CLASSIC, 0, 0};
    int rc = sl_output_nc_write(&F.view, nc, &o, &e);
    ck_assert_msg(rc == SL_OK, "write failed: %s", e.msg);
    ck_assert_int_eq(count_entries(tmpdir), 1); /* the file, no temporary left */
    ck_assert_int_eq(check_with_python(nc, "NETCDF4_CLASSIC", 0), 0);
    /* ncdump (netcdf-bin) agrees on the kind and sees deflate on the profile. */
    char out[8192], cmd[600];
    snprintf(cmd, sizeof cmd, "ncdump -k '%s'", nc);
    ck_assert_int_eq(run_cmd(cmd, out, sizeof out), 0);
    ck_assert_msg(strstr(out, "netCDF-4 classic model") != NULL, "ncdump -k: %s", out);
    /* Series are compressed in one chunk each; small fixed arrays are compact,
     * never chunked (a chunk index costs more than deflate saves on them). */
    snprintf(cmd, sizeof cmd, "ncdump -hs '%s' | grep -A9 'double excess_water_mass'", nc);
    ck_assert_int_eq(run_cmd(cmd, out, sizeof out), 0);
    ck_assert_msg(strstr(out, "_DeflateLevel = 4") != NULL, "no deflate: %s", out);
    snprintf(cmd, sizeof cmd, "ncdump -hs '%s' | grep -A6 'double vapor_mass(altitude)'", nc);
    ck_assert_int_eq(run_cmd(cmd, out, sizeof out), 0);
    ck_assert_msg(strstr(out, "vapor_mass:_Storage = \"compact\"") != NULL, "small profile not compact: %s", out);
    rm_tmp();
}
END_TEST

START_TEST(classic_read_back)
{
    build_fixture(1);
    mk_tmp();
    char nc[400];
    snprintf(nc, sizeof nc, "%s/out3.nc", tmpdir);
    sl_err e = {0};
    sl_nc_format fmt;
    ck_assert_int_eq(sl_output_nc_parse_format("classic", &fmt, &e), SL_OK);
    sl_nc_options o = {fmt, 0, 0};
    ck_assert_msg(sl_output_nc_write(&F.view, nc, &o, &e) == SL_OK, "%s", e.msg);
    ck_assert_int_eq(check_with_python(nc, "NETCDF3_CLASSIC", 1), 0);
    char out[256], cmd[600];
    snprintf(cmd, sizeof cmd, "ncdump -k '%s'", nc);
    ck_assert_int_eq(run_cmd(cmd, out, sizeof out), 0);
    ck_assert_msg(strncmp(out, "classic", 7) == 0, "ncdump -k: %s", out);
    ck_assert_int_eq(sl_output_nc_parse_format("hdf5", &fmt, &e), SL_EUSAGE);
    ck_assert_msg(strstr(e.msg, "classic") != NULL, "message lists valid values: %s", e.msg);
    rm_tmp();
}
END_TEST

/* CDO 2.1.1 (Debian cdo) reads the vertical axis with its bounds. */
START_TEST(cdo_reads_vertical_axis)
{
    if (system("command -v cdo >/dev/null 2>&1") != 0) {
        SL_SKIP("cdo not installed: CDO reading not checked");
    }
    build_fixture(1);
    mk_tmp();
    char nc[400], out[16384], cmd[700];
    snprintf(nc, sizeof nc, "%s/cdo.nc", tmpdir);
    sl_err e = {0};
    ck_assert_msg(sl_output_nc_write(&F.view, nc, NULL, &e) == SL_OK, "%s", e.msg);
    snprintf(cmd, sizeof cmd, "cdo -s zaxisdes -selname,vapor_mass '%s' 2>&1", nc);
    ck_assert_int_eq(run_cmd(cmd, out, sizeof out), 0);
    ck_assert_msg(strstr(out, "zaxistype = altitude") || strstr(out, "zaxistype = height"),
                  "cdo zaxis type: %s", out);
    ck_assert_msg(strstr(out, "size      = 60") != NULL, "cdo zaxis size: %s", out);
    ck_assert_msg(strstr(out, "lbounds") != NULL && strstr(out, "ubounds") != NULL,
                  "cdo sees no bounds: %s", out);
    /* CDO's vertical sum over the bands equals the total (independent arithmetic). */
    snprintf(cmd, sizeof cmd,
             "cdo -s outputf,%%.17g -vertsum -selname,vapor_mass '%s' 2>&1", nc);
    ck_assert_int_eq(run_cmd(cmd, out, sizeof out), 0);
    SL_CK_REL(strtod(out, NULL), F.total_vapor_kg, 1e-12); /* PRACTICE: double summation order */
    rm_tmp();
}
END_TEST

/* Two writes of the same results give identical ncdump text apart from history. */
START_TEST(reproducible)
{
    build_fixture(0);
    mk_tmp();
    char a[400], b[400], cmd[1400], out[64];
    snprintf(a, sizeof a, "%s/a", tmpdir);
    snprintf(b, sizeof b, "%s/b", tmpdir);
    ck_assert_int_eq(mkdir(a, 0755), 0);
    ck_assert_int_eq(mkdir(b, 0755), 0);
    strcat(a, "/same.nc");
    strcat(b, "/same.nc");
    sl_err e = {0};
    ck_assert_msg(sl_output_nc_write(&F.view, a, NULL, &e) == SL_OK, "%s", e.msg);
    ck_assert_msg(sl_output_nc_write(&F.view, b, NULL, &e) == SL_OK, "%s", e.msg);
    snprintf(cmd, sizeof cmd,
             "bash -c \"diff <(ncdump '%s' | grep -v ':history = ') <(ncdump '%s' | grep -v "
             "':history = ')\" && echo same",
             a, b);
    ck_assert_int_eq(run_cmd(cmd, out, sizeof out), 0);
    ck_assert_str_eq(out, "same\n");
    rm_tmp();
}
END_TEST

START_TEST(no_overwrite_without_force)
{
    build_fixture(0);
    mk_tmp();
    char nc[400];
    snprintf(nc, sizeof nc, "%s/keep.nc", tmpdir);
    FILE *f = fopen(nc, "w");
    fputs("precious\n", f);
    fclose(f);
    sl_err e = {0};
    int rc = sl_output_nc_write(&F.view, nc, NULL, &e);
    ck_assert_int_eq(rc, SL_ECANTCREAT);
    ck_assert_int_eq(sl_err_exit_code(rc), 73);
    ck_assert_msg(strstr(e.msg, nc) && strstr(e.msg, "--force"), "message: %s", e.msg);
    char buf[32] = {0};
    f = fopen(nc, "r");
    ck_assert_ptr_nonnull(fgets(buf, sizeof buf, f));
    fclose(f);
    ck_assert_str_eq(buf, "precious\n");
    ck_assert_int_eq(count_entries(tmpdir), 1);
    /* With force it is replaced by a complete file. */
    sl_nc_options o = {SL_NC_NETCDF4_CLASSIC, 0, 1};
    ck_assert_msg(sl_output_nc_write(&F.view, nc, &o, &e) == SL_OK, "%s", e.msg);
    ck_assert_int_eq(count_entries(tmpdir), 1);
    ck_assert_int_eq(check_with_python(nc, "NETCDF4_CLASSIC", 0), 0);
    rm_tmp();
}
END_TEST

START_TEST(missing_directory)
{
    build_fixture(0);
    mk_tmp();
    char nc[400];
    snprintf(nc, sizeof nc, "%s/nosuchdir/out.nc", tmpdir);
    sl_err e = {0};
    int rc = sl_output_nc_write(&F.view, nc, NULL, &e);
    ck_assert_int_eq(rc, SL_ECANTCREAT);
    ck_assert_msg(strstr(e.msg, "nosuchdir") != NULL, "names the path: %s", e.msg);
    ck_assert_int_eq(count_entries(tmpdir), 0);
    rm_tmp();
}
END_TEST

/* A read-only directory.  Root ignores permission bits, so when run as root
 * this test (already in its own process, forked by Check) drops to the
 * unprivileged uid 65534 first. */
static char rodir[400];
static void ro_setup(void)
{
    mk_tmp();
    snprintf(rodir, sizeof rodir, "%s/ro", tmpdir);
    if (mkdir(rodir, 0555) != 0 || chmod(rodir, 0555) != 0)
        perror("ro_setup");
}
static void ro_teardown(void)
{
    chmod(rodir, 0755);
    rm_tmp();
}

START_TEST(read_only_directory)
{
    build_fixture(0);
    if (geteuid() == 0) {
        if (getenv("CK_FORK") && strcmp(getenv("CK_FORK"), "no") == 0) {
            printf("# CK_FORK=no as root: read-only directory not tested here (tests/cli covers it)\n");
            return; /* dropping root would last for the rest of the program */
        }
        ck_assert_int_eq(setgid(65534), 0);
        ck_assert_int_eq(setuid(65534), 0);
    }
    char nc[500];
    snprintf(nc, sizeof nc, "%s/out.nc", rodir);
    sl_err e = {0};
    int rc = sl_output_nc_write(&F.view, nc, NULL, &e);
    ck_assert_int_eq(rc, SL_ECANTCREAT);
    ck_assert_msg(strstr(e.msg, rodir) != NULL, "names the directory: %s", e.msg);
    ck_assert_int_eq(count_entries(rodir), 0);
}
END_TEST

/* Every netCDF call is checked: a name netCDF rejects fails cleanly. */
START_TEST(netcdf_error_leaves_nothing)
{
    build_fixture(0);
    mk_tmp();
    F.scalars[1].name = "bad/name";
    char nc[400];
    snprintf(nc, sizeof nc, "%s/err.nc", tmpdir);
    sl_err e = {0};
    int rc = sl_output_nc_write(&F.view, nc, NULL, &e);
    ck_assert_int_eq(rc, SL_EIO);
    ck_assert_msg(strstr(e.msg, "bad/name") && strstr(e.msg, nc), "message: %s", e.msg);
    ck_assert_int_eq(count_entries(tmpdir), 0);
    /* A non-finite result is refused before anything is created. */
    F.scalars[1].name = "burst_altitude";
    F.vap[3] = NAN;
    rc = sl_output_nc_write(&F.view, nc, NULL, &e);
    ck_assert_int_eq(rc, SL_EINTERNAL);
    ck_assert_int_eq(count_entries(tmpdir), 0);
    rm_tmp();
}
END_TEST

/* The output set for several files: all or nothing. */
START_TEST(outset_all_or_nothing)
{
    mk_tmp();
    char dir[400];
    snprintf(dir, sizeof dir, "%s/csv", tmpdir);
    sl_outset set = {0};
    sl_err e = {0};
    FILE *fp;
    ck_assert_int_eq(sl_outset_begin(&set, dir, 0, 1, &e), SL_OK); /* creates csv/ */
    ck_assert_int_eq(sl_outset_fopen(&set, "a.csv", &fp, &e), SL_OK);
    fputs("a\n", fp);
    ck_assert_int_eq(sl_outset_fclose(&set, "a.csv", fp, &e), SL_OK);
    const char *p;
    ck_assert_int_eq(sl_outset_add(&set, "b.csv", &p, &e), SL_OK);
    /* b.csv never written: the commit refuses and removes everything, csv/ too. */
    ck_assert_int_eq(sl_outset_commit(&set, &e), SL_EINTERNAL);
    struct stat st;
    ck_assert_int_ne(stat(dir, &st), 0);
    ck_assert_int_eq(count_entries(tmpdir), 0);

    /* Normal commit; then a second set clashing on one name moves nothing. */
    ck_assert_int_eq(sl_outset_begin(&set, dir, 0, 1, &e), SL_OK);
    ck_assert_int_eq(sl_outset_fopen(&set, "a.csv", &fp, &e), SL_OK);
    fputs("a\n", fp);
    ck_assert_int_eq(sl_outset_fclose(&set, "a.csv", fp, &e), SL_OK);
    ck_assert_int_eq(sl_outset_commit(&set, &e), SL_OK);
    ck_assert_int_eq(count_entries(dir), 1);
    ck_assert_int_eq(sl_outset_begin(&set, dir, 0, 1, &e), SL_OK);
    ck_assert_int_eq(sl_outset_fopen(&set, "c.csv", &fp, &e), SL_OK);
    fclose(fp);
    ck_assert_int_eq(sl_outset_add(&set, "a.csv", &p, &e), SL_ECANTCREAT);
    sl_outset_abort(&set);
    ck_assert_int_eq(count_entries(dir), 1);
    ck_assert_int_eq(sl_outset_add(&set, "x", &p, &e), SL_EINTERNAL); /* aborted set */
    ck_assert_int_eq(sl_outset_begin(&set, dir, 0, 0, &e), SL_OK);
    ck_assert_int_eq(sl_outset_add(&set, "../escape", &p, &e), SL_EUSAGE);
    sl_outset_abort(&set);
    sl_outset_abort(&set); /* safe twice */
    ck_assert_int_eq(count_entries(dir), 1);
    rm_tmp();
}
END_TEST

/* The independent checker itself can fail: a file with km altitude, no
 * positive, ppmv on a standard name, an invented standard name, units that
 * do not convert to a standard name's canonical units, overlapping bounds
 * and a profile that does not sum to its total is rejected. */
START_TEST(checker_rejects_bad_file)
{
    mk_tmp();
    char cmd[1400], out[8192];
    snprintf(cmd, sizeof cmd,
             "ncgen -o '%s/bad.nc' %s/tests/tools/nc_check_bad.cdl && "
             "/usr/bin/python3 %s/tests/tools/nc_check.py '%s/bad.nc'",
             tmpdir, srcdir(), srcdir(), tmpdir);
    ck_assert_int_eq(run_cmd_echo(cmd, out, sizeof out, 0), 1); /* FAIL lines expected: not echoed */
    const char *want[] = {"contains CF-1.11", "altitude: units m",
                          "tropopause: units 'K' convert to m",
                          "positive is up/down", "'water_vapor_mixing_ratio' is in the CF table copy",
                          "no ppm/ppb units", "bit-identical edges",
                          "profile sums to total_vapor_mass"};
    for (size_t i = 0; i < sizeof want / sizeof want[0]; i++)
        ck_assert_msg(strstr(out, want[i]) != NULL, "checker missed: %s", want[i]);
    rm_tmp();
}
END_TEST

/* The injection module's netCDF reader (written independently, for the
 * `decay` input) reads the profile back from a full output file. */
START_TEST(injection_reader_reads_output)
{
    build_fixture(0);
    mk_tmp();
    char nc[400];
    snprintf(nc, sizeof nc, "%s/round.nc", tmpdir);
    sl_err e = {0};
    ck_assert_msg(sl_output_nc_write(&F.view, nc, NULL, &e) == SL_OK, "%s", e.msg);
    sl_injection inj = {0};
    ck_assert_msg(sl_injection_read(&inj, nc, &e) == SL_OK, "reader: %s", e.msg);
    ck_assert_uint_eq(inj.n_bands, NB);
    for (size_t i = 0; i < NB; i++) {
        ck_assert(inj.band_bottom_m[i] == F.bottom[i] && inj.band_top_m[i] == F.top[i]);
        ck_assert(inj.vapor_kg[i] == F.vap[i] && inj.ice_kg[i] == F.ice[i]); /* bit-exact doubles */
    }
    ck_assert(inj.tropopause_altitude_m == F.inj.tropopause_altitude_m);
    ck_assert(inj.latitude_deg == F.inj.latitude_deg);
    ck_assert(inj.cloud_area_m2 == F.inj.cloud_area_m2);
    sl_injection_free(&inj);
    rm_tmp();
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("output_nc");
    TCase *tc = tcase_create("write");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, netcdf4_read_back);
    tcase_add_test(tc, classic_read_back);
    tcase_add_test(tc, cdo_reads_vertical_axis);
    tcase_add_test(tc, reproducible);
    tcase_add_test(tc, no_overwrite_without_force);
    tcase_add_test(tc, missing_directory);
    tcase_add_test(tc, netcdf_error_leaves_nothing);
    tcase_add_test(tc, outset_all_or_nothing);
    tcase_add_test(tc, checker_rejects_bad_file);
    tcase_add_test(tc, injection_reader_reads_output);
    suite_add_tcase(s, tc);
    TCase *ro = tcase_create("read_only");
    tcase_add_unchecked_fixture(ro, ro_setup, ro_teardown);
    tcase_add_test(ro, read_only_directory);
    suite_add_tcase(s, ro);
    return s;
}

SL_TEST_MAIN(suite)
