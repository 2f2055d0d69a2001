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
#include <sys/statvfs.h>
#include <sys/wait.h>
#include <unistd.h>

extern char **environ;

/* The images of a run: the profile always, the rest with a box-model series
 * (the section only with the layer mole fractions, the sinks only with sinks). */
enum { IMG_PROFILE, IMG_DECAY, IMG_COLUMN, IMG_SECTION, IMG_SINKS, N_IMG };

static int have_image(const sl_output_view *v, int i)
{
    const sl_output_series *s = v->series;
    switch (i) {
    case IMG_PROFILE: return 1;
    case IMG_DECAY:
    case IMG_COLUMN: return s != NULL;
    case IMG_SECTION: return s != NULL && s->mole_fraction_anomaly != NULL && s->n_layer > 0;
    case IMG_SINKS: return s != NULL && s->n_sink > 0 && s->sink_kg != NULL;
    default: return 0;
    }
}

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

/* The caution and the macro that puts it under the title of every plot. */
static void script_caution(FILE *fp)
{
    fputs("caution = ", fp);
    gp_string(fp, sl_cli_caution());
    fputs("\n# the caution under the title of every plot, centred on the canvas so that a\n"
          "# key outside the graph cannot push it off the left edge\n"
          "caution_label = \"set label 99 caution at screen 0.5, graph 1 offset 0, 0.9 center font \\\",9\\\" "
          "tc rgb c_caution noenhanced; set title offset 0, 1.2; set tmargin 4.5\"\n",
          fp);
}

/* The drawing loop's head: each plot is drawn once as SVG, once as PNG. */
static void script_loop_head(FILE *fp)
{
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
          "  set key opaque box\n",
          fp);
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

/* The altitude-time section: one row per box-model layer and output time,
 * the layer's global-mean excess mole fraction (ppmv) with the box corners,
 * so the script draws each layer over its true extent. */
static void write_section(FILE *fp, const sl_output_view *v)
{
    const sl_output_series *s = v->series;
    header(fp, v, "global-mean excess water vapour mole fraction per layer and time");
    fputs("# time_years altitude_km anomaly_ppmv half_step_years half_depth_km\n", fp);
    for (size_t t = 0; t < s->n_time; t++) {
        /* Each time stands for the interval to its neighbours' midpoints. */
        double lo = t > 0 ? 0.5 * (s->time_s[t - 1] + s->time_s[t]) : s->time_s[t];
        double hi = t + 1 < s->n_time ? 0.5 * (s->time_s[t] + s->time_s[t + 1]) : s->time_s[t];
        if (s->n_time == 1)
            lo = s->time_s[0], hi = s->time_s[0] + 1.0;
        for (size_t l = 0; l < s->n_layer; l++) {
            double b = s->layer_bottom_m[l], top = s->layer_top_m[l];
            fprintf(fp, "%.10g %.10g %.10g %.10g %.10g\n", sl_s_to_years(0.5 * (lo + hi)),
                    sl_m_to_km(0.5 * (b + top)),
                    sl_mole_fraction_to_ppmv(s->mole_fraction_anomaly[t * s->n_layer + l]),
                    sl_s_to_years(0.5 * (hi - lo)), sl_m_to_km(0.5 * (top - b)));
        }
        fputc('\n', fp);
    }
}

/* Where the water went: the excess still in the stratosphere and the
 * cumulative mass each removal path took, Tg. */
