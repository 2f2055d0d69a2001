/* Unit tests for the injection module: band set-up, mass-conserving layer
 * spreading, totals and partial sums, and the CSV and CF netCDF readers with
 * their error messages (file, line or variable, column, valid range). */
#include "sl_test.h"
#include "steamloft/injection.h"

#include <netcdf.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

/* A scratch file path unique to this process. */
static void tmp_path(char *buf, size_t cap, const char *name)
{
    snprintf(buf, cap, "%s/sl_inj_%ld_%s", getenv("TMPDIR") ? getenv("TMPDIR") : "/tmp", (long)getpid(), name);
}

static void write_text(const char *path, const char *text)
{
    FILE *f = fopen(path, "w");
    ck_assert_ptr_nonnull(f);
    fputs(text, f);
    ck_assert_int_eq(fclose(f), 0);
}

START_TEST(test_uniform_bands)
{
    sl_injection inj = {0};
    sl_err e = {0};
    /* The default band set (docs/physics.md): 1 km from 0 to 100 km. */
    ck_assert_int_eq(sl_injection_init_uniform(&inj, 0.0, 100.0e3, 1.0e3, &e), SL_OK);
    ck_assert_uint_eq(inj.n_bands, 100);
    for (size_t i = 0; i < inj.n_bands; i++) {
        ck_assert(inj.band_bottom_m[i] == 1000.0 * (double)i);
        ck_assert(inj.band_top_m[i] == 1000.0 * (double)(i + 1));
        if (i + 1 < inj.n_bands)
            ck_assert(inj.band_top_m[i] == inj.band_bottom_m[i + 1]);
        ck_assert(inj.vapor_kg[i] == 0.0 && inj.ice_kg[i] == 0.0);
    }
    ck_assert(isnan(inj.tropopause_altitude_m));
    sl_injection_free(&inj);
    /* A width that does not divide the range: the last band is narrower. */
    ck_assert_int_eq(sl_injection_init_uniform(&inj, 0.0, 2500.0, 1000.0, &e), SL_OK);
    ck_assert_uint_eq(inj.n_bands, 3);
    ck_assert(inj.band_bottom_m[2] == 2000.0 && inj.band_top_m[2] == 2500.0);
    sl_injection_free(&inj);
    sl_injection_free(&inj); /* free twice is safe */
    ck_assert_int_eq(sl_injection_init_uniform(&inj, 10.0, 5.0, 1.0, &e), SL_EDATA);
    ck_assert_int_eq(sl_injection_init_uniform(&inj, 0.0, 5.0, 0.0, &e), SL_EDATA);
    sl_injection_free(&inj);
    double bad[] = {0.0, 1000.0, 1000.0};
    ck_assert_int_eq(sl_injection_init_bands(&inj, bad, 3, &e), SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, "edge 2"));
    sl_injection_free(&inj);
}
END_TEST

