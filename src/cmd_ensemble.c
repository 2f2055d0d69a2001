/* `steamloft ensemble` and `steamloft sweep`: argument parsing, then one
 * call (sl_ens_command_run, ensemble_chain.h) that plans the members from
 * the scenario's distributions (ensemble) or the --vary grids (sweep), runs
 * the chain on each, and writes the per-member files, the summary and the
 * plots (output_ensemble.h). */
#include "steamloft/cmd.h"
#include "steamloft/ensemble_chain.h"
#include "steamloft/sweep_rows.h"

#include <errno.h>
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sysexits.h>

typedef sl_ens_request ens_cli;
#define MAX_PCT SL_ENS_MAX_PCT
#define MAX_THR SL_ENS_MAX_THR
#define MAX_VARY SL_ENS_MAX_VARY
/* At most 1e7 members: the per-member scalars kept for the percentiles then
 * take about 2.5 GB in the column store on disk and 0.5 GB of memory for the
 * rank statistics (and a run that long takes hours on a workstation). */
enum { MAX_MEMBERS = 10000000 };

/* 1 when PATH ends in EXT (case-insensitive). */
static int has_ext(const char *path, const char *ext)
{
    size_t n = strlen(path), k = strlen(ext);
    return n > k && strcasecmp(path + n - k, ext) == 0;
}

static void print_help(const char *cmd)
{
    if (strcmp(cmd, "sweep") == 0) {
        printf("Usage: steamloft sweep SCENARIO --vary KEY=START:STOP:STEP [--vary KEY=V1,V2,...] "
               "[OPTIONS]\n"
               "Run the whole chain over a grid of scenario values.  KEY is section.key as\n"
               "'steamloft params' lists it; values are in the key's own unit.  The grid is the\n"
               "product of all --vary lists, the last --vary varying fastest.  A text key takes\n"
               "a list of its values (--vary site.atmosphere=tropical,subarctic-winter), each\n"
               "checked before any member runs.  Up to %d points print one row each (the swept\n"
               "values, regime, energy at the sea, stratospheric water, percent of background,\n"
               "e-folding, validity; --json: a \"rows\" array); larger grids print statistics.\n"
               "      --vary SPEC         a swept key (repeatable, up to %d)\n",
               (int)SL_SWEEP_MAX_ROWS, MAX_VARY);
    } else {
        printf("Usage: steamloft ensemble SCENARIO [--members N] [--seed S] [--sobol] [OPTIONS]\n"
               "Run the whole chain on N members whose uncertain inputs are the scenario values\n"
               "written as distributions, in the key's own unit:\n"
               "  uniform(a, b)           flat on [a, b]\n"
               "  normal(mean, sd)        Gaussian\n"
               "  lognormal(median, s)    ln X normal with sd s\n"
               "  choice(v1, v2, ...)     one of the values, equally likely\n"
               "  flux_angle(lo, hi)      impact angle of an isotropic flux, dP = sin 2θ dθ\n"
               "                          (Shoemaker 1962), truncated to [lo, hi] degrees\n"
               "  -n, --members N         members, 1 to 10000000 (default 1000)\n"
               "  -s, --seed S            base seed (default 1); member m is seeded from (S, m)\n"
               "      --sobol             Sobol quasi-random points instead of Monte Carlo\n"
               "                          (1 to 40 uncertain inputs)\n");
    }
    printf("  -o, --output FILE       per-member rows, by the file's extension: FILE.csv (or -\n"
           "                          for standard output) inputs, status, reason and key\n"
           "                          outputs; FILE.nc the netCDF below\n"
           "      --netcdf FILE.nc    the same with a realization dimension, each member's\n"
           "                          lofted-water profile and percentile profiles and series\n"
           "      --plot DIR          the 5-95 %% band and median of the lofted-water profile\n"
           "                          and of the remaining fraction (gnuplot SVG and PNG)\n"
           "  -p, --percentiles LIST  extra percentiles besides 5, 50, 95 (e.g. 1,99)\n"
           "  -x, --exceed SPEC       probability that an output passes a threshold,\n"
           "                          e.g. percent_of_background>10 (repeatable)\n"
           "  -j, --threads N         OpenMP threads (default: OMP_NUM_THREADS or all cores)\n"
           "      --json              the summary as JSON (for scripts)\n"
           SL_CLI_SET_HELP
           "      --progress          draw the progress bar even when stderr is not a terminal\n"
           "      --no-progress       never draw it\n"
           "  -h, --help              print this help\n"
           "Failed members are kept in the outputs with their status and reason.  Results are\n"
           "identical for any number of threads or MPI ranks (mpirun -np K with 'make MPI=1').\n"
           "Outputs are not overwritten without the global --force.\n"
           "Key outputs (CSV columns and --exceed names; impactor-only ones marked *):\n");
    sl_ens_print_output_names(stdout);
    printf("\n%s\n", sl_cli_caution());
}

