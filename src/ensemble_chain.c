/* ensemble_chain: the plan from the scenario, the chain as the ensemble's
 * model, and the run of `steamloft ensemble` / `steamloft sweep` (see
 * include/steamloft/ensemble_chain.h).  No physics here: only which stage
 * result is which output. */
#include "steamloft/ensemble_chain.h"
#include "steamloft/minmax.h"

#include "steamloft/output_ensemble.h"
#include "steamloft/strat.h"
#include "steamloft/sweep_rows.h"
#include "steamloft/units.h"
#include "steamloft/units_table.h"

#include <gsl/gsl_cdf.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <unistd.h>

/* ------------------------------------------------------------ the plan */

/* Printed unit of scenario key ID for people ("" for dimensionless). */
static const char *unit_sym(int id)
{
    const char *u = sl_scenario_unit_symbol((sl_param_id)id);
    return strcmp(u, "1") == 0 ? "" : u;
}

static double key_to_si(int id)
{
    const sl_unit *u = sl_units_lookup(sl_scenario_params[id].unit);
    return u ? u->to_si : 1.0;
}

/* A distribution must stay inside the key's valid range where it is bounded;
 * for the unbounded normal and lognormal, say how many members will fall
 * outside (those members fail and are reported). */
static int check_support(const sl_dist *d, int id, const char *where, int quiet, sl_err *e)
{
    const sl_param_def *p = &sl_scenario_params[id];
    double lo = p->min_value, hi = p->max_value, slack = 1e-12 * sl_max(fabs(lo), fabs(hi));
    char range[96], desc[128];
    sl_scenario_range_text((sl_param_id)id, range, sizeof range);
    sl_dist_describe(d, desc, sizeof desc);
    double a = NAN, b = NAN;
    switch (d->kind) {
    case SL_DIST_UNIFORM:
    case SL_DIST_FLUX_ANGLE: a = d->a; b = d->b; break;
    case SL_DIST_CHOICE:
        a = b = d->values[0];
        for (size_t i = 1; i < d->n_values; i++) {
            a = sl_min(a, d->values[i]);
            b = sl_max(b, d->values[i]);
        }
        if (p->type == SL_PT_INT)
            for (size_t i = 0; i < d->n_values; i++)
                if (d->values[i] != floor(d->values[i]))
                    SL_FAIL_RETURN(e, SL_EDATA, "%s: %g in %s is not an integer", where,
                                   d->values[i], desc);
        break;
    case SL_DIST_NORMAL:
    case SL_DIST_LOGNORMAL: {
        double out;
        if (d->kind == SL_DIST_NORMAL)
            out = gsl_cdf_gaussian_P(lo - d->a, d->b) + gsl_cdf_gaussian_Q(hi - d->a, d->b);
        else
            out = (lo > 0 ? gsl_cdf_lognormal_P(lo, log(d->a), d->b) : 0.0) +
                  gsl_cdf_lognormal_Q(hi, log(d->a), d->b);
        if (p->type == SL_PT_INT)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: an integer key takes choice(...) only", where);
        if (out > 1e-3 && !quiet)
            fprintf(stderr,
                    "steamloft: note: %s: %s puts %.2g %% of members outside the valid range "
                    "%s; those members fail and are reported\n",
                    where, desc, 100.0 * out, range);
        return SL_OK;
    }
    default: return SL_OK;
    }
    if (a < lo - slack || b > hi + slack) {
        if (d->kind == SL_DIST_FLUX_ANGLE)
            SL_FAIL_RETURN(e, SL_EDATA,
                           "%s: %s reaches %g %s, outside the valid range %s; truncate the law, "
                           "e.g. flux_angle(%g, %g)",
                           where, desc, a < lo - slack ? a : b, unit_sym(id), range,
                           sl_max(a, lo), sl_min(b, hi));
        SL_FAIL_RETURN(e, SL_EDATA, "%s: %s reaches outside the valid range %s", where, desc, range);
    }
    return SL_OK;
}

/* Plan input for scenario key ID: the scenario leaves the key to the
 * ensemble, IDS records which key the input is, the plan gets the law. */
static int add_input(sl_scenario *sc, sl_ens_plan *p, int *ids, int id, const char *key, sl_dist *d, sl_err *e)
{
    SL_TRY_RETURN(e, sl_scenario_mark_external(sc, (sl_param_id)id, e));
    ids[p->n_inputs] = id;
    return sl_ens_plan_add(p, key, key_to_si(id), d, e);
}

/* Read the scenario, take its distributions (ensemble) or the --vary keys
 * (sweep) into the plan, mark them external, finish the scenario.  ids[k] is
 * the scenario key of plan input k. */
