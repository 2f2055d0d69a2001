/* Tests of plot: data files carry the run's numbers, the script renders with
 * the installed gnuplot (5.4, svg and pngcairo terminals) into valid SVG
 * (parsed as XML by Python's xml.etree) and PNG (signature and IHDR size),
 * every SVG carries the caution and the title, a missing gnuplot is a warning
 * with data and script still written, and the safe-output rules hold for the
 * plot directory.  The ensemble plots are tested standalone from plain arrays.
 * Without gnuplot the rendering tests are left out and the program exits 77
 * (SKIP) after the others pass. */
#include "output_fixture.h"

#include "steamloft/cli.h"
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

/* The SVG at PATH holds TEXT (the caution, the title) as one string. */
static void check_svg_has(const char *path, const char *text)
{
    FILE *f = fopen(path, "rb");
    ck_assert_msg(f != NULL, "%s missing", path);
    static char buf[4 << 20];
    size_t n = fread(buf, 1, sizeof buf - 1, f);
    fclose(f);
    buf[n] = '\0';
    ck_assert_msg(strstr(buf, text) != NULL, "%s lacks '%s'", path, text);
}

/* The caution in the SVG at PATH is centred on the canvas (its group is
 * translated to half the <svg> width, text-anchor middle), so a key outside
 * the graph cannot push its start off the left edge. */
static void check_caution_centred(const char *path)
{
    FILE *f = fopen(path, "rb");
    ck_assert_msg(f != NULL, "%s missing", path);
    static char buf[4 << 20];
    size_t n = fread(buf, 1, sizeof buf - 1, f);
    fclose(f);
    buf[n] = '\0';
    double w = 0, x = -1;
    const char *svg = strstr(buf, "<svg");
    ck_assert_msg(svg && sscanf(strstr(svg, "width=\"") + 7, "%lf", &w) == 1 && w > 0, "%s: no width", path);
    const char *c = strstr(buf, sl_cli_caution());
    ck_assert_msg(c != NULL, "%s lacks the caution", path);
    const char *t = NULL;
    for (const char *q = c; q > buf && c - q < 400 && t == NULL; q--)
        if (strncmp(q, "translate(", 10) == 0)
            t = q;
    ck_assert_msg(t && sscanf(t + 10, "%lf", &x) == 1, "%s: the caution has no position", path);
    ck_assert_msg(fabs(x - 0.5 * w) < 1.0, "%s: caution centred at x = %g, canvas %g wide", path, x, w);
    const char *anchor = strstr(t, "text-anchor=\"middle\"");
    ck_assert_msg(anchor != NULL && anchor < c, "%s: the caution is not centred on its position", path);
}

/* gnuplot redraws everything from SCRIPT in DIR (the script stands alone). */
static void redraw(const char *dir, const char *script)
{
    char cmd[700];
    snprintf(cmd, sizeof cmd, "cd '%s' && gnuplot %s 2>&1", dir, script);
    ck_assert_int_eq(run_cmd(cmd, NULL, 0), 0);
}

