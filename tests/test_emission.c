/* Unit tests for the model inputs: ISO 8601 dates, the model-input profile
 * (tropopause cut, model top), grids (regular, a template with and without
 * bounds), the footprint (area against the spherical cap, partial cells)
 * and mass conservation of the CF and CESM emission files on several grids,
 * read back with netCDF-C. */
#include "sl_test.h"

#include "steamloft/date.h"
#include "steamloft/emission.h"
#include "steamloft/model_inputs.h"
#include "steamloft/units.h"

#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

START_TEST(test_dates)
{
    double t;
    /* POSIX time of 2022-01-15T04:15:00Z: 19007 days x 86400 + 15300 s (DERIVED by hand:
     * 52 years 1970-2021 with 13 leap days = 18993 days, + 14). */
    ck_assert_int_eq(sl_date_parse("2022-01-15T04:15:00Z", &t), 0);
    SL_CK_ABS(t, 19007.0 * 86400.0 + 15300.0, 0.0);
    ck_assert_int_eq(sl_date_parse("2022-01-15", &t), 0);
    SL_CK_ABS(t, 19007.0 * 86400.0, 0.0);
    ck_assert_int_eq(sl_date_parse("1908-06-30 00:14", &t), 0);
    char buf[32];
    sl_date_format(t, buf, sizeof buf);
    ck_assert_str_eq(buf, "1908-06-30T00:14:00Z");
    ck_assert_int_eq(sl_date_parse("2024-02-29T23:59:59+00:00", &t), 0);
    sl_date_fields f;
    sl_date_split(t, &f);
    ck_assert_int_eq(f.month, 2);
    ck_assert_int_eq(f.day, 29);
    ck_assert_int_eq(f.second, 59);
    const char *bad[] = {"2023-02-29", "2022-13-01", "2022-1-15", "15.01.2022", "2022-01-15T24:00",
                         "2022-01-15T04:15:00+01:00", "", "2022-01-15x"};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++)
        ck_assert_msg(sl_date_parse(bad[i], &t) != 0, "%s parsed", bad[i]);
}
END_TEST

/* A profile of 10-40 km in 1-km bands with a tropopause at 16.5 km. */
static void make_injection(sl_injection *inj)
{
    sl_err e = {0};
    memset(inj, 0, sizeof *inj);
    ck_assert_int_eq(sl_injection_init_uniform(inj, 10.0e3, 40.0e3, 1.0e3, &e), SL_OK);
    for (size_t i = 0; i < inj->n_bands; i++) {
        inj->vapor_kg[i] = 1.0e9 * (1.0 + (double)i);
        inj->ice_kg[i] = i % 3 == 0 ? 2.0e8 : 0.0;
    }
    inj->tropopause_altitude_m = 16.5e3;
    inj->latitude_deg = -20.0;
}

START_TEST(test_profile)
{
    sl_injection inj;
    make_injection(&inj);
    sl_err e = {0};
    sl_emission_profile p;
    ck_assert_int_eq(sl_emission_profile_build(&p, &inj, NAN, &e), SL_OK);
    /* The total is the mass above the tropopause (the injection's own split). */
    SL_CK_REL(p.total_kg, sl_injection_mass_above_kg(&inj, 16.5e3), 1e-14);
    SL_CK_ABS(p.layer[0].bottom_m, 16.5e3, 0.0);
    ck_assert_double_eq(p.above_top_kg, 0.0);
    sl_emission_profile_free(&p);
    ck_assert_int_eq(sl_emission_profile_build(&p, &inj, 30.5e3, &e), SL_OK);
    SL_CK_REL(p.total_kg + p.above_top_kg, sl_injection_mass_above_kg(&inj, 16.5e3), 1e-14);
    SL_CK_REL(p.above_top_kg, sl_injection_mass_above_kg(&inj, 30.5e3), 1e-14);
    SL_CK_ABS(p.layer[p.n - 1].top_m, 30.5e3, 0.0);
    sl_emission_profile_free(&p);
    sl_injection_free(&inj);
}
END_TEST

