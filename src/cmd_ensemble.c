/* `steamloft ensemble` and `steamloft sweep`: the whole chain run on many
 * scenarios drawn from one scenario file.
 *
 * ensemble: every scenario value written as a distribution (ensemble.h) is an
 * uncertain input; members are drawn by Monte Carlo (per-member seeds from
 * --seed) or Sobol points (--sobol).  sweep: each --vary KEY=... gives a list
 * of values; members run through the grid.  Both share everything else:
 * members are the ordinary chain (chain.h) on a copy of the scenario with the
 * member's values set through sl_scenario_set_id (so ranges and derived
 * defaults are checked exactly as for one run); per-member rows stream to a
 * CSV file (and a netCDF file with a member dimension); the summary on stdout
 * gives percentiles, exceedance probabilities and the Spearman ranking of the
 * inputs.  The box model is a stage of the chain, so box-model keys ([strat])
 * can be uncertain too.  Key outputs that do not apply to a member (an
 * e-folding time when no water entered the stratosphere) are missing, not
 * failures.  With an MPI build, `mpirun -np K steamloft
 * ensemble ...` splits the members across ranks and rank 0 writes
 * (ensemble.h).  No physics here: only which stage result is which output. */
#include "steamloft/cmd.h"
#include "steamloft/chain.h"
#include "steamloft/ensemble.h"
#include "steamloft/outfile.h"
#include "steamloft/scenario.h"
#include "steamloft/strat.h"
#include "steamloft/units.h"
#include "steamloft/units_table.h"

#include <gsl/gsl_cdf.h>
#include <netcdf.h>

#include <errno.h>
#include <getopt.h>
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sysexits.h>
#include <time.h>
#include <unistd.h>

enum { MAX_PCT = 32, MAX_THR = 32, MAX_VARY = 16, NC_BUF_ROWS = 1024 };

typedef struct ens_cli {
    const char *cmd;       /* "ensemble" or "sweep" */
    int sweep;
    size_t members;
    uint64_t seed;
    int sobol;
    const char *csv_path;
    const char *nc_path;
    double pct[MAX_PCT];
    size_t npct;
    const char *thr_spec[MAX_THR];
    size_t nthr;
    const char *vary[MAX_VARY];
    size_t nvary;
    int threads;
    int progress;          /* -1 auto (stderr is a terminal), 0 off, 1 on */
    int json;              /* summary as JSON */
    size_t block;
    const char *scenario;
    sl_cli_sets sets;      /* --set SECTION.KEY=VALUE overrides */
} ens_cli;

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
    double lo = p->min_value, hi = p->max_value, slack = 1e-12 * fmax(fabs(lo), fabs(hi));
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
            a = fmin(a, d->values[i]);
            b = fmax(b, d->values[i]);
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
                           fmax(a, lo), fmin(b, hi));
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
static int build_plan(const ens_cli *c, sl_scenario *sc, sl_ens_plan *p, int *ids, int quiet,
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
        if (raw == NULL || !sl_dist_is_distribution(raw))
            continue;
        const sl_param_def *def = &sl_scenario_params[id];
        char where[SL_SCENARIO_PATH_LEN + 128], key[SL_ENS_KEY_LEN];
        sl_scenario_where(sc, (sl_param_id)id, where, sizeof where);
        snprintf(key, sizeof key, "%s.%s", def->section, def->key);
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
        SL_TRY_RETURN(e, sl_ens_parse_vary(c->vary[v], key, &d, e));
        int id = sl_scenario_find(key);
        int rc = SL_OK;
        if (id < 0)
            rc = sl_err_set(e, SL_EUSAGE, __func__, __LINE__,
                            "--vary: unknown key '%s' (section.key as 'steamloft params' lists)",
                            key);
        else if (sl_scenario_params[id].type != SL_PT_REAL && sl_scenario_params[id].type != SL_PT_INT)
            rc = sl_err_set(e, SL_EUSAGE, __func__, __LINE__, "--vary: '%s' is not a numeric key", key);
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
    O_WATER_VAPORIZED_TG, O_SOURCE_VAPOR_TG, O_BLOWOUT, O_SEA_BLOWOUT, O_PLUME_TOP_KM, O_CLOUD_TOP_KM,
    O_WATER_LOFTED_TG, O_STRAT_WATER_TG, O_STRAT_ICE_TG,
    /* box model */
    O_BOX_INJECTED_TG, O_BOX_INITIAL_TG, O_EFOLDING_YEARS, O_RESIDENCE_YEARS, O_REMAINING_3Y,
    O_PERCENT_BACKGROUND, O_PEAK_ANOMALY_PPMV, O_PEAK_COLUMN_UM, O_PEAK_LOCAL_COLUMN_UM,
    O_FORCING_W_M2, O_N_OUT
} out_id;

enum { FOR_ALL = 0, FOR_IMPACTOR = 1 };