START_TEST(renders_all_plots)
{
    build_fixture(0);
    mk_tmp();
    char dir[400], p[600];
    snprintf(dir, sizeof dir, "%s/plots", tmpdir);
    sl_err e = {0};
    sl_plot_result res;
    ck_assert_msg(sl_plot_write(&F.view, dir, NULL, &res, &e) == SL_OK, "%s", e.msg);
    ck_assert_msg(res.rendered == 1, "not rendered: %s", res.warning);
    ck_assert_str_eq(res.warning, "");
    ck_assert_uint_eq(res.n_files, 17);
    ck_assert_int_eq(count_entries(dir), 17); /* 6 data, script, 10 images; no log, no stage */
    const char *names[] = {"profile", "decay", "column", "section", "sinks"};
    for (int i = 0; i < 5; i++) {
        snprintf(p, sizeof p, "%s/%s.svg", dir, names[i]);
        check_svg(p);
        check_svg_has(p, sl_cli_caution());
        check_caution_centred(p);
        check_svg_has(p, "invented test scenario"); /* the view's title, not a path */
        snprintf(p, sizeof p, "%s/%s.png", dir, names[i]);
        check_png(p, 1100, 830); /* png_w, png_h in the script */
    }
    /* The script is standalone: gnuplot redraws from it in the directory. */
    redraw(dir, "steamloft.gp");
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
    ck_assert_int_eq(count_entries(tmpdir), 7);

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

    /* The section: one row per layer and time, the fixture's global-mean
     * anomaly 1 ppmv * exp(-t / 3 yr) (exact up to printing, 1e-9). */
    snprintf(p, sizeof p, "%s/section.dat", tmpdir);
    f = fopen(p, "r");
    ck_assert_ptr_nonnull(f);
    row = 0;
    double ty, zk, ppm, dt, dz;
    while (fgets(line, sizeof line, f)) {
        if (line[0] == '#' || line[0] == '\n')
            continue;
        ck_assert_int_eq(sscanf(line, "%lf %lf %lf %lf %lf", &ty, &zk, &ppm, &dt, &dz), 5);
        int t = row / NL, l = row % NL;
        SL_CK_REL(ppm, exp(-F.t_s[t] / sl_years_to_s(3.0)), 1e-9);
        SL_CK_ABS(zk, 0.5 * (F.lbot[l] + F.ltop[l]) / 1000.0, 1e-9);
        SL_CK_ABS(dz, 0.5, 1e-9); /* 1-km layers */
        row++;
    }
    fclose(f);
    ck_assert_int_eq(row, NT * NL);

    /* The sinks: what remains plus what each path removed is what was
     * injected (100 Tg in the fixture) at every time -- the stacked areas'
     * top is the injected mass (budget closure, to printing precision). */
    snprintf(p, sizeof p, "%s/sinks.dat", tmpdir);
    f = fopen(p, "r");
    ck_assert_ptr_nonnull(f);
    row = 0;
    double rem, s1, s2;
    while (fgets(line, sizeof line, f)) {
        if (line[0] == '#')
            continue;
        ck_assert_int_eq(sscanf(line, "%lf %lf %lf %lf", &ty, &rem, &s1, &s2), 4);
        SL_CK_REL(rem + s1 + s2, 100.0, 1e-9);
        SL_CK_REL(s1, 9.0 * s2, 1e-9); /* the fixture's 90/10 split */
        row++;
    }
    fclose(f);
    ck_assert_int_eq(row, NT);
    rm_tmp();
}
END_TEST

/* The plot carries the head of the validity warning, cut before its first
 * clause or bracket: no dangling "(" (the wording of output_chain.c). */
START_TEST(validity_head)
{
    build_fixture(0);
    mk_tmp();
    sl_err e = {0};
    sl_plot_options o = {0, 0, NULL};
    sl_plot_result res;
    F.view.regime_note = "blow-out regime (sources: 1 blow-out, 2 thermal): a release wider than the scale height";
    ck_assert_msg(sl_plot_write(&F.view, tmpdir, &o, &res, &e) == SL_OK, "%s", e.msg);
    F.view.regime_note = NULL;
    char p[500], line[256];
    snprintf(p, sizeof p, "%s/steamloft.gp", tmpdir);
    FILE *f = fopen(p, "r");
    ck_assert_ptr_nonnull(f);
    int found = 0;
    while (fgets(line, sizeof line, f))
        if (strncmp(line, "validity = ", 11) == 0) {
            ck_assert_str_eq(line, "validity = \"blow-out regime: see the validity warning\"\n");
            found = 1;
        }
    fclose(f);
    ck_assert(found);
    rm_tmp();
}
END_TEST

/* An invented ensemble: 1-km bands from 10 to 50 km, median lofted water a
 * Gaussian around 30 km, the 5th and 95th percentiles a third and three times
 * it, and the 5th zero in the lowest band (below the log axis: it must not be
 * drawn at the axis edge); remaining fractions exp(-t / tau) with tau 2, 3 and
 * 4.5 years. */
enum { ENB = 40, ENT = 61 };
static double eb[ENB], et[ENB], e05[ENB], e50[ENB], e95[ENB];
static double ets[ENT], r05[ENT], r50[ENT], r95[ENT];
static sl_plot_ensemble_view EV;

static void build_ensemble(void)
{
    for (int i = 0; i < ENB; i++) {
        eb[i] = 10000.0 + 1000.0 * i;
        et[i] = eb[i] + 1000.0;
        double zc = eb[i] + 500.0;
        e50[i] = 1e9 * exp(-0.5 * pow((zc - 30000.0) / 4000.0, 2));
        e05[i] = i == 0 ? 0.0 : e50[i] / 3.0;
        e95[i] = 3.0 * e50[i];
    }
    for (int t = 0; t < ENT; t++) {
        ets[t] = sl_years_to_s(t / 6.0);
        double y = t / 6.0;
        r05[t] = exp(-y / 2.0);
        r50[t] = exp(-y / 3.0);
        r95[t] = exp(-y / 4.5);
    }
    EV = (sl_plot_ensemble_view){"invented ensemble", 500,  ENB, eb,  et,  e05, e50,
                                 e95,                 17000.0, ENT, ets, r05, r50, r95};
}

