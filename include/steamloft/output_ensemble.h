/* output_ensemble: what an ensemble or sweep writes (see ensemble_chain.h).
 *
 * Per-member rows stream in member order through sl_ens_sink_row (the row
 * callback of sl_ens_run; the CSV lines are formatted beforehand by the
 * OpenMP threads through sl_ens_sink_format, so rank 0 only writes them) to
 *   CSV     member,status,reason, the inputs in their keys' units, the key
 *           outputs (empty where a member failed or an output does not
 *           apply); numbers with the fewest digits (15-17) that read back
 *           to the same double, so the file holds what the statistics used;
 *   netCDF  CF-1.11: dimension realization (fixed size, the member count;
 *           coordinate realization with standard name realization), status
 *           and reason, one variable per input and key output (_FillValue
 *           where a member failed or an output does not apply), and when the
 *           median run gave the layout: band(band) with band_bnds, the
 *           lofted water of each member lofted_water_mass(realization, band)
 *           (vapour + ice, kg, float), percentile(percentile) with
 *           lofted_water_mass_percentile(percentile, band) and
 *           remaining_fraction_percentile(percentile, time) on time(time)
 *           (days since the event).
 * The profile and time-series percentiles are binned (sl_ens_hist: within
 * 1.2 %, exact at zero and at the extremes); the key outputs' percentiles in
 * the summary are exact (sl_ens_percentiles).
 * Both files are staged (outfile.h) and appear only when complete.  The
 * summary (text or JSON through sl_report, output_text.h) is built in memory
 * first and then written, so an error never leaves half a JSON document; a
 * write error is an error (SL_EIO), never exit 0.  Members whose drawn value
 * of an input lies outside the key's valid range are counted per input and
 * reported with the truncation used (they are rejected: they fail and are
 * left out of the statistics). */
#ifndef STEAMLOFT_OUTPUT_ENSEMBLE_H
#define STEAMLOFT_OUTPUT_ENSEMBLE_H

#include "steamloft/ensemble_chain.h"
#include "steamloft/outfile.h"

typedef struct sl_ens_sink {
    const sl_ens_request *rq;
    const sl_cli_globals *g;
    const sl_ens_plan *plan;
    const sl_ens_model *model;
    const sl_ens_chain *chain;
    const int *ids;
    FILE *csv;
    const char *csv_name;
    int csv_stdout;
    sl_outset set_csv, set_nc;
    int nc;                 /* netCDF id, -1 when none */
    int nc_in[SL_P_COUNT + SL_ENS_MAX_VARY], nc_out[SL_ENS_MAX_OUT], nc_status, nc_reason, nc_real;
    int nc_prof, nc_pct_prof, nc_pct_rem;
    size_t nbuf, nc_written;
    double *buf_in, *buf_out;
    float *buf_prof;
    int *buf_st, *buf_m;
    char *buf_reason;
    size_t *out_of_range;   /* per input: members drawn outside the key's range */
    sl_ens_hist hprof, hrem;
    size_t n_ok;
    int csv_closed;         /* the staged CSV is complete, waiting for the commit */
    struct sl_ens_summary *summary; /* owned (sl_ens_sink_summarize) */
    struct sl_sweep_rows *rows;     /* owned: a sweep's per-point rows (sweep_rows.h), NULL otherwise */
} sl_ens_sink;

/* Stage the requested files and define the netCDF (before the run, on rank
 * 0 only), so a bad path fails before any work.  Errors: SL_ECANTCREAT,
 * SL_EIO, SL_ENOMEM. */
int sl_ens_sink_open(sl_ens_sink *s, const sl_ens_request *rq, const sl_cli_globals *g, const sl_ens_plan *p,
                     const sl_ens_model *m, const sl_ens_chain *c, const int *ids, sl_err *e);

/* The format callback (sl_ens_format_fn): the member's CSV line (empty
 * without a CSV), in parallel; sl_ens_sink_row_cap bytes are enough for any
 * line.  SINK is an sl_ens_sink. */
void sl_ens_sink_format(const void *sink, size_t member, const double *inputs, const double *outputs,
                        int status, const char *reason, char *text, size_t cap);
size_t sl_ens_sink_row_cap(const sl_ens_plan *p, const sl_ens_model *m);

/* The row callback (sl_ens_row_fn); SINK is an sl_ens_sink, TEXT the line
 * of sl_ens_sink_format. */
int sl_ens_sink_row(void *sink, size_t member, const double *inputs, const double *outputs, int status,
                    const char *reason, const char *text, sl_err *e);

/* After the run: the percentile variables, close the files (still staged). */
int sl_ens_sink_finish(sl_ens_sink *s, sl_err *e);

/* Rename the finished files into place (last, after everything that can
 * fail, so an error leaves no file). */
int sl_ens_sink_commit(sl_ens_sink *s, sl_err *e);

/* Compute every number of the summary (before anything is committed or
 * printed).  THR[t] is the threshold of --exceed t on output THR_OUT[t].
 * Errors: SL_ENOMEM. */
int sl_ens_sink_summarize(sl_ens_sink *s, const sl_ens_result *r, const sl_ens_threshold *thr, const int *thr_out,
                          sl_err *e);

/* Release; removes staged files that were not finished.  Safe on a zeroed
 * sink (with nc = -1). */
void sl_ens_sink_free(sl_ens_sink *s);

/* The summarized numbers on F: text, or JSON with rq->json (always a
 * complete document).  Errors: SL_EIO (a write failed). */
int sl_ens_summary_write(FILE *f, const sl_ens_sink *s, const sl_ens_result *r, const sl_ens_threshold *thr,
                         sl_err *e);

/* --plot DIR: the 5-95 % band and the median of the lofted-water profile and
 * of the remaining fraction (sl_plot_ensemble).  A missing gnuplot is a
 * warning on stderr (unless QUIET), not an error. */
int sl_ens_plot_write(const sl_ens_sink *s, const char *dir, int quiet, sl_err *e);

#endif
