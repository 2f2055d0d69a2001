/* `steamloft tabulate`: many scenarios, one row each: the options, then the
 * batch library (include/steamloft/batch.h) does the work.
 *
 * Inputs are scenario files, folders (every *.ini in them, by name) and CSV
 * tables with one scenario per row: the header names the keys as
 * section.key (as `steamloft params` lists them; `name` is short for
 * scenario.name), each cell is a value in the key's own unit as in a scenario
 * file, an empty cell leaves the key to the base.  The base of every row is
 * --base FILE (a scenario file) or, without it, nothing but the table
 * defaults, so the row must then give the required keys.  --set overrides
 * apply to every scenario, after the file or row.
 *
 * Each scenario runs through the whole chain (chain.h), in parallel with
 * OpenMP: one chain per thread, reused across its scenarios as an ensemble
 * does; the rows are printed in input order whatever the thread count, so
 * the output is the same for any number of threads.  The numbers are those
 * `run --json` reports for the same scenario (the same sl_output_key_results).
 * A scenario that fails keeps its row: status "failed", the reason and the
 * exit code `run` would give.
 *
 * Exit status: 0 when every scenario ran; 65 when at least one failed (the
 * rows say why); 64 usage; 66 an input folder or table cannot be read;
 * 78 a table header names an unknown key. */
#include "steamloft/batch.h"
#include "steamloft/cli.h"
#include "steamloft/cmd.h"

#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <sysexits.h>

static void usage(void)
{
    printf("Usage: steamloft tabulate [--csv | --json] [--base FILE] [--set SECTION.KEY=VALUE]...\n"
           "                          [-j N] INPUT...\n"
           "Run many scenarios through the whole chain and print one row per scenario: name,\n"
           "event, regime, energy, energy reaching the sea, water above the tropopause, peak\n"
           "share of the background stratospheric water, e-folding time and validity.\n"
           "INPUT is a scenario file, a folder (every *.ini in it, by name) or a CSV table\n"
           "(FILE.csv) with one scenario per row: its header names the keys as section.key\n"
           "(as 'steamloft params' lists them; 'name' stands for scenario.name), each cell is\n"
           "a value in the key's own unit, an empty cell keeps the base's value.  Lines that\n"
           "start with '#' are comments.  A row without a name is called TABLE-ROW.\n"
           "      --base FILE     the scenario each table row starts from (default: only the\n"
           "                      defaults, so the rows give the required keys)\n" SL_CLI_SET_HELP
           "                           (every scenario, after its file or row)\n"
           "      --csv           CSV (SI values, the keys of 'run --json', full precision)\n"
           "      --json          JSON (the same members)\n"
           "  -j, --threads N     OpenMP threads (default: OMP_NUM_THREADS or all cores); the\n"
           "                      output is the same for any number\n"
           "  -h, --help          print this help\n"
           "A scenario that fails keeps its row with the reason (and, in CSV and JSON, the exit\n"
           "code 'run' would give).  Exit status: 0 every scenario ran, 65 one or more failed,\n"
           "64 usage, 66 an input folder or table cannot be read, 78 a table header names an\n"
           "unknown key.\n\n%s\n",
           sl_cli_caution());
}

int sl_cmd_tabulate(int argc, char **argv, const sl_cli_globals *g)
{
    enum { OPT_CSV = 0x5400, OPT_JSON, OPT_BASE };
    static const struct option opts[] = {{"csv", no_argument, NULL, OPT_CSV},
                                         {"json", no_argument, NULL, OPT_JSON},
                                         {"base", required_argument, NULL, OPT_BASE},
                                         {"threads", required_argument, NULL, 'j'},
                                         {"help", no_argument, NULL, 'h'},
                                         SL_CLI_SET_OPTION,
                                         {NULL, 0, NULL, 0}};
    int csv = 0, json = 0, threads = 0, c;
    const char *base_path = NULL;
    sl_cli_sets sets = {0};
    sl_err e;
    sl_err_clear(&e);
    while ((c = getopt_long(argc, argv, ":hj:", opts, NULL)) != -1) {
        switch (c) {
        case 'h': usage(); return EX_OK;
        case OPT_CSV: csv = 1; break;
        case OPT_JSON: json = 1; break;
        case OPT_BASE: base_path = optarg; break;
        case 'j': {
            char *end = NULL;
            long v = strtol(optarg, &end, 10);
            if (end == optarg || *end != '\0' || v < 1 || v > 4096)
                return sl_cli_usage_error(g, "tabulate", "--threads '%s' is not an integer from 1 to 4096",
                                          optarg);
            threads = (int)v;
            break;
        }
        case SL_CLI_OPT_SET:
            if (sl_cli_sets_add(&sets, optarg, &e) != SL_OK)
                return sl_cli_usage_error(g, "tabulate", "%s", e.msg);
            break;
        default: return sl_cli_option_error(g, "tabulate", c, argv);
        }
    }
    if (csv && json)
        return sl_cli_usage_error(g, "tabulate", "give --csv or --json, not both");
    if (optind >= argc)
        return sl_cli_usage_error(g, "tabulate", "give scenario files, folders or a CSV table");

    sl_batch b = {0};
    int rc = base_path ? sl_batch_set_base(&b, base_path, &e) : SL_OK;
    for (int a = optind; rc == SL_OK && a < argc; a++)
        rc = sl_batch_add(&b, argv[a], &e);
    if (rc == SL_OK)
        rc = sl_batch_check(&b, &e);
    int code = EX_OK;
    if (rc == SL_OK) {
        sl_batch_run(&b, sets.item, sets.n, threads);
        rc = sl_batch_write(&b, stdout, csv ? SL_BATCH_CSV : json ? SL_BATCH_JSON : SL_BATCH_TEXT, &e);
    }
    if (rc == SL_EUSAGE)
        code = sl_cli_usage_error(g, "tabulate", "%s", e.msg);
    else if (rc != SL_OK)
        code = sl_cli_report(g, "tabulate", &e);
    else if (b.failed) {
        if (g->verbosity >= 0)
            fprintf(stderr, "%s tabulate: %zu of %zu scenarios failed (see their rows)\n", g->prog, b.failed, b.n);
        code = EX_DATAERR;
    }
    sl_batch_free(&b);
    return code;
}
