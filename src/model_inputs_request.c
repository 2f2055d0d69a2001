/* model_inputs_request: parse, check and write the model-input files of a
 * run (see include/steamloft/model_inputs_request.h). */
#include "steamloft/model_inputs_request.h"

#include "steamloft/date.h"
#include "steamloft/emission.h"
#include "steamloft/model_inputs.h"
#include "steamloft/outfile.h"
#include "steamloft/stage_params.h"
#include "steamloft/units.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <unistd.h>

void sl_model_inputs_request_init(sl_model_inputs_request *rq)
{
    memset(rq, 0, sizeof *rq);
    rq->model_top_m = NAN;
}

int sl_model_inputs_request_is_option(int c)
{
    return c >= SL_MIOPT_TABLE && c <= SL_MIOPT_ZONAL;
}

static int ends_with(const char *s, const char *suffix)
{
    size_t n = strlen(s), m = strlen(suffix);
    const char *base = strrchr(s, '/');
    base = base ? base + 1 : s;
    return n > m && strlen(base) > m && strcasecmp(s + n - m, suffix) == 0;
}

int sl_model_inputs_request_option(sl_model_inputs_request *rq, int c, const char *arg, sl_err *e)
{
    switch (c) {
    case SL_MIOPT_TABLE:
        if (!ends_with(arg, ".csv") && !ends_with(arg, ".json"))
            SL_FAIL_RETURN(e, SL_EUSAGE, "--injection-table %s: the name must end in .csv or .json", arg);
        rq->table_path = arg;
        return SL_OK;
    case SL_MIOPT_EMISSION:
        if (!ends_with(arg, ".nc"))
            SL_FAIL_RETURN(e, SL_EUSAGE, "--emission %s: the name must end in .nc", arg);
        rq->emission_path = arg;
        return SL_OK;
    case SL_MIOPT_GRID:
        if (arg[0] == '\0')
            SL_FAIL_RETURN(e, SL_EUSAGE, "--grid: empty (valid: NLATxNLON or a template FILE.nc)");
        rq->grid_spec = arg;
        return SL_OK;
    case SL_MIOPT_CONVENTION:
        if (strcmp(arg, "cf") != 0 && strcmp(arg, "cesm") != 0)
            SL_FAIL_RETURN(e, SL_EUSAGE, "--emission-convention %s: valid: cf or cesm", arg);
        rq->cesm = strcmp(arg, "cesm") == 0;
        rq->convention_given = 1;
        return SL_OK;
    case SL_MIOPT_MODEL_TOP: {
        char *end = NULL;
        errno = 0;
        double v = strtod(arg, &end);
        if (end == arg || *end != '\0' || errno || !(v >= 10.0 && v <= 1000.0))
            SL_FAIL_RETURN(e, SL_EUSAGE, "--model-top-km %s: valid: a number of km, 10 to 1000", arg);
        rq->model_top_m = v * 1e3;
        rq->model_top_given = 1;
        return SL_OK;
    }
    case SL_MIOPT_FORCING:
        if (!ends_with(arg, ".csv"))
            SL_FAIL_RETURN(e, SL_EUSAGE, "--forcing-series %s: the name must end in .csv", arg);
        rq->forcing_path = arg;
        return SL_OK;
    case SL_MIOPT_ZONAL:
        if (!ends_with(arg, ".nc"))
            SL_FAIL_RETURN(e, SL_EUSAGE, "--zonal %s: the name must end in .nc", arg);
        rq->zonal_path = arg;
        return SL_OK;
    default:
        SL_FAIL_RETURN(e, SL_EINTERNAL, "option code %d is not a model-input option", c);
    }
}

int sl_model_inputs_request_any(const sl_model_inputs_request *rq)
{
    return rq->table_path || rq->emission_path || rq->forcing_path || rq->zonal_path;
}

