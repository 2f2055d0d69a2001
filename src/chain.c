/* chain: the stages in order for one scenario (see include/steamloft/chain.h).
 *
 * Between the atmosphere and the entry sits the air-density adapter: the
 * entry asks for the density at any altitude, also a little below the lowest
 * level (Runge-Kutta stages overshoot the sea-level event) or above the top of
 * the profile; there the density is continued exponentially with the local
 * density scale height, H = R T / g, evaluated at the end level, which is the
 * isothermal hydrostatic continuation of the profile.
 *
 * [site] atmosphere: a built-in name, or a profile file; a relative path in
 * a scenario file is looked for next to that file first, then from the
 * working directory. */
#include "steamloft/chain.h"
#include "steamloft/minmax.h"
#include "steamloft/units.h"
#include "steamloft/water.h"

#include <math.h>
#include <stdio.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

const char *const sl_chain_stage_names[SL_CHAIN_N_TIMED] = {"atmosphere", "entry", "partition",
                                                            "plume", "box model"};

/* Monotonic clock in seconds, for the per-stage times. */
static double chain_clock_s(void)
{
    struct timespec ts;
    /* CPU time of the calling thread: a stage is charged only for its own
     * work, never for time the thread spent pre-empted on a shared machine. */
    clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

typedef struct air_ctx {
    const sl_atmosphere *atm;
    sl_atmos_cursor cursor; /* search position of this run's entry (issue 14) */
} air_ctx;

static int atmosphere_density(void *ctx, double altitude_m, double *rho, sl_err *e)
{
    air_ctx *c = ctx;
    const sl_atmosphere *atm = c->atm;
    double lo = atm->altitude_m[0], hi = atm->altitude_m[atm->n - 1];
    if (altitude_m >= lo && altitude_m <= hi) /* the common case: density only */
        return sl_atmosphere_density(atm, altitude_m, &c->cursor, rho, e);
    double h = altitude_m < lo ? lo : hi;
    sl_atmos_state s;
    SL_TRY_RETURN(e, sl_atmosphere_state(atm, h, &c->cursor, &s, e));
    double scale_m = SL_R_DRY_AIR_J_KG_K * s.temperature_K / s.gravity_m_s2;
    *rho = s.density_kg_m3 * exp(-(altitude_m - h) / scale_m);
    return SL_OK;
}

/* Ambient air for a source at ALTITUDE_M (clamped into the profile). */
static int ambient(const sl_atmosphere *atm, double altitude_m, sl_partition_air *out, sl_err *e)
{
    double lo = atm->altitude_m[0], hi = atm->altitude_m[atm->n - 1];
    double h = sl_min(sl_max(altitude_m, lo), hi);
    sl_atmos_state s;
    SL_TRY_RETURN(e, sl_atmosphere_at(atm, h, &s, e));
    out->temperature_K = s.temperature_K;
    out->pressure_Pa = s.pressure_Pa;
    out->density_kg_m3 = s.density_kg_m3;
    return SL_OK;
}

/* The shared set-up's profile built from KEY (a built-in name or the path
 * used), or NULL. */
static const sl_atmosphere *shared_profile(const sl_chain_shared *sh, const char *key)
{
    if (sh == NULL)
        return NULL;
    for (size_t i = 0; i < sh->n_atm; i++)
        if (strcmp(sh->atm_key[i], key) == 0)
            return &sh->atm[i];
    return NULL;
}

/* Profile KEY (a built-in name or a path) for the chain: borrowed from the
 * shared set-up when it holds it; while the set-up is open and has room,
 * built into it and borrowed (so the other chains of the ensemble, and this
 * chain's other uses of the same profile, build it no more); else built into
 * OWN.  *OUT is the profile to use, *BORROWED whether it is not OWN.  On
 * failure OWN is left zeroed and the message is sl_atmosphere_init's. */
static int get_profile(sl_chain *ch, const char *key, sl_atmosphere *own, const sl_atmosphere **out, int *borrowed,
                       sl_err *e)
{
    sl_chain_shared *sh = ch->shared;
    const sl_atmosphere *got = shared_profile(sh, key);
    if (got == NULL && sh != NULL && sh->open && sh->n_atm < SL_CHAIN_SHARED_MAX_ATM &&
        strlen(key) < sizeof sh->atm_key[0]) {
        SL_TRY_RETURN(e, sl_atmosphere_init_cached(&sh->atm[sh->n_atm], key, &sh->ussa_cache, e));
        snprintf(sh->atm_key[sh->n_atm], sizeof sh->atm_key[0], "%s", key);
        got = &sh->atm[sh->n_atm++];
    }
    if (got != NULL) {
        *out = got;
        *borrowed = 1;
        return SL_OK;
    }
    SL_TRY_RETURN(e, sl_atmosphere_init(own, key, e));
    *out = own;
    *borrowed = 0;
    return SL_OK;
}

static int load_atmosphere(const sl_scenario *sc, sl_chain *ch, sl_err *e)
{
    const char *name = sl_scenario_text(sc, SL_P_SITE_ATMOSPHERE);
    if (ch->have_atmosphere && strcmp(ch->atmosphere_name, name) == 0)
        return SL_OK;
    sl_cloud_levels_forget(&ch->cloud_levels); /* another profile (a set-aside one comes back by a struct move) */
    if (ch->have_atmosphere && !ch->atmosphere_borrowed) { /* a built-in is set aside, a file profile freed */
        int slot = -1;
        for (int i = 0; sl_atmosphere_builtin_names[i] && i < SL_ATMOSPHERE_MAX_BUILTINS; i++)
            if (strcmp(ch->atmosphere_name, sl_atmosphere_builtin_names[i]) == 0)
                slot = i;
        if (slot >= 0 && !ch->have_builtin_cache[slot]) {
            ch->builtin_cache[slot] = ch->atmosphere;
            ch->have_builtin_cache[slot] = 1;
            memset(&ch->atmosphere, 0, sizeof ch->atmosphere);
        } else {
            sl_atmosphere_free(&ch->atmosphere);
        }
    }
    ch->have_atmosphere = ch->atmosphere_borrowed = 0; /* a borrowed one is only let go */
    ch->atm = NULL;
    int builtin = 0;
    for (int i = 0; sl_atmosphere_builtin_names[i] && i < SL_ATMOSPHERE_MAX_BUILTINS; i++)
        if (strcmp(name, sl_atmosphere_builtin_names[i]) == 0) {
            builtin = 1;
            if (ch->have_builtin_cache[i]) { /* taken back from the cache */
                ch->atmosphere = ch->builtin_cache[i];
                memset(&ch->builtin_cache[i], 0, sizeof ch->builtin_cache[i]);
                ch->have_builtin_cache[i] = 0;
                snprintf(ch->atmosphere_name, sizeof ch->atmosphere_name, "%s", name);
                ch->atm = &ch->atmosphere;
                ch->have_atmosphere = 1;
                return SL_OK;
            }
        }
    /* A relative profile path in a scenario file is looked for next to the
     * file first, then from the working directory. */
    char near[2 * SL_SCENARIO_PATH_LEN];
    const char *use = name;
    const char *slash = strrchr(sc->path, '/');
    if (!builtin && name[0] != '/' && slash != NULL && sc->line[SL_P_SITE_ATMOSPHERE] > 0) {
        snprintf(near, sizeof near, "%.*s/%s", (int)(slash - sc->path), sc->path, name);
        if (access(near, R_OK) == 0)
            use = near;
    }
    int rc = get_profile(ch, use, &ch->atmosphere, &ch->atm, &ch->atmosphere_borrowed, e);
    if (rc != SL_OK) {
        /* The atmosphere module's message already says what is valid (the
         * built-in names for an unknown name, file and line for a bad file). */
        const char *raw = sl_scenario_raw(sc, SL_P_SITE_ATMOSPHERE, NULL);
        char inner[SL_ERR_MSG_LEN / 2], at[SL_SCENARIO_PATH_LEN + 64];
        sl_scenario_where(sc, SL_P_SITE_ATMOSPHERE, at, sizeof at);
        snprintf(inner, sizeof inner, "%.380s", e ? e->msg : "");
        sl_atmosphere_free(&ch->atmosphere);
        ch->atm = NULL;
        ch->atmosphere_borrowed = 0;
        if (raw)
            SL_FAIL_RETURN(e, rc, "%s = %s: %s", at, raw, inner);
        SL_FAIL_RETURN(e, rc, "%s: atmosphere %s: %s", sc->path, name, inner);
    }
    snprintf(ch->atmosphere_name, sizeof ch->atmosphere_name, "%s", name);
    ch->have_atmosphere = 1;
    return SL_OK;
}

/* Plume stage: parameters and bands from [plume] (workspace and bands reused
 * across runs), then every source rises and its water goes into the bands. */
static int stage_plume(const sl_scenario *sc, sl_chain *ch, sl_err *e)
{
    sl_plume_params par;
    sl_plume_params_from_scenario(&par, sc);
    if (!ch->have_plume) {
        SL_TRY_RETURN(e, sl_plume_init(&ch->plume, &par, e));
        ch->have_plume = 1;
    } else {
        SL_TRY_RETURN(e, sl_plume_set_params(&ch->plume, &par, e));
    }
    double b0 = sl_scenario_value(sc, SL_P_PLUME_BAND_BOTTOM), b1 = sl_scenario_value(sc, SL_P_PLUME_BAND_TOP);
    double bw = sl_scenario_value(sc, SL_P_PLUME_BAND_WIDTH);
    if (!(b1 - b0 >= bw)) {
        char at[SL_SCENARIO_PATH_LEN + 64];
        sl_scenario_where(sc, SL_P_PLUME_BAND_TOP, at, sizeof at);
        SL_FAIL_RETURN(e, SL_EDATA,
                       "%s = %g must exceed band_bottom_m = %g by at least band_width_m = %g",
                       at, b1, b0, bw);
    }
    if (ch->injection.n_bands == 0 || b0 != ch->band_bottom_m || b1 != ch->band_top_m || bw != ch->band_width_m) {
        sl_injection_free(&ch->injection);
        sl_cloud_levels_forget(&ch->cloud_levels); /* a new grid may reuse the old arrays' addresses */
        SL_TRY_RETURN(e, sl_injection_init_uniform(&ch->injection, b0, b1, bw, e));
        ch->band_bottom_m = b0;
        ch->band_top_m = b1;
        ch->band_width_m = bw;
    }
    SL_TRY_RETURN(e, sl_cloud_levels_bind(&ch->cloud_levels, ch->atm, &ch->injection, e));
    ch->plume.levels = &ch->cloud_levels;
    SL_TRY_RETURN(e, sl_plume_solve(&ch->plume, ch->atm, &ch->partition.sources, &ch->injection, e));
    ch->injection.latitude_deg = sl_rad_to_deg(sl_scenario_value(sc, SL_P_SITE_LATITUDE));
    {   /* where and when, carried into the files (emission.h: the [site] keys) */
        sl_emission_params ep;
        sl_emission_params_from_scenario(&ep, sc);
        ch->injection.longitude_deg = sl_rad_to_deg(sl_scenario_value(sc, SL_P_SITE_LONGITUDE));
        ch->injection.event_time_s = ep.event_time_s;
        ch->injection.month = ep.month;
    }
    return SL_OK;
}

/* Let go of the box model in use: free what the chain owns, forget what
 * it borrowed. */
static void release_box_model(sl_chain *ch)
{
    sl_strat_response_free(&ch->strat_response);
    sl_strat_result_free(&ch->strat);
    sl_strat_model_free(&ch->strat_model);
    ch->box_model = NULL;
    ch->box_response = NULL;
    ch->have_strat_model = 0;
}

/* Box-model set-up: the regional backgrounds (built-in climatologies named by
 * [strat], or the files of ch->box_input) and the model are kept while they
 * do not change, so an ensemble pays the model set-up (~2 ms) once per
 * thread, or once per run when its chains share one set-up (the profiles
 * and the model borrowed from ch->shared when it holds them for the same
 * names and parameters); each run is ~0.2 ms. */
int sl_chain_prepare_box(const sl_scenario *sc, sl_chain *ch, sl_err *e)
{
    const sl_param_id ids[2] = {SL_P_STRAT_TROPICS_ATMOSPHERE, SL_P_STRAT_EXTRATROPICS_ATMOSPHERE};
    int changed = !ch->have_strat_model;
    for (int i = 0; i < 2; i++) {
        const char *file = ch->box_input.atmosphere[i];
        const char *name = file && file[0] ? file : sl_scenario_text(sc, ids[i]);
        if (ch->have_strat_atmosphere[i] && strcmp(ch->strat_atmosphere_name[i], name) == 0)
            continue;
        changed = 1;
        if (ch->have_strat_atmosphere[i] && !ch->strat_atmosphere_borrowed[i])
            sl_atmosphere_free(&ch->strat_atmosphere[i]);
        ch->have_strat_atmosphere[i] = ch->strat_atmosphere_borrowed[i] = 0;
        ch->box_atm[i] = NULL;
        SL_TRY_RETURN(e, get_profile(ch, name, &ch->strat_atmosphere[i], &ch->box_atm[i],
                                     &ch->strat_atmosphere_borrowed[i], e));
        ch->have_strat_atmosphere[i] = 1;
        snprintf(ch->strat_atmosphere_name[i], sizeof ch->strat_atmosphere_name[i], "%s", name);
    }
    sl_strat_params p;
    sl_strat_params_from_scenario(&p, sc);
    p.cloud_freeze_out = ch->box_input.cloud_freeze_out;
    if (!changed && !sl_strat_params_equal(&p, &ch->strat_params))
        changed = 1;
    if (changed) {
        release_box_model(ch);
        sl_chain_shared *sh = ch->shared;
        const int shared_atm = ch->strat_atmosphere_borrowed[0] && ch->strat_atmosphere_borrowed[1];
        if (sh != NULL && sh->have_box && shared_atm && strcmp(sh->box_atm_key[0], ch->strat_atmosphere_name[0]) == 0 &&
            strcmp(sh->box_atm_key[1], ch->strat_atmosphere_name[1]) == 0 && sl_strat_params_equal(&p, &sh->box_model.par)) {
            ch->box_model = &sh->box_model;
            if (sh->have_box_response)
                ch->box_response = &sh->box_response;
        } else {
            /* Built into the shared set-up while it is open and has no model
             * yet (the profiles are then its own too), else into the chain. */
            const int into_shared = sh != NULL && sh->open && !sh->have_box && shared_atm &&
                                    strlen(ch->strat_atmosphere_name[0]) < sizeof sh->box_atm_key[0] &&
                                    strlen(ch->strat_atmosphere_name[1]) < sizeof sh->box_atm_key[1];
            sl_strat_model *m = into_shared ? &sh->box_model : &ch->strat_model;
            const sl_atmosphere *atm[SL_STRAT_N_REGIONS] = {ch->box_atm[1], ch->box_atm[0], ch->box_atm[1]};
            SL_TRY_RETURN(e, sl_strat_model_init(m, &p, atm, e));
            if (into_shared) {
                sh->have_box = 1;
                for (int i = 0; i < 2; i++)
                    snprintf(sh->box_atm_key[i], sizeof sh->box_atm_key[i], "%s", ch->strat_atmosphere_name[i]);
            }
            ch->box_model = m;
        }
        int rc = sl_strat_result_init(&ch->strat, ch->box_model, e);
        if (rc != SL_OK) {
            release_box_model(ch);
            return sl_err_push(e, rc, __func__, __LINE__);
        }
        ch->strat_params = p;
        ch->have_strat_model = 1;
    }
    return SL_OK;
}

/* The stages.  Each has one shape: its parameters from the scenario
 * (stage_params.c), solve into the chain's workspace (allocated once, kept
 * across runs), results left in the chain, released by sl_chain_free.  The
 * atmosphere stage starts the partition input with the air at the sea; the
 * entry stage adds what reached the sea. */
static int stage_atmosphere(const sl_scenario *sc, sl_chain *ch, sl_err *e)
{
    ch->has_entry = 0;
    sl_site_choose(sc, &ch->site);
    SL_TRY_RETURN(e, load_atmosphere(sc, ch, e));
    sl_partition_input_from_scenario(&ch->partition_input, sc);
    SL_TRY_RETURN(e, ambient(ch->atm, 0.0, &ch->partition_input.air_at_sea, e));
    return SL_OK;
}

static int stage_entry(const sl_scenario *sc, sl_chain *ch, sl_err *e)
{
    sl_partition_input *in = &ch->partition_input;
    if (sc->kind != SL_SCENARIO_IMPACTOR) {
        in->air_source_altitude_m = in->explosion_altitude_m;
        return SL_OK;
    }
    sl_entry_params p;
    sl_entry_params_from_scenario(&p, sc);
    air_ctx actx = {ch->atm, {0}};
    sl_entry_air air = {atmosphere_density, &actx};
    SL_TRY_RETURN(e, sl_entry_solve(&ch->entry, &p, &air, e));
    ch->has_entry = 1;
    in->entry = &ch->entry;
    in->impactor_mass_kg = ch->entry.initial_mass_kg;
    double z = ch->entry.airburst ? ch->entry.burst_altitude_m : sl_entry_deposition_centroid_m(&ch->entry);
    in->air_source_altitude_m = isfinite(z) ? z : 0.0;
    return SL_OK;
}

static int stage_partition(const sl_scenario *sc, sl_chain *ch, sl_err *e)
{
    (void)sc;
    sl_partition_input *in = &ch->partition_input;
    ch->air_source_altitude_m = in->air_source_altitude_m;
    SL_TRY_RETURN(e, ambient(ch->atm, in->air_source_altitude_m, &in->air_at_source, e));
    SL_TRY_RETURN(e, sl_partition_solve(&ch->partition, in, e));
    return SL_OK;
}

static int stage_strat(const sl_scenario *sc, sl_chain *ch, sl_err *e)
{
    SL_TRY_RETURN(e, sl_chain_prepare_box(sc, ch, e));
    if (!ch->strat_linear) {
        SL_TRY_RETURN(e, sl_strat_run(ch->box_model, &ch->injection, &ch->strat, e));
        return SL_OK;
    }
    /* Ensembles: the box model by its linear response, built once per model
     * (into the shared set-up with the shared model while it is open: for
     * the regions of this run's latitude only when every borrower injects
     * at it, sh->same_latitude).  A run at a latitude the response in use
     * does not cover gets the chain's own full response, built once. */
    const double lat = ch->injection.latitude_deg;
    if (ch->box_response == NULL || !sl_strat_response_covers(ch->box_response, lat)) {
        sl_chain_shared *sh = ch->shared;
        if (ch->box_response == NULL && sh != NULL && ch->box_model == &sh->box_model && sh->open &&
            !sh->have_box_response) {
            const unsigned regions =
                sh->same_latitude ? sl_strat_regions_of_latitude(&ch->box_model->par, lat) : SL_STRAT_ALL_REGIONS;
            SL_TRY_RETURN(e, sl_strat_response_init_regions(&sh->box_response, ch->box_model, regions, e));
            sh->have_box_response = 1;
            ch->box_response = &sh->box_response;
        } else {
            sl_strat_response_free(&ch->strat_response);
            ch->box_response = NULL;
            SL_TRY_RETURN(e, sl_strat_response_init(&ch->strat_response, ch->box_model, e));
            ch->box_response = &ch->strat_response;
        }
    }
    SL_TRY_RETURN(e, sl_strat_run_linear(ch->box_model, ch->box_response, &ch->injection, &ch->strat, e));
    return SL_OK;
}

typedef int (*chain_stage_fn)(const sl_scenario *sc, sl_chain *ch, sl_err *e);

/* The chain, in data-flow order, indexed like sl_chain_stage_names. */
static const chain_stage_fn chain_stages[SL_CHAIN_N_TIMED] = {stage_atmosphere, stage_entry, stage_partition,
                                                              stage_plume, stage_strat};

/* The whole chain: a loop over the table; timing here, caching in the
 * stages' set-up, physics in the stage modules. */
int sl_chain_run_from(const sl_scenario *sc, sl_chain *ch, int first_stage, sl_err *e)
{
    if (!sc->finished)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "chain: the scenario was not finished (sl_scenario_finish)");
    if (first_stage != SL_CHAIN_T_ATMOSPHERE && first_stage != SL_CHAIN_T_STRAT)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "chain: cannot be entered at stage %d", first_stage);
    if (sc != &ch->scenario) /* an ensemble member's inputs are set in place (ensemble_chain.c) */
        ch->scenario = *sc;
    const int timed = ch->time_every <= 1 || ch->runs % ch->time_every == 0;
    ch->runs++;
    ch->timed_runs += timed;
    for (int k = first_stage; k < SL_CHAIN_N_TIMED; k++) {
        double t0 = timed ? chain_clock_s() : 0.0;
        int rc = chain_stages[k](sc, ch, e);
        if (timed)
            ch->stage_s[k] += chain_clock_s() - t0;
        if (rc != SL_OK)
            return sl_err_push(e, rc, __func__, __LINE__);
    }
    return SL_OK;
}