static void write_sinks(FILE *fp, const sl_output_view *v)
{
    const sl_output_series *s = v->series;
    header(fp, v, "excess water still in the stratosphere and removed by each path (cumulative, Tg)");
    fputs("# time_years remaining_Tg", fp);
    for (size_t k = 0; k < s->n_sink; k++)
        fprintf(fp, " %s_Tg", s->sink_name && s->sink_name[k] ? s->sink_name[k] : "sink");
    fputc('\n', fp);
    for (size_t t = 0; t < s->n_time; t++) {
        fprintf(fp, "%.10g %.10g", sl_s_to_years(s->time_s[t]), sl_kg_to_tg(s->global_excess_kg[t]));
        for (size_t k = 0; k < s->n_sink; k++)
            fprintf(fp, " %.10g", sl_kg_to_tg(fmax(0.0, s->sink_kg[k * s->n_time + t])));
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

/* Script variables of the section and sinks plots. */
static void write_series_vars(FILE *fp, const sl_output_view *v)
{
    const sl_output_series *s = v->series;
    fprintf(fp, "t_max = %.6g   # years shown\n", sl_s_to_years(s->time_s[s->n_time - 1]));
    if (have_image(v, IMG_SECTION)) {
        /* Colour axis (log): four decades below the largest anomaly; a
         * layer-time box below that is left white, not drawn at the edge colour. */
        double xmax = 0;
        for (size_t i = 0; i < s->n_time * s->n_layer; i++)
            xmax = fmax(xmax, s->mole_fraction_anomaly[i]);
        double zlo = s->layer_bottom_m[0], zhi = s->layer_top_m[s->n_layer - 1];
        fprintf(fp, "sec_any = %d   # 0: no excess anywhere\n", xmax > 0);
        fprintf(fp, "cb_max = %.4g; cb_min = %.4g   # colour range, ppmv\n",
                xmax > 0 ? sl_mole_fraction_to_ppmv(xmax) : 1.0,
                xmax > 0 ? sl_mole_fraction_to_ppmv(xmax) * 1e-4 : 1e-4);
        fprintf(fp, "sec_z_min = %.6g; sec_z_max = %.6g   # altitude range, km\n",
                sl_m_to_km(zlo), sl_m_to_km(zhi));
        /* Tropopauses: of each latitude region when known, else the event's. */
        size_t nt = 0;
        if (s->region_tropopause_m) {
            /* One line per distinct height, naming every region that has it. */
            for (size_t r = 0; r < s->n_region; r++) {
                size_t q = 0;
                while (q < r && fabs(s->region_tropopause_m[q] - s->region_tropopause_m[r]) > 1.0)
                    q++;
                if (q < r)
                    continue; /* named with region q */
                nt++;
                fprintf(fp, "trop_%zu_km = %.6g; trop_%zu_name = \"tropopause", nt,
                        sl_m_to_km(s->region_tropopause_m[r]), nt);
                for (size_t u = r, first = 1; u < s->n_region; u++) {
                    if (fabs(s->region_tropopause_m[u] - s->region_tropopause_m[r]) > 1.0)
                        continue;
                    char a[32], b[32];
                    lat_label(s->region_south_deg[u], a, sizeof a);
                    lat_label(s->region_north_deg[u], b, sizeof b);
                    fprintf(fp, "%s%s–%s", first ? " " : ", ", a, b);
                    first = 0;
                }
                fputs("\"\n", fp);
            }
        } else if (isfinite(v->inj->tropopause_altitude_m)) {
            nt++;
            fprintf(fp, "trop_1_km = %.6g; trop_1_name = \"tropopause at the event\"\n",
                    sl_m_to_km(v->inj->tropopause_altitude_m));
        }
        fprintf(fp, "n_trop = %zu\n", nt);
    }
    if (have_image(v, IMG_SINKS)) {
        fprintf(fp, "n_sink = %zu\n", s->n_sink);
        for (size_t k = 0; k < s->n_sink; k++) {
            char name[64];
            snprintf(name, sizeof name, "%s", s->sink_name && s->sink_name[k] ? s->sink_name[k] : "other");
            for (char *c = name; *c; c++)
                if (*c == '_')
                    *c = ' ';
            fprintf(fp, "sink_%zu_name = \"removed: %s\"\n", k + 1, name);
        }
    }
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
          "# to redraw them (profile, decay, column, section, sinks) as SVG and PNG.\n",
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
          "c_sinks  = \"#1d3557 #e9a03b #2a9d8f #9b5de5 #e76f51 #8d6a9f #457b9d\"   # stratosphere, then each sink\n"
          "c_caution = \"#555555\"\n"
          "palette_section = \"defined (0 '#fcfdbf', 1 '#fc8961', 2 '#b73779', 3 '#51127c', 4 '#000004')\"\n"
          "font_name = \"Helvetica,12\"\n"
          "svg_w = 820; svg_h = 620; png_w = 1100; png_h = 830\n"
          "line_w = 2\n\n",
          fp);
    fputs("# ---- what was run -------------------------------------------------------\n", fp);
    fputs("run_title = ", fp);
    gp_string(fp, v->title && v->title[0] ? v->title : "steamloft run");
    fputc('\n', fp);
    script_caution(fp);
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
    if (s)
        write_series_vars(fp, v);
    if (v->regime_note && v->regime_note[0]) {
        /* The full note is in the netCDF and CSV files; the plot gets its head. */
        char head[96];
        size_t k = strcspn(v->regime_note, ":;.(");
        while (k > 0 && v->regime_note[k - 1] == ' ') /* "blow-out regime (sources ...": no dangling bracket */
            k--;
        snprintf(head, sizeof head, "%.*s: see the validity warning", (int)(k < 60 ? k : 60),
                 v->regime_note);
        fputs("validity = ", fp);
        gp_string(fp, head);
        fputc('\n', fp);
    } else {
        fputs("validity = \"\"\n", fp);
    }

    script_loop_head(fp);
    fputs("\n"
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
          "  @caution_label\n"
          "  # a value off the mass axis is left out (NaN), so no line runs along its edge\n"
          "  inx(x) = (log_mass ? (x >= x_min && x <= x_max) : 1) ? x : NaN\n"
          "  if (have_bg) {\n"
          "    plot \"background.dat\" using (inx($2)):1 with lines dt 3 lw line_w lc rgb c_bg title \"background water vapour\", \\\n"
          "         \"profile.dat\" using (inx($2)):1 with lines lw line_w lc rgb c_vapor title \"lofted vapour\", \\\n"
          "         \"profile.dat\" using (inx($3)):1 with lines lw line_w lc rgb c_ice title \"lofted ice and liquid\"\n"
          "  } else {\n"
          "    plot \"profile.dat\" using (inx($2)):1 with lines lw line_w lc rgb c_vapor title \"lofted vapour\", \\\n"
          "         \"profile.dat\" using (inx($3)):1 with lines lw line_w lc rgb c_ice title \"lofted ice and liquid\"\n"
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
              "  @caution_label\n"
              "  plot \"decay.dat\" using 1:2 with lines lw line_w+1 lc rgb c_global title \"global\", \\\n"
              "       for [i=1:n_region] \"decay.dat\" using 1:(column(2+i)) with lines lw line_w \\\n"
              "           lc rgb word(c_region, (i-1)%words(c_region)+1) title word(region_names, i)\n"
              "\n"
              "  # 3. column anomaly\n"
              "  set output \"column.\".fmt\n"
              "  set title run_title noenhanced\n"
              "  set xlabel \"years after the event\"\n"
              "  set ylabel \"column anomaly (precipitable µm)\"\n"
              "  @caution_label\n"
              "  if (have_local) {\n"
              "    # the local column starts orders of magnitude above the global mean: log axis\n"
              "    set logscale y; set format y \"10^{%L}\"; set yrange [*:*]\n"
              "    plot \"column.dat\" using 1:2 with lines lw line_w lc rgb c_global title \"global mean\", \\\n"
              "         \"column.dat\" using 1:3 with lines lw line_w dt 2 lc rgb c_local title \"over the early local cloud, then the wettest region\"\n"
              "  } else {\n"
              "    set yrange [0:*]\n"
              "    plot \"column.dat\" using 1:2 with lines lw line_w lc rgb c_global title \"global mean\"\n"
              "  }\n"
              "  unset logscale y; set format y \"% h\"; unset label\n",
              fp);
    }
    if (have_image(v, IMG_SECTION))
        fputs("\n"
              "  # 4. altitude-time section of the global-mean excess mole fraction\n"
              "  set output \"section.\".fmt\n"
              "  set title run_title noenhanced\n"
              "  set xlabel \"years after the event\"\n"
              "  set ylabel \"altitude (km)\"\n"
              "  set xrange [0:t_max]; set yrange [sec_z_min:sec_z_max]\n"
              "  set cblabel \"global-mean excess H_2O mole fraction (ppmv)\"\n"
              "  set palette @palette_section\n"
              "  set logscale cb; set format cb \"10^{%L}\"; set cbrange [cb_min:cb_max]\n"
              "  set grid front\n"
              "  unset key\n"
              "  do for [k=1:n_trop] {\n"
              "    set arrow k from graph 0, first value(sprintf(\"trop_%d_km\", k)) to graph 1, first value(sprintf(\"trop_%d_km\", k)) nohead front dt 2 lw line_w lc rgb c_trop\n"
              "    set label k value(sprintf(\"trop_%d_name\", k)).sprintf(\" %.1f km\", value(sprintf(\"trop_%d_km\", k))) at graph 0.98, first value(sprintf(\"trop_%d_km\", k)) offset 0, 0.7 front noenhanced tc rgb c_trop\n"
              "    if (k % 2) { set label k at graph 0.98, first value(sprintf(\"trop_%d_km\", k)) right } else { set label k at graph 0.02, first value(sprintf(\"trop_%d_km\", k)) left }\n"
              "  }\n"
              "  if (!sec_any) { set label 98 \"no excess water in the stratosphere\" at graph 0.5, graph 0.5 center front }\n"
              "  @caution_label\n"
              "  # a layer-time box below the colour range stays white (NaN)\n"
              "  inc(x) = (x >= cb_min) ? x : NaN\n"
              "  plot \"section.dat\" using 1:2:4:5:(inc($3)) with boxxyerror fs solid 1.0 noborder lc palette notitle\n"
              "  unset arrow; unset label; unset logscale cb; set format cb \"% h\"; set autoscale; set grid back\n",
              fp);
    if (have_image(v, IMG_SINKS))
        fputs("\n"
              "  # 5. where the excess went: still in the stratosphere, and removed by each path (stacked)\n"
              "  set output \"sinks.\".fmt\n"
              "  set title run_title noenhanced\n"
              "  set xlabel \"years after the event\"\n"
              "  set ylabel \"excess water (Tg), stacked\"\n"
              "  set xrange [0:t_max]; set yrange [0:*]\n"
              "  set key outside right top vertical noenhanced\n"
              "  @caution_label\n"
              "  stack(i) = sum [j=2:i] column(j)\n"
              "  plot for [i=n_sink+2:2:-1] \"sinks.dat\" using 1:(stack(i)) with filledcurves x1 fs solid 0.85 noborder \\\n"
              "       lc rgb word(c_sinks, (i-2)%words(c_sinks)+1) \\\n"
              "       title (i == 2 ? \"still in the stratosphere\" : value(sprintf(\"sink_%d_name\", i-2)))\n"
              "  unset label; set autoscale\n",
              fp);
    fputs("  unset output\n}\n", fp);
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

/* Run gnuplot on SCRIPT in the stage.  0 when it ran and exited 0;
 * otherwise a reason in WARN. */
static int run_gnuplot(const sl_outset *set, const char *prog, const char *script, char *warn,
                       size_t len)
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
    char *argv[] = {(char *)prog, (char *)script, NULL};
    pid_t pid;
    int st = posix_spawnp(&pid, prog, &fa, NULL, argv, environ);
    posix_spawn_file_actions_destroy(&fa);
    if (st != 0) {
        if (st == ENOENT)
            snprintf(warn, len, "%s not found: wrote the data and %s only (install "
                                "gnuplot, then run 'gnuplot %s' in the plot directory)",
                     prog, script, script);
        else
            snprintf(warn, len, "cannot run %s: %s; wrote the data and %s only", prog,
                     strerror(st), script);
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
            snprintf(warn, len, "%s could not be started; wrote the data and %s only", prog,
                     script);
        else
            snprintf(warn, len, "%s failed (%s); wrote the data and %s only", prog,
                     first[0] ? first : "no message", script);
        return -1;
    }
    return 0;
}