static int parse_size(const char *text, const char *what, size_t lo, size_t hi, size_t *out,
                      sl_err *e)
{
    char *end = NULL;
    errno = 0;
    unsigned long long v = strtoull(text, &end, 10);
    if (end == text || *end != '\0' || errno == ERANGE || text[0] == '-' || v < lo || v > hi)
        SL_FAIL_RETURN(e, SL_EUSAGE, "%s '%s' is not an integer from %zu to %zu", what, text, lo, hi);
    *out = (size_t)v;
    return SL_OK;
}

static int parse_args(int argc, char **argv, ens_cli *c, const sl_cli_globals *g, int *done)
{
    enum { OPT_SOBOL = 256, OPT_NETCDF, OPT_PROGRESS, OPT_NOPROGRESS, OPT_BLOCK, OPT_JSON, OPT_PLOT };
    static const struct option opts[] = {
        {"members", required_argument, NULL, 'n'}, {"seed", required_argument, NULL, 's'},
        {"sobol", no_argument, NULL, OPT_SOBOL},     {"output", required_argument, NULL, 'o'},
        {"netcdf", required_argument, NULL, OPT_NETCDF},
        {"percentiles", required_argument, NULL, 'p'}, {"exceed", required_argument, NULL, 'x'},
        {"vary", required_argument, NULL, 'V'},      {"threads", required_argument, NULL, 'j'},
        {"progress", no_argument, NULL, OPT_PROGRESS}, {"no-progress", no_argument, NULL, OPT_NOPROGRESS},
        {"block", required_argument, NULL, OPT_BLOCK}, {"json", no_argument, NULL, OPT_JSON},
        {"plot", required_argument, NULL, OPT_PLOT},
        {"help", no_argument, NULL, 'h'}, SL_CLI_SET_OPTION,
        {NULL, 0, NULL, 0}};
    sl_err e;
    sl_err_clear(&e);
    *done = 0;
    int ch;
    while ((ch = getopt_long(argc, argv, ":n:s:o:p:x:j:h", opts, NULL)) != -1) {
        size_t v = 0;
        switch (ch) {
        case 'h': print_help(c->cmd); *done = 1; return EX_OK;
        case 'n':
            if (c->sweep)
                return sl_cli_usage_error(g, c->cmd, "--members is for 'ensemble'; a sweep has one member per grid point");
            if (parse_size(optarg, "--members", 1, (size_t)MAX_MEMBERS, &c->members, &e) != SL_OK)
                return sl_cli_usage_error(g, c->cmd, "%s", e.msg);
            break;
        case 's':
            if (parse_size(optarg, "--seed", 0, (size_t)-1, &v, &e) != SL_OK)
                return sl_cli_usage_error(g, c->cmd, "%s", e.msg);
            c->seed = (uint64_t)v;
            break;
        case OPT_SOBOL:
            if (c->sweep)
                return sl_cli_usage_error(g, c->cmd, "--sobol is for 'ensemble'");
            c->sobol = 1;
            break;
        case 'o':
            if (strcmp(optarg, "-") == 0 || has_ext(optarg, ".csv"))
                c->csv_path = optarg;
            else if (has_ext(optarg, ".nc"))
                c->nc_path = c->nc_path ? c->nc_path : optarg;
            else
                return sl_cli_usage_error(g, c->cmd, "--output '%s': the extension says the format: give "
                                          "FILE.csv (or - for standard output) or FILE.nc", optarg);
            if (c->nc_path && c->nc_path != optarg && has_ext(optarg, ".nc"))
                return sl_cli_usage_error(g, c->cmd, "--output '%s' and --netcdf '%s': give one netCDF file",
                                          optarg, c->nc_path);
            break;
        case OPT_NETCDF:
            if (!has_ext(optarg, ".nc"))
                return sl_cli_usage_error(g, c->cmd, "--netcdf '%s': a netCDF file name ends in .nc", optarg);
            if (c->nc_path)
                return sl_cli_usage_error(g, c->cmd, "--netcdf '%s' and --output '%s': give one netCDF file",
                                          optarg, c->nc_path);
            c->nc_path = optarg;
            break;
        case OPT_PLOT: c->plot_dir = optarg; break;
        case 'p': {
            const char *s = optarg;
            for (;;) {
                char *end = NULL;
                errno = 0;
                double x = strtod(s, &end);
                if (end == s || (*end != ',' && *end != '\0') || !(x >= 0 && x <= 100))
                    return sl_cli_usage_error(g, c->cmd, "--percentiles '%s': want numbers from 0 to 100 separated by commas", optarg);
                if (c->npct >= MAX_PCT)
                    return sl_cli_usage_error(g, c->cmd, "at most %d percentiles", MAX_PCT);
                c->pct[c->npct++] = x;
                if (*end == '\0')
                    break;
                s = end + 1;
            }
            break;
        }
        case 'x':
            if (c->nthr >= MAX_THR)
                return sl_cli_usage_error(g, c->cmd, "at most %d --exceed", MAX_THR);
            c->thr_spec[c->nthr++] = optarg;
            break;
        case 'V':
            if (!c->sweep)
                return sl_cli_usage_error(g, c->cmd, "--vary is for 'sweep'");
            if (c->nvary >= MAX_VARY)
                return sl_cli_usage_error(g, c->cmd, "at most %d --vary", MAX_VARY);
            c->vary[c->nvary++] = optarg;
            break;
        case 'j':
            if (parse_size(optarg, "--threads", 1, 4096, &v, &e) != SL_OK)
                return sl_cli_usage_error(g, c->cmd, "%s", e.msg);
            c->threads = (int)v;
            break;
        case OPT_PROGRESS: c->progress = 1; break;
        case OPT_JSON: c->json = 1; break;
        case OPT_NOPROGRESS: c->progress = 0; break;
        case OPT_BLOCK:
            if (parse_size(optarg, "--block", 1, 1 << 20, &c->block, &e) != SL_OK)
                return sl_cli_usage_error(g, c->cmd, "%s", e.msg);
            break;
        case SL_CLI_OPT_SET:
            if (sl_cli_sets_add(&c->sets, optarg, &e) != SL_OK)
                return sl_cli_usage_error(g, c->cmd, "%s", e.msg);
            break;
        default: return sl_cli_option_error(g, c->cmd, ch, argv);
        }
    }
    if (optind >= argc)
        return sl_cli_usage_error(g, c->cmd, "no scenario file given ('-' reads standard input)");
    if (optind + 1 < argc)
        return sl_cli_usage_error(g, c->cmd, "give one scenario file, not '%s' too", argv[optind + 1]);
    c->scenario = argv[optind];
    if (c->csv_path && c->nc_path && strcmp(c->csv_path, c->nc_path) == 0)
        return sl_cli_usage_error(g, c->cmd, "--output and --netcdf name the same file '%s'", c->csv_path);
    if (c->sweep && c->nvary == 0)
        return sl_cli_usage_error(g, c->cmd, "give at least one --vary KEY=START:STOP:STEP or KEY=V1,V2,...");
    return EX_OK;
}

static int run_command(int argc, char **argv, const sl_cli_globals *g, int sweep)
{
    ens_cli c;
    memset(&c, 0, sizeof c);
    c.cmd = sweep ? "sweep" : "ensemble";
    c.sweep = sweep;
    c.members = 1000;
    c.seed = 1;
    c.progress = -1;
    int done = 0;
    int rc = parse_args(argc, argv, &c, g, &done);
    if (rc != EX_OK || done)
        return rc;
    return sl_ens_command_run(&c, g);
}

int sl_cmd_ensemble(int argc, char **argv, const sl_cli_globals *g)
{
    sl_ens_mpi_begin();
    int rc = run_command(argc, argv, g, 0);
    sl_ens_mpi_end();
    return rc;
}

int sl_cmd_sweep(int argc, char **argv, const sl_cli_globals *g)
{
    sl_ens_mpi_begin();
    int rc = run_command(argc, argv, g, 1);
    sl_ens_mpi_end();
    return rc;
}
