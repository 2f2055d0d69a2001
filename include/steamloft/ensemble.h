/* ensemble: uncertain inputs, Monte Carlo / Sobol / grid sampling, the member
 * loop (OpenMP threads, optional MPI ranks) and the statistics of the results.
 *
 * An ensemble is the same chain run many times with sampled inputs; this
 * module never contains physics.  It knows a "model" only as a callback that
 * maps SI input values to a fixed list of scalar key outputs (see
 * sl_ens_model); src/cmd_ensemble.c binds that callback to the full chain.
 *
 * Distributions (written as a scenario value, in the unit of the key):
 *   uniform(a, b)          flat on [a, b], a < b
 *   normal(mean, sd)       Gaussian, sd > 0
 *   lognormal(median, s)   ln X ~ N(ln median, s^2), median > 0, s > 0
 *   choice(v1, v2, ...)    each listed value with equal probability (1-256 values)
 *   flux_angle()           impact angle above the horizontal for an isotropic
 *   flux_angle(lo, hi)     flux of bodies on a planet, dP = sin 2θ dθ on
 *                          [0°, 90°] (Gilbert 1893; Shoemaker 1962), so
 *                          P(θ <= x) = sin²x, median 45°, quartiles 30° and 60°;
 *                          with lo, hi the law truncated to [lo, hi].  Only on
 *                          angle keys (unit deg or rad); lo/hi in the key's unit.
 * Every distribution is sampled by its inverse CDF, x = F⁻¹(u), u in (0,1), so
 * Monte Carlo and Sobol share one mapping.
 *
 * Monte Carlo seeding (documented so a run can be reproduced by anyone):
 *   key    = splitmix64(base_seed), folded to 32 bits by (key ^ key >> 32)
 *   seed_m = fmix32(key + m mod 2^32)        (MurmurHash3's 32-bit finaliser)
 *   member m draws its inputs, in input order, from gsl_rng_mt19937 seeded
 *   with seed_m (u = gsl_rng_uniform_pos).
 * fmix32 is a bijection on 32-bit integers, so the members of one run get
 * distinct seeds for up to 2^32 members (GSL's mt19937 takes a 32-bit seed;
 * GSL maps seed 0 to 4357, the one possible coincidence).  A member's inputs
 * depend only on (base_seed, m, the distributions), never on thread or rank.
 *
 * Sobol: gsl_qrng_sobol in dimension d = number of uncertain inputs
 * (1 <= d <= 40, checked here because gsl_qrng_alloc does not reject d > 40);
 * point m of the sequence drives member m.  Unscrambled: its error estimate
 * is not a Monte Carlo standard error.
 *
 * Grid (sweep): each swept key takes a list of values; members run through the
 * Cartesian product with the LAST key varying fastest.  A text key's list is
 * the indices of its texts (sl_ens_input.labels).
 *
 * Determinism: members are computed in blocks; each member's inputs, outputs,
 * status and reason are stored in its own slot, and everything that reduces
 * (CSV rows, statistics) runs serially in member order after the block.  No
 * floating-point reduction happens inside a parallel region, so results are
 * bit-identical for any number of threads and ranks.
 *
 * Memory: the run keeps only the scalar inputs, scalar key outputs and a
 * status per member; per-member rows, including failure reasons, are
 * streamed to the row callback block by block.  In memory the scalars take
 * 8 (n_in + n_out) + 4 bytes per member; with a column store
 * (sl_ens_run_opts.store_dir) only the status stays in memory (4 bytes per
 * member) and the scalars go to a file, one column of doubles per input and
 * output, which the statistics read back one column at a time (exactly the
 * same doubles, so exactly the same numbers).  The statistics then hold
 * about 45 bytes per member at their peak (a few columns, 32-bit member
 * indices, the sort space of one column).
 *
 * Statistics: percentiles by gsl_sort + gsl_stats_quantile_from_sorted_data
 * (linear interpolation between order statistics, Hyndman & Fan 1996 type 7),
 * exceedance probabilities with their binomial standard error sqrt(p(1-p)/n),
 * Spearman rank correlation (gsl_stats_spearman, ties get average ranks) and
 * first-order variance-based indices from the members (sl_ens_first_order)
 * between each uncertain input and each output, over the members that
 * succeeded.  Failed members are counted and reported, never dropped silently. */