/* Claim the image names in SET, run gnuplot on SCRIPT in the stage (unless
 * rendering is off), keep the images only when every one was made, and
 * commit.  A missing or failing gnuplot is a warning in RES, not an error. */
static int render_and_commit(sl_outset *set, const sl_plot_options *o, const char *script,
                             const char *const *images, size_t n_images, sl_plot_result *res,
                             sl_err *e)
{
    const char *prog = o->gnuplot && o->gnuplot[0] ? o->gnuplot : "gnuplot";
    int rc = SL_OK;
    /* Claim the image names now: an existing image without force stops us
     * before gnuplot runs. */
    for (size_t i = 0; rc == SL_OK && i < n_images; i++)
        rc = sl_outset_add(set, images[i], NULL, e);
    if (rc != SL_OK)
        return rc;
    int rendered = 0;
    if (!o->render) {
        snprintf(res->warning, sizeof res->warning,
                 "rendering switched off: wrote the data and %s only", script);
    } else if (run_gnuplot(set, prog, script, res->warning, sizeof res->warning) == 0) {
        rendered = 1;
        for (size_t i = 0; i < n_images; i++) {
            struct stat st;
            char p[SL_OUTSET_PATH_LEN + 16];
            snprintf(p, sizeof p, "%s/%s", set->stage, images[i]);
            if (stat(p, &st) != 0 || st.st_size == 0) {
                snprintf(res->warning, sizeof res->warning,
                         "%s produced no %s; wrote the data and %s only", prog, images[i], script);
                rendered = 0;
                break;
            }
        }
    }
    /* gnuplot failing because the disk is full is a write error, not a
     * missing tool: the plots cannot be there, so it is exit 74. */
    struct statvfs vfs;
    if (o->render && !rendered && statvfs(set->stage, &vfs) == 0 && vfs.f_bavail == 0)
        SL_FAIL_RETURN(e, SL_EIO, "writing the plots in '%s': %s (%s could not write its images)",
                       set->dir, strerror(ENOSPC), prog);
    if (!rendered)
        for (size_t i = 0; i < n_images; i++)
            sl_outset_forget(set, images[i]);
    res->rendered = rendered;
    res->n_files = set->n;
    return sl_outset_commit(set, e);
}

