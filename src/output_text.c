/* output_text: run summaries as text or JSON (see include/steamloft/output_text.h).
 * Quantities are emitted once; the JSON keys are SI with the unit in the key
 * and full precision, the text shows the units people read (Mt TNT, km, Tg,
 * degrees) to three significant figures: the estimates are uncertain by far
 * more than that. */
#include "steamloft/output_text.h"
#include "steamloft/site.h"
#include "steamloft/cli.h"
#include "steamloft/units.h"

#include <math.h>
#include <stdarg.h>
#include <errno.h>
#include <string.h>

void sl_output_fmt3(char *buf, size_t n, double x)
{
    if (!isfinite(x)) {
        snprintf(buf, n, "none");
        return;
    }
    double a = fabs(x);
    if (a == 0.0) {
        snprintf(buf, n, "0");
        return;
    }
    if (a < 1e-3 || a >= 1e6) {
        snprintf(buf, n, "%.2e", x);
        return;
    }
    int mag = (int)floor(log10(a));
    double scale = pow(10.0, 2 - mag);
    double r = round(x * scale) / scale;
    if (fabs(r) >= pow(10.0, mag + 1)) /* 999.7 -> 1000 */
        mag++;
    int decimals = 2 - mag > 0 ? 2 - mag : 0;
    snprintf(buf, n, "%.*f", decimals, r);
}

static void text_label(sl_report *r, const char *label)
{
    int pad = 34 - 2 * r->text_indent;
    fprintf(r->out, "%*s%-*s ", 2 * r->text_indent, "", pad > 0 ? pad : 0, label);
}

void sl_report_begin(sl_report *r, FILE *out, int json)
{
    memset(r, 0, sizeof *r);
    r->out = out;
    r->json = json;
    if (json)
        sl_json_begin(&r->writer, out);
}

int sl_report_end(sl_report *r, sl_err *e)
{
    if (r->json)
        return sl_json_end(&r->writer, e);
    errno = 0;
    if (fflush(r->out) != 0 || ferror(r->out))
        SL_FAIL_RETURN(e, SL_EIO, "cannot write the summary: %s", strerror(errno ? errno : EIO));
    return SL_OK;
}

void sl_report_heading(sl_report *r, const char *title)
{
    if (!r->json)
        fprintf(r->out, "\n%*s%s\n", 2 * r->text_indent, "", title);
}

void sl_report_number(sl_report *r, const char *key, double value_si, const char *label, double factor,
                      const char *unit)
{
    if (r->json) {
        sl_json_number(&r->writer, key, value_si);
        return;
    }
    text_label(r, label);
    if (isfinite(value_si)) {
        char v[32];
        sl_output_fmt3(v, sizeof v, value_si * factor);
        fprintf(r->out, "%s%s%s\n", v, unit && unit[0] ? " " : "", unit ? unit : "");
    } else
        fputs("none\n", r->out);
}

void sl_report_bool(sl_report *r, const char *key, int value, const char *label)
{
    if (r->json) {
        sl_json_bool(&r->writer, key, value);
        return;
    }
    text_label(r, label);
    fputs(value ? "yes\n" : "no\n", r->out);
}

void sl_report_string(sl_report *r, const char *key, const char *value, const char *label)
{
    if (r->json) {
        sl_json_string(&r->writer, key, value);
        return;
    }
    text_label(r, label);
    fprintf(r->out, "%s\n", value);
}

static void begin_nested(sl_report *r, const char *key, const char *label, int array)
{
    if (r->json) {
        if (array)
            sl_json_begin_array(&r->writer, key, SL_JSON_LINES);
        else
            sl_json_begin_object(&r->writer, key, SL_JSON_LINES);
        return;
    }
    if (label)
        fprintf(r->out, "%*s%s\n", 2 * r->text_indent, "", label);
    r->text_indent++;
}

static void end_nested(sl_report *r, int array)
{
    if (r->json) {
        if (array)
            sl_json_end_array(&r->writer);
        else
            sl_json_end_object(&r->writer);
        return;
    }
    if (r->text_indent > 0)
        r->text_indent--;
}

void sl_report_begin_object(sl_report *r, const char *key, const char *label) { begin_nested(r, key, label, 0); }
void sl_report_end_object(sl_report *r) { end_nested(r, 0); }
void sl_report_begin_array(sl_report *r, const char *key, const char *label) { begin_nested(r, key, label, 1); }
void sl_report_end_array(sl_report *r) { end_nested(r, 1); }

const char *sl_output_source_kind_name(sl_source_kind k)
{
    switch (k) {
    case SL_SOURCE_SEA_PLUME: return "sea_plume";
    case SL_SOURCE_AIRBURST: return "airburst";
    case SL_SOURCE_EXPLOSION: return "explosion";
    }
    return "unknown";
}

/* Entry: how the body broke, what reached the sea in pieces, and the
 * energy bookkeeping with the work done by gravity named (entry module). */
static const char *entry_end_name(int end)
{
    switch (end) {
    case SL_ENTRY_END_SEA: return "sea";
    case SL_ENTRY_END_BURST: return "burst";
    case SL_ENTRY_END_AIR: return "stopped in the air";
    case SL_ENTRY_END_LEFT: return "left the atmosphere";
    case SL_ENTRY_END_SPLIT: return "broke up";
    }
    return "unknown";
}

static void emit_entry_fate(sl_report *r, const sl_entry *en)
{
    const double mt = 1.0 / SL_J_PER_MT_TNT;
    sl_report_string(r, "breakup_mode", sl_entry_mode_name(en->mode), "break-up");
    sl_report_number(r, "sea_fragments", en->sea_pieces, "solid pieces reaching the sea", 1.0, "");
    sl_report_number(r, "sea_fragment_energy_J", en->sea_fragment_energy_J, "their kinetic energy", mt, "Mt");
    sl_report_number(r, "sea_fragment_footprint_m", en->sea_pieces > 1 ? en->sea_footprint_m : NAN,
                     "their sideways spread at the sea", 1e-3, "km");
    if (r->json) {
        sl_report_begin_array(r, "fragment_groups", NULL);
        for (size_t i = 0; i < en->n_groups; i++) {
            const sl_entry_group *g = &en->groups[i];
            sl_report_begin_object(r, NULL, NULL);
            sl_report_string(r, "kind", g->cloud ? "debris_cloud" : "solid", "");
            sl_report_number(r, "generation", g->generation, "", 1, "");
            sl_report_number(r, "count", g->count, "", 1, "");
            sl_report_number(r, "piece_mass_kg", g->piece_mass_kg, "", 1, "");
            sl_report_number(r, "strength_Pa", g->cloud ? NAN : g->strength_Pa, "", 1, "");
            sl_report_number(r, "start_altitude_m", g->start_altitude_m, "", 1, "");
            sl_report_string(r, "end", entry_end_name(g->end), "");
            sl_report_number(r, "end_altitude_m", g->end_altitude_m, "", 1, "");
            sl_report_number(r, "sea_energy_J", g->sea_energy_J, "", 1, "");
            sl_report_end_object(r);
        }
        sl_report_end_array(r);
    }
    sl_report_number(r, "gravity_work_J", en->gravity_work_J, "work done by gravity", mt, "Mt");
    sl_report_number(r, "energy_carried_off_J", en->energy_carried_off_J, "carried out of the atmosphere", mt, "Mt");
    if (en->energy_in_air_J > en->initial_energy_J) {
        char note[160];
        snprintf(note, sizeof note, "the energy in the air exceeds the entry energy by %.3g Mt: the work gravity "
                 "did on the falling body", (en->energy_in_air_J - en->initial_energy_J) * mt);
        sl_report_string(r, "energy_in_air_note", note, "note");
    }
}