START_TEST(test_add_layer_conserves)
{
    sl_injection inj = {0};
    sl_err e = {0};
    ck_assert_int_eq(sl_injection_init_uniform(&inj, 0.0, 100.0e3, 1.0e3, &e), SL_OK);
    /* The 1.69 Mt surface-burst cloud (bottom 12.3 km,
     * top 21.6 km) as a layer; masses arbitrary.  Each band receives the fraction of
     * the layer it overlaps (DERIVED: uniform spreading); tolerance: rounding. */
    const double m = 3.7e9, ice = 1.1e8;
    ck_assert_int_eq(sl_injection_add_layer(&inj, m, ice, 12300.0, 21600.0, &e), SL_OK);
    SL_CK_REL(inj.vapor_kg[12], m * 700.0 / 9300.0, 1e-13);
    SL_CK_REL(inj.vapor_kg[13], m * 1000.0 / 9300.0, 1e-13);
    SL_CK_REL(inj.vapor_kg[21], m * 600.0 / 9300.0, 1e-13);
    ck_assert(inj.vapor_kg[11] == 0.0 && inj.vapor_kg[22] == 0.0);
    SL_CK_REL(inj.ice_kg[15], ice * 1000.0 / 9300.0, 1e-13);
    /* Mass conservation: totals equal the inputs to rounding (a few ulps). */
    SL_CK_REL(sl_injection_total_vapor_kg(&inj), m, 1e-15);
    SL_CK_REL(sl_injection_total_ice_kg(&inj), ice, 1e-15);
    /* Mass above 17 km: the part of the layer above it, (21.6-17)/9.3 (DERIVED). */
    SL_CK_REL(sl_injection_mass_above_kg(&inj, 17000.0), (m + ice) * 4600.0 / 9300.0, 1e-13);
    SL_CK_REL(sl_injection_mass_above_kg(&inj, 17500.0), (m + ice) * 4100.0 / 9300.0, 1e-13);
    SL_CK_REL(sl_injection_mass_above_kg(&inj, 0.0), m + ice, 1e-15);
    ck_assert(sl_injection_mass_above_kg(&inj, 30000.0) == 0.0);
    /* Below 17.5 km: the rest, (17.5-12.3)/9.3 (DERIVED), and nothing below the layer is exactly 0,
     * not the rounding of a difference. */
    SL_CK_REL(sl_injection_mass_below_kg(&inj, 17500.0), (m + ice) * 5200.0 / 9300.0, 1e-13);
    ck_assert(sl_injection_mass_below_kg(&inj, 12000.0) == 0.0);
    SL_CK_REL(sl_injection_mass_below_kg(&inj, 30000.0), m + ice, 1e-15);
    SL_CK_REL(sl_injection_mass_below_kg(&inj, 17500.0) + sl_injection_mass_above_kg(&inj, 17500.0), m + ice, 1e-15);
    /* A zero-thickness layer lands whole in the band holding it. */
    ck_assert_int_eq(sl_injection_add_layer(&inj, 5.0, 0.0, 40500.0, 40500.0, &e), SL_OK);
    ck_assert(inj.vapor_kg[40] == 5.0);
    /* Outside the bands, negative or non-finite masses: refused with the range. */
    ck_assert_int_eq(sl_injection_add_layer(&inj, 1.0, 0.0, 90e3, 120e3, &e), SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, "valid range 0 to 100000 m"));
    ck_assert_int_eq(sl_injection_add_layer(&inj, -1.0, 0.0, 1e3, 2e3, &e), SL_EDATA);
    ck_assert_int_eq(sl_injection_add_layer(&inj, NAN, 0.0, 1e3, 2e3, &e), SL_EDATA);
    ck_assert_int_eq(sl_injection_add_layer(&inj, 1.0, 0.0, 3e3, 2e3, &e), SL_EDATA);
    sl_injection_clear(&inj);
    ck_assert(sl_injection_total_vapor_kg(&inj) == 0.0 && inj.n_bands == 100);
    sl_injection_free(&inj);
}
END_TEST

START_TEST(test_read_csv)
{
    char path[512];
    tmp_path(path, sizeof path, "good.csv");
    write_text(path,
               "# invented profile for the reader test\n"
               "# tropopause_altitude_km = 16.5\n"
               "# latitude_deg = -20.5\n"
               "# time_days = 2\n"
               "\n"
               "bottom_km, top_km, vapor_Tg, ice_kg\r\n"
               "20, 22, 40, 1e6\n"
               "22, 25, 100.5, 0\n"
               "25,27,5.5,2.5e3\n");
    sl_injection inj = {0};
    sl_err e = {0};
    ck_assert_msg(sl_injection_read(&inj, path, &e) == SL_OK, "%s", e.msg);
    ck_assert_uint_eq(inj.n_bands, 3);
    ck_assert(inj.band_bottom_m[0] == 20000.0 && inj.band_top_m[2] == 27000.0);
    ck_assert(inj.band_top_m[0] == inj.band_bottom_m[1]);
    /* 1 Tg = 1e9 kg (units table). */
    SL_CK_REL(inj.vapor_kg[1], 100.5e9, 1e-15);
    SL_CK_REL(sl_injection_total_vapor_kg(&inj), 146.0e9, 1e-15);
    SL_CK_REL(sl_injection_total_ice_kg(&inj), 1.0025e6, 1e-15);
    SL_CK_REL(inj.tropopause_altitude_m, 16500.0, 1e-15);
    SL_CK_REL(inj.latitude_deg, -20.5, 1e-15);
    SL_CK_REL(inj.time_s, 2.0 * 86400.0, 1e-15);
    sl_injection_free(&inj);
    unlink(path);
}
END_TEST

