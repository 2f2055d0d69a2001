/* chain: the stages of steamloft run in order for one scenario:
 *   scenario -> atmosphere -> entry (impactors) -> partition -> sources
 *   -> plume rise and freeze-out -> injection profile
 *   -> stratospheric box model (decay, columns, percent of background)
 * The chain is a loop over a table of stages (src/chain.c), each with the
 * same shape: parameters from the scenario in, solve, results in the chain.
 *
 * An sl_chain is reusable: zero it once, call sl_chain_run() as many times
 * as wanted (an ensemble calls it once per member), then sl_chain_free().
 * The atmosphere is loaded on the first run and kept while later scenarios
 * name the same profile; the entry and plume workspaces are allocated once,
 * the injection bands again only when the band keys change.  No global
 * state: one chain per thread; chains of one ensemble may borrow read-only
 * set-up from one sl_chain_shared.  The structs atmosphere, strat_atmosphere
 * and strat_model hold what the chain owns; atm, box_atm and box_model point
 * at what it uses (the same unless borrowed). */
#ifndef STEAMLOFT_CHAIN_H
#define STEAMLOFT_CHAIN_H

#include "steamloft/atmosphere.h"
#include "steamloft/entry.h"
#include "steamloft/err.h"
#include "steamloft/injection.h"
#include "steamloft/partition.h"
#include "steamloft/plume.h"
#include "steamloft/scenario.h"
#include "steamloft/site.h"
#include "steamloft/stage_params.h"
#include "steamloft/strat.h"

/* Ensembles time one member in this many (sl_chain.time_every). */
#define SL_CHAIN_TIME_EVERY 16

/* The stages of the chain, in order; each is timed (for `make bench`). */
enum { SL_CHAIN_T_ATMOSPHERE = 0, SL_CHAIN_T_ENTRY, SL_CHAIN_T_PARTITION, SL_CHAIN_T_PLUME,
       SL_CHAIN_T_STRAT, SL_CHAIN_N_TIMED };
extern const char *const sl_chain_stage_names[SL_CHAIN_N_TIMED];

/* What a caller entering the chain at the box model may give beyond the
 * scenario (the [strat] keys name built-in backgrounds only): background
 * profile files of the tropics [0] and extratropics [1] (NULL or "" = the
 * scenario's), and an immediate freeze-out of the water the young cloud
 * cannot hold (sl_strat_params.cloud_freeze_out; `decay --freeze-out` for raw
 * lofted water).  Zero for `run`. */
typedef struct sl_chain_box_input {
    const char *atmosphere[2];
    int cloud_freeze_out;
} sl_chain_box_input;

/* Read-only set-up shared by the chains of one ensemble (one per thread):
 * the background profiles and the box model with its linear response, built
 * once per run instead of once per thread.  Filled while OPEN by the runs of
 * one chain (the ensemble's serial run on the inputs' medians, before any
 * thread starts): a profile or model that chain needs is then built here
 * instead of in the chain.  Closed (OPEN 0), it is never written again and
 * chains only borrow from it (const pointers into it), so threads can share
 * it; what it does not hold a chain builds and owns itself, as without it.
 * Its owner frees it with sl_chain_shared_free after every chain that
 * borrows from it. */
enum { SL_CHAIN_SHARED_MAX_ATM = 3 }; /* the site's profile and the box model's two */
typedef struct sl_chain_shared {
    int open;
    sl_atmosphere_cache ussa_cache; /* what the built-in profiles built here have in common */
    size_t n_atm;
    sl_atmosphere atm[SL_CHAIN_SHARED_MAX_ATM];
    char atm_key[SL_CHAIN_SHARED_MAX_ATM][2 * SL_SCENARIO_PATH_LEN]; /* the name or path it was built from */
    int have_box;                  /* box_model is built, from the profiles named box_atm_key */
    char box_atm_key[2][2 * SL_SCENARIO_PATH_LEN];
    sl_strat_model box_model;      /* its parameters: box_model.par */
    int same_latitude;             /* set by the owner: every chain that borrows injects at the
                                      latitude of the run that fills the set-up, so box_response
                                      holds the columns of that latitude's regions only */
    int have_box_response;         /* box_response is box_model's linear response */
    sl_strat_response box_response;
} sl_chain_shared;

/* Release everything; safe on a zeroed struct. */
void sl_chain_shared_free(sl_chain_shared *sh);