START_TEST(test_grid_specs)
{
    sl_emission_grid g;
    sl_err e = {0};
    ck_assert_int_eq(sl_emission_grid_init(&g, "90x180", &e), SL_OK);
    double sum = 0.0;
    for (size_t c = 0; c < g.nlat * g.nlon; c++)
        sum += g.area_m2[c];
    SL_CK_REL(sum, SL_EARTH_AREA_M2, 1e-12); /* the cells tile the sphere */
    sl_emission_grid_free(&g);
    const char *bad[] = {"180", "180x", "x360", "0x360", "180x99999", "180x360x2", "abc"};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++)
        ck_assert_int_eq(sl_emission_grid_init(&g, bad[i], &e), SL_EUSAGE);
    ck_assert_ptr_nonnull(strstr(e.msg, "NLATxNLON"));
}
END_TEST

/* A template like a model's 0.9x1.25 file: 192 latitudes from pole to pole
 * (centres on the poles), 288 longitudes from -180, no bounds. */
static void write_template(const char *path, int with_coords)
{
    int ncid, dlat, dlon, vlat, vlon, vt, dims[2];
    ck_assert_int_eq(nc_create(path, NC_CLOBBER, &ncid), NC_NOERR);
    ck_assert_int_eq(nc_def_dim(ncid, "y", 192, &dlat), NC_NOERR);
    ck_assert_int_eq(nc_def_dim(ncid, "x", 288, &dlon), NC_NOERR);
    dims[0] = dlat, dims[1] = dlon;
    if (with_coords) {
        ck_assert_int_eq(nc_def_var(ncid, "lat", NC_DOUBLE, 1, &dlat, &vlat), NC_NOERR);
        ck_assert_int_eq(nc_put_att_text(ncid, vlat, "units", 13, "degrees_north"), NC_NOERR);
        ck_assert_int_eq(nc_def_var(ncid, "lon", NC_DOUBLE, 1, &dlon, &vlon), NC_NOERR);
        ck_assert_int_eq(nc_put_att_text(ncid, vlon, "units", 12, "degrees_east"), NC_NOERR);
    }
    ck_assert_int_eq(nc_def_var(ncid, "T", NC_FLOAT, 2, dims, &vt), NC_NOERR);
    ck_assert_int_eq(nc_enddef(ncid), NC_NOERR);
    if (with_coords) {
        double lat[192], lon[288];
        for (int j = 0; j < 192; j++)
            lat[j] = -90.0 + 180.0 * j / 191.0;
        for (int i = 0; i < 288; i++)
            lon[i] = -180.0 + 1.25 * i;
        ck_assert_int_eq(nc_put_var_double(ncid, vlat, lat), NC_NOERR);
        ck_assert_int_eq(nc_put_var_double(ncid, vlon, lon), NC_NOERR);
    }
    ck_assert_int_eq(nc_close(ncid), NC_NOERR);
}

START_TEST(test_template)
{
    char dir[] = "/tmp/sl_emission_XXXXXX", path[256];
    ck_assert_ptr_nonnull(mkdtemp(dir));
    snprintf(path, sizeof path, "%s/template.nc", dir);
    write_template(path, 1);
    sl_emission_grid g;
    sl_err e = {0};
    ck_assert_int_eq(sl_emission_grid_init(&g, path, &e), SL_OK);
    ck_assert_int_eq((int)g.nlat, 192);
    ck_assert_int_eq((int)g.nlon, 288);
    ck_assert_double_eq(g.lat_edge_deg[0], -90.0); /* clamped at the pole */
    double sum = 0.0;
    for (size_t c = 0; c < g.nlat * g.nlon; c++)
        sum += g.area_m2[c];
    SL_CK_REL(sum, SL_EARTH_AREA_M2, 1e-12);
    sl_emission_grid_free(&g);
    write_template(path, 0);
    ck_assert_int_eq(sl_emission_grid_init(&g, path, &e), SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, path));
    ck_assert_ptr_nonnull(strstr(e.msg, "degrees_north"));
    unlink(path);
    rmdir(dir);
}
END_TEST

