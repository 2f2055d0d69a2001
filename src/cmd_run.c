/* `steamloft run SCENARIO`: run the stages for one scenario and print the
 * summary (text, or JSON with --json). */
#include "steamloft/chain.h"
#include "steamloft/cmd.h"
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
        sl_output_chain oc = {0};
        rc = sl_output_chain_init(&oc, &ch, ch.have_strat_model ? &ch.strat_model : NULL,
                                  ch.have_strat_model ? &ch.strat : NULL, g, &e);
        if (rc == SL_OK)
            rc = sl_output_request_write(&out, &oc.view, g, "run", &e);
        sl_output_chain_free(&oc);
    }
    sl_chain_free(&ch);
    if (rc != SL_OK)
        return sl_cli_report(g, "run", &e);
    return EX_OK;
}
