/* batch: many scenarios through the chain, one row of key results each (the
 * library behind `steamloft tabulate`; src/batch.c).
 *
 * Inputs are scenario files, folders (every *.ini in them, by name), "-"
 * (standard input, once) and CSV tables with one scenario per row: the
 * header names the keys as section.key (as `steamloft params` lists them;
 * `name` is short for scenario.name), each cell is a value in the key's own
 * unit as in a scenario file, an empty cell leaves the key to the base.  The
 * base of every row is the scenario file given to sl_batch_set_base or,
 * without one, nothing but the table defaults.  The overrides (the command
 * line's --set) apply to every scenario, after its file or row.
 *
 * sl_batch_run runs each scenario through the whole chain (chain.h) in
 * parallel with OpenMP: one chain per thread, reused across its scenarios as
 * an ensemble does; the items stay in input order, so the tables written are
 * the same for any thread count.  The numbers are those `run --json` reports
 * (sl_output_key_results).  A scenario that fails keeps its item: its status,
 * the reason, and in CSV and JSON the exit code `run` would give.
 *
 * Lifecycle: zero an sl_batch, set the base, add the inputs, run, write,
 * sl_batch_free (safe at any point). */
#ifndef STEAMLOFT_BATCH_H
#define STEAMLOFT_BATCH_H

#include <stdio.h>

#include "steamloft/err.h"
#include "steamloft/output_text.h"
#include "steamloft/scenario.h"

enum { SL_BATCH_MAX_SCENARIOS = 100000 };

typedef struct sl_batch_table sl_batch_table; /* a CSV table's header (batch.c) */

/* One scenario: a file, or a row of a table, and its results. */
typedef struct sl_batch_item {
    const char *path;             /* scenario file (not owned), or NULL for a row */
    const sl_batch_table *table;  /* the row's table */
    char *row;                    /* the row's text (owned) */
    int line, row_no;             /* line in the table, row number (1 = first data row) */
    int status;                   /* SL_OK or the failure, after sl_batch_run */
    char name[128];
    char source[SL_SCENARIO_PATH_LEN + 16];
    const char *kind;             /* "impactor", "explosion" or "" */
    char reason[SL_ERR_MSG_LEN];  /* why it failed */
    sl_key_results k;             /* valid when status is SL_OK */
} sl_batch_item;

typedef struct sl_batch {
    sl_batch_item *item;
    size_t n, cap;
    sl_batch_table **table;
    size_t ntables;
    char **names;                 /* file names found in folders (owned) */
    size_t nnames;
    sl_scenario *base;            /* read, not finished; NULL = the defaults */
    int stdin_used;
    size_t failed;                /* after sl_batch_run */
} sl_batch;

typedef enum sl_batch_format { SL_BATCH_TEXT = 0, SL_BATCH_CSV, SL_BATCH_JSON } sl_batch_format;

/* The scenario file each table row starts from (read now, syntax checked). */
int sl_batch_set_base(sl_batch *b, const char *path, sl_err *e);
/* Add INPUT: "-", a folder, a FILE.csv table or a scenario file (a missing
 * file fails in its own row).  SL_EUSAGE for "-" twice; SL_ENOINPUT for a
 * folder or table that cannot be read; SL_ECONFIG for a bad table header;
 * SL_EDATA for a bad table. */
int sl_batch_add(sl_batch *b, const char *input, sl_err *e);
/* After the inputs: SL_EUSAGE for a base without a table, SL_EDATA when
 * there is nothing to run. */
int sl_batch_check(const sl_batch *b, sl_err *e);
/* Run every item with the N_SETS overrides SETS ("section.key=value") on
 * THREADS OpenMP threads (0 = OMP_NUM_THREADS or all cores); counts the
 * failures in b->failed.  Failures stay in their items. */
void sl_batch_run(sl_batch *b, const char *const *sets, size_t n_sets, int threads);
/* One row per item as text (for people), CSV or JSON (run --json's keys, full
 * precision) on OUT, with the caution.  SL_EIO on a write error. */
int sl_batch_write(const sl_batch *b, FILE *out, sl_batch_format format, sl_err *e);
void sl_batch_free(sl_batch *b);

#endif
