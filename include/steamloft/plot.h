/* plot: gnuplot data files and an editable script for one run, rendered to
 * SVG and PNG when gnuplot is installed.
 *
 * `--plot DIR` writes, all together or not at all (outfile module):
 *   profile.dat   band centre, bottom and top (km); lofted vapour and ice per km
 *                 of altitude (Tg km-1: band mass / band depth, so bands of any
 *                 width compare); columns carry units in a '#' header
 *   background.dat  background water per km of altitude over the whole Earth
 *                 (Tg km-1) and its mole fraction (ppmv), at the profile levels
 *   decay.dat     time (years), global excess and excess per latitude region (Tg),
 *                 percent of background
 *   column.dat    time (years), global-mean and local column anomaly (precipitable um)
 *   section.dat   time (years), layer centre (km), global-mean excess mole fraction
 *                 (ppmv) and the half-widths of each layer-time box
 *   sinks.dat     time (years), excess still in the stratosphere and the
 *                 cumulative mass each removal path took (Tg)
 *   steamloft.gp  the script: `gnuplot steamloft.gp` in DIR redraws everything;
 *                 colours, sizes and labels are variables at its top
 *   profile.svg/png  lofted water against altitude, tropopause and background marked
 *   decay.svg/png    the excess over years (with a series)
 *   column.svg/png   the column anomaly over years (with a series)
 *   section.svg/png  altitude-time section of the excess mole fraction, log colour
 *                    scale, tropopauses marked (with the layer mole fractions)
 *   sinks.svg/png    the excess and where it went, stacked over time (with sinks)
 * Every plot is titled with the view's title (the scenario's name) and
 * carries the caution (sl_cli_caution) under it; nothing is drawn outside
 * the axis ranges.
 * gnuplot runs with posix_spawnp (no shell) in a private staging directory;
 * when it is not installed, or fails, the data and the script are still
 * written and a warning (not an error) is returned. */
#ifndef STEAMLOFT_PLOT_H
#define STEAMLOFT_PLOT_H

#include "steamloft/err.h"
#include "steamloft/output.h"

typedef struct sl_plot_options {
    int force;           /* replace existing files */
    int render;          /* 1: run gnuplot to make SVG and PNG; 0: data and script only */
    const char *gnuplot; /* program to run (searched in PATH); NULL: "gnuplot" */
} sl_plot_options;

typedef struct sl_plot_result {
    int rendered;        /* 1 when every SVG and PNG was produced */
    size_t n_files;      /* files written into DIR */
    char warning[512];   /* non-empty when rendering was skipped or failed (not an error) */
} sl_plot_result;

/* Write the plot files of view V into DIR (created when its parent exists).
 * Errors: SL_ECANTCREAT (directory, or a file exists without force), SL_EIO,
 * SL_EINTERNAL (bad view), SL_ENOMEM.  A missing or failing gnuplot is not an
 * error: RES->warning says why and the data and script are still written.
 * RES may be NULL. */
int sl_plot_write(const sl_output_view *v, const char *dir, const sl_plot_options *opt,
                  sl_plot_result *res, sl_err *e);

/* An ensemble's spread, as plain arrays (the ensemble command computes the
 * percentiles over its successful members; this module only draws them).
 * Percentiles are the 5th, 50th and 95th of the members, per band and per
 * time; each triple must be ordered p05 <= p50 <= p95, finite and >= 0. */
typedef struct sl_plot_ensemble_view {
    const char *title;                /* one line: the scenario's name */
    size_t n_members;                 /* members behind the percentiles (for the legend) */
    /* Lofted water (vapour + ice) per altitude band; n_band = 0: no profile plot. */
    size_t n_band;
    const double *band_bottom_m, *band_top_m; /* n_band, increasing, top > bottom */
    const double *water_p05_kg, *water_p50_kg, *water_p95_kg; /* n_band */
    double tropopause_m;              /* marked on the profile; NaN: not marked */
    /* Fraction of the stratospheric excess still there; n_time = 0: no such plot. */
    size_t n_time;
    const double *time_s;             /* n_time, seconds after the event, increasing */
    const double *remaining_p05, *remaining_p50, *remaining_p95; /* n_time, fractions 0..1 */
} sl_plot_ensemble_view;

/* Write the ensemble plots of V into DIR, all together or not at all:
 *   ensemble_profile.dat    band bottom/top (km); p05, p50, p95 of the lofted
 *                           water per km of altitude (Tg km-1), as a staircase
 *   ensemble_remaining.dat  time (years); p05, p50, p95 of the remaining fraction
 *   steamloft-ensemble.gp   the editable script (`gnuplot steamloft-ensemble.gp`)
 *   ensemble_profile.svg/png, ensemble_remaining.svg/png  the 5-95 % band and
 *                           the median; the caution on each.
 * Errors and warnings as sl_plot_write; SL_EINTERNAL for a bad view (unordered
 * percentiles, a non-finite or negative value, times or bands out of order,
 * nothing to draw). */
int sl_plot_ensemble(const char *dir, const sl_plot_ensemble_view *v, const sl_plot_options *opt,
                     sl_plot_result *res, sl_err *e);

#endif
