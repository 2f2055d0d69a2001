/* sweep_rows: what `steamloft sweep` adds to an ensemble run (src/sweep_rows.c).
 *
 * - Text keys on --vary (KEY=V1,V2,...): a text or choice key of the
 *   scenario table (site.atmosphere, strat.tropics_atmosphere, ...) becomes a
 *   grid input whose value is the index of its text; each text is checked as
 *   the key's own reader would check it (a choice among its words; an
 *   atmosphere a built-in profile or a profile file that reads) before any
 *   member runs, and every member sets it on its scenario
 *   (sl_scenario_set_text).  The CSV carries the text, the netCDF file the
 *   index with CF flag_values / flag_meanings.
 * - One row per grid point: the swept values, then the plume regime, energy
 *   at the sea, stratospheric water, percent of the background, e-folding
 *   time and validity, as a table (text) or a "rows" array (JSON), for grids
 *   of at most SL_SWEEP_MAX_ROWS points; larger grids print the statistics
 *   and say the rows are in the CSV. */
#ifndef STEAMLOFT_SWEEP_ROWS_H
#define STEAMLOFT_SWEEP_ROWS_H

#include "steamloft/ensemble.h"
#include "steamloft/err.h"
#include "steamloft/output_text.h"
#include "steamloft/scenario.h"

#include <stdio.h>

enum { SL_SWEEP_MAX_ROWS = 200, SL_SWEEP_ROW_EXTRAS = 3 };

/* Add a text grid input for scenario key ID (KEY its "section.key") from
 * VALUES "V1,V2,..." (blanks around a value trimmed) to the plan: IDS[the new
 * input] = ID.  SC (read, not finished) is only copied.  Errors: SL_EUSAGE
 * (exit 64) for an empty or repeated value, or one the key does not take,
 * naming --vary, the key, the value and the valid values; SL_ENOMEM. */
int sl_sweep_add_text_input(const sl_scenario *sc, sl_ens_plan *p, int *ids, int id, const char *key,
                            const char *values, sl_err *e);

/* Text of input K's value X: the label of a text key (X its index), NULL
 * for a numeric key. */
const char *sl_ens_input_label(const sl_ens_plan *p, size_t k, double x);

/* How input K is sampled, for summaries: sl_dist_describe, or for a text key
 * "values a, b, c". */
void sl_ens_input_describe(const sl_ens_plan *p, size_t k, char *buf, size_t n);

/* Whether "section.key=..." names a text or choice key (its id in *ID). */
int sl_sweep_is_text_key(const char *spec, int *id);

/* 1 when a text input of site.atmosphere names a profile file: the members
 * then run on one thread (a file profile is read while members run, and
 * the netCDF library is not thread-safe). */
int sl_sweep_file_profiles(const sl_ens_plan *p, const int *ids);

enum { SL_SWEEP_ROW_OUT = 4 };

/* Each row, kept as the members come in (the result may hold its scalars
 * on disk): the inputs, the key outputs of a row, the plume regime, whether
 * the e-folding was extrapolated, the status and the failure reason. */
typedef struct sl_sweep_rows {
    size_t n, ni, n_failed;
    int col[SL_SWEEP_ROW_OUT]; /* the model's output index of each row output, -1 none */
    double *in;       /* n x ni, keys' units (a text key: the index) */
    double *out;      /* n x SL_SWEEP_ROW_OUT */
    int *status;
    int *regime;      /* sl_plume_regime, -1 without a plume or for a failed member */
    int *extrapolated;
    double *widest;   /* sl_plume.widest_thermal, 0 without a plume or for a failed member */
    char *reason;     /* n x SL_ENS_REASON_LEN */
} sl_sweep_rows;

/* Rows for the members of plan P (at most SL_SWEEP_MAX_ROWS) of model M;
 * SL_ENOMEM. */
int sl_sweep_rows_init(sl_sweep_rows *r, const sl_ens_plan *p, const sl_ens_model *m, sl_err *e);
/* Member M's row: its inputs, outputs, the extras' last SL_SWEEP_ROW_EXTRAS
 * values (TAIL: regime code, e-folding extrapolated, widest thermal), status
 * and reason. */
void sl_sweep_rows_add(sl_sweep_rows *r, size_t m, const double *in, const double *out, const double *tail,
                       int status, const char *reason);
void sl_sweep_rows_free(sl_sweep_rows *r);

/* The table of rows for people (3 significant figures) and the caution. */
int sl_sweep_rows_text(FILE *f, const char *scenario, const sl_ens_plan *p, const sl_sweep_rows *r, sl_err *e);
/* The same rows as a JSON array "rows" in an open report (full precision). */
void sl_sweep_rows_json(sl_report *rep, const sl_ens_plan *p, const sl_sweep_rows *r);

/* netCDF variable for text input K on dimension DIM: its index (int) with
 * flag_values, flag_meanings (the texts, blanks made '_') and the texts as
 * given in a "values" attribute (';'-separated).  Errors: SL_EIO naming PATH. */
int sl_sweep_nc_text_input(int ncid, const char *path, int dim, const sl_ens_input *in, const char *name,
                           int *varid, sl_err *e);

#endif