#ifndef STEAMLOFT_ENSEMBLE_H
#define STEAMLOFT_ENSEMBLE_H

#include "steamloft/dist.h"
#include "steamloft/err.h"

#include <stddef.h>
#include <stdint.h>

/* ------------------------------------------------------------ seeding */

/* splitmix64 output for state x (Steele, Lea & Flood 2014): one step of
 * x += 0x9e3779b97f4a7c15 followed by the finaliser. */
uint64_t sl_ens_splitmix64(uint64_t x);

/* The gsl_rng_mt19937 seed of member m for a base seed (see above). */
unsigned long sl_ens_member_seed(uint64_t base_seed, uint64_t member);

/* ------------------------------------------------------------ plan */

typedef enum sl_ens_mode {
    SL_ENS_MONTE_CARLO = 0,
    SL_ENS_SOBOL,
    SL_ENS_GRID
} sl_ens_mode;

enum { SL_ENS_KEY_LEN = 96, SL_ENS_SOBOL_MAX_DIM = 40, SL_ENS_REASON_LEN = 256 };

/* One uncertain (or swept) input. */
typedef struct sl_ens_input {
    char key[SL_ENS_KEY_LEN]; /* "section.key" as in the scenario */
    double to_si;             /* multiply a value in the key's unit to get SI */
    sl_dist dist;             /* GRID uses dist.kind == SL_DIST_CHOICE */
    char **labels;            /* a text key's values (owned), NULL for a numeric key: the
                               * input's value is then the index 0..n_labels-1 of the text
                               * (dist a CHOICE of the indices, to_si 1; sweep_rows.c) */
    size_t n_labels;
} sl_ens_input;

typedef struct sl_ens_plan {
    sl_ens_mode mode;
    size_t n_members;     /* GRID: product of the list lengths (sl_ens_plan_add_grid) */
    uint64_t seed;        /* MONTE_CARLO base seed */
    size_t n_inputs;
    sl_ens_input *inputs; /* owned */
} sl_ens_plan;

/* Append an input to the plan; takes ownership of *d (zeroes it).  Errors:
 * SL_EUSAGE when the key is already in the plan, SL_ENOMEM. */
int sl_ens_plan_add(sl_ens_plan *p, const char *key, double to_si, sl_dist *d, sl_err *e);

/* Parse a --vary specification "KEY=START:STOP:STEP" or "KEY=V1,V2,..." into
 * the key (copied to key_out, SL_ENS_KEY_LEN bytes) and a CHOICE distribution
 * holding the grid values in order.  START:STOP:STEP gives START + i*STEP for
 * i = 0, 1, ... while not beyond STOP (a STOP within 1e-9 of a step is
 * included); STEP must be non-zero and point from START towards STOP.  At most
 * 100000 values.  Errors: SL_EUSAGE naming the specification and the form. */
int sl_ens_parse_vary(const char *spec, char *key_out, sl_dist *d, sl_err *e);

/* Check the plan and fill derived fields (GRID: n_members = product of list
 * lengths).  Errors: SL_EUSAGE for no members, Sobol with 0 or more than 40
 * inputs, a grid over more than 1e8 points. */
int sl_ens_plan_finish(sl_ens_plan *p, sl_err *e);

/* Release the plan; safe on a zeroed struct. */
void sl_ens_plan_free(sl_ens_plan *p);

/* Input values of members [first, first + count) in the keys' units,
 * row-major (count x n_inputs), exactly as sl_ens_run gives them to the model.
 * For Sobol it generates the sequence from its start (cost O(first + count)).
 * Errors: SL_ENOMEM. */
int sl_ens_sample(const sl_ens_plan *p, size_t first, size_t count, double *values, sl_err *e);

/* ------------------------------------------------------------ the model */

/* One scalar key output of a member. */
typedef struct sl_ens_output {
    const char *name;  /* column name, with its unit, e.g. "strat_water_Tg" */
    const char *units; /* UDUNITS spelling for netCDF, e.g. "Tg" */
    const char *long_name;
    int may_be_missing; /* 1: NAN means "does not apply to this member" (an
                         * e-folding time when nothing was injected); the
                         * statistics of this output skip it.  0: a non-finite
                         * value makes the member fail. */
    const char *flag_meanings; /* a code 0, 1, ...: the blank-separated names
                                * of the codes (CF flag_meanings); NULL for a
                                * quantity */
} sl_ens_output;

