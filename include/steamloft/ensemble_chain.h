/* ensemble_chain: the work of `steamloft ensemble` and `steamloft sweep`
 * after their options are parsed (src/cmd_ensemble.c parses them).
 *
 * The plan: every scenario value written as a distribution (ensemble) or
 * every --vary key (sweep) becomes an uncertain input (ensemble.h); its law
 * must stay inside the key's valid range where it is bounded.  A text key
 * on --vary (sweep_rows.h) is an input whose value is the index of its text;
 * members set the text with sl_scenario_set_text.
 * The model: the ordinary chain (chain.h) on a copy of the scenario with the
 * member's values set through sl_scenario_set_id (ranges and derived
 * defaults checked exactly as for one run); the key outputs are the stage
 * results listed in the table of src/ensemble_chain.c; the extras of each
 * member are its lofted water per altitude band (vapour + ice, kg) and the
 * fraction of its stratospheric excess remaining at each box-model output
 * time, on the band layout and time axis of the run on the inputs' medians.
 * When no [strat] key and no month is uncertain, the box model runs by its
 * linear response (sl_strat_run_linear).
 * The outputs (src/output_ensemble.c): per-member rows to CSV (-o FILE.csv)
 * and netCDF (--netcdf FILE.nc, or -o FILE.nc), the summary on stdout (text
 * or JSON through the one report writer, output_text.h), plots (--plot DIR,
 * plot.h).  No physics here. */
#ifndef STEAMLOFT_ENSEMBLE_CHAIN_H
#define STEAMLOFT_ENSEMBLE_CHAIN_H

#include "steamloft/chain.h"
#include "steamloft/cli.h"
#include "steamloft/ensemble.h"
#include "steamloft/scenario.h"

#include <stdint.h>
#include <stdio.h>

enum { SL_ENS_MAX_PCT = 32, SL_ENS_MAX_THR = 32, SL_ENS_MAX_VARY = 16, SL_ENS_MAX_OUT = 32 };

/* What the command line asked for. */
typedef struct sl_ens_request {
    const char *cmd;       /* "ensemble" or "sweep" */
    int sweep;
    size_t members;
    uint64_t seed;
    int sobol;
    const char *csv_path;  /* per-member rows as CSV ("-": standard output) */
    const char *nc_path;   /* per-member rows, profiles and percentiles as netCDF */
    const char *plot_dir;  /* the 5-95 % band plots */
    double pct[SL_ENS_MAX_PCT];
    size_t npct;
    const char *thr_spec[SL_ENS_MAX_THR];
    size_t nthr;
    const char *vary[SL_ENS_MAX_VARY];
    size_t nvary;
    int threads;
    int progress;          /* -1 auto (stderr is a terminal), 0 off, 1 on */
    int json;              /* summary as JSON */
    size_t block;
    const char *scenario;
    sl_cli_sets sets;      /* --set SECTION.KEY=VALUE overrides */
} sl_ens_request;

/* The chain bound as an ensemble model. */
typedef struct sl_ens_chain {
    const sl_scenario *base;  /* finished, uncertain keys external */
    const sl_ens_plan *plan;
    const int *ids;           /* scenario key of each plan input */
    size_t n_out;
    int which[SL_ENS_MAX_OUT];
    sl_ens_output outputs[SL_ENS_MAX_OUT];
    int strat_fixed;          /* no input changes the box model */
    /* Extras: the band layout and the time axis (of the median run). */
    size_t n_band, n_time;
    double *band_bottom_m, *band_top_m, *time_s; /* owned */
    double tropopause_m;      /* of the median run, for the plot */
    void *spare_ws;           /* the median run's workspace, handed to the first thread (owned until then) */
    sl_chain_shared shared;   /* set-up every workspace's chain borrows (the profiles, the box model
                                 and its response), filled by the median run, then read only; owned */
    double stage_s[SL_CHAIN_N_TIMED]; /* summed over the workspaces when freed (timed runs) */
    long runs, timed_runs;            /* likewise: member runs, and those of them timed */
} sl_ens_chain;

/* Run the command: plan, outputs staged, members, summary, plots.  Returns
 * the exit code (sysexits; the error already reported on stderr). */
int sl_ens_command_run(const sl_ens_request *rq, const sl_cli_globals *g);

/* Print the key output names (help text): impactor-only ones marked '*'. */
void sl_ens_print_output_names(FILE *f);

/* Percentiles the summary reports: 5, 50, 95 and the request's, sorted,
 * without repeats (at most SL_ENS_MAX_PCT + 3). */
size_t sl_ens_percentile_list(const sl_ens_request *rq, double *pct);

#endif