static void emit_entry(sl_report *r, const sl_chain *ch)
{
    const sl_entry *en = &ch->entry;
    sl_report_heading(r, "Entry through the atmosphere");
    sl_report_number(r, "initial_mass_kg", en->initial_mass_kg, "mass", 1.0, "kg");
    sl_report_bool(r, "broke_up", en->broke_up, "broke up");
    sl_report_number(r, "breakup_altitude_m", en->breakup_altitude_m, "breakup altitude", 1e-3, "km");
    sl_report_bool(r, "airburst", en->airburst, "airburst");
    sl_report_number(r, "burst_altitude_m", en->airburst ? en->burst_altitude_m : NAN,
                     "burst altitude (peak deposition)", 1e-3, "km");
    sl_report_bool(r, "burst_imposed", en->imposed, "burst imposed by the scenario");
    sl_report_number(r, "energy_in_air_J", en->energy_in_air_J, "energy deposited in the air", 1.0 / SL_J_PER_MT_TNT, "Mt");
    sl_report_bool(r, "reached_sea", en->reached_sea, "reached the sea");
    sl_report_bool(r, "left_atmosphere", en->left_atmosphere, "skipped out of the atmosphere");
    sl_report_number(r, "sea_speed_m_s", en->reached_sea ? en->sea_speed_m_s : NAN, "speed at the sea", 1e-3, "km/s");
    sl_report_number(r, "sea_mass_kg", en->reached_sea ? en->sea_mass_kg : NAN, "mass at the sea", 1.0, "kg");
    sl_report_number(r, "sea_angle_rad", en->reached_sea ? en->sea_angle_rad : NAN, "angle at the sea", 180.0 / SL_PI, "degree");
    sl_report_number(r, "energy_bookkeeping_residual_J", en->energy_error_J, "energy bookkeeping residual", 1.0, "J");
    /* Energy deposited in the air per band: every non-empty band in JSON,
     * the bands holding at least 1 % of it in text. */
    double total = en->energy_in_air_J;
    sl_report_number(r, "band_width_m", en->band_width_m, "altitude band width", 1e-3, "km");
    if (r->json) {
        sl_report_begin_array(r, "air_deposition", NULL);
        for (size_t i = 0; i < en->n_bands; i++) {
            if (en->band_energy_J[i] <= 0)
                continue;
            sl_report_begin_object(r, NULL, NULL);
            sl_report_number(r, "bottom_m", (double)i * en->band_width_m, "", 1, "");
            sl_report_number(r, "top_m", (double)(i + 1) * en->band_width_m, "", 1, "");
            sl_report_number(r, "energy_J", en->band_energy_J[i], "", 1, "");
            sl_report_end_object(r);
        }
        sl_report_end_array(r);
    } else if (total > 0) {
        fprintf(r->out, "energy deposited by band (>= 1 %% of the air's share)\n");
        for (size_t i = 0; i < en->n_bands; i++)
            if (en->band_energy_J[i] >= 0.01 * total)
                fprintf(r->out, "  %5.1f - %5.1f km %18s %.4g Mt (%.1f %%)\n",  1e-3 * (double)i * en->band_width_m,
                        1e-3 * (double)(i + 1) * en->band_width_m, "", en->band_energy_J[i] / SL_J_PER_MT_TNT,
                        100.0 * en->band_energy_J[i] / total);
    }
    emit_entry_fate(r, en);
}

static void emit_partition(sl_report *r, const sl_chain *ch)
{
    const sl_partition *pt = &ch->partition;
    if (ch->has_entry) {
        sl_report_heading(r, "Energy at the sea");
        sl_report_string(r, "partition_method", pt->method == SL_PARTITION_SHOCK ? "shock" : "budget", "method");
        sl_report_number(r, "energy_to_water_J", pt->energy_to_water_J, "energy given to the water", 1.0 / SL_J_PER_MT_TNT, "Mt");
        sl_report_number(r, "water_vaporized_kg", pt->water_vaporized_kg, "sea water vaporised", 1e-9, "Tg");
        sl_report_number(r, "water_vapor_limit_kg", pt->water_vapor_limit_kg, "limit (all energy into vapour)", 1e-9, "Tg");
        sl_report_number(r, "water_liquid_lofted_kg", pt->water_liquid_lofted_kg, "liquid thrown up with it", 1e-9, "Tg");
        sl_report_number(r, "impactor_water_kg", pt->impactor_water_kg, "water carried by the impactor", 1e-9, "Tg");
        sl_report_number(r, "plume_heat_J", pt->energy_plume_heat_J, "extra heat of the sea plume", 1.0 / SL_J_PER_MT_TNT, "Mt");
        sl_report_number(r, "liquid_heat_J", pt->energy_liquid_heat_J, "heating the thrown-up liquid", 1.0 / SL_J_PER_MT_TNT, "Mt");
        sl_report_number(r, "energy_other_J", pt->energy_other_J, "crater, waves, rock", 1.0 / SL_J_PER_MT_TNT, "Mt");
        sl_report_number(r, "cavity_diameter_m", pt->cavity_diameter_m, "opening in the water, across", 1e-3, "km");
        sl_report_bool(r, "shallow_water", pt->shallow, "cavity reaches the sea floor");
        if (pt->method == SL_PARTITION_SHOCK) {
            sl_report_number(r, "peak_pressure_Pa", pt->peak_pressure_Pa, "contact pressure", 1e-9, "GPa");
            sl_report_number(r, "decay_exponent", pt->decay_exponent, "pressure decay exponent", 1.0, "");
        }
    } else {
        sl_report_number(r, "water_vaporized_kg", pt->water_vaporized_kg, "sea water vaporised", 1e-9, "Tg");
    }
    sl_report_begin_array(r, "sources", r->json ? NULL : "\nPlume sources");
    for (size_t i = 0; i < pt->sources.n; i++) {
        const sl_source *s = &pt->sources.src[i];
        char label[48];
        snprintf(label, sizeof label, "source %zu (%s)", i + 1, sl_output_source_kind_name(s->kind));
        sl_report_begin_object(r, NULL, label);
        sl_report_string(r, "kind", sl_output_source_kind_name(s->kind), "kind");
        sl_report_number(r, "altitude_m", s->altitude_m, "centre altitude", 1e-3, "km");
        sl_report_number(r, "radius_m", s->radius_m, "radius", 1e-3, "km");
        sl_report_number(r, "air_mass_kg", s->air_mass_kg, "air", 1e-9, "Tg");
        sl_report_number(r, "vapor_mass_kg", s->vapor_mass_kg, "water vapour", 1e-9, "Tg");
        sl_report_number(r, "liquid_mass_kg", s->liquid_mass_kg, "liquid water", 1e-9, "Tg");
        sl_report_number(r, "temperature_K", s->temperature_K, "temperature", 1.0, "K");
        sl_report_number(r, "heat_J", s->heat_J, "buoyant heat", 1.0 / SL_J_PER_MT_TNT, "Mt");
        sl_report_end_object(r);
    }
    sl_report_end_array(r);
}