typedef struct sl_chain {
    sl_scenario scenario;          /* the scenario last run: a copy, or set in place by an ensemble member */
    /* Set by the caller before the first run (NULL: none): the set-up this
     * chain borrows from, and fills while it is open.  Borrowed, not freed. */
    sl_chain_shared *shared;
    sl_site_choice site;           /* the atmosphere and sea surface used, and why
                                      (site-aware defaults, site.h) */
    sl_atmosphere atmosphere;      /* the background profile when the chain owns it */
    const sl_atmosphere *atm;      /* the background profile in use: &atmosphere, or borrowed
                                      from the shared set-up (atmosphere then unused) */
    int have_atmosphere;           /* atm is valid */
    int atmosphere_borrowed;       /* atm points into the shared set-up */
    char atmosphere_name[SL_SCENARIO_RAW_LEN]; /* what it was loaded from */
    /* Built-in profiles set aside when a later scenario named another one
     * (site-aware defaults switch profiles with the latitude of ensemble
     * members): indexed like sl_atmosphere_builtin_names, so a switch back
     * costs a struct move instead of a rebuild. */
    sl_atmosphere builtin_cache[SL_ATMOSPHERE_MAX_BUILTINS];
    int have_builtin_cache[SL_ATMOSPHERE_MAX_BUILTINS];
    sl_entry entry;                /* valid when has_entry */
    int has_entry;                 /* the scenario is an [impactor] */
    double air_source_altitude_m;  /* where the air's share was released */
    sl_partition_input partition_input; /* built by the atmosphere and entry stages */
    sl_partition partition;        /* energy shares and the plume sources */
    sl_plume plume;                /* rise of each source, cloud, freeze-out (workspace kept) */
    int have_plume;
    sl_injection injection;        /* lofted water by altitude band */
    double band_bottom_m, band_top_m, band_width_m; /* the bands the injection holds */
    sl_cloud_levels cloud_levels;  /* the whole bands' cloud-level values on atm and these bands,
                                      kept from member to member (injection.h); forgotten whenever
                                      the profile or the bands change */
    /* Box model: backgrounds of the tropics [0] and extratropics [1], and the
     * model (propagators), rebuilt only when [strat] keys, the month or the
     * backgrounds change; the result arrays are reused. */
    sl_atmosphere strat_atmosphere[2];       /* owned ones (see box_atm) */
    const sl_atmosphere *box_atm[2];         /* in use: &strat_atmosphere[i] or borrowed */
    int have_strat_atmosphere[2];
    int strat_atmosphere_borrowed[2];
    char strat_atmosphere_name[2][SL_SCENARIO_RAW_LEN];
    sl_chain_box_input box_input;  /* set by the caller before the run, kept */
    sl_strat_params strat_params;  /* of the model built */
    sl_strat_model strat_model;    /* owned model (see box_model) */
    const sl_strat_model *box_model; /* in use: &strat_model, or borrowed from the shared set-up */
    int have_strat_model;          /* box_model is valid */
    sl_strat_result strat;         /* valid when have_strat_model after a successful run */
    int strat_linear;              /* set by the caller: the box model by its linear response
                                      (sl_strat_run_linear; ensembles), built once per model */
    sl_strat_response strat_response; /* owned response (see box_response) */
    const sl_strat_response *box_response; /* in use, or NULL: not built yet */
    /* Stage times: thread CPU seconds per stage, summed over the timed runs.
     * The caller may time only every time_every-th run (0 or 1: every run;
     * ensembles time every SL_CHAIN_TIME_EVERY-th member, as reading the
     * thread clock is a system call, about 2 % of a member's CPU time); the
     * run counts scale the sums to all runs. */
    double stage_s[SL_CHAIN_N_TIMED];
    long runs, timed_runs;
    int time_every;
} sl_chain;

/* Run every stage for the finished scenario SC into CH.  On failure CH keeps
 * what it had allocated (sl_chain_free releases it) and E says which stage
 * failed and why. */
int sl_chain_run(const sl_scenario *sc, sl_chain *ch, sl_err *e);

/* The chain entered at stage FIRST_STAGE: SL_CHAIN_T_ATMOSPHERE (the whole
 * chain, = sl_chain_run) or SL_CHAIN_T_STRAT (`decay`: the caller has put the
 * injection profile in ch->injection, which the chain then owns and frees;
 * the box model is set up exactly as in a full run, from the same keys).
 * SL_EINTERNAL for any other stage. */
int sl_chain_run_from(const sl_scenario *sc, sl_chain *ch, int first_stage, sl_err *e);

/* Set up the box model of SC (the backgrounds and the model, kept while they
 * do not change) without running it: ch->strat_params, ch->box_model and
 * ch->box_atm are then valid, and for a chain without a shared set-up also
 * ch->strat_model and ch->strat_atmosphere (`decay --calibrate`). */
int sl_chain_prepare_box(const sl_scenario *sc, sl_chain *ch, sl_err *e);

/* The sources handed to the plume stage (valid after a successful run). */
const sl_source_list *sl_chain_sources(const sl_chain *ch);

/* Release everything; safe on a zeroed or half-run chain. */
void sl_chain_free(sl_chain *ch);

#endif