/* Each bad CSV must fail with SL_EDATA and a message holding every NEEDLE. */
static void expect_csv_error(const char *text, const char *needle1, const char *needle2)
{
    char path[512];
    tmp_path(path, sizeof path, "bad.csv");
    write_text(path, text);
    sl_injection inj = {0};
    sl_err e = {0};
    ck_assert_int_eq(sl_injection_read(&inj, path, &e), SL_EDATA);
    ck_assert_msg(strstr(e.msg, path) != NULL, "no file name in: %s", e.msg);
    ck_assert_msg(strstr(e.msg, needle1) != NULL, "'%s' not in: %s", needle1, e.msg);
    if (needle2)
        ck_assert_msg(strstr(e.msg, needle2) != NULL, "'%s' not in: %s", needle2, e.msg);
    sl_injection_free(&inj);
    unlink(path);
}

START_TEST(test_read_csv_errors)
{
    expect_csv_error("bottom_m,top_m,vapour_kg\n0,1,2\n", ":1: unknown column 'vapour_kg'", "vapor_kg|vapor_Tg");
    expect_csv_error("bottom_m,top_m\n0,1\n", ":1: header lacks a vapor column", NULL);
    expect_csv_error("bottom_m,top_m,vapor_kg\n0,1000,2\n1000,2000,x3\n", ":3: column 3 (vapor): 'x3'", NULL);
    expect_csv_error("bottom_m,top_m,vapor_kg\n0,1000,2\n1500,2000,3\n", ":3: band bottom 1500 m differs", "contiguous");
    expect_csv_error("bottom_m,top_m,vapor_kg\n0,1000,-2\n", ":2: column 3 (vapor): mass -2 is negative", "valid range");
    expect_csv_error("bottom_km,top_km,vapor_kg\n0,1e4,2\n", ":2: column 2 (top): altitude 1e4", "valid range 0 to 1e+06 m");
    expect_csv_error("bottom_m,top_m,vapor_kg\n0,1000\n", ":2: 2 fields, the header has 3", NULL);
    expect_csv_error("# latitude_deg = 95\nbottom_m,top_m,vapor_kg\n0,1000,1\n", ":1: latitude_deg = '95'", "-90 to 90");
    expect_csv_error("# tropopause_km = 9\nbottom_m,top_m,vapor_kg\n0,1000,1\n", ":1: unknown metadata key", NULL);
    expect_csv_error("# only comments\n", "no header found", NULL);
    expect_csv_error("bottom_m,top_m,vapor_kg\n1000,1000,1\n", ":2: band top 1000 m is not above", NULL);

    sl_injection inj = {0};
    sl_err e = {0};
    ck_assert_int_eq(sl_injection_read(&inj, "/nonexistent/dir/profile.csv", &e), SL_ENOINPUT);
    ck_assert_ptr_nonnull(strstr(e.msg, "/nonexistent/dir/profile.csv"));
    sl_injection_free(&inj);
}
END_TEST

#define NC_OK(call) ck_assert_msg((call) == NC_NOERR, "%s failed", #call)

