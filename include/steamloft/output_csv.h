/* output_csv: the results of one run as CSV files for spreadsheets and
 * scripts (the CSV part of the text outputs; the stdout summary is in
 * output_text).
 *
 * `--csv DIR` writes, through the outfile module (all files or none; no
 * overwrite without force; DIR is created if its parent exists):
 *   profile.csv        bottom_km, top_km, vapor_Tg, ice_Tg: one row per band, with
 *                      "# key = value" metadata lines (tropopause_altitude_km,
 *                      latitude_deg, time_s, cloud_area_m2).  This is exactly the
 *                      prescribed-profile format sl_injection_read accepts, so a
 *                      run's profile can be fed to `decay` or edited and re-run.
 *   sources.csv        source, kind, regime, ballistic_fraction: one row per source of
 *                      the plume stage (run only), the names as in the JSON ("sea_plume",
 *                      "airburst", "explosion"; "thermal", "blow-out", "ballistic"), the
 *                      event's regime in a comment line
 *   background.csv     altitude_km, temperature_K, pressure_Pa, density_kg_m3,
 *                      h2o_ppmv, n2_per_s2 (when the view has an atmosphere)
 *   series.csv         time_days, time_years, global_excess_Tg, then the optional
 *                      columns percent_of_background, column_anomaly_kg_m2,
 *                      column_anomaly_precip_um, local_column_anomaly_kg_m2,
 *                      forcing_W_m2, removed_<sink>_Tg (when the view has a series)
 *   series_layers.csv  long format, one row per time and layer: time_days,
 *                      layer_bottom_km, layer_top_km, mole_fraction_anomaly_ppmv (if
 *                      given), then excess_Tg_<region> per latitude region
 * Every column name ends in its unit; comment lines start with '#', carry the
 * tool version and the caution, and never contain '=' except the metadata
 * lines.  Numbers are printed with 10 significant digits (the netCDF file holds
 * the full double precision). */
#ifndef STEAMLOFT_OUTPUT_CSV_H
#define STEAMLOFT_OUTPUT_CSV_H

#include "steamloft/err.h"
#include "steamloft/output.h"

/* Write the CSV files of view V into DIR.  Errors: SL_ECANTCREAT (DIR's
 * parent missing, DIR not writable, a file exists without FORCE), SL_EIO,
 * SL_EINTERNAL (bad view).  On error nothing is left behind. */
int sl_output_csv_write(const sl_output_view *v, const char *dir, int force, sl_err *e);

/* The shortest of printf's "%.15g", "%.16g", "%.17g" of X that reads back
 * as X (strtod), into BUF (at least 32 bytes): the ensemble's number text.
 * Byte for byte what that loop of snprintf and strtod gives.  For 1e-11 <=
 * |X| < 1e16 with a 64-bit long double the digits and the read-back come
 * from one exact scaling by a power of ten (2.4 times faster on the bench
 * ensemble's numbers), snprintf and strtod only where that cannot decide (a
 * possible rounding tie); elsewhere one snprintf of 17 digits, rounded to 16
 * and 15 in the decimal string. */
void sl_csv_number_text(char *buf, double x);

#endif