START_TEST(test_footprint_area)
{
    /* A 500-km disc: its area on the sphere is 2 pi R^2 (1 - cos(r/R)) (DERIVED);
     * the sampled area within 1 % on a 0.5-degree grid; a disc over the date line
     * and one over the pole keep their shares summing to 1. */
    sl_emission_grid g;
    sl_err e = {0};
    ck_assert_int_eq(sl_emission_grid_init(&g, "360x720", &e), SL_OK);
    double *w = malloc(g.nlat * g.nlon * sizeof *w), area;
    const double R = SL_EARTH_MEAN_RADIUS_M, r = 500.0e3;
    const double cap = 2.0 * SL_PI * R * R * (1.0 - cos(r / R));
    const double sites[3][2] = {{-20.5, 184.6}, {10.0, 359.9}, {89.0, 45.0}};
    for (int k = 0; k < 3; k++) {
        ck_assert_int_eq(sl_emission_footprint(&g, sites[k][0], sites[k][1], r, w, &area, &e), SL_OK);
        SL_CK_REL(area, cap, 0.01);
        double s = 0.0;
        int partial = 0;
        for (size_t c = 0; c < g.nlat * g.nlon; c++) {
            s += w[c];
            partial += w[c] > 0.0 && w[c] * area < 0.5 * g.area_m2[c];
        }
        SL_CK_REL(s, 1.0, 1e-12);
        ck_assert_int_gt(partial, 0); /* edge cells enter with their covered share */
    }
    /* A disc far smaller than a cell: all of it in the cell holding the centre. */
    sl_emission_grid_free(&g);
    ck_assert_int_eq(sl_emission_grid_init(&g, "18x36", &e), SL_OK);
    ck_assert_int_eq(sl_emission_footprint(&g, 5.0, 5.0, 1000.0, w, &area, &e), SL_OK);
    ck_assert_double_eq(w[9 * 36 + 0], 1.0);
    ck_assert_int_eq(sl_emission_footprint(&g, 5.0, 5.0, -1.0, w, &area, &e), SL_EDATA);
    free(w);
    sl_emission_grid_free(&g);
}
END_TEST