/* Write a CF profile with libnetcdf: 3 bands in km, vapour in Tg. */
static void write_nc(const char *path, int mode, int with_bounds, int contiguous)
{
    int ncid, dz, dnv, vz, vb, vv, vi, vt, vlat;
    NC_OK(nc_create(path, NC_CLOBBER | mode, &ncid));
    NC_OK(nc_def_dim(ncid, "altitude", 3, &dz));
    NC_OK(nc_def_dim(ncid, "nv", 2, &dnv));
    NC_OK(nc_def_var(ncid, "altitude", NC_DOUBLE, 1, &dz, &vz));
    NC_OK(nc_put_att_text(ncid, vz, "units", 2, "km"));
    NC_OK(nc_put_att_text(ncid, vz, "standard_name", 8, "altitude"));
    NC_OK(nc_put_att_text(ncid, vz, "positive", 2, "up"));
    NC_OK(nc_put_att_text(ncid, vz, "axis", 1, "Z"));
    if (with_bounds)
        NC_OK(nc_put_att_text(ncid, vz, "bounds", 13, "altitude_bnds"));
    int bd[2] = {dz, dnv};
    NC_OK(nc_def_var(ncid, "altitude_bnds", NC_DOUBLE, 2, bd, &vb));
    NC_OK(nc_def_var(ncid, "vapor_mass", NC_FLOAT, 1, &dz, &vv));
    NC_OK(nc_put_att_text(ncid, vv, "units", 2, "Tg"));
    NC_OK(nc_put_att_text(ncid, vv, "long_name", 30, "water vapour mass in each band"));
    NC_OK(nc_def_var(ncid, "ice_mass", NC_DOUBLE, 1, &dz, &vi));
    NC_OK(nc_put_att_text(ncid, vi, "units", 2, "kg"));
    NC_OK(nc_def_var(ncid, "tropopause_altitude", NC_DOUBLE, 0, NULL, &vt));
    NC_OK(nc_put_att_text(ncid, vt, "units", 1, "m"));
    NC_OK(nc_put_att_text(ncid, vt, "standard_name", 19, "tropopause_altitude"));
    NC_OK(nc_def_var(ncid, "latitude", NC_DOUBLE, 0, NULL, &vlat));
    NC_OK(nc_put_att_text(ncid, vlat, "units", 13, "degrees_north"));
    NC_OK(nc_enddef(ncid));
    double z[3] = {21.0, 23.5, 26.0};
    double b[6] = {20.0, 22.0, 22.0, 25.0, 25.0, 27.0};
    if (!contiguous)
        b[2] = 22.5;
    float v[3] = {40.0f, 100.5f, 5.5f};
    double ice[3] = {1.0e6, 0.0, 2.5e3};
    double trop = 16500.0, lat = -20.5;
    NC_OK(nc_put_var_double(ncid, vz, z));
    NC_OK(nc_put_var_double(ncid, vb, b));
    NC_OK(nc_put_var_float(ncid, vv, v));
    NC_OK(nc_put_var_double(ncid, vi, ice));
    NC_OK(nc_put_var_double(ncid, vt, &trop));
    NC_OK(nc_put_var_double(ncid, vlat, &lat));
    NC_OK(nc_close(ncid));
}

START_TEST(test_read_netcdf)
{
    char path[512];
    tmp_path(path, sizeof path, "prof.nc");
    /* Both the netCDF-4 (HDF5) and the classic format are recognised by content. */
    int modes[2] = {NC_NETCDF4 | NC_CLASSIC_MODEL, 0};
    for (int k = 0; k < 2; k++) {
        write_nc(path, modes[k], 1, 1);
        sl_injection inj = {0};
        sl_err e = {0};
        ck_assert_msg(sl_injection_read(&inj, path, &e) == SL_OK, "%s", e.msg);
        ck_assert_uint_eq(inj.n_bands, 3);
        ck_assert(inj.band_bottom_m[0] == 20000.0 && inj.band_top_m[2] == 27000.0);
        /* Float storage: 100.5 and 5.5 are exact in binary32. */
        SL_CK_REL(sl_injection_total_vapor_kg(&inj), 146.0e9, 1e-15);
        SL_CK_REL(sl_injection_total_ice_kg(&inj), 1.0025e6, 1e-15);
        SL_CK_REL(inj.tropopause_altitude_m, 16500.0, 1e-15);
        SL_CK_REL(inj.latitude_deg, -20.5, 1e-15);
        sl_injection_free(&inj);
    }
    /* Missing bounds: the message names the variable and the CF section. */
    write_nc(path, NC_NETCDF4 | NC_CLASSIC_MODEL, 0, 1);
    sl_injection inj = {0};
    sl_err e = {0};
    ck_assert_int_eq(sl_injection_read(&inj, path, &e), SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, "variable altitude: no 'bounds'"));
    sl_injection_free(&inj);
    /* Gaps between bands are refused, naming the bounds variable and index. */
    write_nc(path, 0, 1, 0);
    ck_assert_int_eq(sl_injection_read(&inj, path, &e), SL_EDATA);
    ck_assert_msg(strstr(e.msg, "altitude_bnds[1]") != NULL, "%s", e.msg);
    sl_injection_free(&inj);
    unlink(path);
}
END_TEST