static int preflight_file(const char *path, int force, sl_err *e)
{
    sl_outset *set = calloc(1, sizeof *set);
    if (set == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
    int rc = sl_outset_begin_file(set, path, force, NULL, e);
    sl_outset_abort(set);
    free(set);
    return rc;
}

int sl_model_inputs_request_preflight(const sl_model_inputs_request *rq, int force, sl_err *e)
{
    if (rq->emission_path == NULL && (rq->grid_spec || rq->convention_given || rq->model_top_given))
        SL_FAIL_RETURN(e, SL_EUSAGE,
                       "--grid, --emission-convention and --model-top-km apply to --emission FILE.nc");
    const char *paths[4] = {rq->table_path, rq->emission_path, rq->forcing_path, rq->zonal_path};
    for (int i = 0; i < 4; i++)
        for (int j = 0; j < i; j++)
            if (paths[i] && paths[j] && strcmp(paths[i], paths[j]) == 0)
                SL_FAIL_RETURN(e, SL_EUSAGE, "%s: named for two outputs", paths[i]);
    if (rq->emission_path) {
        sl_emission_grid g;
        SL_TRY_RETURN(e, sl_emission_grid_init(&g, rq->grid_spec ? rq->grid_spec : "180x360", e));
        sl_emission_grid_free(&g);
    }
    for (int i = 0; i < 4; i++)
        if (paths[i])
            SL_TRY_RETURN(e, preflight_file(paths[i], force, e));
    return SL_OK;
}

/* The footprint radius: the scenario's, else the largest apex radius of the
 * thermals that carried water, else the young cloud's area as a disc. */
static double footprint_radius(const sl_chain *ch, double given_m, const char **origin)
{
    if (isfinite(given_m)) {
        *origin = "[emission] radius_m";
        return given_m;
    }
    double r = 0.0;
    if (ch->have_plume)
        for (size_t i = 0; i < ch->plume.n_thermals; i++)
            if (ch->plume.th[i].water_final_kg > 0.0 && isfinite(ch->plume.th[i].apex_radius_m))
                r = fmax(r, ch->plume.th[i].apex_radius_m);
    if (r > 0.0) {
        *origin = "the largest apex radius of the thermals";
        return fmax(r, 1000.0);
    }
    *origin = "the young cloud's area as a disc";
    double a = ch->injection.cloud_area_m2;
    return a > 0.0 ? fmax(sqrt(a / SL_PI), 1000.0) : 250.0e3;
}

int sl_model_inputs_request_write(const sl_model_inputs_request *rq, const sl_chain *ch,
                                  const sl_cli_globals *g, sl_err *e)
{
    const sl_scenario *sc = &ch->scenario;
    sl_emission_params ep;
    sl_emission_params_from_scenario(&ep, sc);
    sl_model_inputs mi = {0};
    mi.inj = &ch->injection;
    mi.atm = ch->have_atmosphere ? ch->atm : NULL;
    mi.strat = ch->have_strat_model ? &ch->strat : NULL;
    mi.latitude_deg = sl_rad_to_deg(sl_scenario_value(sc, SL_P_SITE_LATITUDE));
    mi.longitude_deg = sl_rad_to_deg(sl_scenario_value(sc, SL_P_SITE_LONGITUDE));
    mi.date_given = isfinite(ep.event_time_s);
    /* Without a date: the nominal time of the other outputs, 2000-MM-01. */
    mi.event_time_s = mi.date_given ? ep.event_time_s
                                    : sl_date_epoch_of_day(2000, ep.month >= 1 ? ep.month : 1, 1);
    mi.month = ch->injection.month;
    mi.duration_s = ep.duration_s;
    mi.radius_m = footprint_radius(ch, ep.radius_m, &mi.radius_origin);
    char title[200];
    sl_scenario_name(sc, title, sizeof title);
    mi.title = title;
    {
        sl_param_value prov[SL_P_COUNT];
        size_t np = sl_scenario_provenance(sc, prov, SL_P_COUNT);
        char *text = calloc(np + 1, 512);
        if (text == NULL)
            SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
        size_t off = 0;
        for (size_t i = 0; i < np && i < SL_P_COUNT; i++)
            off += (size_t)snprintf(text + off, 512, "%s=%s\n", prov[i].name, prov[i].text);
        sl_model_inputs_digest(text, mi.digest);
        free(text);
    }
    int force = g ? g->force : 0, quiet = g && g->verbosity < 0, rc = SL_OK;
    int done_table = 0, done_emission = 0, done_forcing = 0;
    if (rq->table_path) {
        rc = sl_model_inputs_table_write(&mi, rq->table_path, force, e);
        done_table = rc == SL_OK;
    }
    if (rc == SL_OK && rq->emission_path) {
        sl_emission_grid grid;
        rc = sl_emission_grid_init(&grid, rq->grid_spec ? rq->grid_spec : "180x360", e);
        double above = 0.0;
        if (rc == SL_OK)
            rc = sl_model_inputs_emission_write(&mi, rq->emission_path, &grid, rq->cesm,
                                                rq->model_top_m, force, &above, e);
        sl_emission_grid_free(&grid);
        done_emission = rc == SL_OK;
        if (rc == SL_OK && rq->model_top_given && !quiet)
            fprintf(stderr, "%s run: %.6g Tg of the water is above the model top (%g km) and not in %s\n",
                    g && g->prog ? g->prog : "steamloft", above * 1e-9, rq->model_top_m / 1e3,
                    rq->emission_path);
    }
    if (rc == SL_OK && rq->forcing_path) {
        rc = sl_model_inputs_forcing_write(&mi, rq->forcing_path, force, e);
        done_forcing = rc == SL_OK;
    }
    if (rc == SL_OK && rq->zonal_path)
        rc = sl_model_inputs_zonal_write(&mi, ch->have_strat_model ? ch->box_model : NULL,
                                         rq->zonal_path, force, e);
    if (rc != SL_OK && !force) {
        if (done_forcing)
            (void)unlink(rq->forcing_path);
        if (done_table)
            (void)unlink(rq->table_path);
        if (done_emission)
            (void)unlink(rq->emission_path);
    }
    return rc;
}