static int build_plan(const sl_ens_request *c, sl_scenario *sc, sl_ens_plan *p, int *ids, int quiet,
                      sl_err *e)
{
    char *text = NULL;
    if (strcmp(c->scenario, "-") == 0)
        SL_TRY_RETURN(e, sl_ens_share_stdin(&text, 1 << 20, e));
    int rc = text ? sl_scenario_read_string(sc, "<stdin>", text, e) : sl_scenario_read(sc, c->scenario, e);
    free(text);
    SL_TRY_RETURN(e, rc);
    SL_TRY_RETURN(e, sl_cli_sets_apply(&c->sets, sc, e));
    for (int id = 0; id < SL_P_COUNT; id++) {
        const char *raw = sl_scenario_raw(sc, (sl_param_id)id, NULL);
        /* A misspelled law ("unifrom(1, 2)") is parsed too, so that the
         * message names it rather than saying there is nothing uncertain. */
        if (raw == NULL || !(sl_dist_is_distribution(raw) || sl_dist_looks_like_law(raw)))
            continue;
        const sl_param_def *def = &sl_scenario_params[id];
        char where[SL_SCENARIO_PATH_LEN + 128], key[SL_ENS_KEY_LEN];
        sl_scenario_where(sc, (sl_param_id)id, where, sizeof where);
        snprintf(key, sizeof key, "%s.%s", def->section, def->key);
        if (!sl_dist_is_distribution(raw)) {
            sl_dist bad;
            SL_TRY_RETURN(e, sl_dist_parse(raw, def->key, where, &bad, e));
            sl_dist_free(&bad);
        }
        if (c->sweep)
            SL_FAIL_RETURN(e, SL_EUSAGE,
                           "%s is a distribution (%s); a sweep needs fixed values: use "
                           "'steamloft ensemble', or give the key a value",
                           where, raw);
        if (def->type != SL_PT_REAL && def->type != SL_PT_INT)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: only numeric keys can be uncertain", where);
        if (p->n_inputs >= SL_P_COUNT)
            SL_FAIL_RETURN(e, SL_EINTERNAL, "too many inputs");
        sl_dist d;
        SL_TRY_RETURN(e, sl_dist_parse(raw, def->key, where, &d, e));
        int rc = check_support(&d, id, where, quiet, e);
        if (rc == SL_OK)
            rc = add_input(sc, p, ids, id, key, &d, e);
        sl_dist_free(&d);
        if (rc != SL_OK)
            return rc;
    }
    for (size_t v = 0; v < c->nvary; v++) {
        char key[SL_ENS_KEY_LEN];
        sl_dist d;
        int tid = -1;
        if (sl_sweep_is_text_key(c->vary[v], &tid)) { /* --vary site.atmosphere=tropical,... */
            const char *eq = strchr(c->vary[v], '=');
            snprintf(key, sizeof key, "%.*s", (int)(eq - c->vary[v]), c->vary[v]);
            SL_TRY_RETURN(e, sl_sweep_add_text_input(sc, p, ids, tid, key, eq + 1, e));
            continue;
        }
        SL_TRY_RETURN(e, sl_ens_parse_vary(c->vary[v], key, &d, e));
        int id = sl_scenario_find(key);
        int rc = SL_OK;
        if (id < 0)
            rc = sl_err_set(e, SL_EUSAGE, __func__, __LINE__,
                            "--vary: unknown key '%s' (section.key as 'steamloft params' lists)",
                            key);
        else if (sl_scenario_params[id].type != SL_PT_REAL && sl_scenario_params[id].type != SL_PT_INT)
            rc = sl_err_set(e, SL_EUSAGE, __func__, __LINE__, "--vary: '%s' is not a numeric or text key", key);
        if (rc == SL_OK) {
            char where[SL_ENS_KEY_LEN + 32];
            snprintf(where, sizeof where, "--vary %s", key);
            rc = check_support(&d, id, where, quiet, e);
            if (rc != SL_OK)
                rc = e->code = SL_EUSAGE;
        }
        if (rc == SL_OK)
            rc = add_input(sc, p, ids, id, key, &d, e);
        sl_dist_free(&d);
        if (rc != SL_OK)
            return rc;
    }
    if (!c->sweep && p->n_inputs == 0)
        SL_FAIL_RETURN(e, SL_EUSAGE,
                       "%s has no uncertain values: write a distribution as a value, e.g. "
                       "diameter_m = lognormal(300, 0.3) (see 'steamloft ensemble --help')",
                       sc->path);
    SL_TRY_RETURN(e, sl_scenario_finish(sc, e));
    p->mode = c->sweep ? SL_ENS_GRID : c->sobol ? SL_ENS_SOBOL : SL_ENS_MONTE_CARLO;
    p->n_members = c->members;
    p->seed = c->seed;
    SL_TRY_RETURN(e, sl_ens_plan_finish(p, e));
    /* Each input must apply to this scenario ([explosion] has no diameter). */
    for (size_t k = 0; k < p->n_inputs; k++) {
        sl_scenario t = *sc;
        double x = sl_dist_median(&p->inputs[k].dist);
        const char *label = sl_ens_input_label(p, k, x);
        if (label)
            SL_TRY_RETURN(e, sl_scenario_set_text(&t, (sl_param_id)ids[k], label, e));
        else
            SL_TRY_RETURN(e, sl_scenario_set_id(&t, (sl_param_id)ids[k], x * p->inputs[k].to_si, e));
    }
    return SL_OK;
}