/* After the data and script of SET were written with status RC: render and
 * commit, or on any failure remove everything; SET is freed. */
static int finish(sl_outset *set, int rc, const sl_plot_options *o, const char *script,
                  const char *const *images, size_t n_images, sl_plot_result *res, sl_err *e)
{
    if (rc == SL_OK)
        rc = render_and_commit(set, o, script, images, n_images, res, e);
    if (rc != SL_OK) {
        sl_outset_abort(set);
        sl_err_push(e, rc, __func__, __LINE__);
        res->n_files = 0;
    }
    free(set);
    return rc;
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
    const char *images[2 * N_IMG];
    size_t n_images = 0;
    static const char *const svg_png[2 * N_IMG] = {
        "profile.svg", "profile.png", "decay.svg",   "decay.png",  "column.svg",
        "column.png",  "section.svg", "section.png", "sinks.svg",  "sinks.png"};
    for (int i = 0; i < N_IMG; i++)
        if (have_image(v, i)) {
            images[n_images++] = svg_png[2 * i];
            images[n_images++] = svg_png[2 * i + 1];
        }

    sl_outset *set = calloc(1, sizeof *set);
    if (set == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "writing plots into '%s': out of memory", dir);
    int rc = sl_outset_begin(set, dir, o.force, 1, e);
    if (rc == SL_OK)
        rc = sl_output_write_file(set, "profile.dat", write_profile, v, e);
    if (rc == SL_OK && v->atm)
        rc = sl_output_write_file(set, "background.dat", write_background, v, e);
    if (rc == SL_OK && v->series)
        rc = sl_output_write_file(set, "decay.dat", write_decay, v, e);
    if (rc == SL_OK && v->series)
        rc = sl_output_write_file(set, "column.dat", write_column, v, e);
    if (rc == SL_OK && have_image(v, IMG_SECTION))
        rc = sl_output_write_file(set, "section.dat", write_section, v, e);
    if (rc == SL_OK && have_image(v, IMG_SINKS))
        rc = sl_output_write_file(set, "sinks.dat", write_sinks, v, e);
    if (rc == SL_OK)
        rc = sl_output_write_file(set, "steamloft.gp", write_script, v, e);
    return finish(set, rc, &o, "steamloft.gp", images, n_images, res, e);
}

