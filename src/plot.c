/* plot: gnuplot data, an editable script, and SVG/PNG renderings (see
 * include/steamloft/plot.h).
 *
 * Quantities drawn, converted at this output boundary with units.h:
 *  - lofted vapour and ice per km of altitude, m_i / (z_top - z_bottom) in
 *    Tg km-1, drawn as a staircase over each band's true extent;
 *  - the background water per km of altitude over the whole Earth, so the
 *    two are directly comparable: rho_w(z) A with the water vapour density
 *    rho_w = x M_w rho / (x M_w + (1 - x) M_d) (mole fraction x in moist air
 *    of density rho; M_w, M_d the molar masses of water and dry air) and A
 *    the Earth's area 4 pi R^2 (R = 6371.0088 km);
 *  - the excess water over time (Julian years of 365.25 d) globally and per
 *    latitude region (summed over layers), and the column anomaly as
 *    precipitable depth (1 um = 1e-3 kg m-2).
 * gnuplot is an external program (gnuplot 5.4 with the svg and pngcairo
 * terminals); it is run with posix_spawnp, no shell, in the staging
 * directory, with stdin from /dev/null and its messages kept for the warning. */
#include "steamloft/plot.h"

#include "steamloft/cli.h"
#include "steamloft/outfile.h"
#include "steamloft/units.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <spawn.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

extern char **environ;

static const char *const images[] = {"profile.svg", "profile.png", "decay.svg",
                                     "decay.png",   "column.svg",  "column.png"};

/* A gnuplot double-quoted string literal of TEXT. */
static void gp_string(FILE *fp, const char *text)
{
    fputc('"', fp);
    for (const char *c = text; *c; c++) {
        if (*c == '"' || *c == '\\')
            fputc('\\', fp);
        if (*c == '\n')
            fputc(' ', fp);
        else
            fputc(*c, fp);
    }
    fputc('"', fp);
}

static void header(FILE *fp, const sl_output_view *v, const char *what)
{
    fprintf(fp, "# %s\n# %s: %s\n# %s\n", what, sl_cli_version(),
            v->title && v->title[0] ? v->title : "steamloft run", sl_cli_caution());
}

static double mass_per_km(double kg, double bottom_m, double top_m)
{
    return sl_kg_to_tg(kg) / sl_m_to_km(top_m - bottom_m);
}

static void write_profile(FILE *fp, const sl_output_view *v)
{
    const sl_injection *inj = v->inj;
    header(fp, v, "lofted water per km of altitude, as a staircase: two rows per band (bottom, top)");
    fputs("# altitude_km vapor_Tg_per_km ice_Tg_per_km\n", fp);
    for (size_t i = 0; i < inj->n_bands; i++) {
        double b = inj->band_bottom_m[i], t = inj->band_top_m[i];
        double mv = mass_per_km(inj->vapor_kg[i], b, t), mi = mass_per_km(inj->ice_kg[i], b, t);
        fprintf(fp, "%.10g %.10g %.10g\n%.10g %.10g %.10g\n", sl_m_to_km(b), mv, mi, sl_m_to_km(t),
                mv, mi);
    }
}

/* Background water vapour per km of altitude over the whole Earth at level I. */
static double background_tg_per_km(const sl_atmosphere *a, size_t i)
{
    const double mw = SL_MOLAR_MASS_H2O_KG_MOL, md = SL_MOLAR_MASS_DRY_AIR_KG_MOL;
    double x = a->h2o_mole_fraction[i];
    double rho_w = x * mw * a->density_kg_m3[i] / (x * mw + (1.0 - x) * md);
    return sl_kg_to_tg(rho_w * SL_EARTH_AREA_M2 * 1.0e3);
}

static void write_background(FILE *fp, const sl_output_view *v)
{
    const sl_atmosphere *a = v->atm;
    header(fp, v, "background water vapour per km of altitude over the whole Earth");
    fputs("# altitude_km background_water_Tg_per_km h2o_ppmv\n", fp);
    for (size_t i = 0; i < a->n; i++)
        fprintf(fp, "%.10g %.10g %.10g\n", sl_m_to_km(a->altitude_m[i]), background_tg_per_km(a, i),
                sl_mole_fraction_to_ppmv(a->h2o_mole_fraction[i]));
}

