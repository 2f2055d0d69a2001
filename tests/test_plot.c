/* Tests of plot: data files carry the run's numbers, the script renders with
 * the installed gnuplot (5.4, svg and pngcairo terminals) into valid SVG
 * (parsed as XML by Python's xml.etree) and PNG (signature and IHDR size),
 * a missing gnuplot is a warning with data and script still written, and the
 * safe-output rules hold for the plot directory. */
#include "output_fixture.h"

#include "steamloft/plot.h"

static int have_gnuplot(void)
{
    return system("command -v gnuplot >/dev/null 2>&1") == 0;
}

/* PNG: 8-byte signature, then the IHDR chunk with width and height (PNG
 * specification, ISO/IEC 15948, sections 5.2 and 11.2.2; MEM). */
static void check_png(const char *path, unsigned want_w, unsigned want_h)
{
    unsigned char b[24];
    FILE *f = fopen(path, "rb");
    ck_assert_msg(f != NULL, "%s missing", path);
    ck_assert_uint_eq(fread(b, 1, sizeof b, f), sizeof b);
    fclose(f);
    static const unsigned char sig[8] = {0x89, 'P', 'N', 'G', '\r', '\n', 0x1a, '\n'};
    ck_assert_msg(memcmp(b, sig, 8) == 0, "%s: not a PNG signature", path);
    ck_assert_msg(memcmp(b + 12, "IHDR", 4) == 0, "%s: no IHDR chunk first", path);
    unsigned w = (unsigned)b[16] << 24 | (unsigned)b[17] << 16 | (unsigned)b[18] << 8 | b[19];
    unsigned h = (unsigned)b[20] << 24 | (unsigned)b[21] << 16 | (unsigned)b[22] << 8 | b[23];
    ck_assert_uint_eq(w, want_w);
    ck_assert_uint_eq(h, want_h);
}

static void check_svg(const char *path)
{
    char cmd[1200], out[256];
    snprintf(cmd, sizeof cmd,
             "/usr/bin/python3 -c \"import xml.etree.ElementTree as E, sys; r = E.parse('%s')"
             ".getroot(); print(r.tag.split('}')[-1], len(list(r.iter())))\"",
             path);
    ck_assert_int_eq(run_cmd(cmd, out, sizeof out), 0);
    char tag[32];
    int n = 0;
    ck_assert_int_eq(sscanf(out, "%31s %d", tag, &n), 2);
    ck_assert_str_eq(tag, "svg");
    ck_assert_msg(n > 50, "%s: only %d XML elements: an empty plot?", path, n);
}

START_TEST(renders_all_plots)
{
    if (!have_gnuplot()) {
        SL_SKIP("gnuplot not installed: rendering not tested");
    }
    build_fixture(0);
    mk_tmp();
    char dir[400], p[600];
    snprintf(dir, sizeof dir, "%s/plots", tmpdir);
    sl_err e = {0};
    sl_plot_result res;
    ck_assert_msg(sl_plot_write(&F.view, dir, NULL, &res, &e) == SL_OK, "%s", e.msg);
    ck_assert_msg(res.rendered == 1, "not rendered: %s", res.warning);
    ck_assert_str_eq(res.warning, "");
    ck_assert_uint_eq(res.n_files, 11);
    ck_assert_int_eq(count_entries(dir), 11); /* 4 data, script, 6 images; no log, no stage */
    const char *names[] = {"profile", "decay", "column"};
    for (int i = 0; i < 3; i++) {
        snprintf(p, sizeof p, "%s/%s.svg", dir, names[i]);
        check_svg(p);
        snprintf(p, sizeof p, "%s/%s.png", dir, names[i]);
        check_png(p, 1100, 830); /* png_w, png_h in the script */
    }
    /* The script is standalone: gnuplot redraws from it in the directory. */
    char cmd[700];
    snprintf(cmd, sizeof cmd, "cd '%s' && gnuplot steamloft.gp 2>&1", dir);
    ck_assert_int_eq(run_cmd(cmd, NULL, 0), 0);
    rm_tmp();
}
END_TEST