START_TEST(ensemble_renders)
{
    build_ensemble();
    mk_tmp();
    char dir[400], p[600];
    snprintf(dir, sizeof dir, "%s/ens", tmpdir);
    sl_err e = {0};
    sl_plot_result res;
    ck_assert_msg(sl_plot_ensemble(dir, &EV, NULL, &res, &e) == SL_OK, "%s", e.msg);
    ck_assert_msg(res.rendered == 1, "not rendered: %s", res.warning);
    ck_assert_int_eq(count_entries(dir), 7); /* 2 data, script, 4 images */
    const char *names[] = {"ensemble_profile", "ensemble_remaining"};
    for (int i = 0; i < 2; i++) {
        snprintf(p, sizeof p, "%s/%s.svg", dir, names[i]);
        check_svg(p);
        check_svg_has(p, sl_cli_caution());
        check_caution_centred(p);
        check_svg_has(p, "invented ensemble: 500 members");
        check_svg_has(p, "5-95 % of members");
        snprintf(p, sizeof p, "%s/%s.png", dir, names[i]);
        check_png(p, 1100, 830);
    }
    redraw(dir, "steamloft-ensemble.gp");
    rm_tmp();
}
END_TEST

/* The ensemble data files hold the percentiles in the stated units. */
START_TEST(ensemble_data)
{
    build_ensemble();
    mk_tmp();
    sl_err e = {0};
    sl_plot_options o = {0, 0, NULL};
    sl_plot_result res;
    ck_assert_msg(sl_plot_ensemble(tmpdir, &EV, &o, &res, &e) == SL_OK, "%s", e.msg);
    ck_assert_int_eq(count_entries(tmpdir), 3);
    char p[500], line[256];
    snprintf(p, sizeof p, "%s/ensemble_profile.dat", tmpdir);
    FILE *f = fopen(p, "r");
    ck_assert_ptr_nonnull(f);
    int row = 0;
    double z, a, b, c;
    while (fgets(line, sizeof line, f) && line[0] != '\n') {
        if (line[0] == '#')
            continue;
        ck_assert_int_eq(sscanf(line, "%lf %lf %lf %lf", &z, &a, &b, &c), 4);
        int i = row / 2;
        SL_CK_ABS(z, (row % 2 ? et[i] : eb[i]) / 1000.0, 1e-9);
        SL_CK_REL(b, e50[i] / 1e9, 1e-9); /* kg in a 1-km band -> Tg per km */
        SL_CK_REL(c, e95[i] / 1e9, 1e-9);
        row++;
    }
    fclose(f);
    ck_assert_int_eq(row, 2 * ENB);
    snprintf(p, sizeof p, "%s/ensemble_remaining.dat", tmpdir);
    f = fopen(p, "r");
    ck_assert_ptr_nonnull(f);
    row = 0;
    double ty;
    while (fgets(line, sizeof line, f)) {
        if (line[0] == '#')
            continue;
        ck_assert_int_eq(sscanf(line, "%lf %lf %lf %lf", &ty, &a, &b, &c), 4);
        SL_CK_ABS(ty, row / 6.0, 1e-9);
        SL_CK_REL(b, r50[row], 1e-9);
        row++;
    }
    fclose(f);
    ck_assert_int_eq(row, ENT);
    rm_tmp();
}
END_TEST