static const struct {
    sl_ens_output o;
    int only;
} out_table[O_N_OUT] = {
    {{"energy_Mt", "4.184e15 J", "kinetic energy at entry, or the explosion energy (Mt TNT)", 0}, FOR_ALL},
    {{"airburst", "1", "1 when the body burst in the air, 0 when it reached the sea", 0}, FOR_IMPACTOR},
    {{"peak_deposition_altitude_km", "km", "altitude where the energy deposition peaked", 0}, FOR_IMPACTOR},
    {{"energy_in_air_Mt", "4.184e15 J", "energy deposited in the atmosphere (Mt TNT)", 0}, FOR_ALL},
    {{"energy_at_sea_Mt", "4.184e15 J", "energy reaching the sea surface (Mt TNT)", 0}, FOR_ALL},
    {{"water_vaporized_Tg", "Tg", "sea water vaporised", 0}, FOR_ALL},
    {{"source_vapor_Tg", "Tg", "water vapour in the initial plume sources", 0}, FOR_ALL},
    {{"blowout", "1", "1 when a plume blew out of the atmosphere (blow-out rule), 0 for thermals", 0}, FOR_ALL},
    {{"sea_plume_blowout", "1", "1 when the plume rising from the sea blew out (no sea plume: 0)", 0}, FOR_ALL},
    {{"plume_top_km", "km", "highest reach of the thermals", 0}, FOR_ALL},
    {{"cloud_top_km", "km", "top of the young clouds", 0}, FOR_ALL},
    {{"water_lofted_Tg", "Tg", "water in the young clouds before freeze-out", 0}, FOR_ALL},
    {{"strat_water_Tg", "Tg", "water vapour injected above the tropopause", 0}, FOR_ALL},
    {{"strat_ice_Tg", "Tg", "ice remaining above the tropopause", 0}, FOR_ALL},
    {{"box_injected_Tg", "Tg", "water (vapour and ice) entering the box model above its tropopauses", 0}, FOR_ALL},
    {{"box_initial_excess_Tg", "Tg", "box-model excess water after the young cloud's freeze-out", 0}, FOR_ALL},
    {{"efolding_years", "year", "time for the stratospheric excess to fall to 1/e (none when nothing entered)", 1}, FOR_ALL},
    {{"residence_years", "year", "mean residence time of the excess (none when nothing entered)", 1}, FOR_ALL},
    {{"remaining_3y_fraction", "1", "fraction of the excess left after 3 years (none when nothing entered)", 1}, FOR_ALL},
    {{"percent_of_background", "percent", "peak excess as a percentage of the background stratospheric water", 0}, FOR_ALL},
    {{"peak_anomaly_ppmv", "1e-6", "peak global-mean water mole-fraction anomaly above ~100 hPa", 0}, FOR_ALL},
    {{"peak_column_um", "um", "peak global-mean column anomaly, precipitable micrometres", 0}, FOR_ALL},
    {{"peak_local_column_um", "um", "peak column anomaly over the young cloud, precipitable micrometres", 0}, FOR_ALL},
    {{"forcing_W_m2", "W m-2", "peak first-order radiative-forcing indicator (coarse)", 0}, FOR_ALL},
};

typedef struct ens_chain {
    const sl_scenario *base; /* finished, uncertain keys external */
    const sl_ens_plan *plan;
    const int *ids;          /* scenario key of each plan input */
    size_t n_out;
    out_id which[O_N_OUT];
    sl_ens_output outputs[O_N_OUT];
    double stage_s[SL_CHAIN_N_TIMED]; /* summed over the workspaces when they are freed */
} ens_chain;

typedef struct chain_ws {
    sl_scenario sc;
    sl_chain chain;
    ens_chain *owner;
} chain_ws;

/* Set the member's inputs on a copy of the base scenario (range checks and
 * derived defaults exactly as for one run). */
static int set_inputs(const ens_chain *c, sl_scenario *sc, const double *in_si, sl_err *e)
{
    *sc = *c->base;
    for (size_t k = 0; k < c->plan->n_inputs; k++)
        SL_TRY_RETURN(e, sl_scenario_set_id(sc, (sl_param_id)c->ids[k], in_si[k], e));
    return SL_OK;
}

static void chain_ws_free(void *p)
{
    chain_ws *w = p;
    if (w == NULL)
        return;
    /* Workspaces are freed serially after the member loop: no race. */
    for (int k = 0; k < SL_CHAIN_N_TIMED; k++)
        w->owner->stage_s[k] += w->chain.stage_s[k];
    sl_chain_free(&w->chain);
    free(w);
}

/* One workspace per thread, made before the member loop.  It runs the chain
 * once on the inputs' medians so the atmosphere is loaded here, serially
 * (netCDF profiles must not be read from parallel threads); a failure of
 * that warm-up run is not an error (members report their own). */
static void *chain_ws_new(void *ctx, sl_err *e)
{
    ens_chain *c = ctx;
    chain_ws *w = calloc(1, sizeof *w);
    if (w == NULL) {
        sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "out of memory for a chain workspace");
        return NULL;
    }
    w->owner = c;
    double si[SL_P_COUNT + 16];
    for (size_t k = 0; k < c->plan->n_inputs && k < sizeof si / sizeof si[0]; k++)
        si[k] = sl_dist_median(&c->plan->inputs[k].dist) * c->plan->inputs[k].to_si;
    sl_err warm;
    sl_err_clear(&warm);
    if (set_inputs(c, &w->sc, si, &warm) == SL_OK)
        (void)sl_chain_run(&w->sc, &w->chain, &warm);
    /* Time only the members. */
    for (int k = 0; k < SL_CHAIN_N_TIMED; k++)
        w->chain.stage_s[k] = 0;
    return w;
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
    case O_BLOWOUT: return ch->plume.regime == SL_REGIME_BLOWOUT ? 1.0 : 0.0;
    case O_SEA_BLOWOUT:
        for (size_t i = 0; i < ch->plume.n_thermals; i++)
            if (ch->plume.th[i].kind == SL_SOURCE_SEA_PLUME && ch->plume.th[i].regime == SL_REGIME_BLOWOUT)
                return 1.0;
        return 0.0;
    case O_PLUME_TOP_KM: return sl_m_to_km(ch->plume.plume_top_m);
    case O_CLOUD_TOP_KM: return sl_m_to_km(ch->plume.cloud_top_m);
    case O_WATER_LOFTED_TG: return sl_kg_to_tg(ch->plume.water_lofted_kg);
    case O_STRAT_WATER_TG: return sl_kg_to_tg(ch->plume.stratospheric_water_kg);
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

static int chain_member(void *ws, void *ctx, const sl_ens_plan *plan, const double *in_si,
                        double *out, sl_err *e)
{
    (void)plan;
    const ens_chain *c = ctx;
    chain_ws *w = ws;
    SL_TRY_RETURN(e, set_inputs(c, &w->sc, in_si, e));
    SL_TRY_RETURN(e, sl_chain_run(&w->sc, &w->chain, e));
    for (size_t j = 0; j < c->n_out; j++)
        out[j] = out_value(&w->chain, &w->chain.strat, c->which[j]);
    return SL_OK;
}