static void write_decay(FILE *fp, const sl_output_view *v)
{
    const sl_output_series *s = v->series;
    header(fp, v, "excess stratospheric water over time, global and per latitude region");
    fputs("# time_years global_excess_Tg", fp);
    for (size_t r = 0; r < s->n_region; r++)
        fprintf(fp, " region%zu_Tg", r + 1);
    fputs(" percent_of_background\n", fp);
    for (size_t t = 0; t < s->n_time; t++) {
        fprintf(fp, "%.10g %.10g", sl_s_to_years(s->time_s[t]), sl_kg_to_tg(s->global_excess_kg[t]));
        for (size_t r = 0; r < s->n_region; r++) {
            double m = 0;
            for (size_t l = 0; l < s->n_layer; l++)
                m += s->excess_kg[(t * s->n_region + r) * s->n_layer + l];
            fprintf(fp, " %.10g", sl_kg_to_tg(m));
        }
        fprintf(fp, " %.10g\n", s->percent_of_background ? s->percent_of_background[t] : NAN);
    }
}

static void write_column(FILE *fp, const sl_output_view *v)
{
    const sl_output_series *s = v->series;
    header(fp, v, "column anomaly of excess stratospheric water, precipitable micrometres");
    fputs("# time_years global_column_um local_column_um\n", fp);
    for (size_t t = 0; t < s->n_time; t++) {
        double g = s->column_anomaly_kg_m2 ? s->column_anomaly_kg_m2[t]
                                           : s->global_excess_kg[t] / SL_EARTH_AREA_M2;
        fprintf(fp, "%.10g %.10g", sl_s_to_years(s->time_s[t]), sl_kg_m2_to_precip_um(g));
        if (s->local_column_anomaly_kg_m2)
            fprintf(fp, " %.10g", sl_kg_m2_to_precip_um(s->local_column_anomaly_kg_m2[t]));
        else
            fputs(" NaN", fp);
        fputc('\n', fp);
    }
}

static void lat_label(double deg, char *buf, size_t len)
{
    if (deg == 0)
        snprintf(buf, len, "Eq");
    else
        snprintf(buf, len, "%g°%c", fabs(deg), deg < 0 ? 'S' : 'N');
}