/* ------------------------------------------------------------ the chain as a model */

/* Key outputs of one member, read from the chain's stage results.  Each row:
 * column name (with its unit), UDUNITS unit, meaning, and which scenarios
 * have it. */
typedef enum out_id {
    O_ENERGY_MT, O_AIRBURST, O_PEAK_DEPOSITION_KM, O_ENERGY_AIR_MT, O_ENERGY_SEA_MT,
    O_WATER_VAPORIZED_TG, O_SOURCE_VAPOR_TG, O_REGIME, O_SEA_REGIME, O_AIR_REGIME, O_EXPLOSION_REGIME, O_PLUME_TOP_KM, O_CLOUD_TOP_KM,
    O_WATER_RISING_TG, O_STRAT_WATER_TG, O_STRAT_VAPOR_TG, O_STRAT_ICE_TG,
    /* box model */
    O_BOX_INJECTED_TG, O_BOX_INITIAL_TG, O_EFOLDING_YEARS, O_RESIDENCE_YEARS, O_REMAINING_3Y,
    O_PERCENT_BACKGROUND, O_PEAK_ANOMALY_PPMV, O_PEAK_COLUMN_UM, O_PEAK_LOCAL_COLUMN_UM,
    O_FORCING_W_M2, O_N_OUT
} out_id;

enum { FOR_ALL = 0, FOR_IMPACTOR = 1, FOR_EXPLOSION = 2 };

#define REGIME_FLAGS SL_PLUME_REGIME_FLAG_MEANINGS

static const struct {
    sl_ens_output o;
    int only;
} out_table[O_N_OUT] = {
    {{"energy_Mt", "4.184e15 J", "kinetic energy at entry, or the explosion energy (Mt TNT)", 0, NULL}, FOR_ALL},
    {{"airburst", "1", "1 when the body burst in the air, 0 when it reached the sea", 0, NULL}, FOR_IMPACTOR},
    {{"peak_deposition_altitude_km", "km", "altitude where the energy deposition peaked", 0, NULL}, FOR_IMPACTOR},
    {{"energy_in_air_Mt", "4.184e15 J", "energy deposited in the atmosphere (Mt TNT)", 0, NULL}, FOR_ALL},
    {{"energy_at_sea_Mt", "4.184e15 J", "energy reaching the sea surface (Mt TNT)", 0, NULL}, FOR_ALL},
    {{"water_vaporized_Tg", "Tg", "sea water vaporised", 0, NULL}, FOR_ALL},
    {{"source_vapor_Tg", "Tg", "water vapour in the initial plume sources", 0, NULL}, FOR_ALL},
    /* Regimes: the codes and names of the run file's source_regime and regime
     * (sl_plume_regime_name); a source the member does not have: none. */
    {{"regime", "1", "regime of the event, the highest of its sources: 0 thermal, 1 blow-out, 2 ballistic", 0,
      REGIME_FLAGS}, FOR_ALL},
    {{"sea_plume_regime", "1", "regime of the plume rising from the sea: 0 thermal, 1 blow-out, 2 ballistic "
      "(none when the body did not reach the sea)", 1, REGIME_FLAGS}, FOR_IMPACTOR},
    {{"airburst_regime", "1", "regime of the air heated along the path: 0 thermal, 1 blow-out, 2 ballistic "
      "(none when no airburst source)", 1, REGIME_FLAGS}, FOR_IMPACTOR},
    {{"explosion_regime", "1", "regime of the explosion's fireball: 0 thermal, 1 blow-out, 2 ballistic", 0,
      REGIME_FLAGS}, FOR_EXPLOSION},
    {{"plume_top_km", "km", "highest reach of the thermals", 0, NULL}, FOR_ALL},
    {{"cloud_top_km", "km", "top of the young clouds", 0, NULL}, FOR_ALL},
    {{"water_rising_Tg", "Tg", "water in the clouds after the rise, before freeze-out", 0, NULL}, FOR_ALL},
    {{"stratospheric_water_Tg", "Tg", "water (vapour and ice) above the tropopause", 0, NULL}, FOR_ALL},
    {{"stratospheric_vapor_Tg", "Tg", "of it vapour", 0, NULL}, FOR_ALL},
    {{"stratospheric_ice_Tg", "Tg", "of it ice", 0, NULL}, FOR_ALL},
    {{"box_injected_Tg", "Tg", "water (vapour and ice) entering the box model above its tropopauses", 0, NULL}, FOR_ALL},
    {{"box_initial_excess_Tg", "Tg", "box-model excess water after the young cloud's freeze-out", 0, NULL}, FOR_ALL},
    {{"efolding_years", "year", "time for the stratospheric excess to fall to 1/e (none when nothing entered)", 1, NULL}, FOR_ALL},
    {{"residence_years", "year", "mean residence time of the excess (none when nothing entered)", 1, NULL}, FOR_ALL},
    {{"remaining_3y_fraction", "1", "fraction of the excess left after 3 years (none when nothing entered)", 1, NULL}, FOR_ALL},
    {{"percent_of_background", "percent", "peak excess as a percentage of the background stratospheric water", 0, NULL}, FOR_ALL},
    {{"peak_anomaly_ppmv", "1e-6", "peak global-mean water mole-fraction anomaly above ~100 hPa", 0, NULL}, FOR_ALL},
    {{"peak_column_um", "um", "peak global-mean column anomaly, precipitable micrometres", 0, NULL}, FOR_ALL},
    {{"peak_local_column_um", "um", "peak column anomaly over the young cloud, precipitable micrometres", 0, NULL}, FOR_ALL},
    {{"forcing_W_m2", "W m-2", "peak first-order radiative-forcing indicator (coarse)", 0, NULL}, FOR_ALL},
};