/* Bind the chain: choose the outputs this kind of scenario has. */
static void ens_chain_init(ens_chain *c, const sl_scenario *sc, const sl_ens_plan *p, const int *ids,
                           sl_ens_model *m)
{
    memset(c, 0, sizeof *c);
    c->base = sc;
    c->plan = p;
    c->ids = ids;
    for (int k = 0; k < O_N_OUT; k++) {
        if (out_table[k].only == FOR_IMPACTOR && sc->kind != SL_SCENARIO_IMPACTOR)
            continue;
        c->which[c->n_out] = (out_id)k;
        c->outputs[c->n_out++] = out_table[k].o;
    }
    m->ctx = c;
    m->n_outputs = c->n_out;
    m->outputs = c->outputs;
    m->ws_new = chain_ws_new;
    m->ws_free = chain_ws_free;
    m->member = chain_member;
}

/* ------------------------------------------------------------ per-member output */

typedef struct ens_sink {
    const sl_ens_plan *plan;
    const sl_ens_model *model;
    FILE *csv;
    const char *csv_name;
    int nc;                 /* netCDF id, -1 when none */
    int nc_in[SL_P_COUNT], nc_out[64], nc_status, nc_reason, nc_member;
    size_t nbuf, nc_written;
    double *buf_in, *buf_out;
    int *buf_st;
    int *buf_m;
    char *buf_reason;
} ens_sink;

/* Write S as one CSV field, quoted when it holds a comma, quote or newline. */
static void csv_field(FILE *f, const char *s)
{
    if (strpbrk(s, ",\"\n\r") == NULL) {
        fputs(s, f);
        return;
    }
    fputc('"', f);
    for (; *s; s++) {
        if (*s == '"')
            fputc('"', f);
        fputc(*s == '\n' || *s == '\r' ? ' ' : *s, f);
    }
    fputc('"', f);
}

/* Write X with the fewest digits (15 to 17) that read back to the same
 * double, so the CSV holds exactly what the statistics used. */
static void csv_number(FILE *f, double x)
{
    char buf[40];
    for (int prec = 15; prec <= 17; prec++) {
        snprintf(buf, sizeof buf, "%.*g", prec, x);
        if (prec == 17 || strtod(buf, NULL) == x)
            break;
    }
    fputs(buf, f);
}

static const char *status_word(int st)
{
    switch (st) {
    case SL_OK: return "ok";
    case SL_EDATA: return "bad_data";
    case SL_ENUMERIC: return "numerical";
    case SL_EUSAGE: return "usage";
    case SL_ENOMEM: return "no_memory";
    default: return "failed";
    }
}