static void write_script(FILE *fp, const sl_output_view *v)
{
    const sl_injection *inj = v->inj;
    const sl_output_series *s = v->series;
    double trop = inj->tropopause_altitude_m;
    if (!isfinite(trop) && v->atm)
        trop = v->atm->tropopause_altitude_m;
    double total = 0, peak = 0;
    for (size_t i = 0; i < inj->n_bands; i++) {
        double b = inj->band_bottom_m[i], t = inj->band_top_m[i];
        total += inj->vapor_kg[i] + inj->ice_kg[i];
        peak = fmax(peak, fmax(mass_per_km(inj->vapor_kg[i], b, t), mass_per_km(inj->ice_kg[i], b, t)));
    }

    fputs("# steamloft plots.  Edit freely, then run `gnuplot steamloft.gp` in this directory\n"
          "# to redraw profile, decay and column as SVG and PNG.\n",
          fp);
    fprintf(fp, "# %s\n# %s\n\n", sl_cli_version(), sl_cli_caution());
    fputs("# ---- style: colours, fonts, sizes -------------------------------------\n"
          "c_vapor  = \"#0b6e8a\"   # lofted vapour\n"
          "c_ice    = \"#8ecae6\"   # lofted ice and liquid\n"
          "c_bg     = \"#6c757d\"   # background water\n"
          "c_trop   = \"#c44536\"   # tropopause\n"
          "c_global = \"#1d3557\"   # global totals\n"
          "c_local  = \"#e76f51\"   # local (early cloud) column\n"
          "c_region = \"#e9a03b #2a9d8f #9b5de5 #457b9d #f15bb5 #8d6a9f\"\n"
          "font_name = \"Helvetica,12\"\n"
          "svg_w = 820; svg_h = 620; png_w = 1100; png_h = 830\n"
          "line_w = 2\n\n",
          fp);
    fputs("# ---- what was run -------------------------------------------------------\n", fp);
    fputs("run_title = ", fp);
    gp_string(fp, v->title && v->title[0] ? v->title : "steamloft run");
    fputc('\n', fp);
    if (isfinite(trop))
        fprintf(fp, "trop_km = %.6g\n", sl_m_to_km(trop));
    else
        fputs("trop_km = NaN   # unknown: no tropopause line\n", fp);
    fprintf(fp, "z_top_km = %.6g\n", sl_m_to_km(inj->band_top_m[inj->n_bands - 1]));
    /* Mass axis (log): from four decades below the lofted peak (or a third of
     * the driest stratospheric background) to three times the larger of the
     * peak and the wettest stratospheric background within the bands' height.
     * With nothing lofted the background alone sets it; with neither, a
     * linear 0-1 axis. */
    double x_min = peak > 0 ? peak * 1e-4 : INFINITY, x_max = peak > 0 ? peak * 3.0 : 0.0;
    if (v->atm && isfinite(trop)) {
        const sl_atmosphere *a = v->atm;
        double z_top = inj->band_top_m[inj->n_bands - 1];
        for (size_t i = 0; i < a->n; i++) {
            if (a->altitude_m[i] < trop || a->altitude_m[i] > z_top)
                continue;
            double bg = background_tg_per_km(a, i);
            if (bg > 0) {
                x_min = fmin(x_min, bg / 3.0);
                x_max = fmax(x_max, bg * 3.0);
            }
        }
    }
    int log_mass = isfinite(x_min) && x_min > 0 && x_max > x_min;
    fprintf(fp, "have_bg = %d\nlog_mass = %d   # log mass axis\n", v->atm != NULL, log_mass);
    fprintf(fp, "nothing_lofted = %d\n", !(total > 0));
    fprintf(fp, "x_min = %.4g; x_max = %.4g   # range of the mass axis\n", log_mass ? x_min : 0.0,
            log_mass ? x_max : 1.0);
    if (s) {
        fprintf(fp, "n_region = %zu\nregion_names = \"", s->n_region);
        for (size_t r = 0; r < s->n_region; r++) {
            char a[32], b[32];
            lat_label(s->region_south_deg[r], a, sizeof a);
            lat_label(s->region_north_deg[r], b, sizeof b);
            fprintf(fp, "%s%s–%s", r ? " " : "", a, b);
        }
        fprintf(fp, "\"\nhave_local = %d\n", s->local_column_anomaly_kg_m2 != NULL);
    }
    if (v->regime_note && v->regime_note[0]) {
        /* The full note is in the netCDF and CSV files; the plot gets its head. */
        char head[96];
        size_t k = strcspn(v->regime_note, ":;.");
        snprintf(head, sizeof head, "%.*s: see the validity warning", (int)(k < 60 ? k : 60),
                 v->regime_note);
        fputs("validity = ", fp);
        gp_string(fp, head);
        fputc('\n', fp);
    } else {
        fputs("validity = \"\"\n", fp);
    }

    fputs("\n# ---- drawing -------------------------------------------------------------\n"
          "set encoding utf8\n"
          "do for [fmt in \"svg png\"] {\n"
          "  if (fmt eq \"svg\") {\n"
          "    set terminal svg size svg_w, svg_h dynamic enhanced font font_name background \"white\"\n"
          "  } else {\n"
          "    set terminal pngcairo size png_w, png_h enhanced font font_name background \"white\"\n"
          "  }\n"
          "  reset\n"
          "  set border lw 1 lc rgb \"#444444\"\n"
          "  set grid lc rgb \"#dddddd\" lw 1\n"
          "  set key opaque box\n"
          "\n"
          "  # 1. lofted water against altitude, tropopause and background marked\n"
          "  set output \"profile.\".fmt\n"
          "  set title run_title noenhanced\n"
          "  set xlabel \"water per km of altitude, whole Earth (Tg km^{-1})\"\n"
          "  set ylabel \"altitude (km)\"\n"
          "  set yrange [0:z_top_km]\n"
          "  if (log_mass) { set logscale x; set format x \"10^{%L}\"; set xrange [x_min:x_max] } else { unset logscale x }\n"
          "  set key below\n"
          "  if (trop_km == trop_km) {\n"
          "    set arrow 1 from graph 0, first trop_km to graph 1, first trop_km nohead dt 2 lw line_w lc rgb c_trop\n"
          "    set label 1 sprintf(\"tropopause %.1f km\", trop_km) at graph 0.02, first trop_km offset 0, 0.7 tc rgb c_trop\n"
          "  }\n"
          "  if (nothing_lofted) { set label 3 \"no water lofted\" at graph 0.5, graph 0.5 center tc rgb c_vapor }\n"
          "  if (strlen(validity) > 0) { set label 2 validity at graph 0.02, graph 0.04 noenhanced tc rgb c_trop }\n"
          "  if (have_bg) {\n"
          "    plot \"background.dat\" using 2:1 with lines dt 3 lw line_w lc rgb c_bg title \"background water vapour\", \\\n"
          "         \"profile.dat\" using 2:1 with lines lw line_w lc rgb c_vapor title \"lofted vapour\", \\\n"
          "         \"profile.dat\" using 3:1 with lines lw line_w lc rgb c_ice title \"lofted ice and liquid\"\n"
          "  } else {\n"
          "    plot \"profile.dat\" using 2:1 with lines lw line_w lc rgb c_vapor title \"lofted vapour\", \\\n"
          "         \"profile.dat\" using 3:1 with lines lw line_w lc rgb c_ice title \"lofted ice and liquid\"\n"
          "  }\n"
          "  unset arrow; unset label; unset logscale x; set format x \"% h\"; set autoscale; set key inside top right vertical\n",
          fp);
    if (s) {
        fputs("\n"
              "  # 2. excess stratospheric water over the years\n"
              "  set output \"decay.\".fmt\n"
              "  set title run_title noenhanced\n"
              "  set xlabel \"years after the event\"\n"
              "  set ylabel \"excess stratospheric water (Tg)\"\n"
              "  set yrange [0:*]\n"
              "  set key inside top right vertical\n"
              "  plot \"decay.dat\" using 1:2 with lines lw line_w+1 lc rgb c_global title \"global\", \\\n"
              "       for [i=1:n_region] \"decay.dat\" using 1:(column(2+i)) with lines lw line_w \\\n"
              "           lc rgb word(c_region, (i-1)%words(c_region)+1) title word(region_names, i)\n"
              "\n"
              "  # 3. column anomaly\n"
              "  set output \"column.\".fmt\n"
              "  set title run_title noenhanced\n"
              "  set xlabel \"years after the event\"\n"
              "  set ylabel \"column anomaly (precipitable µm)\"\n"
              "  if (have_local) {\n"
              "    # the local column starts orders of magnitude above the global mean: log axis\n"
              "    set logscale y; set format y \"10^{%L}\"; set yrange [*:*]\n"
              "    plot \"column.dat\" using 1:2 with lines lw line_w lc rgb c_global title \"global mean\", \\\n"
              "         \"column.dat\" using 1:3 with lines lw line_w dt 2 lc rgb c_local title \"over the early local cloud, then the wettest region\"\n"
              "  } else {\n"
              "    set yrange [0:*]\n"
              "    plot \"column.dat\" using 1:2 with lines lw line_w lc rgb c_global title \"global mean\"\n"
              "  }\n"
              "  unset logscale y; set format y \"% h\"\n",
              fp);
    }
    fputs("  unset output\n}\n", fp);
}