/* Plume stage: the event's cloud, the stratospheric water and the profile. */
static void emit_plume(sl_report *r, const sl_chain *ch)
{
    if (!ch->have_plume)
        return;
    const sl_plume *pl = &ch->plume;
    const sl_injection *inj = &ch->injection;
    sl_report_heading(r, "Plume and lofted water");
    sl_report_string(r, "regime", sl_plume_regime_name(pl->regime), "regime");
    sl_report_number(r, "plume_top_m", pl->plume_top_m, "plume top (highest reach)", 1e-3, "km");
    sl_report_number(r, "neutral_altitude_m", pl->neutral_altitude_m, "neutral-buoyancy level", 1e-3, "km");
    sl_report_number(r, "cloud_bottom_m", pl->cloud_bottom_m, "cloud bottom", 1e-3, "km");
    sl_report_number(r, "cloud_top_m", pl->cloud_top_m, "cloud top", 1e-3, "km");
    sl_report_number(r, "tropopause_altitude_m", pl->tropopause_altitude_m, "tropopause", 1e-3, "km");
    /* The water budget: the one table of include/steamloft/plume.h. */
#define SL_WATER_BUDGET_JSON(name, sign, label) sl_report_number(r, #name "_kg", pl->name##_kg, label, 1e-9, "Tg");
    SL_WATER_BUDGET_LINES(SL_WATER_BUDGET_JSON)
#undef SL_WATER_BUDGET_JSON
    sl_report_number(r, "stratospheric_vapor_kg", pl->stratospheric_vapor_kg, "of it vapour", 1e-9, "Tg");
    sl_report_number(r, "stratospheric_ice_kg", pl->stratospheric_ice_kg, "of it ice", 1e-9, "Tg");
    sl_report_number(r, "water_below_bands_kg", pl->water_below_bands_kg, "cloud water below the lowest band", 1e-9,
                     "Tg");
    sl_report_number(r, "injected_vapor_kg", sl_injection_total_vapor_kg(inj), "vapour injected (all bands)", 1e-9, "Tg");
    sl_report_number(r, "injected_ice_kg", sl_injection_total_ice_kg(inj), "ice remaining (all bands)", 1e-9, "Tg");
    sl_report_begin_array(r, "thermals", r->json ? NULL : "\nThermals");
    for (size_t i = 0; i < pl->n_thermals; i++) {
        const sl_thermal *th = &pl->th[i];
        char label[48];
        snprintf(label, sizeof label, "thermal %zu (%s)", i + 1, sl_output_source_kind_name(th->kind));
        sl_report_begin_object(r, NULL, label);
        sl_report_string(r, "regime", sl_plume_regime_name(th->regime), "regime");
        sl_report_number(r, "apex_time_s", th->apex_time_s, "time to apex", 1.0 / 60.0, "min");
        sl_report_number(r, "apex_altitude_m", th->apex_altitude_m, "apex (centre)", 1e-3, "km");
        sl_report_number(r, "apex_radius_m", th->apex_radius_m, "radius at apex", 1e-3, "km");
        sl_report_number(r, "apex_radius_to_scale_height", th->apex_radius_m / th->apex_scale_height_m,
                         "radius / scale height at apex", 1.0, "");
        sl_report_number(r, "neutral_altitude_m", th->neutral_altitude_m, "neutral-buoyancy level", 1e-3, "km");
        sl_report_number(r, "cloud_bottom_m", th->cloud_bottom_m, "cloud bottom", 1e-3, "km");
        sl_report_number(r, "cloud_top_m", th->cloud_top_m, "cloud top", 1e-3, "km");
        sl_report_number(r, "max_speed_m_s", th->max_speed_m_s, "fastest rise", 1.0, "m/s");
        sl_report_number(r, "ballistic_fraction", th->ballistic_fraction, "ballistic share of the water", 1.0, "");
        if (th->ballistic_fraction > 0.0) {
            sl_report_number(r, "launch_speed_m_s", th->launch_speed_m_s, "ballistic launch speed", 1.0, "m/s");
            sl_report_number(r, "apogee_m", th->apogee_m, "ballistic apogee", 1e-3, "km");
            sl_report_number(r, "reentry_range_m", th->reentry_range_m, "re-entry range", 1e-3, "km");
            sl_report_number(r, "reentry_bottom_m", th->reentry_bottom_m, "re-entry layer bottom", 1e-3, "km");
            sl_report_number(r, "reentry_top_m", th->reentry_top_m, "re-entry layer top", 1e-3, "km");
        }
        sl_report_number(r, "water_kg", th->vapor_kg + th->liquid_kg + th->ice_kg, "water at apex", 1e-9, "Tg");
        sl_report_number(r, "entrained_air_kg", th->air_entrained_kg, "air entrained", 1e-9, "Tg");
        sl_report_end_object(r);
    }
    sl_report_end_array(r);
    /* JSON: every band as an object; text: one table row per band holding water. */
    if (!r->json) {
        fprintf(r->out, "\n%*sBands holding lofted water\n", 2 * r->text_indent, "");
        fprintf(r->out, "%*s  %8s %8s %14s %14s\n", 2 * r->text_indent, "", "bottom", "top", "vapour", "ice");
        fprintf(r->out, "%*s  %8s %8s %14s %14s\n", 2 * r->text_indent, "", "km", "km", "Tg", "Tg");
        for (size_t i = 0; i < inj->n_bands; i++) {
            if (inj->vapor_kg[i] == 0.0 && inj->ice_kg[i] == 0.0)
                continue;
            fprintf(r->out, "%*s  %8.1f %8.1f %14.4g %14.4g\n", 2 * r->text_indent, "",
                    inj->band_bottom_m[i] * 1e-3, inj->band_top_m[i] * 1e-3, inj->vapor_kg[i] * 1e-9,
                    inj->ice_kg[i] * 1e-9);
        }
        return;
    }
    sl_report_begin_array(r, "bands", NULL);
    for (size_t i = 0; i < inj->n_bands; i++) {
        sl_report_begin_object(r, NULL, NULL);
        sl_report_number(r, "bottom_m", inj->band_bottom_m[i], "bottom", 1e-3, "km");
        sl_report_number(r, "top_m", inj->band_top_m[i], "top", 1e-3, "km");
        sl_report_number(r, "vapor_kg", inj->vapor_kg[i], "vapour", 1e-9, "Tg");
        sl_report_number(r, "ice_kg", inj->ice_kg[i], "ice", 1e-9, "Tg");
        sl_report_end_object(r);
    }
    sl_report_end_array(r);
}