/* Integrate an emission file back to kg. */
static double integrate(const char *path, int cesm)
{
    int ncid, v, vt, vz;
    ck_assert_int_eq(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    int dl, dn, dt, dz;
    size_t nlat, nlon, nt, nz;
    ck_assert_int_eq(nc_inq_dimid(ncid, "lat", &dl), NC_NOERR);
    ck_assert_int_eq(nc_inq_dimid(ncid, "lon", &dn), NC_NOERR);
    ck_assert_int_eq(nc_inq_dimid(ncid, "time", &dt), NC_NOERR);
    ck_assert_int_eq(nc_inq_dimid(ncid, "altitude", &dz), NC_NOERR);
    nc_inq_dimlen(ncid, dl, &nlat);
    nc_inq_dimlen(ncid, dn, &nlon);
    nc_inq_dimlen(ncid, dt, &nt);
    nc_inq_dimlen(ncid, dz, &nz);
    double *latb = malloc(2 * nlat * sizeof(double)), *lonb = malloc(2 * nlon * sizeof(double));
    double *zb = malloc(2 * nz * sizeof(double)) , *zi = malloc((nz + 1) * sizeof(double));
    double *t = malloc(nt * sizeof(double));
    float *q = malloc(nlat * nlon * sizeof(float));
    ck_assert_int_eq(nc_inq_varid(ncid, "lat_bnds", &v), NC_NOERR);
    nc_get_var_double(ncid, v, latb);
    ck_assert_int_eq(nc_inq_varid(ncid, "lon_bnds", &v), NC_NOERR);
    nc_get_var_double(ncid, v, lonb);
    ck_assert_int_eq(nc_inq_varid(ncid, "time", &vt), NC_NOERR);
    nc_get_var_double(ncid, vt, t);
    if (cesm) {
        ck_assert_int_eq(nc_inq_varid(ncid, "altitude_int", &vz), NC_NOERR);
        nc_get_var_double(ncid, vz, zi);
        for (size_t k = 0; k < nz; k++)
            zb[2 * k] = zi[k], zb[2 * k + 1] = zi[k + 1];
    } else {
        ck_assert_int_eq(nc_inq_varid(ncid, "altitude_bnds", &vz), NC_NOERR);
        nc_get_var_double(ncid, vz, zb);
        int vb;
        double tb[2];
        ck_assert_int_eq(nc_inq_varid(ncid, "time_bnds", &vb), NC_NOERR);
        nc_get_var_double(ncid, vb, tb);
        t[0] = (tb[1] - tb[0]) * 86400.0; /* the pulse, s */
    }
    const double R = SL_EARTH_MEAN_RADIUS_M, d2r = SL_PI / 180.0;
    const double per_kg = SL_AVOGADRO_PER_MOL / SL_MOLAR_MASS_H2O_KG_MOL; /* CODATA NA, water */
    double total = 0.0;
    for (int s = 0; s < (cesm ? 1 : 2); s++) {
        ck_assert_int_eq(nc_inq_varid(ncid, cesm ? "H2O" : s ? "ice_emission" : "water_vapour_emission", &v), NC_NOERR);
        for (size_t r = 0; r < nt; r++) {
            /* Trapezoid weight of record r in time (CESM: linear between records). */
            double wt = cesm ? 0.5 * 86400.0 * ((r + 1 < nt ? t[r + 1] - t[r] : 0.0) + (r > 0 ? t[r] - t[r - 1] : 0.0))
                             : t[0];
            for (size_t k = 0; k < nz; k++) {
                size_t st[4] = {r, k, 0, 0}, cn[4] = {1, 1, nlat, nlon};
                ck_assert_int_eq(nc_get_vara_float(ncid, v, st, cn, q), NC_NOERR);
                double dzm = (zb[2 * k + 1] - zb[2 * k]) * 1e3;
                for (size_t j = 0; j < nlat; j++)
                    for (size_t i = 0; i < nlon; i++) {
                        float x = q[j * nlon + i];
                        if (x == 0.0f)
                            continue;
                        double a = R * R * fabs(lonb[2 * i + 1] - lonb[2 * i]) * d2r *
                                   fabs(sin(latb[2 * j + 1] * d2r) - sin(latb[2 * j] * d2r));
                        double rate = cesm ? (double)x * 1e6 / per_kg : (double)x;
                        total += rate * a * dzm * wt;
                    }
            }
        }
    }
    nc_close(ncid);
    free(latb), free(lonb), free(zb), free(zi), free(t), free(q);
    return total;
}

START_TEST(test_mass_conserved)
{
    /* Every emission file integrates back to the water above the tropopause
     * within 1e-6, on a 2-degree, a 0.9x1.25 (template), a 0.5-degree and the
     * default grid, with footprints from 30 km to 1500 km. */
    char dir[] = "/tmp/sl_emission_XXXXXX", tpl[256], out[256];
    ck_assert_ptr_nonnull(mkdtemp(dir));
    snprintf(tpl, sizeof tpl, "%s/template.nc", dir);
    write_template(tpl, 1);
    sl_injection inj;
    make_injection(&inj);
    const double want = sl_injection_mass_above_kg(&inj, inj.tropopause_altitude_m);
    const char *grids[4] = {"90x180", tpl, "360x720", "180x360"};
    const double radius[4] = {1.5e6, 3.0e4, 2.5e5, 6.0e5};
    sl_err e = {0};
    for (int k = 0; k < 4; k++) {
        sl_emission_grid g;
        ck_assert_int_eq(sl_emission_grid_init(&g, grids[k], &e), SL_OK);
        for (int cesm = 0; cesm < 2; cesm++) {
            sl_model_inputs mi = {0};
            mi.inj = &inj;
            mi.latitude_deg = -20.5;
            mi.longitude_deg = k == 1 ? -175.4 : 184.6;
            mi.event_time_s = 19007.0 * 86400.0 + 15300.0;
            mi.date_given = 1;
            mi.duration_s = 21600.0;
            mi.radius_m = radius[k];
            snprintf(mi.digest, sizeof mi.digest, "0123456789abcdef");
            snprintf(out, sizeof out, "%s/e%d%d.nc", dir, k, cesm);
            double above = -1.0;
            ck_assert_int_eq(sl_model_inputs_emission_write(&mi, out, &g, cesm, NAN, 0, &above, &e), SL_OK);
            ck_assert_double_eq(above, 0.0);
            double got = integrate(out, cesm);
            ck_assert_msg(fabs(got / want - 1.0) < 1e-6, "grid %s cesm %d: %.9g vs %.9g", grids[k], cesm, got, want);
            /* No overwrite without force. */
            ck_assert_int_eq(sl_model_inputs_emission_write(&mi, out, &g, cesm, NAN, 0, &above, &e), SL_ECANTCREAT);
            unlink(out);
        }
        sl_emission_grid_free(&g);
    }
    unlink(tpl);
    rmdir(dir);
    sl_injection_free(&inj);
}
END_TEST

START_TEST(test_reader_carries_place_and_time)
{
    /* A profile file as steamloft writes it: the reader hands longitude, event
     * time and month to the injection, so `decay` can start where the run did;
     * a nominal time is not taken for a date. */
    char dir[] = "/tmp/sl_emission_XXXXXX", path[256];
    ck_assert_ptr_nonnull(mkdtemp(dir));
    snprintf(path, sizeof path, "%s/prof.nc", dir);
    for (int nominal = 0; nominal < 2; nominal++) {
        int ncid, dz, dnv, vz, vb, vm, vlon, dims[2];
        ck_assert_int_eq(nc_create(path, NC_CLOBBER, &ncid), NC_NOERR);
        ck_assert_int_eq(nc_def_dim(ncid, "altitude", 2, &dz), NC_NOERR);
        ck_assert_int_eq(nc_def_dim(ncid, "nv", 2, &dnv), NC_NOERR);
        ck_assert_int_eq(nc_def_var(ncid, "altitude", NC_DOUBLE, 1, &dz, &vz), NC_NOERR);
        nc_put_att_text(ncid, vz, "units", 1, "m");
        nc_put_att_text(ncid, vz, "bounds", 13, "altitude_bnds");
        dims[0] = dz, dims[1] = dnv;
        ck_assert_int_eq(nc_def_var(ncid, "altitude_bnds", NC_DOUBLE, 2, dims, &vb), NC_NOERR);
        ck_assert_int_eq(nc_def_var(ncid, "vapor_mass", NC_DOUBLE, 1, &dz, &vm), NC_NOERR);
        nc_put_att_text(ncid, vm, "units", 2, "kg");
        ck_assert_int_eq(nc_def_var(ncid, "longitude", NC_DOUBLE, 0, NULL, &vlon), NC_NOERR);
        nc_put_att_text(ncid, vlon, "units", 12, "degrees_east");
        int month = 1;
        nc_put_att_int(ncid, NC_GLOBAL, "event_month", NC_INT, 1, &month);
        nc_put_att_text(ncid, NC_GLOBAL, "event_time", 19, "2022-01-15 04:15:00");
        nc_put_att_text(ncid, NC_GLOBAL, "event_time_is_nominal", nominal ? 3 : 2, nominal ? "yes" : "no");
        ck_assert_int_eq(nc_enddef(ncid), NC_NOERR);
        double z[2] = {20500.0, 21500.0}, b[4] = {20000.0, 21000.0, 21000.0, 22000.0}, m[2] = {1e9, 2e9};
        double lon = 184.6;
        nc_put_var_double(ncid, vz, z);
        nc_put_var_double(ncid, vb, b);
        nc_put_var_double(ncid, vm, m);
        nc_put_var_double(ncid, vlon, &lon);
        ck_assert_int_eq(nc_close(ncid), NC_NOERR);
        sl_injection inj;
        sl_err e = {0};
        ck_assert_int_eq(sl_injection_read(&inj, path, &e), SL_OK);
        ck_assert_double_eq(inj.longitude_deg, 184.6);
        ck_assert_int_eq(inj.month, 1);
        if (nominal)
            ck_assert(isnan(inj.event_time_s));
        else
            SL_CK_ABS(inj.event_time_s, 19007.0 * 86400.0 + 15300.0, 0.0);
        sl_injection_free(&inj);
    }
    unlink(path);
    rmdir(dir);
}
END_TEST

static Suite *emission_suite(void)
{
    sl_err_gsl_handler_off();
    Suite *s = suite_create("emission");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, test_dates);
    tcase_add_test(tc, test_profile);
    tcase_add_test(tc, test_grid_specs);
    tcase_add_test(tc, test_template);
    tcase_add_test(tc, test_footprint_area);
    tcase_add_test(tc, test_mass_conserved);
    tcase_add_test(tc, test_reader_carries_place_and_time);
    suite_add_tcase(s, tc);
    return s;
}

SL_TEST_MAIN(emission_suite)