typedef void (*writer_fn)(FILE *, const sl_output_view *);

static int one_file(sl_outset *set, const char *name, writer_fn fn, const sl_output_view *v,
                    sl_err *e)
{
    FILE *fp = NULL;
    SL_TRY_RETURN(e, sl_outset_fopen(set, name, &fp, e));
    fn(fp, v);
    SL_TRY_RETURN(e, sl_outset_fclose(set, name, fp, e));
    return SL_OK;
}

/* First line of the stage's gnuplot.log into BUF (for the warning). */
static void first_log_line(const char *stage, char *buf, size_t len)
{
    char path[SL_OUTSET_PATH_LEN + 16];
    snprintf(path, sizeof path, "%s/gnuplot.log", stage);
    buf[0] = '\0';
    FILE *f = fopen(path, "r");
    if (f == NULL)
        return;
    char line[256];
    while (fgets(line, sizeof line, f)) {
        line[strcspn(line, "\r\n")] = '\0';
        if (line[strspn(line, " \t^")] != '\0') {
            snprintf(buf, len, "%s", line);
            break;
        }
    }
    fclose(f);
}

/* Run gnuplot on steamloft.gp in the stage.  0 when it ran and exited 0;
 * otherwise a reason in WARN. */
static int run_gnuplot(const sl_outset *set, const char *prog, char *warn, size_t len)
{
    posix_spawn_file_actions_t fa;
    if (posix_spawn_file_actions_init(&fa) != 0) {
        snprintf(warn, len, "cannot prepare to run %s", prog);
        return -1;
    }
    int ok = posix_spawn_file_actions_addchdir_np(&fa, set->stage) == 0 &&
             posix_spawn_file_actions_addopen(&fa, 0, "/dev/null", O_RDONLY, 0) == 0 &&
             posix_spawn_file_actions_addopen(&fa, 1, "gnuplot.log", O_WRONLY | O_CREAT | O_TRUNC,
                                              0644) == 0 &&
             posix_spawn_file_actions_adddup2(&fa, 1, 2) == 0;
    if (!ok) {
        posix_spawn_file_actions_destroy(&fa);
        snprintf(warn, len, "cannot prepare to run %s", prog);
        return -1;
    }
    char *argv[] = {(char *)prog, (char *)"steamloft.gp", NULL};
    pid_t pid;
    int st = posix_spawnp(&pid, prog, &fa, NULL, argv, environ);
    posix_spawn_file_actions_destroy(&fa);
    if (st != 0) {
        if (st == ENOENT)
            snprintf(warn, len, "%s not found: wrote the data and steamloft.gp only (install "
                                "gnuplot, then run 'gnuplot steamloft.gp' in the plot directory)",
                     prog);
        else
            snprintf(warn, len, "cannot run %s: %s; wrote the data and steamloft.gp only", prog,
                     strerror(st));
        return -1;
    }
    int status;
    while (waitpid(pid, &status, 0) < 0) {
        if (errno != EINTR) {
            snprintf(warn, len, "waiting for %s: %s", prog, strerror(errno));
            return -1;
        }
    }
    if (!WIFEXITED(status) || WEXITSTATUS(status) != 0) {
        char first[256];
        first_log_line(set->stage, first, sizeof first);
        if (WIFEXITED(status) && WEXITSTATUS(status) == 127)
            snprintf(warn, len, "%s could not be started; wrote the data and steamloft.gp only",
                     prog);
        else
            snprintf(warn, len, "%s failed (%s); wrote the data and steamloft.gp only", prog,
                     first[0] ? first : "no message");
        return -1;
    }
    return 0;
}