/* A bad ensemble view is a bug upstream: SL_EINTERNAL naming it, no files. */
START_TEST(ensemble_bad_view)
{
    build_ensemble();
    mk_tmp();
    sl_err e = {0};
    sl_plot_options o = {0, 0, NULL};
    e05[5] = 2.0 * e50[5]; /* p05 above the median */
    ck_assert_int_eq(sl_plot_ensemble(tmpdir, &EV, &o, NULL, &e), SL_EINTERNAL);
    ck_assert_msg(strstr(e.msg, "not ordered") != NULL, "%s", e.msg);
    build_ensemble();
    ets[3] = ets[2]; /* times not increasing */
    ck_assert_int_eq(sl_plot_ensemble(tmpdir, &EV, &o, NULL, &e), SL_EINTERNAL);
    build_ensemble();
    r95[0] = 1.5; /* not a fraction */
    ck_assert_int_eq(sl_plot_ensemble(tmpdir, &EV, &o, NULL, &e), SL_EINTERNAL);
    build_ensemble();
    EV.n_band = 0;
    EV.n_time = 0;
    ck_assert_int_eq(sl_plot_ensemble(tmpdir, &EV, &o, NULL, &e), SL_EINTERNAL);
    ck_assert_int_eq(count_entries(tmpdir), 0);
    /* Only the remaining fraction: one data file and the script. */
    build_ensemble();
    EV.n_band = 0;
    ck_assert_msg(sl_plot_ensemble(tmpdir, &EV, &o, NULL, &e) == SL_OK, "%s", e.msg);
    ck_assert_int_eq(count_entries(tmpdir), 2);
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
    ck_assert_int_eq(count_entries(tmpdir), 7); /* data and script, no images, no stage */
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

/* Bands whose water is far below the mass axis (here 1e-7 of the peak, the
 * axis starting 1e-4 below it) next to bands on it: no line of the lofted
 * water may reach the plot's left edge (gnuplot clips a segment to an
 * off-axis point at the border, which drew a spurious horizontal line there).
 * Read from the SVG: the left edge is where the horizontal grid lines start;
 * every vertex of the two lofted-water plots must lie clear of it (0.5 px,
 * half the SVG's coordinate resolution of 0.01 px is far finer: PRACTICE). */
START_TEST(no_line_at_the_axis_edge)
{
    build_fixture(0);
    double peak = 0;
    for (int i = 0; i < NB; i++)
        peak = fmax(peak, F.vap[i]);
    for (int i = 10; i < 20; i++)
        F.vap[i] = F.ice[i] = 1e-7 * peak;
    F.view.series = NULL;
    mk_tmp();
    sl_err e = {0};
    sl_plot_result res;
    ck_assert_msg(sl_plot_write(&F.view, tmpdir, NULL, &res, &e) == SL_OK, "%s", e.msg);
    ck_assert_msg(res.rendered, "not rendered: %s", res.warning);
    char cmd[1600], out[256];
    snprintf(cmd, sizeof cmd,
             "/usr/bin/python3 -c \"import re\n"
             "s = open('%s/profile.svg').read()\n"
             "g = re.search(r'class=.gridline.\\s+d=.M([0-9.]+),([0-9.]+) L[0-9.]+,\\2', s)\n"
             "left = float(g.group(1))\n"
             "n = bad = 0\n"
             "for m in re.finditer(r'<title>lofted[^<]*</title>(.*?)</g>', s, re.S):\n"
             "    for x in re.findall(r'[ML]([0-9.]+),', m.group(1)):\n"
             "        n += 1; bad += abs(float(x) - left) < 0.5\n"
             "print(n, bad)\"",
             tmpdir);
    ck_assert_int_eq(run_cmd(cmd, out, sizeof out), 0);
    int n = 0, bad = -1;
    ck_assert_int_eq(sscanf(out, "%d %d", &n, &bad), 2);
    ck_assert_msg(n > 40, "only %d vertices of the lofted water found", n);
    ck_assert_msg(bad == 0, "%d vertices of the lofted water on the axis edge", bad);
    rm_tmp();
}
END_TEST

static Suite *suite(int render)
{
    Suite *s = suite_create("plot");
    TCase *tc = tcase_create("plot");
    tcase_set_timeout(tc, 60);
    if (render) {
        tcase_add_test(tc, renders_all_plots);
        tcase_add_test(tc, nothing_lofted_renders);
        tcase_add_test(tc, ensemble_renders);
        tcase_add_test(tc, no_line_at_the_axis_edge);
    }
    tcase_add_test(tc, data_values);
    tcase_add_test(tc, validity_head);
    tcase_add_test(tc, missing_gnuplot_is_a_warning);
    tcase_add_test(tc, existing_image_not_overwritten);
    tcase_add_test(tc, ensemble_data);
    tcase_add_test(tc, ensemble_bad_view);
    suite_add_tcase(s, tc);
    return s;
}

/* Without gnuplot the rendering tests cannot run: SKIP (77) once the rest pass. */
int main(void)
{
    int render = have_gnuplot();
    SRunner *sr = srunner_create(suite(render));
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    if (failed)
        return EXIT_FAILURE;
    if (!render) {
        printf("SKIP: gnuplot is not installed: the plots were not rendered (package gnuplot-nox)\n");
        return 77;
    }
    return EXIT_SUCCESS;
}