/* Box model: the keys of issue 6 (unit in the key; years, ppmv, W/m2 as named).
 * Shared by `run` (from the chain) and `decay`. */
void sl_output_text_strat(sl_report *r, const sl_strat_model *m, const sl_strat_result *s)
{
    sl_report_heading(r, "Stratospheric box model");
    sl_report_number(r, "strat_injected_kg", s->injected_kg, "water above the tropopause", 1e-9, "Tg");
    sl_report_number(r, "strat_not_entered_kg", s->not_entered_kg, "water below the tropopause (not entered)",
                     1e-9, "Tg");
    sl_report_number(r, "background_burden_kg", m->reference_background_kg,
                     "background water above ~100 hPa", 1e-9, "Tg");
    /* Times and fractions of a decay are undefined when nothing entered the
     * stratosphere: null in JSON, "none" in text, never a misleading 0. */
    const double undefined = s->initial_excess_kg > 0.0 ? 0.0 : NAN;
    sl_report_number(r, "efolding_years", sl_s_to_years(s->efolding_s) + undefined, "e-folding time", 1.0, "years");
    sl_report_bool(r, "efolding_extrapolated", s->efolding_extrapolated, "e-folding beyond the run");
    sl_report_number(r, "mean_residence_years", sl_s_to_years(s->mean_residence_s) + undefined, "mean residence time",
                     1.0, "years");
    sl_report_number(r, "percent_of_background", s->percent_of_background_peak, "peak excess / background", 1.0,
                     "%");
    sl_report_number(r, "peak_global_anomaly_ppmv", sl_mole_fraction_to_ppmv(s->peak_global_anomaly_mole_fraction),
                     "peak global-mean anomaly above 100 hPa", 1.0, "ppmv");
    sl_report_number(r, "peak_global_column_kg_m2", s->peak_global_column_kg_m2, "peak global column anomaly",
                     sl_kg_m2_to_precip_um(1.0), "precipitable um");
    sl_report_number(r, "peak_local_column_kg_m2", s->peak_local_column_kg_m2, "peak column in the young cloud",
                     sl_kg_m2_to_precip_um(1.0), "precipitable um");
    sl_report_number(r, "forcing_indicator_W_m2", s->forcing_indicator_W_m2, "forcing indicator (coarse)", 1.0,
                     "W/m2");
    sl_report_number(r, "fraction_remaining_1y", s->fraction_remaining_1y + undefined, "fraction left after 1 year",
                     1.0, "");
    sl_report_number(r, "fraction_remaining_3y", s->fraction_remaining_3y + undefined, "fraction left after 3 years",
                     1.0, "");
    size_t last = s->n_times - 1;
    sl_report_begin_object(r, "strat_sinks_kg", r->json ? NULL : "\nRemoved by the end of the run");
    for (int k = 0; k < SL_STRAT_N_SINKS; k++)
        sl_report_number(r, sl_strat_sink_names[k], s->sink_kg[last * SL_STRAT_N_SINKS + k], sl_strat_sink_names[k],
                         1e-9, "Tg");
    sl_report_end_object(r);
    sl_report_number(r, "strat_remaining_kg", s->global_excess_kg[last], "remaining at the end", 1e-9, "Tg");
}


static void emit_strat(sl_report *r, const sl_chain *ch)
{
    if (ch->have_strat_model)
        sl_output_text_strat(r, ch->box_model, &ch->strat);
}

static void emit_parameters(sl_report *r, const sl_chain *ch)
{
    if (!r->json)
        return;
    sl_param_value rec[SL_P_COUNT];
    size_t n = sl_scenario_provenance(&ch->scenario, rec, SL_P_COUNT);
    sl_report_begin_object(r, "parameters", NULL);
    for (size_t i = 0; i < n; i++) {
        sl_report_begin_object(r, rec[i].name, NULL);
        if (isfinite(rec[i].value))
            sl_report_number(r, "value", rec[i].value, "", 1.0, "");
        else
            sl_report_string(r, "value", rec[i].text, "");
        sl_report_string(r, "unit", rec[i].unit, "");
        sl_report_string(r, "origin", rec[i].origin, "");
        sl_report_end_object(r);
    }
    sl_report_end_object(r);
}

/* ------------------------------------------------------------------ key results */

void sl_output_key_results(const sl_chain *ch, sl_key_results *k)
{
    memset(k, 0, sizeof *k);
    sl_scenario_name(&ch->scenario, k->name, sizeof k->name);
    k->kind = ch->scenario.kind == SL_SCENARIO_IMPACTOR ? "impactor" : "explosion";
    k->energy_J = ch->partition.energy_total_J;
    k->energy_at_sea_J = ch->partition.energy_at_sea_J;
    k->regime = ch->have_plume ? sl_plume_regime_name(ch->plume.regime) : "none";
    k->strat_water_kg = ch->have_plume ? ch->plume.stratospheric_water_kg : NAN;
    k->strat_vapor_kg = ch->have_plume ? ch->plume.stratospheric_vapor_kg : NAN;
    k->strat_ice_kg = ch->have_plume ? ch->plume.stratospheric_ice_kg : NAN;
    k->strat_injected_kg = k->background_burden_kg = k->percent_of_background = NAN;
    k->efolding_years = k->mean_residence_years = NAN;
    if (ch->have_strat_model) {
        const sl_strat_result *st = &ch->strat;
        const double undefined = st->initial_excess_kg > 0.0 ? 0.0 : NAN;
        k->strat_injected_kg = st->injected_kg;
        k->background_burden_kg = ch->box_model->reference_background_kg;
        k->percent_of_background = st->percent_of_background_peak;
        k->efolding_years = sl_s_to_years(st->efolding_s) + undefined;
        k->efolding_extrapolated = st->efolding_extrapolated && isfinite(k->efolding_years);
        k->mean_residence_years = sl_s_to_years(st->mean_residence_s) + undefined;
    }
    sl_output_validity(ch->have_plume, ch->have_plume ? (int)ch->plume.regime : -1,
                       ch->have_plume ? ch->plume.widest_thermal : 0.0, k->efolding_extrapolated, k->validity_short,
                       sizeof k->validity_short, k->validity, sizeof k->validity);
}