_Static_assert((int)O_N_OUT <= (int)SL_ENS_MAX_OUT, "raise SL_ENS_MAX_OUT");

typedef struct chain_ws {
    sl_chain chain;                /* a member's scenario is set in chain.scenario itself: no copy */
    sl_ens_chain *owner;
} chain_ws;

/* Set the member's inputs on a copy of the base scenario (range checks and
 * derived defaults exactly as for one run). */
static int set_inputs(const sl_ens_chain *c, sl_scenario *sc, const double *in_si, sl_err *e)
{
    enum { MAX_IN = SL_P_COUNT + SL_ENS_MAX_VARY };
    sl_param_id ids[MAX_IN];
    const char *labels[MAX_IN];
    size_t n = c->plan->n_inputs;
    if (n > MAX_IN)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "ensemble: %zu inputs, at most %d", n, (int)MAX_IN);
    *sc = *c->base;
    for (size_t k = 0; k < n; k++) {
        ids[k] = (sl_param_id)c->ids[k];
        labels[k] = sl_ens_input_label(c->plan, k, in_si[k]); /* a text key: its index */
    }
    /* All keys, then the derived defaults once (not once per key). */
    return sl_scenario_set_values(sc, n, ids, in_si, labels, e);
}

static void chain_ws_free(void *p)
{
    chain_ws *w = p;
    if (w == NULL)
        return;
    /* Workspaces are freed serially after the member loop: no race. */
    for (int k = 0; k < SL_CHAIN_N_TIMED; k++)
        w->owner->stage_s[k] += w->chain.stage_s[k];
    w->owner->runs += w->chain.runs;
    w->owner->timed_runs += w->chain.timed_runs;
    sl_chain_free(&w->chain);
    free(w);
}

/* A workspace that has run the chain once on the inputs' medians, so the
 * atmosphere is loaded and the box model's response built here, serially
 * (netCDF profiles must not be read from parallel threads): into the shared
 * set-up on the first call (extras_layout), borrowed from it on the later
 * ones; *RAN says whether that run succeeded.  NULL when out of memory. */
static chain_ws *median_ws(sl_ens_chain *c, int *ran)
{
    chain_ws *w = calloc(1, sizeof *w);
    if (w == NULL)
        return NULL;
    w->chain.strat_linear = c->strat_fixed;
    w->chain.shared = &c->shared;
    double si[SL_P_COUNT + SL_ENS_MAX_VARY];
    for (size_t k = 0; k < c->plan->n_inputs && k < sizeof si / sizeof si[0]; k++)
        si[k] = sl_dist_median(&c->plan->inputs[k].dist) * c->plan->inputs[k].to_si;
    sl_err warm;
    sl_err_clear(&warm);
    *ran = set_inputs(c, &w->chain.scenario, si, &warm) == SL_OK &&
           sl_chain_run(&w->chain.scenario, &w->chain, &warm) == SL_OK;
    return w;
}

/* One workspace per thread, made before the member loop, warmed up by a run
 * on the medians (a failure of that run is not an error: members report
 * their own).  The first thread takes the workspace of extras_layout's
 * median run, the same warm-up; the others borrow its set-up (c->shared), so
 * their warm-up is one run of the stages, not a set-up of their own. */