/* ---- ensemble plots ------------------------------------------------------ */

static int check_triple(const double *p05, const double *p50, const double *p95, size_t n,
                        const char *what, double hi, sl_err *e)
{
    if (p05 == NULL || p50 == NULL || p95 == NULL)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "ensemble plot: %s percentiles missing", what);
    for (size_t i = 0; i < n; i++) {
        double a = p05[i], b = p50[i], c = p95[i];
        if (!(isfinite(a) && isfinite(b) && isfinite(c)) || a < 0 || c > hi)
            SL_FAIL_RETURN(e, SL_EINTERNAL,
                           "ensemble plot: %s percentiles at %zu (%g, %g, %g) not finite in [0, %g]",
                           what, i, a, b, c, hi);
        if (!(a <= b && b <= c))
            SL_FAIL_RETURN(e, SL_EINTERNAL,
                           "ensemble plot: %s percentiles at %zu not ordered: p05 %g, p50 %g, p95 %g",
                           what, i, a, b, c);
    }
    return SL_OK;
}

static int ensemble_view_check(const sl_plot_ensemble_view *v, sl_err *e)
{
    if (v == NULL || (v->n_band == 0 && v->n_time == 0))
        SL_FAIL_RETURN(e, SL_EINTERNAL, "ensemble plot: nothing to draw (no bands, no times)");
    if (v->n_band > 0) {
        if (v->band_bottom_m == NULL || v->band_top_m == NULL)
            SL_FAIL_RETURN(e, SL_EINTERNAL, "ensemble plot: band edges missing");
        for (size_t i = 0; i < v->n_band; i++) {
            double b = v->band_bottom_m[i], t = v->band_top_m[i];
            if (!(isfinite(b) && isfinite(t) && t > b) || (i > 0 && b < v->band_top_m[i - 1]))
                SL_FAIL_RETURN(e, SL_EINTERNAL,
                               "ensemble plot: band %zu (%g to %g m) empty or out of order", i, b, t);
        }
        SL_TRY_RETURN(e, check_triple(v->water_p05_kg, v->water_p50_kg, v->water_p95_kg,
                                      v->n_band, "lofted water", INFINITY, e));
    }
    if (v->n_time > 0) {
        if (v->time_s == NULL)
            SL_FAIL_RETURN(e, SL_EINTERNAL, "ensemble plot: times missing");
        for (size_t t = 0; t < v->n_time; t++)
            if (!isfinite(v->time_s[t]) || (t > 0 && !(v->time_s[t] > v->time_s[t - 1])))
                SL_FAIL_RETURN(e, SL_EINTERNAL, "ensemble plot: time %zu (%g s) out of order", t,
                               v->time_s[t]);
        /* A fraction, with room for rounding of the box model's budget. */
        SL_TRY_RETURN(e, check_triple(v->remaining_p05, v->remaining_p50, v->remaining_p95,
                                      v->n_time, "remaining fraction", 1.0 + 1e-9, e));
    }
    return SL_OK;
}