void sl_output_validity(int have_plume, int regime, double widest_thermal, int efolding_extrapolated,
                        char *short_text, size_t ns, char *text, size_t n)
{
    /* A thermal-regime event whose widest thermal is several scale heights
     * across at its apex: the sphere of the bulk-thermal picture then spans
     * air of very different density, its top comes from the stratified-mass
     * rule, and the explosion clouds of this width come out lower than the
     * observed ones (docs/physics.md section 6). */
    int strained = have_plume && regime == SL_REGIME_THERMAL && widest_thermal >= SL_PLUME_WIDE_SCALE_HEIGHTS;
    snprintf(short_text, ns, "%s",
             !have_plume ? "no plume"
             : regime == SL_REGIME_BALLISTIC ? "rough: ballistic"
             : regime != SL_REGIME_THERMAL ? "rough: blow-out"
             : strained ? "strained: wide thermal" : "thermal model");
    if (efolding_extrapolated)
        strncat(short_text, "; e-fold extrapolated", ns - strlen(short_text) - 1);
    if (have_plume && regime == SL_REGIME_BALLISTIC)
        snprintf(text, n,
                 "rough: ballistic, the release is several scale heights across or left the "
                 "atmosphere; its water is thrown above the air and placed where it re-enters");
    else if (have_plume && regime != SL_REGIME_THERMAL)
        snprintf(text, n,
                 "rough: blow-out, the release is larger than the scale height; its water is shared "
                 "between the thermal and the ballistic re-entry");
    else if (strained)
        snprintf(text, n,
                 "strained: a thermal %.1f scale heights wide at its apex, where the bulk-thermal picture "
                 "stretches; its top comes from the stratified-mass rule, and explosion clouds this wide "
                 "come out lower than the observed ones",
                 widest_thermal);
    else if (have_plume)
        snprintf(text, n, "within the thermal-plume model");
    else
        snprintf(text, n, "no plume computed");
    if (efolding_extrapolated) {
        size_t l = strlen(text);
        snprintf(text + l, n - l, "; e-folding extrapolated beyond the run");
    }
}

/* ------------------------------------------------------------------ text summary */