static void *chain_ws_new(void *ctx, sl_err *e)
{
    sl_ens_chain *c = ctx;
    chain_ws *w = c->spare_ws;
    int ran = 0;
    c->spare_ws = NULL;
    if (w == NULL && (w = median_ws(c, &ran)) == NULL) {
        sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "out of memory for a chain workspace");
        return NULL;
    }
    w->owner = c;
    /* Time only the members, one in SL_CHAIN_TIME_EVERY. */
    for (int k = 0; k < SL_CHAIN_N_TIMED; k++)
        w->chain.stage_s[k] = 0;
    w->chain.runs = w->chain.timed_runs = 0;
    w->chain.time_every = SL_CHAIN_TIME_EVERY;
    return w;
}

/* The regime code of the member's source of KIND (one per kind), NAN when
 * it has none. */
static double source_regime(const sl_plume *pl, sl_source_kind kind)
{
    for (size_t i = 0; i < pl->n_thermals; i++)
        if (pl->th[i].kind == kind)
            return (double)pl->th[i].regime;
    return NAN;
}

static double out_value(const sl_chain *ch, const sl_strat_result *b, out_id id)
{
    const sl_partition *pt = &ch->partition;
    int entered = b->initial_excess_kg > 0.0;
    switch (id) {
    case O_ENERGY_MT: return sl_j_to_mt(pt->energy_total_J);
    case O_AIRBURST: return ch->has_entry && ch->entry.airburst ? 1.0 : 0.0;
    case O_PEAK_DEPOSITION_KM: return sl_m_to_km(ch->entry.peak_altitude_m);
    case O_ENERGY_AIR_MT: return sl_j_to_mt(pt->energy_in_air_J);
    case O_ENERGY_SEA_MT: return sl_j_to_mt(pt->energy_at_sea_J);
    case O_WATER_VAPORIZED_TG: return sl_kg_to_tg(pt->water_vaporized_kg);
    case O_SOURCE_VAPOR_TG: {
        double v = 0;
        for (size_t i = 0; i < pt->sources.n; i++)
            v += pt->sources.src[i].vapor_mass_kg;
        return sl_kg_to_tg(v);
    }
    case O_REGIME: return (double)ch->plume.regime;
    case O_SEA_REGIME: return source_regime(&ch->plume, SL_SOURCE_SEA_PLUME);
    case O_AIR_REGIME: return source_regime(&ch->plume, SL_SOURCE_AIRBURST);
    case O_EXPLOSION_REGIME: return source_regime(&ch->plume, SL_SOURCE_EXPLOSION);
    case O_PLUME_TOP_KM: return sl_m_to_km(ch->plume.plume_top_m);
    case O_CLOUD_TOP_KM: return sl_m_to_km(ch->plume.cloud_top_m);
    case O_WATER_RISING_TG: return sl_kg_to_tg(ch->plume.water_rising_kg);
    case O_STRAT_WATER_TG: return sl_kg_to_tg(ch->plume.stratospheric_water_kg);
    case O_STRAT_VAPOR_TG: return sl_kg_to_tg(ch->plume.stratospheric_vapor_kg);
    case O_STRAT_ICE_TG: return sl_kg_to_tg(ch->plume.stratospheric_ice_kg);
    case O_BOX_INJECTED_TG: return sl_kg_to_tg(b->injected_kg);
    case O_BOX_INITIAL_TG: return sl_kg_to_tg(b->initial_excess_kg);
    case O_EFOLDING_YEARS: return entered ? sl_s_to_years(b->efolding_s) : NAN;
    case O_RESIDENCE_YEARS: return entered ? sl_s_to_years(b->mean_residence_s) : NAN;
    case O_REMAINING_3Y: return entered ? b->fraction_remaining_3y : NAN;
    case O_PERCENT_BACKGROUND: return b->percent_of_background_peak;
    case O_PEAK_ANOMALY_PPMV: return sl_mole_fraction_to_ppmv(b->peak_global_anomaly_mole_fraction);
    case O_PEAK_COLUMN_UM: return sl_kg_m2_to_precip_um(b->peak_global_column_kg_m2);
    case O_PEAK_LOCAL_COLUMN_UM: return sl_kg_m2_to_precip_um(b->peak_local_column_kg_m2);
    case O_FORCING_W_M2: return b->forcing_indicator_W_m2;
    default: return NAN;
    }
}

/* The member's extras: lofted water per band on the ensemble's layout, the
 * remaining fraction on its time axis (NAN where the member's layout
 * differs, or when nothing entered the stratosphere). */