/* The model run for each member.  ws_new is called once per thread before the
 * members run (never inside the member loop); member must be thread-safe
 * given distinct workspaces, read ctx only, and fill outputs[0..n_outputs-1]
 * in the units the output names carry.  A member that returns non-SL_OK, or
 * gives a non-finite output not marked may_be_missing, is recorded as failed
 * with its status and the message of its sl_err as reason. */
typedef struct sl_ens_model {
    void *ctx;
    size_t n_outputs;
    const sl_ens_output *outputs;
    void *(*ws_new)(void *ctx, sl_err *e);
    void (*ws_free)(void *ws);
    int (*member)(void *ws, void *ctx, const sl_ens_plan *plan, const double *inputs_si,
                  double *outputs, sl_err *e);
    size_t n_extra;     /* values the member writes after its key outputs, at
                         * outputs[n_outputs ..]: passed to the row callback
                         * (profiles, time series), never kept in the result
                         * nor checked for finiteness; NAN for a failed member */
} sl_ens_model;

/* Called serially, in member order, on MPI rank 0, once per member: inputs in
 * the keys' units, outputs (n_outputs key outputs then n_extra extras;
 * undefined when status != SL_OK), status and reason
 * ("" when ok), and the member's TEXT made by the format callback (NULL
 * without one).  Returning non-SL_OK stops the run with that status. */
typedef int (*sl_ens_row_fn)(void *sink, size_t member, const double *inputs,
                             const double *outputs, int status, const char *reason, const char *text,
                             sl_err *e);

/* Optional: turn a member's row into text (a CSV line) in parallel, on MPI
 * rank 0, for the members of each gathered block before their row calls:
 * the OpenMP threads each format their own members into their own slots,
 * so the serial part only writes the text.  Must be thread-safe and only
 * read SINK; writes at most CAP bytes including the NUL. */
typedef void (*sl_ens_format_fn)(const void *sink, size_t member, const double *inputs, const double *outputs,
                                 int status, const char *reason, char *text, size_t cap);

typedef struct sl_ens_run_opts {
    int n_threads;      /* 0: OpenMP default (OMP_NUM_THREADS) */
    size_t block;       /* members per block; 0: 256 */
    int progress;       /* 1: draw the progress bar on stderr (caller checks isatty) */
    sl_ens_row_fn row;  /* may be NULL */
    void *sink;
    const char *store_dir; /* NULL: keep the scalars in memory; else rank 0
                            * keeps them in a column file made in this
                            * directory (mkstemp) and unlinked at once, so
                            * nothing is left behind even if the process is
                            * killed; the kernel frees it at the last close */
    sl_ens_format_fn format; /* may be NULL */
    size_t format_cap;       /* bytes of text per member (with the NUL) */
} sl_ens_run_opts;

/* What a run keeps: the scalars of every member (on MPI rank 0 only). */
typedef struct sl_ens_result {
    size_t n_members, n_inputs, n_outputs;
    double *inputs;   /* n_members x n_inputs, keys' units (NULL with a store) */
    double *outputs;  /* n_members x n_outputs; NAN for failed members (NULL with a store) */
    int *status;      /* SL_OK or the member's failure status */
    size_t n_failed;
    char first_failure[SL_ENS_REASON_LEN]; /* reason of the lowest failed member */
    size_t first_failed_member;
    int mpi_ranks;    /* ranks that shared the run (1 without MPI) */
    int threads;      /* OpenMP threads per rank */
    double wall_s;    /* wall-clock seconds of the member loop */
    /* The column store (store_dir): column c (inputs, then outputs) of
     * member m at byte 8 (c n_members + m); after the columns, scratch space
     * of sl_ens_sensitivity. */
    int on_disk, store_fd;
    double *store_buf; /* rows not yet written, then one column of them */
    size_t store_rows; /* rows in store_buf */
    size_t store_first; /* member of its first row */
} sl_ens_result;

/* Run every member of the plan.  With SL_HAVE_MPI and MPI initialised by the
 * caller on more than one rank, member m runs on rank m % size and rank 0
 * gathers (MPI_Gatherv) each block, calls the row callback and keeps the
 * result; other ranks return SL_OK with r->n_members == 0.  Errors: SL_ENOMEM,
 * a workspace that cannot be made, the row callback's status. */