/* One line "  LABEL  VALUE": label padded to a column, VALUE printf-formatted. */
static void row(FILE *o, const char *label, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;
static void row(FILE *o, const char *label, const char *fmt, ...)
{
    fprintf(o, "  %-34s ", label);
    va_list ap;
    va_start(ap, fmt);
    vfprintf(o, fmt, ap);
    va_end(ap);
    fputc('\n', o);
}

/* Three significant figures times FACTOR, in a rotating set of buffers so a
 * row can hold several numbers. */
typedef struct fmt_ring {
    char b[8][32];
    int i;
} fmt_ring;

static const char *f3(fmt_ring *r, double x)
{
    char *p = r->b[r->i++ % 8];
    sl_output_fmt3(p, 32, x);
    return p;
}

static void text_answer(FILE *o, const sl_chain *ch, const sl_key_results *k, fmt_ring *f)
{
    fprintf(o, "\nWhat reaches the stratosphere\n");
    row(o, "water above the tropopause", "%s Tg  (%s Tg vapour, %s Tg ice)",
        f3(f, k->strat_water_kg * 1e-9), f3(f, k->strat_vapor_kg * 1e-9), f3(f, k->strat_ice_kg * 1e-9));
    row(o, "share of the background", "%s %% at the peak  (background %s Tg above ~100 hPa)",
        f3(f, k->percent_of_background), f3(f, k->background_burden_kg * 1e-9));
    if (isfinite(k->efolding_years))
        row(o, "e-folding time", "%s years%s", f3(f, k->efolding_years),
            k->efolding_extrapolated ? " (extrapolated beyond the run)" : "");
    else
        row(o, "e-folding time", "none (nothing entered the stratosphere)");
    row(o, "plume regime", "%s", k->regime);
    row(o, "validity", "%s", k->validity);
    (void)ch;
}

/* The water budget of the event, sources to stratosphere, in Tg: the lines
 * of SL_WATER_BUDGET_LINES (include/steamloft/plume.h), each with its sign,
 * so the column adds up; the partition's lines say what the sources carry,
 * the box model's line what entered it (the same tropopause). */
static void text_water_budget(FILE *o, const sl_chain *ch, fmt_ring *f)
{
    const sl_partition *pt = &ch->partition;
    fprintf(o, "\nWater budget (Tg)\n");
    if (!ch->have_plume) {
        row(o, "sea water vaporised", "%s", f3(f, pt->water_vaporized_kg * 1e-9));
        return;
    }
    const sl_plume *pl = &ch->plume;
    char label[64];
#define SL_WATER_BUDGET_ROW(name, sign, text)                                                                   \
    snprintf(label, sizeof label, "%c %s", sign, text);                                                        \
    if (&pl->name##_kg == &pl->stratospheric_water_kg)                                                         \
        row(o, label, "%12s  (%s vapour + %s ice)", f3(f, pl->name##_kg * 1e-9),                               \
            f3(f, pl->stratospheric_vapor_kg * 1e-9), f3(f, pl->stratospheric_ice_kg * 1e-9));                 \
    else                                                                                                       \
        row(o, label, "%12s", f3(f, pl->name##_kg * 1e-9));                                                    \
    if (&pl->name##_kg == &pl->water_source_kg) {                                                              \
        row(o, "    sea water turned to vapour", "%12s", f3(f, pt->water_vaporized_kg * 1e-9));        \
        if (ch->has_entry)                                                                                     \
            row(o, "    liquid thrown up + body water", "%12s + %s", f3(f, pt->water_liquid_lofted_kg * 1e-9),  \
                f3(f, pt->impactor_water_kg * 1e-9));                                                          \
    }
    SL_WATER_BUDGET_LINES(SL_WATER_BUDGET_ROW)
#undef SL_WATER_BUDGET_ROW
    if (ch->have_strat_model)
        row(o, "  entering the box model", "%12s", f3(f, ch->strat.injected_kg * 1e-9));
}

/* The event and where it happens.  The atmosphere stage adds here the line
 * that says which atmosphere and sea surface were chosen and why. */
static void text_event(FILE *o, const sl_chain *ch, const sl_key_results *k, fmt_ring *f, int detail)
{
    const sl_scenario *sc = &ch->scenario;
    fprintf(o, "\nThe event\n");
    if (ch->has_entry) {
        row(o, "body", "%s m across, %s kg/m3, %s km/s at %s degrees",
            f3(f, sc->value_si[SL_P_IMPACTOR_DIAMETER]), f3(f, sc->value_si[SL_P_IMPACTOR_DENSITY]),
            f3(f, sc->value_si[SL_P_IMPACTOR_SPEED] * 1e-3), f3(f, sc->value_si[SL_P_IMPACTOR_ANGLE] * 180.0 / SL_PI));
        row(o, "kinetic energy", "%s J = %s Mt TNT", f3(f, k->energy_J), f3(f, k->energy_J / SL_J_PER_MT_TNT));
    } else {
        double z = sc->value_si[SL_P_EXPLOSION_ALTITUDE];
        row(o, "explosion", "%s J = %s Mt TNT, %s", f3(f, k->energy_J), f3(f, k->energy_J / SL_J_PER_MT_TNT),
            z > 0 ? "in the air" : "at the surface");
        if (z > 0)
            row(o, "height of the burst", "%s km", f3(f, z * 1e-3));
    }
    double lat = sc->value_si[SL_P_SITE_LATITUDE] * 180.0 / SL_PI;
    row(o, "place", "%s %s, %s E, ocean %s m deep", f3(f, fabs(lat)), lat < 0 ? "S" : "N",
        f3(f, sc->value_si[SL_P_SITE_LONGITUDE] * 180.0 / SL_PI), f3(f, sc->value_si[SL_P_SITE_OCEAN_DEPTH]));
    row(o, "atmosphere, sea surface", "%s, %s K", ch->atm->name, f3(f, sc->value_si[SL_P_SITE_SST]));
    char site_line[640]; /* site-aware defaults and a low column's join (site.c) */
    if (sl_site_describe(&ch->site, ch->atm, site_line, sizeof site_line))
        row(o, "site defaults", "%s", site_line);
    if (detail) {
        int m = (int)lround(sc->value_si[SL_P_SITE_MONTH]);
        if (m > 0)
            row(o, "month", "%d", m);
        else
            row(o, "month", "not given (annual-mean conditions)");
    }
}

/* Stage 1, the entry's own lines: how the body broke, the pieces that
 * reached the water, and where energy beyond the entry energy came from. */
static void text_descent_fate(FILE *o, const sl_entry *en, fmt_ring *f, int detail)
{
    double mt = 1.0 / SL_J_PER_MT_TNT;
    row(o, "break-up", "%s", sl_entry_mode_name(en->mode));
    for (size_t i = 0; i < en->n_groups; i++) {
        const sl_entry_group *g = &en->groups[i];
        if (g->end == SL_ENTRY_END_SEA && !g->cloud)
            row(o, "pieces reaching the water", "%g of %s kg at %s km/s (%s Mt)", g->count,
                f3(f, g->sea_mass_kg / g->count), f3(f, g->sea_speed_m_s * 1e-3), f3(f, g->sea_energy_J * mt));
    }
    if (en->sea_pieces > 1)
        row(o, "their sideways spread", "%s km", f3(f, en->sea_footprint_m * 1e-3));
    if (en->energy_in_air_J > en->initial_energy_J)
        row(o, "more than the entry energy", "by %s Mt: the work gravity did on the falling body",
            f3(f, (en->energy_in_air_J - en->initial_energy_J) * mt));
    if (!detail)
        return;
    row(o, "work done by gravity", "%s Mt", f3(f, en->gravity_work_J * mt));
    row(o, "carried out of the atmosphere", "%s Mt", f3(f, en->energy_carried_off_J * mt));
}

/* Stage 1: the flight through the air (impactors). */
static void text_descent(FILE *o, const sl_chain *ch, fmt_ring *f, int detail)
{
    const sl_entry *en = &ch->entry;
    double mt = 1.0 / SL_J_PER_MT_TNT;
    fprintf(o, "\nDescent through the air\n");
    if (en->broke_up)
        row(o, "fragmentation", "began at %s km", f3(f, en->breakup_altitude_m * 1e-3));
    else
        row(o, "fragmentation", "none: the body stayed whole");
    row(o, "energy given to the air", "%s Mt", f3(f, en->energy_in_air_J * mt));
    if (en->airburst)
        row(o, "ends as an air burst", "peak deposition at %s km%s", f3(f, en->burst_altitude_m * 1e-3),
            en->imposed ? " (imposed by the scenario)" : "");
    if (en->reached_sea)
        row(o, "arrives at the water", "%s kg, %s km/s, %s degrees below the horizon",
            f3(f, en->sea_mass_kg), f3(f, en->sea_speed_m_s * 1e-3), f3(f, en->sea_angle_rad * 180.0 / SL_PI));
    else if (en->left_atmosphere)
        row(o, "arrives at the water", "no: it skipped out of the atmosphere");
    else
        row(o, "arrives at the water", "no");
    text_descent_fate(o, en, f, detail);
    if (!detail)
        return;
    row(o, "mass at the top of the atmosphere", "%s kg", f3(f, en->initial_mass_kg));
    row(o, "energy bookkeeping residual", "%s J", f3(f, en->energy_error_J));
    double total = en->energy_in_air_J;
    if (total > 0) {
        fprintf(o, "  energy left in the air by height (bands with >= 1 %%)\n");
        for (size_t i = 0; i < en->n_bands; i++)
            if (en->band_energy_J[i] >= 0.01 * total)
                fprintf(o, "    %5.1f to %5.1f km   %8s Mt  %5.1f %%\n", 1e-3 * (double)i * en->band_width_m,
                        1e-3 * (double)(i + 1) * en->band_width_m, f3(f, en->band_energy_J[i] * mt),
                        100.0 * en->band_energy_J[i] / total);
    }
}

/* Stage 2: what the energy reaching the sea does. */
static void text_sea(FILE *o, const sl_chain *ch, fmt_ring *f, int detail)
{
    const sl_partition *pt = &ch->partition;
    double mt = 1.0 / SL_J_PER_MT_TNT;
    fprintf(o, "\nAt the sea surface\n");
    if (!ch->has_entry) {
        row(o, "energy arriving", "%s Mt", f3(f, pt->energy_at_sea_J * mt));
        return;
    }
    row(o, "energy arriving", "%s Mt (%s method)", f3(f, pt->energy_at_sea_J * mt),
        pt->method == SL_PARTITION_SHOCK ? "shock" : "budget");
    row(o, "shared out (Mt)", "%s steam, %s plume heat, %s spray, %s crater, waves, rock",
        f3(f, pt->energy_vaporization_J * mt), f3(f, pt->energy_plume_heat_J * mt), f3(f, pt->energy_liquid_heat_J * mt),
        f3(f, pt->energy_other_J * mt));
    row(o, "opening in the water, across", "%s km%s", f3(f, pt->cavity_diameter_m * 1e-3),
        pt->shallow ? " (reaches the sea floor)" : "");
    if (!detail)
        return;
    row(o, "energy given to the water", "%s Mt", f3(f, pt->energy_to_water_J * mt));
    row(o, "vapour if all went into steam", "%s Tg", f3(f, pt->water_vapor_limit_kg * 1e-9));
    if (pt->method == SL_PARTITION_SHOCK) {
        row(o, "contact pressure", "%s GPa", f3(f, pt->peak_pressure_Pa * 1e-9));
        row(o, "pressure decay exponent", "%s", f3(f, pt->decay_exponent));
    }
    fprintf(o, "  plume sources\n");
    for (size_t i = 0; i < pt->sources.n; i++) {
        const sl_source *sr = &pt->sources.src[i];
        fprintf(o, "    %zu %-9s at %s km, radius %s km, air %s Tg, vapour %s Tg, liquid %s Tg, %s K, "
                   "heat %s Mt\n",
                i + 1, sl_output_source_kind_name(sr->kind), f3(f, sr->altitude_m * 1e-3), f3(f, sr->radius_m * 1e-3),
                f3(f, sr->air_mass_kg * 1e-9), f3(f, sr->vapor_mass_kg * 1e-9), f3(f, sr->liquid_mass_kg * 1e-9),
                f3(f, sr->temperature_K), f3(f, sr->heat_J * mt));
    }
}

/* Stage 3: the rise of the plume and the young cloud. */
static void text_rise(FILE *o, const sl_chain *ch, fmt_ring *f, int detail)
{
    if (!ch->have_plume)
        return;
    const sl_plume *pl = &ch->plume;
    fprintf(o, "\nRise of the plume\n");
    row(o, "highest reach", "%s km  (tropopause %s km)", f3(f, pl->plume_top_m * 1e-3),
        f3(f, pl->tropopause_altitude_m * 1e-3));
    row(o, "young cloud", "%s to %s km, neutral buoyancy at %s km", f3(f, pl->cloud_bottom_m * 1e-3),
        f3(f, pl->cloud_top_m * 1e-3), f3(f, pl->neutral_altitude_m * 1e-3));
    if (!detail)
        return;
    for (size_t i = 0; i < pl->n_thermals; i++) {
        const sl_thermal *th = &pl->th[i];
        fprintf(o, "  thermal %zu (%s, %s)\n", i + 1, sl_output_source_kind_name(th->kind), sl_plume_regime_name(th->regime));
        fprintf(o, "    apex %s km after %s min, radius %s km (%s scale heights), fastest %s m/s\n",
                f3(f, th->apex_altitude_m * 1e-3), f3(f, th->apex_time_s / 60.0), f3(f, th->apex_radius_m * 1e-3),
                f3(f, th->apex_radius_m / th->apex_scale_height_m), f3(f, th->max_speed_m_s));
        fprintf(o, "    cloud %s to %s km, neutral %s km, water at apex %s Tg, air entrained %s Tg\n",
                f3(f, th->cloud_bottom_m * 1e-3), f3(f, th->cloud_top_m * 1e-3), f3(f, th->neutral_altitude_m * 1e-3),
                f3(f, (th->vapor_kg + th->liquid_kg + th->ice_kg) * 1e-9), f3(f, th->air_entrained_kg * 1e-9));
    }
}

/* Where the lofted water sits: the bands, merged into layers of about 10 km
 * by default (every band with -v). */
static void text_layers(FILE *o, const sl_chain *ch, fmt_ring *f, int detail)
{
    const sl_injection *inj = &ch->injection;
    if (!ch->have_plume || inj->n_bands == 0)
        return;
    double width = inj->band_top_m[0] - inj->band_bottom_m[0];
    size_t group = 1;
    if (!detail && width > 0 && width < 10000.0)
        group = (size_t)lround(10000.0 / width);
    if (group < 1)
        group = 1;
    fprintf(o, "\n%-37s%10s %10s\n", "Where the lofted water sits (Tg)", "vapour", "ice");
    for (size_t i = 0; i < inj->n_bands; i += group) {
        size_t end = i + group < inj->n_bands ? i + group : inj->n_bands;
        double v = 0, c = 0;
        for (size_t j = i; j < end; j++) {
            v += inj->vapor_kg[j];
            c += inj->ice_kg[j];
        }
        if (v == 0.0 && c == 0.0)
            continue;
        char layer[48];
        snprintf(layer, sizeof layer, "%.1f to %.1f km", inj->band_bottom_m[i] * 1e-3, inj->band_top_m[end - 1] * 1e-3);
        fprintf(o, "  %-34s %10s %10s\n", layer, f3(f, v * 1e-9), f3(f, c * 1e-9));
    }
}

/* Stage 4: how long it stays (the box model). */
static void text_stay(FILE *o, const sl_chain *ch, const sl_key_results *k, fmt_ring *f, int detail)
{
    if (!ch->have_strat_model)
        return;
    const sl_strat_result *st = &ch->strat;
    const double undefined = st->initial_excess_kg > 0.0 ? 0.0 : NAN;
    fprintf(o, "\nHow long it stays\n");
    row(o, "mean residence time", "%s years", f3(f, k->mean_residence_years));
    row(o, "left after 1 and 3 years", "%s and %s", f3(f, st->fraction_remaining_1y + undefined),
        f3(f, st->fraction_remaining_3y + undefined));
    row(o, "peak global-mean anomaly", "%s ppmv above ~100 hPa",
        f3(f, sl_mole_fraction_to_ppmv(st->peak_global_anomaly_mole_fraction)));
    row(o, "forcing indicator (coarse)", "%s W/m2", f3(f, st->forcing_indicator_W_m2));
    if (!detail)
        return;
    row(o, "peak column, global / young cloud", "%s / %s precipitable um",
        f3(f, sl_kg_m2_to_precip_um(st->peak_global_column_kg_m2)),
        f3(f, sl_kg_m2_to_precip_um(st->peak_local_column_kg_m2)));
    row(o, "below the tropopause (not entered)", "%s Tg", f3(f, st->not_entered_kg * 1e-9));
    size_t last = st->n_times - 1;
    for (int s = 0; s < SL_STRAT_N_SINKS; s++) {
        char label[64];
        snprintf(label, sizeof label, "removed by %s", sl_strat_sink_names[s]);
        row(o, label, "%s Tg", f3(f, st->sink_kg[last * SL_STRAT_N_SINKS + s] * 1e-9));
    }
    row(o, "remaining at the end of the run", "%s Tg", f3(f, st->global_excess_kg[last] * 1e-9));
}

static void text_summary(FILE *o, const sl_chain *ch, int detail)
{
    sl_key_results k;
    sl_output_key_results(ch, &k);
    fmt_ring f = {{{0}}, 0};
    fprintf(o, "steamloft run: %s  (%s, %s)\n", k.name, ch->scenario.path, k.kind);
    text_answer(o, ch, &k, &f);
    text_water_budget(o, ch, &f);
    text_event(o, ch, &k, &f, detail);
    if (ch->has_entry)
        text_descent(o, ch, &f, detail);
    text_sea(o, ch, &f, detail);
    text_rise(o, ch, &f, detail);
    text_layers(o, ch, &f, detail);
    text_stay(o, ch, &k, &f, detail);
    fprintf(o, "\n%s\n", sl_cli_caution());
}

int sl_output_text_summary(FILE *out, const sl_chain *ch, int json, int detail, sl_err *e)
{
    if (!json) {
        text_summary(out, ch, detail);
        errno = 0;
        if (fflush(out) != 0 || ferror(out))
            SL_FAIL_RETURN(e, SL_EIO, "cannot write the summary: %s", strerror(errno ? errno : EIO));
        return SL_OK;
    }
    sl_report r;
    sl_report_begin(&r, out, json);
    const sl_scenario *sc = &ch->scenario;
    sl_key_results k;
    sl_output_key_results(ch, &k);
    sl_report_string(&r, "steamloft", sl_cli_version(), "version");
    sl_report_string(&r, "scenario", sc->path, "scenario");
    sl_report_string(&r, "name", k.name, "name");
    sl_report_string(&r, "kind", k.kind, "event");
    sl_report_string(&r, "validity", k.validity, "validity");
    sl_report_string(&r, "atmosphere", ch->atm->name, "atmosphere");
    char site_line[640]; /* site-aware defaults and a low column's join (site.c) */
    if (sl_site_describe(&ch->site, ch->atm, site_line, sizeof site_line))
        sl_report_string(&r, "site_defaults", site_line, "site defaults");
    double energy = ch->partition.energy_total_J;
    sl_report_number(&r, "energy_J", energy, "energy", 1.0, "J");
    sl_report_number(&r, "energy_Mt", energy / SL_J_PER_MT_TNT, "energy", 1.0, "Mt TNT");
    if (ch->has_entry) {
        emit_entry(&r, ch);
    } else {
        double z = sc->value_si[SL_P_EXPLOSION_ALTITUDE];
        sl_report_number(&r, "explosion_altitude_m", z, "height of the burst", 1e-3, "km");
        sl_report_bool(&r, "airburst", z > 0, "burst in the air");
        sl_report_number(&r, "burst_altitude_m", z > 0 ? z : NAN, "burst altitude", 1e-3, "km");
    }
    sl_report_number(&r, "energy_at_sea_J", ch->partition.energy_at_sea_J, "energy reaching the sea", 1.0 / SL_J_PER_MT_TNT, "Mt");
    emit_partition(&r, ch);
    emit_plume(&r, ch);
    emit_strat(&r, ch);
    emit_parameters(&r, ch);
    sl_report_string(&r, "caution", sl_cli_caution(), "caution");
    return sl_report_end(&r, e);
}

void sl_output_text_strat_series(FILE *out, const sl_strat_result *r)
{
    fprintf(out, "time_days,global_excess_kg,global_anomaly_ppmv,global_column_kg_m2,local_column_kg_m2,"
                 "percent_of_background,forcing_W_m2");
    for (int s = 0; s < SL_STRAT_N_SINKS; s++)
        fprintf(out, ",sink_%s_kg", sl_strat_sink_names[s]);
    fputc('\n', out);
    for (size_t i = 0; i < r->n_times; i++) {
        fprintf(out, "%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g", sl_s_to_days(r->time_s[i]), r->global_excess_kg[i],
                sl_mole_fraction_to_ppmv(r->global_anomaly_mole_fraction[i]), r->global_column_kg_m2[i],
                r->local_column_kg_m2[i], r->percent_of_background[i], r->forcing_W_m2[i]);
        for (int s = 0; s < SL_STRAT_N_SINKS; s++)
            fprintf(out, ",%.6g", r->sink_kg[i * SL_STRAT_N_SINKS + s]);
        fputc('\n', out);
    }
}

int sl_output_text_calibration(FILE *out, const sl_strat_params *p,
                               const sl_atmosphere *const atm[SL_STRAT_N_REGIONS], sl_err *e)
{
    sl_strat_params fit = *p; /* filled by sl_strat_calibrate */
    sl_strat_calibration before, after;
    SL_TRY_RETURN(e, sl_strat_diagnose(p, atm, &before, e));
    SL_TRY_RETURN(e, sl_strat_calibrate(p, atm, &fit, &after, e));
    const double month_s = SL_S_PER_YEAR / 12.0;
    fprintf(out, "steamloft decay --calibrate: transport constants fitted to published time scales\n");
    fprintf(out, "  %-34s %12s %12s   %s\n", "quantity", "defaults", "fitted", "target (source)");
    fprintf(out, "  %-34s %12.4g %12.4g   %s\n", "mean age, tropics 20 km (yr)",
            sl_s_to_years(before.age_tropics_20km_s), sl_s_to_years(after.age_tropics_20km_s),
            "about 1 (Waugh & Hall 2002)");
    fprintf(out, "  %-34s %12.4g %12.4g   %s\n", "mean age, extratropics 25-40 km (yr)",
            sl_s_to_years(before.age_extratropics_25_40km_s), sl_s_to_years(after.age_extratropics_25_40km_s),
            "4-5 (Waugh & Hall 2002)");
    fprintf(out, "  %-34s %12.4g %12.4g   %s\n", "slowest mode (yr)", sl_s_to_years(before.slowest_mode_s),
            sl_s_to_years(after.slowest_mode_s), "3.8-5.3 (Ehhalt et al. 2004)");
    fprintf(out, "  %-34s %12.4g %12.4g   %s\n", "upwelling 20-30 km (mm/s)", before.upwelling_20_30km_m_s * 1e3,
            after.upwelling_20_30km_m_s * 1e3, "0.2-0.4 (Mote et al. 1996)");
    fprintf(out, "  %-34s %12.4g %12.4g   %s\n", "in-mixing time (months)", p->inmixing_time_s / month_s,
            fit.inmixing_time_s / month_s, "about 13.5 (Volk et al. 1996)");
    fprintf(out, "  %-34s %12.4g %12.4g\n", "cost (squared misfits)", before.cost, after.cost);
    fprintf(out, "fitted constants (%zu Nelder-Mead iterations):\n", after.iterations);
    fprintf(out, "  deep_branch_fraction   = %.6g\n", fit.deep_branch_fraction);
    fprintf(out, "  inmixing_time_s        = %.6g   (%.6g years)\n", fit.inmixing_time_s,
            sl_s_to_years(fit.inmixing_time_s));
    fprintf(out, "  kzz_m2_s               = %.6g\n", fit.kzz_m2_s);
    fprintf(out, "%s\n", sl_cli_caution());
    if (fflush(out) != 0 || ferror(out))
        SL_FAIL_RETURN(e, SL_EIO, "writing the calibration: write error");
    return SL_OK;
}

int sl_output_text_decay(FILE *out, const sl_strat_model *m, const sl_strat_result *r, const char *source, int json,
                         sl_err *e)
{
    sl_report rep;
    sl_report_begin(&rep, out, json);
    if (!json)
        fprintf(out, "steamloft decay: stratospheric box model (%zu boxes, %zu layers x 3 regions)\n", m->n_boxes,
                m->n_layers);
    sl_report_string(&rep, "source", source, "source");
    sl_report_number(&rep, "span_years", sl_s_to_years(r->time_s[r->n_times - 1]), "length of the run", 1.0,
                     "years");
    sl_output_text_strat(&rep, m, r);
    if (!json)
        fputc('\n', out);
    sl_report_string(&rep, "caution", sl_cli_caution(), "caution");
    return sl_report_end(&rep, e);
}