static void extras(const sl_ens_chain *c, const sl_chain *ch, double *x)
{
    const sl_injection *inj = &ch->injection;
    int same = inj->n_bands == c->n_band && c->n_band > 0 && inj->band_bottom_m[0] == c->band_bottom_m[0] &&
               inj->band_top_m[c->n_band - 1] == c->band_top_m[c->n_band - 1];
    for (size_t i = 0; i < c->n_band; i++)
        x[i] = same ? inj->vapor_kg[i] + inj->ice_kg[i] : NAN;
    const sl_strat_result *b = &ch->strat;
    double q0 = b->initial_excess_kg;
    same = b->n_times == c->n_time && q0 > 0.0;
    for (size_t i = 0; i < c->n_time; i++)
        x[c->n_band + i] = same ? b->global_excess_kg[i] / q0 : NAN;
    /* For the sweep's rows (sweep_rows.h): regime, e-folding extrapolated,
     * widest thermal. */
    x[c->n_band + c->n_time] = ch->have_plume ? (double)ch->plume.regime : -1.0;
    x[c->n_band + c->n_time + 1] = ch->have_strat_model && ch->strat.efolding_extrapolated &&
                                   b->initial_excess_kg > 0.0 && isfinite(b->efolding_s);
    x[c->n_band + c->n_time + 2] = ch->have_plume ? ch->plume.widest_thermal : 0.0;
}

static int chain_member(void *ws, void *ctx, const sl_ens_plan *plan, const double *in_si,
                        double *out, sl_err *e)
{
    (void)plan;
    const sl_ens_chain *c = ctx;
    chain_ws *w = ws;
    SL_TRY_RETURN(e, set_inputs(c, &w->chain.scenario, in_si, e));
    SL_TRY_RETURN(e, sl_chain_run(&w->chain.scenario, &w->chain, e));
    for (size_t j = 0; j < c->n_out; j++)
        out[j] = out_value(&w->chain, &w->chain.strat, (out_id)c->which[j]);
    extras(c, &w->chain, out + c->n_out);
    return SL_OK;
}

static void ens_chain_free(sl_ens_chain *c)
{
    chain_ws *spare = c->spare_ws;
    if (spare != NULL) {
        sl_chain_free(&spare->chain);
        free(spare);
        c->spare_ws = NULL;
    }
    free(c->band_bottom_m);
    free(c->band_top_m);
    free(c->time_s);
    c->band_bottom_m = c->band_top_m = c->time_s = NULL;
    c->n_band = c->n_time = 0;
    /* Last: every chain that borrowed from it is freed by now. */
    sl_chain_shared_free(&c->shared);
}

/* The layout of the extras from one serial run on the inputs' medians (no
 * extras when that run fails: members still report their own outcome).  The
 * run is the workspaces' warm-up, so its workspace is kept for the first
 * thread (chain_ws_new). */
static int extras_layout(sl_ens_chain *c, sl_err *e)
{
    int ran = 0, rc = SL_OK;
    /* The median run fills the shared set-up (serially: no thread runs yet);
     * closed after it, so the members' chains only read it. */
    c->shared.open = 1;
    /* One latitude for every member (no input sets it): the box model's
     * linear response needs the columns of its regions only. */
    c->shared.same_latitude = 1;
    for (size_t k = 0; k < c->plan->n_inputs; k++)
        if (c->ids[k] == SL_P_SITE_LATITUDE)
            c->shared.same_latitude = 0;
    chain_ws *w = median_ws(c, &ran);
    c->shared.open = 0;
    if (w == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory for the median run");
    if (ran) {
        const sl_injection *inj = &w->chain.injection;
        size_t nb = inj->n_bands, nt = c->strat_fixed ? w->chain.strat.n_times : 0;
        c->band_bottom_m = malloc((nb + 1) * sizeof(double));
        c->band_top_m = malloc((nb + 1) * sizeof(double));
        c->time_s = malloc((nt + 1) * sizeof(double));
        if (!c->band_bottom_m || !c->band_top_m || !c->time_s) {
            free(c->band_bottom_m);
            free(c->band_top_m);
            free(c->time_s);
            c->band_bottom_m = c->band_top_m = c->time_s = NULL;
            rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "out of memory for the profile layout");
        } else {
            c->n_band = nb;
            c->n_time = nt;
            memcpy(c->band_bottom_m, inj->band_bottom_m, nb * sizeof(double));
            memcpy(c->band_top_m, inj->band_top_m, nb * sizeof(double));
            memcpy(c->time_s, w->chain.strat.time_s, nt * sizeof(double));
            c->tropopause_m = inj->tropopause_altitude_m;
        }
    }
    if (rc == SL_OK) {
        c->spare_ws = w;
    } else {
        sl_chain_free(&w->chain);
        free(w);
    }
    return rc;
}