static void ens_header(FILE *fp, const sl_plot_ensemble_view *v, const char *what)
{
    fprintf(fp, "# %s\n# %s: %s, %zu members\n# %s\n", what, sl_cli_version(),
            v->title && v->title[0] ? v->title : "steamloft ensemble", v->n_members,
            sl_cli_caution());
}

/* The log mass axis of the ensemble profile: from four decades below the
 * largest 95th percentile to three times it. */
static void ens_mass_axis(const sl_plot_ensemble_view *v, double *lo, double *hi)
{
    double peak = 0;
    for (size_t i = 0; i < v->n_band; i++)
        peak = fmax(peak, mass_per_km(v->water_p95_kg[i], v->band_bottom_m[i], v->band_top_m[i]));
    *lo = peak > 0 ? peak * 1e-4 : 1e-4;
    *hi = peak > 0 ? peak * 3.0 : 1.0;
}

static void ens_write_profile(FILE *fp, const sl_plot_ensemble_view *v)
{
    ens_header(fp, v, "lofted water per km of altitude over the members (vapour + ice), "
                      "as a staircase: two rows per band (bottom, top)");
    fputs("# altitude_km water_p05_Tg_per_km water_p50_Tg_per_km water_p95_Tg_per_km\n", fp);
    for (size_t i = 0; i < v->n_band; i++) {
        double b = v->band_bottom_m[i], t = v->band_top_m[i];
        double p5 = mass_per_km(v->water_p05_kg[i], b, t), p50 = mass_per_km(v->water_p50_kg[i], b, t),
               p95 = mass_per_km(v->water_p95_kg[i], b, t);
        for (int k = 0; k < 2; k++)
            fprintf(fp, "%.10g %.10g %.10g %.10g\n", sl_m_to_km(k ? t : b), p5, p50, p95);
    }
    /* The band as one closed outline: up the 5th percentile, down the 95th,
     * values below the axis drawn at its lower end (the band runs off it). */
    double lo, hi;
    ens_mass_axis(v, &lo, &hi);
    fputs("\n\n# outline of the 5-95 %% band for drawing: altitude_km water_Tg_per_km "
          "(values below the axis minimum set to it)\n", fp);
    for (int side = 0; side < 2; side++)
        for (size_t j = 0; j < v->n_band; j++) {
            size_t i = side ? v->n_band - 1 - j : j;
            double b = v->band_bottom_m[i], t = v->band_top_m[i];
            double x = mass_per_km(side ? v->water_p95_kg[i] : v->water_p05_kg[i], b, t);
            x = fmax(x, lo);
            fprintf(fp, "%.10g %.10g\n%.10g %.10g\n", sl_m_to_km(side ? t : b), x,
                    sl_m_to_km(side ? b : t), x);
        }
    fprintf(fp, "%.10g %.10g\n", sl_m_to_km(v->band_bottom_m[0]),
            fmax(mass_per_km(v->water_p05_kg[0], v->band_bottom_m[0], v->band_top_m[0]), lo));
}