/* The data files hold the run's numbers in the stated units. */
START_TEST(data_values)
{
    build_fixture(0);
    mk_tmp();
    sl_err e = {0};
    sl_plot_options o = {0, 0, NULL}; /* data and script only */
    sl_plot_result res;
    ck_assert_msg(sl_plot_write(&F.view, tmpdir, &o, &res, &e) == SL_OK, "%s", e.msg);
    ck_assert_int_eq(res.rendered, 0);
    ck_assert_int_eq(count_entries(tmpdir), 5);

    char p[500], line[256];
    snprintf(p, sizeof p, "%s/profile.dat", tmpdir);
    FILE *f = fopen(p, "r");
    ck_assert_ptr_nonnull(f);
    int row = 0;
    double z, mv, mi;
    while (fgets(line, sizeof line, f)) {
        if (line[0] == '#')
            continue;
        ck_assert_int_eq(sscanf(line, "%lf %lf %lf", &z, &mv, &mi), 3);
        int band = row / 2;
        SL_CK_ABS(z, (row % 2 ? F.top[band] : F.bottom[band]) / 1000.0, 1e-9);
        SL_CK_REL(mv, F.vap[band] / 1e9, 5e-10); /* 1-km bands: Tg per km = Tg in the band */
        row++;
    }
    fclose(f);
    ck_assert_int_eq(row, 2 * NB);

    /* Background water per km over the Earth against Dalton's law for an ideal
     * gas, rho_w = x p M_w / (R T) (DERIVED): the writer uses the moist-air
     * density instead; the fixture's density is dry-air, which differs by
     * x (1 - M_w/M_d) ~ 2e-6 relative: tolerance 1e-5. */
    snprintf(p, sizeof p, "%s/background.dat", tmpdir);
    f = fopen(p, "r");
    ck_assert_ptr_nonnull(f);
    row = 0;
    double bg, ppmv;
    while (fgets(line, sizeof line, f)) {
        if (line[0] == '#')
            continue;
        ck_assert_int_eq(sscanf(line, "%lf %lf %lf", &z, &bg, &ppmv), 3);
        double rho_w = F.x[row] * F.p[row] * SL_MOLAR_MASS_H2O_KG_MOL /
                       (SL_GAS_CONSTANT_J_MOL_K * F.T[row]);
        SL_CK_REL(bg, rho_w * 4.0 * SL_PI * 6371008.8 * 6371008.8 * 1000.0 / 1e9, 1e-5);
        SL_CK_REL(ppmv, 5.0, 1e-12);
        row++;
    }
    fclose(f);
    ck_assert_int_eq(row, NLEV);
    rm_tmp();
}
END_TEST

START_TEST(missing_gnuplot_is_a_warning)
{
    build_fixture(0);
    mk_tmp();
    sl_err e = {0};
    sl_plot_options o = {0, 1, "steamloft-no-such-gnuplot"};
    sl_plot_result res;
    ck_assert_int_eq(sl_plot_write(&F.view, tmpdir, &o, &res, &e), SL_OK);
    ck_assert_int_eq(res.rendered, 0);
    ck_assert_msg(strstr(res.warning, "not found") && strstr(res.warning, "steamloft.gp"),
                  "warning: %s", res.warning);
    ck_assert_int_eq(count_entries(tmpdir), 5); /* data and script, no images, no stage */
    rm_tmp();
}
END_TEST

START_TEST(existing_image_not_overwritten)
{
    build_fixture(0);
    F.view.series = NULL; /* profile only: profile.dat, background.dat, script, 2 images */
    mk_tmp();
    char p[500];
    snprintf(p, sizeof p, "%s/profile.png", tmpdir);
    FILE *f = fopen(p, "w");
    fputs("mine", f);
    fclose(f);
    sl_err e = {0};
    int rc = sl_plot_write(&F.view, tmpdir, NULL, NULL, &e);
    ck_assert_int_eq(rc, SL_ECANTCREAT);
    ck_assert_msg(strstr(e.msg, "profile.png") != NULL, "%s", e.msg);
    ck_assert_int_eq(count_entries(tmpdir), 1);
    if (have_gnuplot()) {
        sl_plot_options o = {1, 1, NULL};
        sl_plot_result res;
        ck_assert_msg(sl_plot_write(&F.view, tmpdir, &o, &res, &e) == SL_OK, "%s", e.msg);
        ck_assert_msg(res.rendered, "%s", res.warning);
        ck_assert_int_eq(count_entries(tmpdir), 5);
        check_png(p, 1100, 830);
    }
    rm_tmp();
}
END_TEST

/* Nothing lofted (a small airburst): the plot still renders, on the
 * background's log axis, labelled as such. */
START_TEST(nothing_lofted_renders)
{
    if (!have_gnuplot())
        SL_SKIP("gnuplot not installed: rendering not tested");
    build_fixture(0);
    for (int i = 0; i < NB; i++)
        F.vap[i] = F.ice[i] = 0.0;
    F.view.series = NULL;
    mk_tmp();
    sl_err e = {0};
    sl_plot_result res;
    ck_assert_msg(sl_plot_write(&F.view, tmpdir, NULL, &res, &e) == SL_OK, "%s", e.msg);
    ck_assert_msg(res.rendered, "not rendered: %s", res.warning);
    char p[500], cmd[700], out[256];
    snprintf(p, sizeof p, "%s/profile.svg", tmpdir);
    check_svg(p);
    snprintf(cmd, sizeof cmd, "grep -c 'no water lofted' '%s'", p);
    ck_assert_int_eq(run_cmd(cmd, out, sizeof out), 0);
    rm_tmp();
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("plot");
    TCase *tc = tcase_create("plot");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, renders_all_plots);
    tcase_add_test(tc, data_values);
    tcase_add_test(tc, missing_gnuplot_is_a_warning);
    tcase_add_test(tc, existing_image_not_overwritten);
    tcase_add_test(tc, nothing_lofted_renders);
    suite_add_tcase(s, tc);
    return s;
}

SL_TEST_MAIN(suite)
