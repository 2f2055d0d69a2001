/* output_decay: the files of `decay` (include/steamloft/output_decay.h). */
#include "steamloft/output_decay.h"

#include <stdio.h>
#include <string.h>

int sl_output_decay_write(const sl_output_request *out, const sl_chain *ch, const char *source,
                          const char *profile, const sl_cli_globals *g, sl_err *e)
{
    sl_param_value pv[SL_P_COUNT];
    sl_output_param params[SL_P_COUNT + 3] = {{"decay.source", source, 0, NULL}};
    size_t np = 1, n = sl_scenario_provenance(&ch->scenario, pv, SL_P_COUNT);
    for (size_t i = 0; i < n; i++)
        if (strncmp(pv[i].name, "strat.", 6) == 0 || strcmp(pv[i].name, "site.month") == 0) {
            sl_output_params_from_provenance(&pv[i], 1, &params[np]);
            np++;
        }
    for (int i = 0; i < 2; i++)
        if (ch->box_input.atmosphere[i])
            params[np++] = (sl_output_param){i ? "decay.extratropics_atmosphere" : "decay.tropics_atmosphere",
                                             ch->box_input.atmosphere[i], 0, "set"};
    sl_output_strat os;
    SL_TRY_RETURN(e, sl_output_strat_init(&os, ch->box_model, &ch->strat, e));
    char title[600], event_time[32];
    snprintf(title, sizeof title, "steamloft decay of %s", source);
    /* Nominal date: the month may be known, the day and year are not. */
    int month = ch->strat_params.start_month;
    snprintf(event_time, sizeof event_time, "2000-%02d-01 00:00:00", month >= 1 && month <= 12 ? month : 1);
    double lat = ch->injection.latitude_deg, edge = ch->strat_params.tropics_edge_deg;
    const sl_atmosphere *atm = ch->box_atm[lat < -edge || lat > edge ? 1 : 0];
    sl_output_view v = {&ch->injection, atm, &os.series, os.scalars, os.n_scalars, params, np, title,
                        profile, event_time, NULL,
                        SL_OUTPUT_USED_ATMOSPHERE | SL_OUTPUT_USED_WATER | SL_OUTPUT_USED_STRAT,
                        g->full_argc, g->full_argv, NULL /* no plume stage */};
    int rc = sl_output_request_write(out, &v, g, "decay", e);
    sl_output_strat_free(&os);
    return rc;
}