#define NC_CK(call)                                                                             \
    do {                                                                                        \
        int nc_rc_ = (call);                                                                    \
        if (nc_rc_ != NC_NOERR)                                                                 \
            SL_FAIL_RETURN(e, SL_EIO, "netCDF: %s: %s", #call, nc_strerror(nc_rc_));            \
    } while (0)

static int nc_flush(ens_sink *s, sl_err *e)
{
    if (s->nc < 0 || s->nbuf == 0)
        return SL_OK;
    size_t st[2] = {s->nc_written, 0}, ct[2] = {s->nbuf, SL_ENS_REASON_LEN};
    size_t ni = s->plan->n_inputs, no = s->model->n_outputs;
    NC_CK(nc_put_vara_int(s->nc, s->nc_member, st, ct, s->buf_m));
    NC_CK(nc_put_vara_int(s->nc, s->nc_status, st, ct, s->buf_st));
    NC_CK(nc_put_vara_text(s->nc, s->nc_reason, st, ct, s->buf_reason));
    /* Rows are buffered member-major; each variable takes one column. */
    for (size_t k = 0; k < ni; k++) {
        double tmp[NC_BUF_ROWS];
        for (size_t r = 0; r < s->nbuf; r++)
            tmp[r] = s->buf_in[r * ni + k];
        NC_CK(nc_put_vara_double(s->nc, s->nc_in[k], st, ct, tmp));
    }
    for (size_t j = 0; j < no; j++) {
        double tmp[NC_BUF_ROWS];
        for (size_t r = 0; r < s->nbuf; r++)
            tmp[r] = s->buf_out[r * no + j];
        NC_CK(nc_put_vara_double(s->nc, s->nc_out[j], st, ct, tmp));
    }
    s->nc_written += s->nbuf;
    s->nbuf = 0;
    return SL_OK;
}

/* The fill value of failed members' outputs in netCDF (CF _FillValue). */
#define ENS_NC_FILL 9.96920996838686905e+36

static int sink_row(void *sinkp, size_t m, const double *in, const double *out, int st,
                    const char *reason, sl_err *e)
{
    ens_sink *s = sinkp;
    size_t ni = s->plan->n_inputs, no = s->model->n_outputs;
    if (s->csv) {
        FILE *f = s->csv;
        fprintf(f, "%zu,%s,", m, status_word(st));
        csv_field(f, reason);
        for (size_t k = 0; k < ni; k++) {
            fputc(',', f);
            csv_number(f, in[k]);
        }
        for (size_t j = 0; j < no; j++) {
            if (st == SL_OK && isfinite(out[j])) {
                fputc(',', f);
                csv_number(f, out[j]);
            } else
                fputc(',', f); /* failed member, or an output that does not apply */
        }
        if (fputc('\n', f) == EOF)
            SL_FAIL_RETURN(e, SL_EIO, "%s: write error: %s", s->csv_name, strerror(errno));
    }
    if (s->nc >= 0) {
        size_t r = s->nbuf++;
        s->buf_m[r] = (int)m;
        s->buf_st[r] = st;
        memcpy(s->buf_in + r * ni, in, ni * sizeof *in);
        for (size_t j = 0; j < no; j++)
            s->buf_out[r * no + j] = st == SL_OK && isfinite(out[j]) ? out[j] : ENS_NC_FILL;
        char *rs = s->buf_reason + r * SL_ENS_REASON_LEN;
        memset(rs, 0, SL_ENS_REASON_LEN);
        memcpy(rs, reason, strnlen(reason, SL_ENS_REASON_LEN - 1));
        if (s->nbuf == NC_BUF_ROWS)
            SL_TRY_RETURN(e, nc_flush(s, e));
    }
    return SL_OK;
}

static void csv_header(FILE *f, const sl_ens_plan *p, const sl_ens_model *m)
{
    fputs("member,status,reason", f);
    for (size_t k = 0; k < p->n_inputs; k++)
        fprintf(f, ",%s", p->inputs[k].key);
    for (size_t j = 0; j < m->n_outputs; j++)
        fprintf(f, ",%s", m->outputs[j].name);
    fputc('\n', f);
}

/* UDUNITS spelling of a scenario key's own unit: "km s-1" for km_s, "kg m-3"
 * for kg_m3, "4.184e15 J" for Mt (UDUNITS' "Mt" is a megatonne of mass). */
static void udunits_of_key(int id, char *buf, size_t n)
{
    const char *suffix = sl_scenario_params[id].unit;
    const sl_unit *u = sl_units_lookup(suffix);
    if (u == NULL || strcmp(u->suffix, "1") == 0 || suffix[0] == '\0') {
        snprintf(buf, n, "1");
        return;
    }
    if (strcmp(u->suffix, "Mt") == 0) {
        snprintf(buf, n, "4.184e15 J");
        return;
    }
    if (strcmp(u->suffix, "deg") == 0) {
        snprintf(buf, n, "degree");
        return;
    }
    /* a_b means a per b; a trailing digit on b is its power (kg_m3 -> kg m-3). */
    const char *us = strchr(suffix, '_');
    if (us == NULL) {
        snprintf(buf, n, "%s", suffix);
        return;
    }
    const char *den = us + 1;
    size_t dl = strlen(den);
    if (dl > 1 && den[dl - 1] >= '2' && den[dl - 1] <= '9')
        snprintf(buf, n, "%.*s %.*s-%c", (int)(us - suffix), suffix, (int)(dl - 1), den, den[dl - 1]);
    else
        snprintf(buf, n, "%.*s %s-1", (int)(us - suffix), suffix, den);
}

static int nc_text_att(int nc, int var, const char *name, const char *text, sl_err *e)
{
    NC_CK(nc_put_att_text(nc, var, name, strlen(text), text));
    return SL_OK;
}

/* Define the netCDF file: dimension member (unlimited), one variable per
 * input and per key output, status and reason. */
static int nc_define(ens_sink *s, const char *path, const ens_cli *c, const sl_cli_globals *g,
                     const int *ids, sl_err *e)
{
    const sl_ens_plan *p = s->plan;
    const sl_ens_model *m = s->model;
    if (m->n_outputs > sizeof s->nc_out / sizeof s->nc_out[0])
        SL_FAIL_RETURN(e, SL_EINTERNAL, "too many outputs for netCDF");
    NC_CK(nc_create(path, NC_CLOBBER | NC_NETCDF4 | NC_CLASSIC_MODEL, &s->nc));
    int dm, dr;
    NC_CK(nc_def_dim(s->nc, "member", NC_UNLIMITED, &dm));
    NC_CK(nc_def_dim(s->nc, "reason_len", SL_ENS_REASON_LEN, &dr));
    NC_CK(nc_def_var(s->nc, "member", NC_INT, 1, &dm, &s->nc_member));
    SL_TRY_RETURN(e, nc_text_att(s->nc, s->nc_member, "long_name", "ensemble member index", e));
    NC_CK(nc_def_var(s->nc, "status", NC_INT, 1, &dm, &s->nc_status));
    SL_TRY_RETURN(e, nc_text_att(s->nc, s->nc_status, "long_name",
                                 "member status: 0 ok, otherwise the failure status", e));
    int dims2[2] = {dm, dr};
    NC_CK(nc_def_var(s->nc, "reason", NC_CHAR, 2, dims2, &s->nc_reason));
    SL_TRY_RETURN(e, nc_text_att(s->nc, s->nc_reason, "long_name",
                                 "why the member failed (empty when ok)", e));
    for (size_t k = 0; k < p->n_inputs; k++) {
        char name[SL_ENS_KEY_LEN], desc[160];
        snprintf(name, sizeof name, "%s", p->inputs[k].key);
        for (char *q = name; *q; q++)
            if (*q == '.')
                *q = '_';
        NC_CK(nc_def_var(s->nc, name, NC_DOUBLE, 1, &dm, &s->nc_in[k]));
        SL_TRY_RETURN(e, nc_text_att(s->nc, s->nc_in[k], "long_name", p->inputs[k].key, e));
        char units[64];
        udunits_of_key(ids[k], units, sizeof units);
        SL_TRY_RETURN(e, nc_text_att(s->nc, s->nc_in[k], "units", units, e));
        sl_dist_describe(&p->inputs[k].dist, desc, sizeof desc);
        SL_TRY_RETURN(e, nc_text_att(s->nc, s->nc_in[k], "sampled_from", desc, e));
    }
    for (size_t j = 0; j < m->n_outputs; j++) {
        NC_CK(nc_def_var(s->nc, m->outputs[j].name, NC_DOUBLE, 1, &dm, &s->nc_out[j]));
        double fill = ENS_NC_FILL;
        NC_CK(nc_put_att_double(s->nc, s->nc_out[j], "_FillValue", NC_DOUBLE, 1, &fill));
        SL_TRY_RETURN(e, nc_text_att(s->nc, s->nc_out[j], "long_name", m->outputs[j].long_name, e));
        SL_TRY_RETURN(e, nc_text_att(s->nc, s->nc_out[j], "units", m->outputs[j].units, e));
    }
    SL_TRY_RETURN(e, nc_text_att(s->nc, NC_GLOBAL, "Conventions", "CF-1.11", e));
    SL_TRY_RETURN(e, nc_text_att(s->nc, NC_GLOBAL, "title",
                                 c->sweep ? "steamloft parameter sweep: key outputs per member"
                                          : "steamloft ensemble: key outputs per member",
                                 e));
    SL_TRY_RETURN(e, nc_text_att(s->nc, NC_GLOBAL, "source", sl_cli_version(), e));
    char buf[1024];
    int w = snprintf(buf, sizeof buf, "steamloft");
    for (int a = 1; a < g->full_argc && w > 0 && (size_t)w < sizeof buf; a++)
        w += snprintf(buf + w, sizeof buf - (size_t)w, " %s", g->full_argv[a]);
    SL_TRY_RETURN(e, nc_text_att(s->nc, NC_GLOBAL, "history", buf, e));
    snprintf(buf, sizeof buf, "%s", p->mode == SL_ENS_GRID ? "grid" : p->mode == SL_ENS_SOBOL ? "sobol" : "monte_carlo");
    SL_TRY_RETURN(e, nc_text_att(s->nc, NC_GLOBAL, "sampling", buf, e));
    if (p->mode == SL_ENS_MONTE_CARLO) {
        snprintf(buf, sizeof buf, "%" PRIu64, p->seed);
        SL_TRY_RETURN(e, nc_text_att(s->nc, NC_GLOBAL, "seed", buf, e));
    }
    SL_TRY_RETURN(e, nc_text_att(s->nc, NC_GLOBAL, "comment", sl_cli_caution(), e));
    NC_CK(nc_enddef(s->nc));
    size_t ni = p->n_inputs, no = m->n_outputs;
    s->buf_in = malloc((NC_BUF_ROWS * ni + 1) * sizeof *s->buf_in);
    s->buf_out = malloc((NC_BUF_ROWS * no + 1) * sizeof *s->buf_out);
    s->buf_st = malloc(NC_BUF_ROWS * sizeof *s->buf_st);
    s->buf_m = malloc(NC_BUF_ROWS * sizeof *s->buf_m);
    s->buf_reason = malloc((size_t)NC_BUF_ROWS * SL_ENS_REASON_LEN);
    if (!s->buf_in || !s->buf_out || !s->buf_st || !s->buf_m || !s->buf_reason)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory for the netCDF buffer");
    return SL_OK;
}

static void sink_free(ens_sink *s)
{
    free(s->buf_in);
    free(s->buf_out);
    free(s->buf_st);
    free(s->buf_m);
    free(s->buf_reason);
}

/* ------------------------------------------------------------ summary */

/* 5, 50, 95 and the user's percentiles, sorted, without repeats. */
static size_t percentile_list(const ens_cli *c, double *pct)
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

/* A JSON string (escaped); non-finite numbers are written as null. */
static void json_str(FILE *f, const char *s)
{
    fputc('"', f);
    for (; *s; s++) {
        unsigned char ch = (unsigned char)*s;
        if (ch == '"' || ch == '\\')
            fprintf(f, "\\%c", ch);
        else if (ch < 0x20)
            fprintf(f, "\\u%04x", ch);
        else
            fputc(ch, f);
    }
    fputc('"', f);
}

static void json_num(FILE *f, double x)
{
    if (isfinite(x))
        fprintf(f, "%.10g", x);
    else
        fputs("null", f);
}

/* The summary as JSON, for scripts (--json). */
static void print_summary_json(FILE *f, const ens_cli *c, const sl_ens_plan *p, const sl_ens_model *m,
                               const sl_ens_result *r, const sl_ens_threshold *thr,
                               const int *thr_out, sl_err *e)
{
    fprintf(f, "{\n  \"steamloft\": ");
    json_str(f, sl_cli_version());
    fprintf(f, ",\n  \"command\": \"%s\",\n  \"scenario\": ", c->cmd);
    json_str(f, c->scenario);
    fprintf(f, ",\n  \"sampling\": \"%s\",", p->mode == SL_ENS_GRID ? "grid" : p->mode == SL_ENS_SOBOL ? "sobol" : "monte_carlo");
    if (p->mode == SL_ENS_MONTE_CARLO)
        fprintf(f, "\n  \"seed\": %" PRIu64 ",", p->seed);
    fprintf(f, "\n  \"members\": %zu,\n  \"ok\": %zu,\n  \"failed\": %zu,", r->n_members,
            r->n_members - r->n_failed, r->n_failed);
    if (r->n_failed) {
        fprintf(f, "\n  \"first_failure\": {\"member\": %zu, \"reason\": ", r->first_failed_member);
        json_str(f, r->first_failure);
        fputs("},", f);
    }
    fputs("\n  \"inputs\": [", f);
    for (size_t k = 0; k < p->n_inputs; k++) {
        char desc[160];
        sl_dist_describe(&p->inputs[k].dist, desc, sizeof desc);
        fprintf(f, "%s\n    {\"key\": ", k ? "," : "");
        json_str(f, p->inputs[k].key);
        fputs(", \"distribution\": ", f);
        json_str(f, desc);
        fputc('}', f);
    }
    fputs("\n  ],\n  \"outputs\": {", f);
    double pct[MAX_PCT + 3], v[MAX_PCT + 3];
    size_t np = percentile_list(c, pct), ni = p->n_inputs;
    double *sens = malloc((2 * ni * m->n_outputs + 1) * sizeof *sens);
    if (sens == NULL || sl_ens_sensitivity(r, sens, sens + ni * m->n_outputs, e) != SL_OK) {
        free(sens);
        return;
    }
    for (size_t j = 0; j < m->n_outputs; j++) {
        double mean, sd;
        size_t nok;
        sl_ens_mean_sd(r, j, &mean, &sd, &nok);
        if (sl_ens_percentiles(r, j, pct, np, v, &nok, e) != SL_OK)
            return;
        fprintf(f, "%s\n    \"%s\": {\"n_ok\": %zu, \"mean\": ", j ? "," : "", m->outputs[j].name, nok);
        json_num(f, mean);
        fputs(", \"sd\": ", f);
        json_num(f, sd);
        fputs(", \"percentiles\": {", f);
        for (size_t q = 0; q < np; q++) {
            fprintf(f, "%s\"%g\": ", q ? ", " : "", pct[q]);
            json_num(f, v[q]);
        }
        fputs("}, \"spearman\": {", f);
        for (size_t k = 0; k < ni; k++) {
            fprintf(f, "%s", k ? ", " : "");
            json_str(f, p->inputs[k].key);
            fputs(": ", f);
            json_num(f, sens[j * ni + k]);
        }
        fputs("}, \"first_order\": {", f);
        for (size_t k = 0; k < ni; k++) {
            fprintf(f, "%s", k ? ", " : "");
            json_str(f, p->inputs[k].key);
            fputs(": ", f);
            json_num(f, sens[ni * m->n_outputs + j * ni + k]);
        }
        fputs("}}", f);
    }
    free(sens);
    fputs("\n  },\n  \"exceedance\": [", f);
    for (size_t t = 0; t < c->nthr; t++) {
        double pe, se;
        size_t nok;
        sl_ens_exceedance(r, (size_t)thr_out[t], &thr[t], &pe, &se, &nok);
        const char *op = thr[t].op == '>' ? ">" : thr[t].op == 'g' ? ">=" : thr[t].op == '<' ? "<" : "<=";
        fprintf(f, "%s\n    {\"output\": \"%s\", \"op\": \"%s\", \"threshold\": ", t ? "," : "",
                thr[t].name, op);
        json_num(f, thr[t].value);
        fputs(", \"probability\": ", f);
        json_num(f, pe);
        fputs(", \"standard_error\": ", f);
        json_num(f, se);
        fprintf(f, ", \"n_ok\": %zu}", nok);
    }
    fprintf(f, "\n  ],\n  \"ranks\": %d,\n  \"threads\": %d,\n  \"wall_s\": %.4g,\n  \"caution\": ",
            r->mpi_ranks, r->threads, r->wall_s);
    json_str(f, sl_cli_caution());
    fputs("\n}\n", f);
}

static void print_summary(FILE *f, const ens_cli *c, const sl_ens_plan *p, const sl_ens_model *m,
                          const sl_ens_result *r, const sl_ens_threshold *thr, const int *thr_out,
                          sl_err *e)
{
    const char *mode = p->mode == SL_ENS_GRID ? "grid sweep" : p->mode == SL_ENS_SOBOL ? "Sobol" : "Monte Carlo";
    fprintf(f, "steamloft %s: %s, %zu members", c->cmd, c->scenario, r->n_members);
    if (p->mode == SL_ENS_MONTE_CARLO)
        fprintf(f, " (Monte Carlo, seed %" PRIu64 ")", p->seed);
    else
        fprintf(f, " (%s)", mode);
    fprintf(f, "; %zu ok, %zu failed\n", r->n_members - r->n_failed, r->n_failed);
    if (r->n_failed)
        fprintf(f, "first failure: member %zu: %s\n", r->first_failed_member, r->first_failure);
    fprintf(f, "%s:\n", p->mode == SL_ENS_GRID ? "swept inputs" : "uncertain inputs");
    for (size_t k = 0; k < p->n_inputs; k++) {
        char desc[160];
        sl_dist_describe(&p->inputs[k].dist, desc, sizeof desc);
        fprintf(f, "  %-36s %s\n", p->inputs[k].key, desc);
    }
    double pct[MAX_PCT + 3];
    size_t np = percentile_list(c, pct);
    fprintf(f, "\n%-28s %8s %11s %11s", "output", "n_ok", "mean", "sd");
    for (size_t q = 0; q < np; q++) {
        char h[16];
        snprintf(h, sizeof h, "p%g", pct[q]);
        fprintf(f, " %11s", h);
    }
    fputc('\n', f);
    for (size_t j = 0; j < m->n_outputs; j++) {
        double mean, sd, v[MAX_PCT + 3];
        size_t nok;
        sl_ens_mean_sd(r, j, &mean, &sd, &nok);
        if (sl_ens_percentiles(r, j, pct, np, v, &nok, e) != SL_OK)
            return;
        fprintf(f, "%-28s %8zu %11.4g %11.4g", m->outputs[j].name, nok, mean, sd);
        for (size_t q = 0; q < np; q++)
            fprintf(f, " %11.4g", v[q]);
        fputc('\n', f);
    }
    if (c->nthr) {
        fprintf(f, "\nexceedance (fraction of successful members; +- binomial standard error):\n");
        for (size_t t = 0; t < c->nthr; t++) {
            double pe, se;
            size_t nok;
            sl_ens_exceedance(r, (size_t)thr_out[t], &thr[t], &pe, &se, &nok);
            const char *op = thr[t].op == '>' ? ">" : thr[t].op == 'g' ? ">=" : thr[t].op == '<' ? "<" : "<=";
            fprintf(f, "  P(%s %s %g) = %.4g +- %.2g  (n = %zu)\n", thr[t].name, op, thr[t].value,
                    pe, se, nok);
        }
    }
    if (p->n_inputs > 0) {
        fprintf(f, "\nwhat drives the spread: Spearman rank correlation / first-order variance "
                   "share\n(Sobol' index from the members) of each input, strongest correlation "
                   "first:\n");
        size_t ni = p->n_inputs;
        double *rho_all = malloc(2 * ni * m->n_outputs * sizeof *rho_all);
        size_t *ord = malloc(ni * sizeof *ord);
        if (!rho_all || !ord || sl_ens_sensitivity(r, rho_all, rho_all + ni * m->n_outputs, e) != SL_OK) {
            free(rho_all);
            free(ord);
            return;
        }
        for (size_t j = 0; j < m->n_outputs; j++) {
            const double *rho = rho_all + j * ni, *s1 = rho_all + ni * m->n_outputs + j * ni;
            for (size_t k = 0; k < ni; k++)
                ord[k] = k;
            for (size_t a = 1; a < p->n_inputs; a++)
                for (size_t b = a; b > 0; b--) {
                    double x = isnan(rho[ord[b]]) ? -1 : fabs(rho[ord[b]]);
                    double y = isnan(rho[ord[b - 1]]) ? -1 : fabs(rho[ord[b - 1]]);
                    if (x <= y)
                        break;
                    size_t t = ord[b];
                    ord[b] = ord[b - 1];
                    ord[b - 1] = t;
                }
            fprintf(f, "  %-28s", m->outputs[j].name);
            for (size_t k = 0; k < p->n_inputs; k++) {
                const char *key = strchr(p->inputs[ord[k]].key, '.');
                key = key ? key + 1 : p->inputs[ord[k]].key;
                if (isnan(rho[ord[k]]))
                    fprintf(f, "%s %s n/a", k ? "," : "", key);
                else if (isnan(s1[ord[k]]))
                    fprintf(f, "%s %s %+.2f/n/a", k ? "," : "", key, rho[ord[k]]);
                else
                    fprintf(f, "%s %s %+.2f/%.2f", k ? "," : "", key, rho[ord[k]],
                            fmax(s1[ord[k]], 0.0)); /* below 0 is sampling noise */
            }
            fputc('\n', f);
        }
        free(rho_all);
        free(ord);
    }
    fprintf(f, "\n%zu members in %.3g s on %d rank%s x %d thread%s (%.4g members/s)\n",
            r->n_members, r->wall_s, r->mpi_ranks, r->mpi_ranks == 1 ? "" : "s", r->threads,
            r->threads == 1 ? "" : "s", r->wall_s > 0 ? (double)r->n_members / r->wall_s : 0.0);
    fprintf(f, "%s\n", sl_cli_caution());
}

/* -v: peak memory and where the time went (for `make bench`). */
static void print_timing(const ens_chain *ch, const sl_ens_result *r)
{
    struct rusage ru;
    if (getrusage(RUSAGE_SELF, &ru) == 0)
        fprintf(stderr, "steamloft: peak resident memory %.1f MiB (getrusage ru_maxrss)\n",
                (double)ru.ru_maxrss / 1024.0);
    double total = 0;
    for (int k = 0; k < SL_CHAIN_N_TIMED; k++)
        total += ch->stage_s[k];
    double busy = r->wall_s * r->threads;
    fprintf(stderr, "steamloft: time per member %.4g ms per thread; chain stages (rank 0, all threads):",
            r->n_members ? 1e3 * busy / (double)r->n_members : 0.0);
    for (int k = 0; k < SL_CHAIN_N_TIMED; k++)
        fprintf(stderr, " %s %.1f %%", sl_chain_stage_names[k], total > 0 ? 100 * ch->stage_s[k] / total : 0.0);
    fprintf(stderr, "; outside the chain %.1f %%\n", busy > 0 ? 100 * (busy - total) / busy : 0.0);
}

/* ------------------------------------------------------------ the command */

static void print_help(const char *cmd)
{
    if (strcmp(cmd, "sweep") == 0) {
        printf("Usage: steamloft sweep SCENARIO --vary KEY=START:STOP:STEP [--vary KEY=V1,V2,...] "
               "[OPTIONS]\n"
               "Run the whole chain over a grid of scenario values.  KEY is section.key as\n"
               "'steamloft params' lists it; values are in the key's own unit.  The grid is the\n"
               "product of all --vary lists, the last --vary varying fastest.\n"
               "      --vary SPEC         a swept key (repeatable, up to %d)\n",
               MAX_VARY);
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
               "  -n, --members N         members (default 1000)\n"
               "  -s, --seed S            base seed (default 1); member m is seeded from (S, m)\n"
               "      --sobol             Sobol quasi-random points instead of Monte Carlo\n"
               "                          (1 to 40 uncertain inputs)\n");
    }
    printf("  -o, --output FILE.csv   per-member inputs, status, reason and key outputs\n"
           "      --netcdf FILE.nc    the same as netCDF with a member dimension\n"
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
    int col = 0;
    for (int k = 0; k < O_N_OUT; k++) {
        char item[64];
        int w = snprintf(item, sizeof item, "%s%s%s", col ? ", " : "  ", out_table[k].o.name,
                         out_table[k].only == FOR_IMPACTOR ? "*" : "");
        if (col + w > 78) {
            printf(",\n");
            col = 0;
            w = snprintf(item, sizeof item, "  %s%s", out_table[k].o.name,
                         out_table[k].only == FOR_IMPACTOR ? "*" : "");
        }
        fputs(item, stdout);
        col += w;
    }
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
    enum { OPT_SOBOL = 256, OPT_NETCDF, OPT_PROGRESS, OPT_NOPROGRESS, OPT_BLOCK, OPT_JSON };
    static const struct option opts[] = {
        {"members", required_argument, NULL, 'n'}, {"seed", required_argument, NULL, 's'},
        {"sobol", no_argument, NULL, OPT_SOBOL},     {"output", required_argument, NULL, 'o'},
        {"netcdf", required_argument, NULL, OPT_NETCDF},
        {"percentiles", required_argument, NULL, 'p'}, {"exceed", required_argument, NULL, 'x'},
        {"vary", required_argument, NULL, 'V'},      {"threads", required_argument, NULL, 'j'},
        {"progress", no_argument, NULL, OPT_PROGRESS}, {"no-progress", no_argument, NULL, OPT_NOPROGRESS},
        {"block", required_argument, NULL, OPT_BLOCK}, {"json", no_argument, NULL, OPT_JSON},
        {"help", no_argument, NULL, 'h'}, SL_CLI_SET_OPTION,
        {NULL, 0, NULL, 0}};
    sl_err e;
    sl_err_clear(&e);
    *done = 0;
    int ch;
    while ((ch = getopt_long(argc, argv, ":n:s:o:p:x:j:h", opts, NULL)) != -1) {
        size_t v;
        switch (ch) {
        case 'h': print_help(c->cmd); *done = 1; return EX_OK;
        case 'n':
            if (c->sweep)
                return sl_cli_usage_error(g, c->cmd, "--members is for 'ensemble'; a sweep has one member per grid point");
            if (parse_size(optarg, "--members", 1, (size_t)1 << 40, &c->members, &e) != SL_OK)
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
        case 'o': c->csv_path = optarg; break;
        case OPT_NETCDF: c->nc_path = optarg; break;
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

    int root = sl_ens_is_root();
    int quiet = !root || g->verbosity < 0;
    sl_err e;
    sl_err_clear(&e);
    sl_scenario *sc = calloc(1, sizeof *sc);
    sl_ens_plan plan;
    memset(&plan, 0, sizeof plan);
    int ids[SL_P_COUNT + MAX_VARY];
    sl_ens_threshold thr[MAX_THR];
    int thr_out[MAX_THR];
    ens_chain chain;
    memset(&chain, 0, sizeof chain);
    sl_ens_model model;
    memset(&model, 0, sizeof model);
    ens_sink sink;
    memset(&sink, 0, sizeof sink);
    sink.nc = -1;
    sl_ens_result res;
    memset(&res, 0, sizeof res);
    sl_outset set_csv, set_nc;
    memset(&set_csv, 0, sizeof set_csv);
    memset(&set_nc, 0, sizeof set_nc);
    int st = SL_OK;

    if (sc == NULL)
        st = sl_err_set(&e, SL_ENOMEM, __func__, __LINE__, "out of memory");
    if (st == SL_OK)
        st = build_plan(&c, sc, &plan, ids, quiet, &e);
    if (st == SL_OK)
        ens_chain_init(&chain, sc, &plan, ids, &model);
    for (size_t t = 0; t < c.nthr && st == SL_OK; t++) {
        st = sl_ens_parse_threshold(c.thr_spec[t], &thr[t], &e);
        if (st != SL_OK)
            break;
        thr_out[t] = -1;
        for (size_t j = 0; j < model.n_outputs; j++)
            if (strcmp(model.outputs[j].name, thr[t].name) == 0)
                thr_out[t] = (int)j;
        if (thr_out[t] < 0) {
            char names[1024];
            int w = 0;
            for (size_t j = 0; j < model.n_outputs && w >= 0 && (size_t)w < sizeof names; j++)
                w += snprintf(names + w, sizeof names - (size_t)w, "%s%s", j ? ", " : "",
                              model.outputs[j].name);
            st = sl_err_set(&e, SL_EUSAGE, __func__, __LINE__,
                            "--exceed '%s': no output '%s'; outputs are: %s", c.thr_spec[t],
                            thr[t].name, names);
        }
    }
    /* Outputs are created (staged) on rank 0 before the run, so a bad path
     * fails before any work; they appear only when complete. */
    sink.plan = &plan;
    sink.model = &model;
    int csv_stdout = c.csv_path && strcmp(c.csv_path, "-") == 0;
    if (st == SL_OK && root && c.csv_path) {
        sink.csv_name = csv_stdout ? "standard output" : c.csv_path;
        if (csv_stdout) {
            sink.csv = stdout;
        } else {
            const char *stage;
            st = sl_outset_begin_file(&set_csv, c.csv_path, g->force, &stage, &e);
            if (st == SL_OK) {
                sink.csv = fopen(stage, "w");
                if (sink.csv == NULL)
                    st = sl_err_set(&e, SL_ECANTCREAT, __func__, __LINE__, "%s: %s", c.csv_path,
                                    strerror(errno));
            }
        }
        if (st == SL_OK)
            csv_header(sink.csv, &plan, &model);
    }
    if (st == SL_OK && root && c.nc_path) {
        const char *stage;
        st = sl_outset_begin_file(&set_nc, c.nc_path, g->force, &stage, &e);
        if (st == SL_OK)
            st = nc_define(&sink, stage, &c, g, ids, &e);
    }
    st = sl_ens_agree(st, &e);
    if (st == SL_OK) {
        sl_ens_run_opts o = {c.threads, c.block, 0, sink_row, &sink};
        o.progress = root && g->verbosity >= 0 && (c.progress == 1 || (c.progress == -1 && isatty(2)));
        st = sl_ens_run(&plan, &model, &o, &res, &e);
    }
    if (st == SL_OK && root) {
        if (sink.nc >= 0) {
            st = nc_flush(&sink, &e);
            int nrc = nc_close(sink.nc);
            sink.nc = -1;
            if (st == SL_OK && nrc != NC_NOERR)
                st = sl_err_set(&e, SL_EIO, __func__, __LINE__, "%s: %s", c.nc_path, nc_strerror(nrc));
            if (st == SL_OK)
                st = sl_outset_commit(&set_nc, &e);
        }
        if (st == SL_OK && sink.csv) {
            FILE *f = sink.csv;
            sink.csv = NULL;
            if (csv_stdout) {
                if (fflush(f) != 0 || ferror(f))
                    st = sl_err_set(&e, SL_EIO, __func__, __LINE__, "standard output: write error");
            } else {
                st = sl_outset_fclose(&set_csv, set_csv.name[0], f, &e);
                if (st == SL_OK)
                    st = sl_outset_commit(&set_csv, &e);
            }
        }
        if (st == SL_OK)
            (c.json ? print_summary_json : print_summary)(csv_stdout ? stderr : stdout, &c, &plan,
                                                          &model, &res, thr, thr_out, &e);
        if (st == SL_OK && g->verbosity > 0)
            print_timing(&chain, &res);
    }
    if (sink.csv && sink.csv != stdout)
        fclose(sink.csv);
    if (sink.nc >= 0)
        nc_close(sink.nc);
    sl_outset_abort(&set_csv);
    sl_outset_abort(&set_nc);
    sink_free(&sink);
    sl_ens_result_free(&res);
    sl_ens_plan_free(&plan);
    free(sc);
    if (st != SL_OK)
        return root ? sl_cli_report(g, c.cmd, &e) : sl_err_exit_code(st);
    return EX_OK;
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
