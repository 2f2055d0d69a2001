/* `steamloft run SCENARIO`: run the stages for one scenario and print the
 * summary (text, or JSON with --json; the full detail with the global -v). */
#include "steamloft/chain.h"
#include "steamloft/cmd.h"
#include "steamloft/model_inputs_request.h"
#include "steamloft/output_chain.h"
#include "steamloft/output_request.h"
#include "steamloft/output_text.h"
#include "steamloft/scenario.h"

#include <getopt.h>
#include <stdio.h>
#include <sysexits.h>

int sl_cmd_run(int argc, char **argv, const sl_cli_globals *g)
{
    static const struct option opts[] = {
        {"help", no_argument, NULL, 'h'}, {"json", no_argument, NULL, 'J'}, SL_CLI_SET_OPTION,
        SL_OUTPUT_LONG_OPTIONS, SL_MODEL_INPUTS_LONG_OPTIONS, {NULL, 0, NULL, 0}};
    int json = 0, c;
    sl_output_request out = {0};
    sl_model_inputs_request mir;
    sl_model_inputs_request_init(&mir);
    sl_cli_sets sets = {0};
    sl_err e = {0};
    while ((c = getopt_long(argc, argv, ":ho:", opts, NULL)) != -1) {
        switch (c) {
        case 'h':
            printf("Usage: steamloft run [--json] [--set SECTION.KEY=VALUE]... [-o FILE.nc] [--csv DIR]\n"
                   "                     [--plot DIR] SCENARIO\n"
                   "Run one scenario (an INI file; '-' reads standard input) through the\n"
                   "atmospheric entry, the energy partition at the sea, the plume rise and\n"
                   "the stratospheric box model, and print a summary that opens with the\n"
                   "answer (water above the tropopause, its share of the background, how long\n"
                   "it stays), then the water budget and each stage in the order of the chain.\n"
                   "The global -v (anywhere on the line) adds the full detail of every stage.\n"
                   "      --json     print the summary as JSON (SI values, unit in each key,\n"
                   "                 full precision, the full detail)\n" SL_CLI_SET_HELP
                   "  -h, --help     print this help\n"
                   "'steamloft params' lists every scenario key.  Exit status: 0 ok, 64 usage,\n"
                   "65 a bad value in the scenario, 66 file not found, 70 numerical failure,\n"
                   "73 an output file cannot be created, 78 scenario syntax (unknown, duplicate\n"
                   "or missing key).\n\n" SL_OUTPUT_HELP SL_MODEL_INPUTS_HELP);
            return EX_OK;
        case 'J': json = 1; break;
        case SL_CLI_OPT_SET:
            if (sl_cli_sets_add(&sets, optarg, &e) != SL_OK)
                return sl_cli_usage_error(g, "run", "%s", e.msg);
            break;
        case '?':
        case ':': return sl_cli_option_error(g, "run", c, argv);
        default:
            if (sl_model_inputs_request_is_option(c)) {
                if (sl_model_inputs_request_option(&mir, c, optarg, &e) != SL_OK)
                    return sl_cli_usage_error(g, "run", "%s", e.msg);
                break;
            }
            if (sl_output_request_is_option(c)) {
                if (sl_output_request_option(&out, c, optarg, &e) != SL_OK)
                    return sl_cli_usage_error(g, "run", "%s", e.msg);
                break;
            }
            return sl_cli_option_error(g, "run", '?', argv);
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
    pre = sl_model_inputs_request_preflight(&mir, g->force, &e);
    if (pre == SL_EUSAGE)
        return sl_cli_usage_error(g, "run", "%s", e.msg);
    if (pre != SL_OK)
        return sl_cli_report(g, "run", &e);
    sl_scenario sc;
    if (sl_cli_scenario_load(argv[optind], &sets, &sc, &e) != SL_OK)
        return e.code == SL_EUSAGE ? sl_cli_usage_error(g, "run", "%s", e.msg)
                                   : sl_cli_report(g, "run", &e);
    sl_chain ch = {0};
    int rc = sl_chain_run(&sc, &ch, &e);
    if (rc == SL_OK)
        rc = sl_output_text_summary(stdout, &ch, json, g->verbosity > 0, &e);
    if (rc == SL_OK && sl_output_request_any(&out)) {
        sl_output_chain oc = {0};
        rc = sl_output_chain_init(&oc, &ch, ch.have_strat_model ? &ch.strat_model : NULL,
                                  ch.have_strat_model ? &ch.strat : NULL, g, &e);
        if (rc == SL_OK)
            rc = sl_output_request_write(&out, &oc.view, g, "run", &e);
        sl_output_chain_free(&oc);
    }
    if (rc == SL_OK && sl_model_inputs_request_any(&mir))
        rc = sl_model_inputs_request_write(&mir, &ch, g, &e);
    sl_chain_free(&ch);
    if (rc != SL_OK)
        return sl_cli_report(g, "run", &e);
    return EX_OK;
}