/* Bind the chain: choose the outputs this kind of scenario has. */
static int ens_chain_init(sl_ens_chain *c, const sl_scenario *sc, const sl_ens_plan *p, const int *ids,
                          sl_ens_model *m, sl_err *e)
{
    memset(c, 0, sizeof *c);
    c->base = sc;
    c->plan = p;
    c->ids = ids;
    /* The box model (its propagators and linear response) depends on the
     * [strat] keys and the month only; when none is uncertain it is built
     * once per run (shared by the threads) and each member costs a few dot
     * products. */
    c->strat_fixed = 1;
    for (size_t k = 0; k < p->n_inputs; k++)
        if (strcmp(sl_scenario_params[ids[k]].section, "strat") == 0 || ids[k] == SL_P_SITE_MONTH)
            c->strat_fixed = 0;
    for (int k = 0; k < O_N_OUT; k++) {
        if ((out_table[k].only == FOR_IMPACTOR && sc->kind != SL_SCENARIO_IMPACTOR) ||
            (out_table[k].only == FOR_EXPLOSION && sc->kind != SL_SCENARIO_EXPLOSION))
            continue;
        c->which[c->n_out] = k;
        c->outputs[c->n_out++] = out_table[k].o;
    }
    m->ctx = c;
    m->n_outputs = c->n_out;
    m->outputs = c->outputs;
    m->ws_new = chain_ws_new;
    m->ws_free = chain_ws_free;
    m->member = chain_member;
    SL_TRY_RETURN(e, extras_layout(c, e));
    m->n_extra = c->n_band + c->n_time + SL_SWEEP_ROW_EXTRAS;
    return SL_OK;
}

/* ------------------------------------------------------------ the command */

size_t sl_ens_percentile_list(const sl_ens_request *c, double *pct)
{
    size_t np = 0;
    pct[np++] = 5;
    pct[np++] = 50;
    pct[np++] = 95;
    for (size_t k = 0; k < c->npct; k++) {
        int dup = 0;
        for (size_t q = 0; q < np; q++)
            dup |= pct[q] == c->pct[k];
        if (!dup)
            pct[np++] = c->pct[k];
    }
    for (size_t a = 1; a < np; a++)
        for (size_t b = a; b > 0 && pct[b - 1] > pct[b]; b--) {
            double t = pct[b];
            pct[b] = pct[b - 1];
            pct[b - 1] = t;
        }
    return np;
}

void sl_ens_print_output_names(FILE *f)
{
    int col = 0;
    for (int k = 0; k < O_N_OUT; k++) {
        char item[64];
        const char *star = out_table[k].only == FOR_IMPACTOR ? "*" : "";
        int w = snprintf(item, sizeof item, "%s%s%s", col ? ", " : "  ", out_table[k].o.name, star);
        if (col + w > 78) {
            fputs(",\n", f);
            col = 0;
            w = snprintf(item, sizeof item, "  %s%s", out_table[k].o.name, star);
        }
        fputs(item, f);
        col += w;
    }
}

/* -v: CPU time, peak memory and where the time went (for `make bench`). */
static void print_timing(const sl_ens_chain *ch, const sl_ens_result *r)
{
    struct rusage ru;
    if (getrusage(RUSAGE_SELF, &ru) != 0)
        memset(&ru, 0, sizeof ru);
    double user_s = (double)ru.ru_utime.tv_sec + 1e-6 * (double)ru.ru_utime.tv_usec;
    fprintf(stderr, "steamloft: peak resident memory %.1f MiB (getrusage ru_maxrss)\n",
            (double)ru.ru_maxrss / 1024.0);
    /* The timed members stand for all (SL_CHAIN_TIME_EVERY). */
    double scale = ch->timed_runs > 0 ? (double)ch->runs / (double)ch->timed_runs : 0.0;
    double stage[SL_CHAIN_N_TIMED], total = 0;
    for (int k = 0; k < SL_CHAIN_N_TIMED; k++)
        total += stage[k] = scale * ch->stage_s[k];
    double n = r->n_members ? (double)r->n_members : 1.0;
    fprintf(stderr, "steamloft: user CPU %.4g s for the whole command, %.4g ms per member (getrusage); "
                    "wall %.4g ms per member per thread\n",
            user_s, 1e3 * user_s / n, 1e3 * r->wall_s * r->threads / n);
    fprintf(stderr, "steamloft: chain stages, thread CPU ms per member (rank 0, all threads; timed on one member "
                    "in %d):", SL_CHAIN_TIME_EVERY);
    for (int k = 0; k < SL_CHAIN_N_TIMED; k++)
        fprintf(stderr, " %s %.4g (%.1f %%)", sl_chain_stage_names[k], 1e3 * stage[k] / n,
                total > 0 ? 100 * stage[k] / total : 0.0);
    fprintf(stderr, "; chain %.4g ms; outside the chain %.4g ms\n", 1e3 * total / n, 1e3 * (user_s - total) / n);
}