START_TEST(test_read_netcdf_python)
{
    /* A profile written by an independent writer, python3-netcdf4 (Debian),
     * run as /usr/bin/python3: 10 bands of 1 km from 20 to 30 km in metres,
     * vapour 1..10 Tg as float32, CF bounds.  Skipped with a note when the
     * module is missing (it is a listed dependency of the project). */
    char path[512], cmd[2048];
    tmp_path(path, sizeof path, "py.nc");
    snprintf(cmd, sizeof cmd,
             "/usr/bin/python3 -c \"import netCDF4, numpy as np\n"
             "d = netCDF4.Dataset('%s', 'w', format='NETCDF4_CLASSIC')\n"
             "d.Conventions = 'CF-1.11'\n"
             "d.createDimension('altitude', 10); d.createDimension('nv', 2)\n"
             "z = d.createVariable('altitude', 'f8', ('altitude',))\n"
             "z.units = 'm'; z.positive = 'up'; z.axis = 'Z'; z.standard_name = 'altitude'; z.bounds = 'altitude_bnds'\n"
             "b = d.createVariable('altitude_bnds', 'f8', ('altitude', 'nv'))\n"
             "v = d.createVariable('vapor_mass', 'f4', ('altitude',))\n"
             "v.units = 'Tg'; v.long_name = 'water vapour mass in each band'\n"
             "e = np.arange(20000.0, 30001.0, 1000.0)\n"
             "z[:] = 0.5 * (e[:-1] + e[1:]); b[:, 0] = e[:-1]; b[:, 1] = e[1:]\n"
             "v[:] = np.arange(1, 11)\n"
             "d.close()\" 2>/dev/null",
             path);
    if (system(cmd) != 0) {
        SL_SKIP("python3-netcdf4 not available: test_read_netcdf_python not run");
    }
    sl_injection inj = {0};
    sl_err e = {0};
    ck_assert_msg(sl_injection_read(&inj, path, &e) == SL_OK, "%s", e.msg);
    ck_assert_uint_eq(inj.n_bands, 10);
    ck_assert(inj.band_bottom_m[0] == 20000.0 && inj.band_top_m[9] == 30000.0);
    /* 1 + 2 + ... + 10 = 55 Tg, exact in float32 and after the Tg -> kg factor. */
    SL_CK_REL(sl_injection_total_vapor_kg(&inj), 55.0e9, 1e-15);
    SL_CK_REL(inj.vapor_kg[6], 7.0e9, 1e-15);
    ck_assert(sl_injection_total_ice_kg(&inj) == 0.0);
    ck_assert(isnan(inj.tropopause_altitude_m));
    sl_injection_free(&inj);
    unlink(path);
}
END_TEST

static Suite *injection_suite(void)
{
    Suite *s = suite_create("injection");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, test_uniform_bands);
    tcase_add_test(tc, test_add_layer_conserves);
    tcase_add_test(tc, test_read_csv);
    tcase_add_test(tc, test_read_csv_errors);
    tcase_add_test(tc, test_read_netcdf);
    tcase_add_test(tc, test_read_netcdf_python);
    suite_add_tcase(s, tc);
    return s;
}

SL_TEST_MAIN(injection_suite)