int sl_ens_run(const sl_ens_plan *p, const sl_ens_model *m, const sl_ens_run_opts *o,
               sl_ens_result *r, sl_err *e);

/* Release the result; safe on a zeroed struct. */
void sl_ens_result_free(sl_ens_result *r);

/* 1 on MPI rank 0 or without MPI, 0 on other ranks. */
int sl_ens_is_root(void);

/* With an MPI build (SL_HAVE_MPI): initialise MPI (MPI_Init_thread, funneled:
 * only the master thread calls MPI) unless it is already; sl_ens_mpi_end
 * finalises it.  Without MPI both do nothing.  Call them from the command,
 * around everything else, on every rank. */
void sl_ens_mpi_begin(void);
void sl_ens_mpi_end(void);

/* With MPI on more than one rank, mpirun gives standard input to rank 0 only:
 * read it there (at most MAX_BYTES) and broadcast it, so every rank can parse
 * the same scenario '-'.  *TEXT gets a malloc'd NUL-terminated copy on every
 * rank (free it), or NULL when not running on several ranks (read stdin
 * directly then).  Every rank returns the same status: SL_EIO for a read
 * error, SL_ECONFIG when the input exceeds MAX_BYTES, SL_ENOMEM. */
int sl_ens_share_stdin(char **text, size_t max_bytes, sl_err *e);

/* Make every rank agree on a status before collective work: returns the
 * worst (largest) status over the ranks; a rank that was fine but sees
 * another fail gets a message saying so.  Without MPI returns STATUS. */
int sl_ens_agree(int status, sl_err *e);

/* ------------------------------------------------------------ statistics */

/* The statistics below use the successful members whose output j is finite
 * (a may_be_missing output can be NAN for some of them).
 *
 * Percentiles pct[0..np-1] (0..100) of output j over successful members,
 * into vals; *n_ok gets the number used.  With n_ok == 0 vals are NAN.
 * Errors: SL_EUSAGE for a percentile outside [0,100], SL_ENOMEM. */
int sl_ens_percentiles(const sl_ens_result *r, size_t j, const double *pct, size_t np,
                       double *vals, size_t *n_ok, sl_err *e);

/* Column C of the result (inputs 0..n_inputs-1, then the outputs) of every
 * member into BUF[0..n_members-1], from memory or from the column store.
 * Errors: SL_EIO (a read of the store failed). */
int sl_ens_column(const sl_ens_result *r, size_t c, double *buf, sl_err *e);

/* Mean and sample standard deviation of output j over successful members
 * (summed in member order).  Errors: SL_ENOMEM, SL_EIO (the store). */
int sl_ens_mean_sd(const sl_ens_result *r, size_t j, double *mean, double *sd, size_t *n_ok, sl_err *e);

/* A threshold test "NAME>VALUE", "NAME>=VALUE", "NAME<VALUE" or "NAME<=VALUE". */
typedef struct sl_ens_threshold {
    char name[SL_ENS_KEY_LEN];
    int op; /* '>', 'g' (>=), '<', 'l' (<=) */
    double value;
} sl_ens_threshold;

/* Parse a threshold specification.  Errors: SL_EUSAGE naming the form. */
int sl_ens_parse_threshold(const char *spec, sl_ens_threshold *t, sl_err *e);

/* Fraction of successful members whose output j satisfies t, and its binomial
 * standard error.  NAN when no member succeeded.  Errors: SL_ENOMEM, SL_EIO. */
int sl_ens_exceedance(const sl_ens_result *r, size_t j, const sl_ens_threshold *t, double *p,
                      double *stderr_p, size_t *n_ok, sl_err *e);

/* Spearman rank correlation between input i and output j over successful
 * members (NAN when fewer than 3, or when either is constant).  Errors:
 * SL_ENOMEM. */
int sl_ens_spearman(const sl_ens_result *r, size_t i, size_t j, double *rho, sl_err *e);

