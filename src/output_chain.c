/* output_chain: the writers' view of a chain run (see
 * include/steamloft/output_chain.h).  No physics: the numbers are the
 * stages' own results, in SI, copied by name; the event date is the
 * scenario's [site] date, else nominal (2000-MM-01, MM the scenario's month
 * or January). */
#include "steamloft/output_chain.h"
#include "steamloft/output_text.h"

#include "steamloft/date.h"
#include "steamloft/units.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

static void add_scalar(sl_output_chain *oc, size_t *n, const char *name, const char *long_name,
                       const char *units, double value)
{
    if (!isfinite(value) || *n >= SL_OUTPUT_CHAIN_MAX_SCALARS)
        return; /* does not apply to this event: left out */
    oc->scalars[(*n)++] = (sl_output_scalar){name, long_name, units, NULL, value};
}

void sl_output_chain_free(sl_output_chain *oc)
{
    if (oc == NULL)
        return;
    sl_output_strat_free(&oc->strat);
    memset(oc, 0, sizeof *oc);
}

int sl_output_chain_init(sl_output_chain *oc, const sl_chain *ch, const sl_strat_model *m,
                         const sl_strat_result *r, const sl_cli_globals *g, sl_err *e)
{
    memset(oc, 0, sizeof *oc);
    if (ch->injection.n_bands == 0)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "the run has no injection profile to write");
    const sl_scenario *sc = &ch->scenario;
    const sl_partition *pt = &ch->partition;
    const sl_plume *pl = &ch->plume;
    size_t n = 0;

    add_scalar(oc, &n, "event_energy", "energy of the event (kinetic energy at entry, or the explosion)",
               "J", pt->energy_total_J);
    if (ch->has_entry) {
        const sl_entry *en = &ch->entry;
        add_scalar(oc, &n, "impactor_mass", "mass of the impactor at entry", "kg", en->initial_mass_kg);
        if (en->broke_up)
            add_scalar(oc, &n, "breakup_altitude", "altitude where the impactor broke up", "m",
                       en->breakup_altitude_m);
        if (en->airburst)
            add_scalar(oc, &n, "burst_altitude", "altitude of the airburst (peak energy deposition)",
                       "m", en->burst_altitude_m);
        add_scalar(oc, &n, "energy_in_air", "energy deposited in the air during entry", "J",
                   en->energy_in_air_J);
    } else {
        add_scalar(oc, &n, "burst_altitude", "altitude of the explosion", "m",
                   sc->value_si[SL_P_EXPLOSION_ALTITUDE]);
    }
    add_scalar(oc, &n, "energy_at_sea", "energy reaching the sea surface", "J", pt->energy_at_sea_J);
    add_scalar(oc, &n, "water_vaporized", "sea water vaporised", "kg", pt->water_vaporized_kg);
    if (ch->have_plume) {
        add_scalar(oc, &n, "plume_top", "highest reach of the rising thermals", "m", pl->plume_top_m);
        add_scalar(oc, &n, "neutral_altitude", "neutral-buoyancy level of the main thermal", "m",
                   pl->neutral_altitude_m);
        add_scalar(oc, &n, "cloud_bottom", "bottom of the young cloud envelope", "m", pl->cloud_bottom_m);
        add_scalar(oc, &n, "cloud_top", "top of the young cloud envelope", "m", pl->cloud_top_m);
        /* The water budget (include/steamloft/plume.h): the JSON key without "_kg". */
        /* (stratospheric_water itself is the netCDF injection variable of that name, output_nc.c) */
#define SL_WATER_BUDGET_SCALAR(name, sign, label)                                                            \
    if (strcmp(#name, "stratospheric_water") != 0)                                                             \
        add_scalar(oc, &n, #name, label, "kg", pl->name##_kg);
        SL_WATER_BUDGET_LINES(SL_WATER_BUDGET_SCALAR)
#undef SL_WATER_BUDGET_SCALAR
        add_scalar(oc, &n, "stratospheric_vapor", "of the stratospheric water: vapour", "kg",
                   pl->stratospheric_vapor_kg);
        add_scalar(oc, &n, "stratospheric_ice", "of the stratospheric water: ice", "kg",
                   pl->stratospheric_ice_kg);
        if (pl->regime != SL_REGIME_THERMAL) {
            /* The regime of each source (in the order of the JSON "thermals"). */
            char per[96] = "";
            for (size_t i = 0; i < pl->n_thermals && i < 8; i++) {
                size_t l = strlen(per);
                snprintf(per + l, sizeof per - l, "%s%zu %s", i ? ", " : "", i + 1,
                         sl_plume_regime_name(pl->th[i].regime));
            }
            snprintf(oc->regime_note, sizeof oc->regime_note,
                     "%s regime (sources: %s): a release wider than the scale height is not only a "
                     "buoyant thermal; its water is shared between the thermal and a ballistic flight "
                     "that re-enters over a wide area: the roughest numbers of this tool",
                     sl_plume_regime_name(pl->regime), per);
        } else if (pl->widest_thermal >= SL_PLUME_WIDE_SCALE_HEIGHTS) {
            /* The same words as the text summary's and the JSON's validity (the
             * files' note is about the plume, as for the other regimes: it
             * leaves out the e-folding's "extrapolated" remark). */
            char brief[64];
            sl_output_validity(1, pl->regime, pl->widest_thermal, 0, brief, sizeof brief, oc->regime_note,
                               sizeof oc->regime_note);
        }
    }

    const sl_output_series *series = NULL;
    if (m != NULL && r != NULL) {
        SL_TRY_RETURN(e, sl_output_strat_init(&oc->strat, m, r, e));
        oc->have_strat = 1;
        series = &oc->strat.series;
        for (size_t i = 0; i < oc->strat.n_scalars && n < SL_OUTPUT_CHAIN_MAX_SCALARS; i++)
            oc->scalars[n++] = oc->strat.scalars[i];
    }

    size_t np = sl_scenario_provenance(sc, oc->prov, SL_P_COUNT);
    sl_output_params_from_provenance(oc->prov, np, oc->params);

    int month = (int)lround(sc->value_si[SL_P_SITE_MONTH]);
    snprintf(oc->event_time, sizeof oc->event_time, "2000-%02d-01 00:00:00",
             month >= 1 && month <= 12 ? month : 1);
    if (isfinite(ch->injection.event_time_s)) { /* a [site] date: the real time */
        sl_date_fields f;
        sl_date_split(ch->injection.event_time_s, &f);
        snprintf(oc->event_time, sizeof oc->event_time, "%04d-%02d-%02d %02d:%02d:%02d", f.year,
                 f.month, f.day, f.hour, f.minute, f.second);
    }
    char name[200];
    sl_scenario_name(sc, name, sizeof name); /* the [scenario] name, else the file's base name */
    snprintf(oc->title, sizeof oc->title, "%s (%s)", name,
             sc->kind == SL_SCENARIO_IMPACTOR ? "impactor" : "explosion");
    unsigned methods = SL_OUTPUT_USED_ATMOSPHERE | SL_OUTPUT_USED_WATER;
    if (ch->has_entry)
        methods |= SL_OUTPUT_USED_ENTRY;
    if (ch->has_entry && pt->method == SL_PARTITION_SHOCK)
        methods |= SL_OUTPUT_USED_SHOCK;
    if (ch->have_plume)
        methods |= SL_OUTPUT_USED_PLUME;
    if (series)
        methods |= SL_OUTPUT_USED_STRAT;
    oc->view = (sl_output_view){&ch->injection, ch->atm, series, oc->scalars, n, oc->params,
                                np, oc->title, sc->path, oc->event_time,
                                oc->regime_note[0] ? oc->regime_note : NULL, methods,
                                g ? g->full_argc : 0, g ? g->full_argv : NULL,
                                ch->have_plume ? pl : NULL};
    return SL_OK;
}