int sl_chain_run(const sl_scenario *sc, sl_chain *ch, sl_err *e)
{
    return sl_chain_run_from(sc, ch, SL_CHAIN_T_ATMOSPHERE, e);
}

const sl_source_list *sl_chain_sources(const sl_chain *ch)
{
    return &ch->partition.sources;
}

void sl_chain_shared_free(sl_chain_shared *sh)
{
    if (sh == NULL)
        return;
    if (sh->have_box_response)
        sl_strat_response_free(&sh->box_response);
    if (sh->have_box)
        sl_strat_model_free(&sh->box_model);
    for (size_t i = 0; i < sh->n_atm; i++)
        sl_atmosphere_free(&sh->atm[i]);
    sl_atmosphere_cache_free(&sh->ussa_cache);
    memset(sh, 0, sizeof *sh);
}

void sl_chain_free(sl_chain *ch)
{
    if (ch == NULL)
        return;
    /* Only what the chain owns: borrowed set-up belongs to ch->shared. */
    sl_entry_free(&ch->entry);
    if (ch->have_atmosphere && !ch->atmosphere_borrowed)
        sl_atmosphere_free(&ch->atmosphere);
    for (int i = 0; i < SL_ATMOSPHERE_MAX_BUILTINS; i++)
        if (ch->have_builtin_cache[i])
            sl_atmosphere_free(&ch->builtin_cache[i]);
    sl_partition_free(&ch->partition);
    sl_plume_free(&ch->plume);
    sl_injection_free(&ch->injection);
    sl_cloud_levels_free(&ch->cloud_levels);
    sl_strat_response_free(&ch->strat_response);
    sl_strat_result_free(&ch->strat);
    sl_strat_model_free(&ch->strat_model);
    for (int i = 0; i < 2; i++)
        if (ch->have_strat_atmosphere[i] && !ch->strat_atmosphere_borrowed[i])
            sl_atmosphere_free(&ch->strat_atmosphere[i]);
    memset(ch, 0, sizeof *ch);
}