/* First-order variance-based sensitivity index of output j to input i, from
 * the members themselves ("given data"; the correlation ratio of Pearson,
 * used for Sobol' first-order indices by Plischke 2010 and Plischke, Borgonovo
 * & Smith 2013): sort the members by input i, cut them into M = floor(sqrt(n))
 * classes of equal count (never splitting equal input values), and take the
 * between-class variance of the output over its total variance,
 *   S_i = sum_k n_k (mean_k - mean)^2 / sum (y - mean)^2,
 * less its expectation (M-1)/(n-1) for an input without effect, rescaled:
 *   S_i <- (S_i - b) / (1 - b),  b = (M - 1)/(n - 1).
 * Valid for independent inputs (Monte Carlo, Sobol points, full grids).
 * Like any variance share it is dominated by the largest outputs when the
 * output spans orders of magnitude.  An input without effect gets a value
 * near 0 that may be slightly negative (sampling noise).  NAN with fewer than
 * 20 members, a constant output or a constant input.  Errors: SL_ENOMEM. */
int sl_ens_first_order(const sl_ens_result *r, size_t i, size_t j, double *s1, sl_err *e);

/* Both measures for every (output, input) pair at once, for large runs:
 * rho[j * n_inputs + i] and s1[j * n_inputs + i] (either may be NULL) equal
 * sl_ens_spearman and sl_ens_first_order to rounding, but each input is
 * sorted once and each output once, instead of once per pair (a
 * 1,000,000-member run with 5 inputs and 24 outputs: seconds, not minutes).
 * Memory: 29 bytes per member (with a column store the sorted order of each
 * input goes to the store file; in memory it takes 4 n_inputs bytes more).
 * At most 2^31 - 1 members (32-bit member indices and twice-ranks).  Errors: SL_ENOMEM,
 * SL_EUSAGE (too many members), SL_EIO (the store). */
int sl_ens_sensitivity(const sl_ens_result *r, double *rho, double *s1, sl_err *e);

/* ------------------------------------------------------------ progress bar */

typedef struct sl_ens_progress {
    int enabled;
    size_t total;
    double start_s, last_draw_s;
} sl_ens_progress;

/* Start a bar for TOTAL steps; enabled only when ENABLE is non-zero. */
void sl_ens_progress_start(sl_ens_progress *pg, size_t total, int enable);

/* Redraw (at most ten times a second, always at done == total):
 * "[#####.....]  45%  4500/10000  812.3/s  left 0:06" on stderr. */
void sl_ens_progress_update(sl_ens_progress *pg, size_t done);

/* Finish the line (newline) if the bar was drawn. */
void sl_ens_progress_end(sl_ens_progress *pg);

/* ------------------------------------------------------------ binned percentiles */

/* Percentiles of many per-member series (a profile per band, a time
 * series per output time) in memory that does not grow with the member
 * count: each series keeps counts in log-spaced bins (PER_DECADE bins per
 * decade from 10^LO_LOG10 to 10^HI_LOG10), a count of exact zeros, of values
 * below and above, and its minimum and maximum.  A percentile is the
 * geometric centre of the bin holding the order statistic of rank
 * floor((n - 1) p / 100) (the type-7 position of Hyndman & Fan 1996, without
 * the interpolation), clamped to [min, max]: exact for zeros and at the
 * extremes, otherwise within half a bin (10^(0.5/PER_DECADE) - 1, 1.2 % for
 * 100 per decade).  Counts are integers, so the result does not depend on the
 * order the values came in (threads, ranks).  Non-finite values are skipped. */
typedef struct sl_ens_hist {
    size_t n_series, n_bins;
    double lo_log10, per_decade;
    uint32_t *count;     /* n_series x (n_bins + 3): zero, below, bins..., above */
    double *vmin, *vmax; /* n_series */
    size_t *n;           /* finite values per series */
} sl_ens_hist;

/* Errors: SL_EUSAGE for a bad bin layout, SL_ENOMEM. */
int sl_ens_hist_init(sl_ens_hist *h, size_t n_series, double lo_log10, double hi_log10, double per_decade,
                     sl_err *e);
/* Add VALUES[0..n_series-1], one value to each series. */
void sl_ens_hist_add(sl_ens_hist *h, const double *values);
/* Percentile P (0..100) of series K; NAN when it has no value. */
double sl_ens_hist_percentile(const sl_ens_hist *h, size_t k, double p);
void sl_ens_hist_free(sl_ens_hist *h);

#endif
