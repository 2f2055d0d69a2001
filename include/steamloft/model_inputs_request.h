/* model_inputs_request: the model-input options of `steamloft run`
 * (--injection-table, --emission with --grid, --emission-convention and
 * --model-top-km, --forcing-series, --zonal), parsed, checked before the run and
 * written after it, as output_request.h does for the other outputs. */
#ifndef STEAMLOFT_MODEL_INPUTS_REQUEST_H
#define STEAMLOFT_MODEL_INPUTS_REQUEST_H

#include <getopt.h>

#include "steamloft/chain.h"
#include "steamloft/cli.h"
#include "steamloft/err.h"

enum {
    SL_MIOPT_TABLE = 0x5401,
    SL_MIOPT_EMISSION,
    SL_MIOPT_GRID,
    SL_MIOPT_CONVENTION,
    SL_MIOPT_MODEL_TOP,
    SL_MIOPT_FORCING,
    SL_MIOPT_ZONAL
};

#define SL_MODEL_INPUTS_LONG_OPTIONS                                         \
    {"injection-table", required_argument, NULL, SL_MIOPT_TABLE},            \
    {"emission", required_argument, NULL, SL_MIOPT_EMISSION},                \
    {"grid", required_argument, NULL, SL_MIOPT_GRID},                        \
    {"emission-convention", required_argument, NULL, SL_MIOPT_CONVENTION},   \
    {"model-top-km", required_argument, NULL, SL_MIOPT_MODEL_TOP},           \
    {"forcing-series", required_argument, NULL, SL_MIOPT_FORCING},           \
    {"zonal", required_argument, NULL, SL_MIOPT_ZONAL}

#define SL_MODEL_INPUTS_HELP                                                                     \
    "Model inputs (the water above the tropopause; [site] date, [emission] duration_s and\n"    \
    "radius_m set the time, pulse and footprint):\n"                                           \
    "      --injection-table FILE.csv|FILE.json  one row per layer and species: time, place,\n" \
    "                           layer in m and hPa, mass, pulse length, footprint radius\n"    \
    "      --emission FILE.nc   gridded emission rates on time x altitude x lat x lon\n"       \
    "      --grid NLATxNLON|TEMPLATE.nc  its grid (default 180x360; a template's lat/lon)\n"   \
    "      --emission-convention cf|cesm  kg m-3 s-1 with CF coordinates (default), or\n"     \
    "                           molecules/cm3/s with date/datesec and altitude_int\n"          \
    "      --model-top-km KM    leave out (and report) the water above a model's top\n"        \
    "      --forcing-series FILE.csv  annual means of the forcing indicator, with bounds\n"     \
    "      --zonal FILE.nc      the box model's anomaly on time x altitude x latitude region\n"

typedef struct sl_model_inputs_request {
    const char *table_path, *emission_path, *forcing_path, *zonal_path;
    const char *grid_spec;   /* NULL: 180x360 */
    int cesm, convention_given;
    double model_top_m;      /* NaN: none */
    int model_top_given;
} sl_model_inputs_request;

void sl_model_inputs_request_init(sl_model_inputs_request *rq);
int sl_model_inputs_request_is_option(int c);
/* SL_EUSAGE for a bad value (naming the option and the valid form). */
int sl_model_inputs_request_option(sl_model_inputs_request *rq, int c, const char *arg, sl_err *e);
int sl_model_inputs_request_any(const sl_model_inputs_request *rq);
/* Options together (SL_EUSAGE: --grid and friends without --emission), the
 * grid spec parses, destinations writable and not existing unless FORCE. */
int sl_model_inputs_request_preflight(const sl_model_inputs_request *rq, int force, sl_err *e);
/* Write every requested file from the finished run CH; the water above a
 * model top is reported on stderr unless G is quiet.  Files this call made
 * are removed again when a later one fails (without force). */
int sl_model_inputs_request_write(const sl_model_inputs_request *rq, const sl_chain *ch,
                                  const sl_cli_globals *g, sl_err *e);

#endif