int sl_plot_write(const sl_output_view *v, const char *dir, const sl_plot_options *opt,
                  sl_plot_result *res, sl_err *e)
{
    sl_plot_result local;
    if (res == NULL)
        res = &local;
    memset(res, 0, sizeof *res);
    SL_TRY_RETURN(e, sl_output_view_check(v, e));
    sl_plot_options o = opt ? *opt : (sl_plot_options){0, 1, NULL};
    const char *prog = o.gnuplot && o.gnuplot[0] ? o.gnuplot : "gnuplot";
    size_t n_images = v->series ? 6 : 2;

    sl_outset *set = calloc(1, sizeof *set);
    if (set == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "writing plots into '%s': out of memory", dir);
    int rc = sl_outset_begin(set, dir, o.force, 1, e);
    if (rc == SL_OK)
        rc = one_file(set, "profile.dat", write_profile, v, e);
    if (rc == SL_OK && v->atm)
        rc = one_file(set, "background.dat", write_background, v, e);
    if (rc == SL_OK && v->series)
        rc = one_file(set, "decay.dat", write_decay, v, e);
    if (rc == SL_OK && v->series)
        rc = one_file(set, "column.dat", write_column, v, e);
    if (rc == SL_OK)
        rc = one_file(set, "steamloft.gp", write_script, v, e);
    /* Claim the image names now: an existing image without force stops us
     * before gnuplot runs. */
    for (size_t i = 0; rc == SL_OK && i < n_images; i++)
        rc = sl_outset_add(set, images[i], NULL, e);
    if (rc == SL_OK) {
        int rendered = 0;
        if (!o.render) {
            snprintf(res->warning, sizeof res->warning,
                     "rendering switched off: wrote the data and steamloft.gp only");
        } else if (run_gnuplot(set, prog, res->warning, sizeof res->warning) == 0) {
            rendered = 1;
            for (size_t i = 0; i < n_images; i++) {
                struct stat st;
                char p[SL_OUTSET_PATH_LEN + 16];
                snprintf(p, sizeof p, "%s/%s", set->stage, images[i]);
                if (stat(p, &st) != 0 || st.st_size == 0) {
                    snprintf(res->warning, sizeof res->warning,
                             "%s produced no %s; wrote the data and steamloft.gp only", prog,
                             images[i]);
                    rendered = 0;
                    break;
                }
            }
        }
        if (!rendered)
            for (size_t i = 0; i < n_images; i++)
                sl_outset_forget(set, images[i]);
        res->rendered = rendered;
        res->n_files = set->n;
        rc = sl_outset_commit(set, e);
    }
    if (rc != SL_OK) {
        sl_outset_abort(set);
        sl_err_push(e, rc, __func__, __LINE__);
        res->n_files = 0;
    }
    free(set);
    return rc;
}
