/* `steamloft run SCENARIO`: run the stages for one scenario and print the
 * summary (text, or JSON with --json). */
#include "steamloft/chain.h"
#include "steamloft/cmd.h"
#include "steamloft/output_chain.h"
#include "steamloft/output_request.h"
#include "steamloft/output_text.h"
#include "steamloft/scenario.h"

#include "steamloft/strat.h"
#include "steamloft/units.h"

#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <sysexits.h>

/* The box model on the run's injection profile, for the file outputs (the
 * time series, e-folding time, column anomaly, percent of background).  Same
 * backgrounds as `decay`: the built-in tropical profile for the tropical
 * region and USSA76 for the extratropics (PRACTICE, see cmd_decay.c); the
 * scenario's month starts the seasonal cycle (0 = not given: annual mean).
 * To be replaced by the chain's own box-model stage when sl_chain_run gets
 * one. */
static int run_box_model(const sl_chain *ch, sl_atmosphere *at, sl_atmosphere *ax,
                         sl_strat_model *m, sl_strat_result *r, sl_err *e)
{
    SL_TRY_RETURN(e, sl_atmosphere_init(at, "tropical", e));
    SL_TRY_RETURN(e, sl_atmosphere_init(ax, "us1976", e));
    const sl_atmosphere *atm[SL_STRAT_N_REGIONS] = {ax, at, ax};
    sl_strat_params p;
    sl_strat_params_default(&p);
    double month = ch->scenario.value_si[SL_P_SITE_MONTH];
    p.start_month = isfinite(month) ? (int)lround(month) : 0;
    SL_TRY_RETURN(e, sl_strat_model_init(m, &p, atm, e));
    SL_TRY_RETURN(e, sl_strat_result_init(r, m, e));
    SL_TRY_RETURN(e, sl_strat_run(m, &ch->injection, r, e));
    return SL_OK;
}

int sl_cmd_run(int argc, char **argv, const sl_cli_globals *g)
{
    static const struct option opts[] = {
        {"help", no_argument, NULL, 'h'}, {"json", no_argument, NULL, 'j'}, SL_OUTPUT_LONG_OPTIONS,
        {NULL, 0, NULL, 0}};
    int json = 0, c;
    sl_output_request out = {0};
    sl_err e = {0};
    while ((c = getopt_long(argc, argv, "hjo:", opts, NULL)) != -1) {
        switch (c) {
        case 'h':
            printf("Usage: steamloft run [--json] [-o FILE.nc] [--csv DIR] [--plot DIR] SCENARIO\n"
                   "Run one scenario (an INI file; '-' reads standard input) through the\n"
                   "atmospheric entry, the energy partition at the sea and the plume rise,\n"
                   "and print a summary with the lofted water by altitude band.\n"
                   "  -j, --json  print the summary as JSON (SI values, unit in each key)\n"
                   "  -h, --help  print this help\n"
                   "'steamloft params' lists every scenario key.  Exit status: 0 ok, 64 usage,\n"
                   "65 a bad value in the scenario, 66 file not found, 70 numerical failure,\n"
                   "73 an output file cannot be created, 78 scenario syntax (unknown, duplicate\n"
                   "or missing key).\n\n" SL_OUTPUT_HELP);
            return EX_OK;
        case 'j': json = 1; break;
        default:
            if (sl_output_request_is_option(c)) {
                if (sl_output_request_option(&out, c, optarg, &e) != SL_OK)
                    return sl_cli_usage_error(g, "run", "%s", e.msg);
                break;
            }
            return sl_cli_usage_error(g, "run", "unknown option");
        }
    }
    if (optind + 1 != argc)
        return sl_cli_usage_error(g, "run", "give exactly one scenario file ('-' for standard input)");
    /* Output destinations are checked before the run: a bad one fails at once. */
    int pre = sl_output_request_preflight(&out, g->force, &e);
    if (pre == SL_EUSAGE)
        return sl_cli_usage_error(g, "run", "%s", e.msg);
    if (pre != SL_OK)
        return sl_cli_report(g, "run", &e);
    sl_scenario sc;
    if (sl_scenario_load(&sc, argv[optind], &e) != SL_OK)
        return sl_cli_report(g, "run", &e);
    sl_chain ch = {0};
    int rc = sl_chain_run(&sc, &ch, &e);
    if (rc == SL_OK)
        rc = sl_output_text_summary(stdout, &ch, json, &e);
    if (rc == SL_OK && sl_output_request_any(&out)) {
        sl_atmosphere at = {0}, ax = {0};
        sl_strat_model m = {0};
        sl_strat_result r = {0};
        sl_output_chain oc = {0};
        rc = run_box_model(&ch, &at, &ax, &m, &r, &e);
        if (rc == SL_OK)
            rc = sl_output_chain_init(&oc, &ch, &m, &r, g, &e);
        if (rc == SL_OK)
            rc = sl_output_request_write(&out, &oc.view, g, "run", &e);
        sl_output_chain_free(&oc);
        sl_strat_result_free(&r);
        sl_strat_model_free(&m);
        sl_atmosphere_free(&at);
        sl_atmosphere_free(&ax);
    }
    sl_chain_free(&ch);
    if (rc != SL_OK)
        return sl_cli_report(g, "run", &e);
    return EX_OK;
}
