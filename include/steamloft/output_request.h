/* output_request: the file outputs a command was asked for (-o FILE.nc,
 * --format, --csv DIR, --plot DIR), shared by the commands that produce
 * results (run, decay) so that they parse, check and write them the same
 * way.
 *
 * In a command's getopt_long table put SL_OUTPUT_LONG_OPTIONS, add "o:" to
 * the short options, let sl_output_request_option() handle the codes it
 * knows, print SL_OUTPUT_HELP in --help, call sl_output_request_preflight()
 * before the computation (so a bad destination fails at once, exit 73,
 * without a long run first) and sl_output_request_write() at the end. */
#ifndef STEAMLOFT_OUTPUT_REQUEST_H
#define STEAMLOFT_OUTPUT_REQUEST_H

#include <getopt.h>

#include "steamloft/cli.h"
#include "steamloft/err.h"
#include "steamloft/output.h"
#include "steamloft/output_nc.h"

/* getopt_long codes (above the character range, so they clash with nothing). */
enum { SL_OUTOPT_FORMAT = 0x5301, SL_OUTOPT_CSV, SL_OUTOPT_PLOT, SL_OUTOPT_NO_RENDER };

#define SL_OUTPUT_LONG_OPTIONS                                      \
    {"output", required_argument, NULL, 'o'},                       \
    {"format", required_argument, NULL, SL_OUTOPT_FORMAT},          \
    {"csv", required_argument, NULL, SL_OUTOPT_CSV},                \
    {"plot", required_argument, NULL, SL_OUTOPT_PLOT},              \
    {"no-render", no_argument, NULL, SL_OUTOPT_NO_RENDER}

#define SL_OUTPUT_HELP                                                                        \
    "Output files (existing files are replaced only with the global --force):\n"               \
    "  -o, --output FILE.nc     results as CF-1.11 netCDF (profile, time series, background,\n" \
    "                           scenario and provenance as attributes); the name must end\n" \
    "                           in .nc\n"                                                   \
    "      --format FMT         netcdf4 (default: netCDF-4 classic model, compressed) or\n"   \
    "                           classic (netCDF-3, for older readers)\n"                      \
    "      --csv DIR            profile.csv, background.csv, series.csv, series_layers.csv\n" \
    "                           (DIR is created if its parent exists)\n"                      \
    "      --plot DIR           gnuplot data, steamloft.gp, and SVG/PNG plots when gnuplot\n" \
    "                           is installed (a warning otherwise)\n"                         \
    "      --no-render          with --plot: write data and script only\n"

typedef struct sl_output_request {
    const char *nc_path;  /* -o, or NULL */
    sl_nc_format format;
    int format_given;
    const char *csv_dir;  /* --csv, or NULL */
    const char *plot_dir; /* --plot, or NULL */
    int no_render;
} sl_output_request;

/* 1 when getopt code C is one of the output options. */
int sl_output_request_is_option(int c);

/* 1 when PATH names a netCDF file (ends in .nc, any case, after a name). */
int sl_output_request_is_nc_name(const char *path);

/* Record option C with argument ARG.  SL_EUSAGE for a bad --format value,
 * "-o -" (netCDF cannot be written to standard output) or an -o name that
 * does not end in .nc (the format follows the name). */
int sl_output_request_option(sl_output_request *rq, int c, const char *arg, sl_err *e);

/* 1 when any file output was asked for. */
int sl_output_request_any(const sl_output_request *rq);

/* Check the options together (SL_EUSAGE: --format or --no-render without
 * what they modify) and that every destination can be written: directory
 * present (or creatable for --csv/--plot) and writable, no file that would
 * be written exists unless FORCE (SL_ECANTCREAT naming it).  Leaves nothing
 * behind. */
int sl_output_request_preflight(const sl_output_request *rq, int force, sl_err *e);

/* Write every requested output of V, netCDF first, then CSV, then plots;
 * each is all-or-nothing, and when a later one fails the earlier ones this
 * call created are removed again (without --force; with it, files that
 * replaced older ones stay, complete).  A plot warning (gnuplot missing) is
 * printed to stderr unless G is quiet; with G verbose the written paths are
 * listed on stderr.  Returns the first error. */
int sl_output_request_write(const sl_output_request *rq, const sl_output_view *v,
                            const sl_cli_globals *g, const char *cmd, sl_err *e);

#endif