/* Resolve the --exceed specifications against the model's outputs. */
static int thresholds(const sl_ens_request *c, const sl_ens_model *m, sl_ens_threshold *thr, int *thr_out,
                      sl_err *e)
{
    for (size_t t = 0; t < c->nthr; t++) {
        SL_TRY_RETURN(e, sl_ens_parse_threshold(c->thr_spec[t], &thr[t], e));
        thr_out[t] = -1;
        for (size_t j = 0; j < m->n_outputs; j++)
            if (strcmp(m->outputs[j].name, thr[t].name) == 0)
                thr_out[t] = (int)j;
        if (thr_out[t] < 0) {
            char names[1024];
            int w = 0;
            for (size_t j = 0; j < m->n_outputs && w >= 0 && (size_t)w < sizeof names; j++)
                w += snprintf(names + w, sizeof names - (size_t)w, "%s%s", j ? ", " : "", m->outputs[j].name);
            SL_FAIL_RETURN(e, SL_EUSAGE, "--exceed '%s': no output '%s'; outputs are: %s", c->thr_spec[t],
                           thr[t].name, names);
        }
    }
    return SL_OK;
}

/* Where rank 0 keeps the members' scalars (a column file, unlinked as soon
 * as it is made, so memory stays flat in the member count): the stage
 * folder of an output (on the destination's file system), else $TMPDIR,
 * else /tmp. */
static const char *store_dir(const sl_ens_sink *s)
{
    if (s->set_csv.active)
        return s->set_csv.stage;
    if (s->set_nc.active)
        return s->set_nc.stage;
    const char *t = getenv("TMPDIR");
    return t && *t ? t : "/tmp";
}

int sl_ens_command_run(const sl_ens_request *c, const sl_cli_globals *g)
{
    int root = sl_ens_is_root();
    int quiet = !root || g->verbosity < 0;
    sl_err e;
    sl_err_clear(&e);
    sl_scenario *sc = calloc(1, sizeof *sc);
    sl_ens_plan plan;
    memset(&plan, 0, sizeof plan);
    int ids[SL_P_COUNT + SL_ENS_MAX_VARY];
    sl_ens_threshold thr[SL_ENS_MAX_THR];
    int thr_out[SL_ENS_MAX_THR];
    sl_ens_chain chain;
    memset(&chain, 0, sizeof chain);
    sl_ens_model model;
    memset(&model, 0, sizeof model);
    sl_ens_sink sink;
    memset(&sink, 0, sizeof sink);
    sink.nc = -1;
    sl_ens_result res;
    memset(&res, 0, sizeof res);
    int st = SL_OK;

    if (sc == NULL)
        st = sl_err_set(&e, SL_ENOMEM, __func__, __LINE__, "out of memory");
    if (st == SL_OK)
        st = build_plan(c, sc, &plan, ids, quiet, &e);
    if (st == SL_OK)
        st = ens_chain_init(&chain, sc, &plan, ids, &model, &e);
    if (st == SL_OK)
        st = thresholds(c, &model, thr, thr_out, &e);
    /* Outputs are created (staged) on rank 0 before the run, so a bad path
     * fails before any work; they appear only when complete. */
    if (st == SL_OK && root)
        st = sl_ens_sink_open(&sink, c, g, &plan, &model, &chain, ids, &e);
    st = sl_ens_agree(st, &e);
    if (st == SL_OK) {
        sl_ens_run_opts o = {c->threads, c->block, 0, root ? sl_ens_sink_row : NULL, &sink,
                             root ? store_dir(&sink) : NULL, root && c->csv_path ? sl_ens_sink_format : NULL,
                             sl_ens_sink_row_cap(&plan, &model)};
        if (sl_sweep_file_profiles(&plan, ids)) {
            if (!quiet && c->threads != 1)
                fprintf(stderr, "steamloft: note: --vary site.atmosphere names a profile file; the members "
                                "run on one thread (profile files are read as members run)\n");
            o.n_threads = 1;
        }
        o.progress = root && g->verbosity >= 0 && (c->progress == 1 || (c->progress == -1 && isatty(2)));
        st = sl_ens_run(&plan, &model, &o, &res, &e);
    }
    /* Everything that can fail comes before the files are renamed into
     * place: the summary's numbers, closing the files, the plots. */
    if (st == SL_OK && root)
        st = sl_ens_sink_summarize(&sink, &res, thr, thr_out, &e);
    if (st == SL_OK && root)
        st = sl_ens_sink_finish(&sink, &e);
    if (st == SL_OK && root && c->plot_dir)
        st = sl_ens_plot_write(&sink, c->plot_dir, quiet, &e);
    if (st == SL_OK && root)
        st = sl_ens_sink_commit(&sink, &e);
    if (st == SL_OK && root)
        st = sl_ens_summary_write(sink.csv_stdout ? stderr : stdout, &sink, &res, thr, &e);
    if (st == SL_OK && root && g->verbosity > 0)
        print_timing(&chain, &res);
    sl_ens_sink_free(&sink);
    sl_ens_result_free(&res);
    sl_ens_plan_free(&plan);
    ens_chain_free(&chain);
    free(sc);
    if (st != SL_OK)
        return root ? sl_cli_report(g, c->cmd, &e) : sl_err_exit_code(st);
    return 0;
}