static void ens_write_remaining(FILE *fp, const sl_plot_ensemble_view *v)
{
    ens_header(fp, v, "fraction of the stratospheric excess water still there, over the members");
    fputs("# time_years remaining_p05 remaining_p50 remaining_p95\n", fp);
    for (size_t t = 0; t < v->n_time; t++)
        fprintf(fp, "%.10g %.10g %.10g %.10g\n", sl_s_to_years(v->time_s[t]), v->remaining_p05[t],
                v->remaining_p50[t], v->remaining_p95[t]);
}

static void ens_write_script(FILE *fp, const sl_plot_ensemble_view *v)
{
    fputs("# steamloft ensemble plots.  Edit freely, then run `gnuplot steamloft-ensemble.gp`\n"
          "# in this directory to redraw them as SVG and PNG.\n",
          fp);
    fprintf(fp, "# %s\n# %s\n\n", sl_cli_version(), sl_cli_caution());
    fputs("# ---- style ---------------------------------------------------------------\n"
          "c_band   = \"#8ecae6\"   # 5-95 % band\n"
          "c_median = \"#0b6e8a\"   # median\n"
          "c_trop   = \"#c44536\"   # tropopause\n"
          "c_caution = \"#555555\"\n"
          "font_name = \"Helvetica,12\"\n"
          "svg_w = 820; svg_h = 620; png_w = 1100; png_h = 830\n"
          "line_w = 2\n\n"
          "# ---- what was run ---------------------------------------------------------\n"
          "run_title = ",
          fp);
    char title[400];
    snprintf(title, sizeof title, "%s: %zu members",
             v->title && v->title[0] ? v->title : "steamloft ensemble", v->n_members);
    gp_string(fp, title);
    fputc('\n', fp);
    script_caution(fp);
    fprintf(fp, "have_profile = %d\nhave_remaining = %d\n", v->n_band > 0, v->n_time > 0);
    if (v->n_band > 0) {
        double lo, hi;
        ens_mass_axis(v, &lo, &hi);
        fprintf(fp, "x_min = %.4g; x_max = %.4g   # mass axis (log)\n", lo, hi);
        fprintf(fp, "z_bottom_km = %.6g; z_top_km = %.6g\n", sl_m_to_km(v->band_bottom_m[0]),
                sl_m_to_km(v->band_top_m[v->n_band - 1]));
        if (isfinite(v->tropopause_m))
            fprintf(fp, "trop_km = %.6g\n", sl_m_to_km(v->tropopause_m));
        else
            fputs("trop_km = NaN   # unknown: no tropopause line\n", fp);
    }
    if (v->n_time > 0)
        fprintf(fp, "t_max = %.6g\n", sl_s_to_years(v->time_s[v->n_time - 1]));
    script_loop_head(fp);
    fputs("  if (have_profile) {\n"
          "    # 1. lofted water against altitude: 5-95 % band and median\n"
          "    set output \"ensemble_profile.\".fmt\n"
          "    set title run_title noenhanced\n"
          "    set xlabel \"lofted water per km of altitude (Tg km^{-1})\"\n"
          "    set ylabel \"altitude (km)\"\n"
          "    set logscale x; set format x \"10^{%L}\"; set xrange [x_min:x_max]\n"
          "    set yrange [z_bottom_km:z_top_km]\n"
          "    set key below\n"
          "    if (trop_km == trop_km) {\n"
          "      set arrow 1 from graph 0, first trop_km to graph 1, first trop_km nohead front dt 2 lw line_w lc rgb c_trop\n"
          "      set label 1 sprintf(\"tropopause %.1f km\", trop_km) at graph 0.02, first trop_km offset 0, 0.7 front tc rgb c_trop\n"
          "    }\n"
          "    @caution_label\n"
          "    # a median off the axis is left out (NaN), so no line runs along its edge\n"
          "    inx(x) = (x >= x_min && x <= x_max) ? x : NaN\n"
          "    plot \"ensemble_profile.dat\" index 1 using 2:1 with filledcurves closed fs solid 0.6 noborder lc rgb c_band title \"5-95 % of members\", \\\n"
          "         \"ensemble_profile.dat\" index 0 using (inx($3)):1 with lines lw line_w lc rgb c_median title \"median\"\n"
          "    unset arrow; unset label; unset logscale x; set format x \"% h\"; set autoscale\n"
          "  }\n"
          "  if (have_remaining) {\n"
          "    # 2. remaining fraction of the stratospheric excess over the years\n"
          "    set output \"ensemble_remaining.\".fmt\n"
          "    set title run_title noenhanced\n"
          "    set xlabel \"years after the event\"\n"
          "    set ylabel \"fraction of the excess still in the stratosphere\"\n"
          "    set xrange [0:t_max]; set yrange [0:1.05]\n"
          "    set key inside top right vertical\n"
          "    @caution_label\n"
          "    plot \"ensemble_remaining.dat\" using 1:2:4 with filledcurves fs solid 0.6 noborder lc rgb c_band title \"5-95 % of members\", \\\n"
          "         \"ensemble_remaining.dat\" using 1:3 with lines lw line_w lc rgb c_median title \"median\"\n"
          "    unset label; set autoscale\n"
          "  }\n"
          "  unset output\n"
          "}\n",
          fp);
}

/* As sl_output_write_file, for writers of the ensemble view. */
typedef void (*ens_writer_fn)(FILE *fp, const sl_plot_ensemble_view *v);

static int ens_write_file(sl_outset *set, const char *name, ens_writer_fn fn,
                          const sl_plot_ensemble_view *v, sl_err *e)
{
    FILE *fp = NULL;
    SL_TRY_RETURN(e, sl_outset_fopen(set, name, &fp, e));
    fn(fp, v);
    SL_TRY_RETURN(e, sl_outset_fclose(set, name, fp, e));
    return SL_OK;
}

int sl_plot_ensemble(const char *dir, const sl_plot_ensemble_view *v, const sl_plot_options *opt,
                     sl_plot_result *res, sl_err *e)
{
    sl_plot_result local;
    if (res == NULL)
        res = &local;
    memset(res, 0, sizeof *res);
    SL_TRY_RETURN(e, ensemble_view_check(v, e));
    sl_plot_options o = opt ? *opt : (sl_plot_options){0, 1, NULL};
    const char *images[4];
    size_t n_images = 0;
    if (v->n_band > 0) {
        images[n_images++] = "ensemble_profile.svg";
        images[n_images++] = "ensemble_profile.png";
    }
    if (v->n_time > 0) {
        images[n_images++] = "ensemble_remaining.svg";
        images[n_images++] = "ensemble_remaining.png";
    }
    sl_outset *set = calloc(1, sizeof *set);
    if (set == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "writing ensemble plots into '%s': out of memory", dir);
    int rc = sl_outset_begin(set, dir, o.force, 1, e);
    if (rc == SL_OK && v->n_band > 0)
        rc = ens_write_file(set, "ensemble_profile.dat", ens_write_profile, v, e);
    if (rc == SL_OK && v->n_time > 0)
        rc = ens_write_file(set, "ensemble_remaining.dat", ens_write_remaining, v, e);
    if (rc == SL_OK)
        rc = ens_write_file(set, "steamloft-ensemble.gp", ens_write_script, v, e);
    return finish(set, rc, &o, "steamloft-ensemble.gp", images, n_images, res, e);
}
