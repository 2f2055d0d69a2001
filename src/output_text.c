/* output_text: run summaries as text or JSON (see include/steamloft/output_text.h).
 * Quantities are emitted once; the JSON keys are SI with the unit in the key,
 * the text shows the units people read (Mt TNT, km, Tg, degrees). */
#include "steamloft/output_text.h"
#include "steamloft/site.h"
#include "steamloft/cli.h"
#include "steamloft/units.h"

#include <math.h>
#include <string.h>

static void json_string(FILE *out, const char *s)
{
    fputc('"', out);
    for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
        if (*p == '"' || *p == '\\')
            fprintf(out, "\\%c", *p);
        else if (*p == '\n')
            fputs("\\n", out);
        else if (*p == '\t')
            fputs("\\t", out);
        else if (*p < 0x20)
            fprintf(out, "\\u%04x", *p);
        else
            fputc(*p, out);
    }
    fputc('"', out);
}

/* Separator, indentation and key of the next JSON member. */
static void json_member(sl_report *r, const char *key)
{
    if (r->count[r->depth]++ > 0)
        fputc(',', r->out);
    fputc('\n', r->out);
    for (int i = 0; i <= r->depth; i++)
        fputs("  ", r->out);
    if (key && !r->in_array[r->depth]) {
        json_string(r->out, key);
        fputs(": ", r->out);
    }
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
        fputc('{', out);
}

int sl_report_end(sl_report *r, sl_err *e)
{
    if (r->json)
        fputs("\n}\n", r->out);
    if (fflush(r->out) != 0 || ferror(r->out))
        SL_FAIL_RETURN(e, SL_EIO, "cannot write the summary");
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
        json_member(r, key);
        if (isfinite(value_si))
            fprintf(r->out, "%.10g", value_si);
        else
            fputs("null", r->out);
        return;
    }
    text_label(r, label);
    if (isfinite(value_si))
        fprintf(r->out, "%.4g%s%s\n", value_si * factor, unit && unit[0] ? " " : "", unit ? unit : "");
    else
        fputs("none\n", r->out);
}

void sl_report_bool(sl_report *r, const char *key, int value, const char *label)
{
    if (r->json) {
        json_member(r, key);
        fputs(value ? "true" : "false", r->out);
        return;
    }
    text_label(r, label);
    fputs(value ? "yes\n" : "no\n", r->out);
}

void sl_report_string(sl_report *r, const char *key, const char *value, const char *label)
{
    if (r->json) {
        json_member(r, key);
        json_string(r->out, value);
        return;
    }
    text_label(r, label);
    fprintf(r->out, "%s\n", value);
}

static void begin_nested(sl_report *r, const char *key, const char *label, int array)
{
    if (r->json) {
        json_member(r, key);
        fputc(array ? '[' : '{', r->out);
        if (r->depth + 1 < SL_REPORT_MAX_DEPTH) {
            r->depth++;
            r->count[r->depth] = 0;
            r->in_array[r->depth] = array;
        }
        return;
    }
    if (label)
        fprintf(r->out, "%*s%s\n", 2 * r->text_indent, "", label);
    r->text_indent++;
}

static void end_nested(sl_report *r, int array)
{
    if (r->json) {
        int had = r->count[r->depth] > 0;
        if (r->depth > 0)
            r->depth--;
        if (had) {
            fputc('\n', r->out);
            for (int i = 0; i <= r->depth; i++)
                fputs("  ", r->out);
        }
        fputc(array ? ']' : '}', r->out);
        return;
    }
    if (r->text_indent > 0)
        r->text_indent--;
}

void sl_report_begin_object(sl_report *r, const char *key, const char *label) { begin_nested(r, key, label, 0); }
void sl_report_end_object(sl_report *r) { end_nested(r, 0); }
void sl_report_begin_array(sl_report *r, const char *key, const char *label) { begin_nested(r, key, label, 1); }
void sl_report_end_array(sl_report *r) { end_nested(r, 1); }

static const char *source_kind_name(sl_source_kind k)
{
    switch (k) {
    case SL_SOURCE_SEA_PLUME: return "sea_plume";
    case SL_SOURCE_AIRBURST: return "airburst";
    case SL_SOURCE_EXPLOSION: return "explosion";
    }
    return "unknown";
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
        sl_report_number(r, "cavity_diameter_m", pt->cavity_diameter_m, "transient cavity diameter", 1e-3, "km");
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
        snprintf(label, sizeof label, "source %zu (%s)", i + 1, source_kind_name(s->kind));
        sl_report_begin_object(r, NULL, label);
        sl_report_string(r, "kind", source_kind_name(s->kind), "kind");
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
    sl_report_number(r, "water_lofted_kg", pl->water_lofted_kg, "water in the young clouds", 1e-9, "Tg");
    sl_report_number(r, "fallout_kg", pl->fallout_kg, "fallen out: spray and condensate", 1e-9, "Tg");
    sl_report_number(r, "frozen_out_kg", pl->frozen_out_kg, "ice sedimented out at cloud level", 1e-9, "Tg");
    sl_report_number(r, "background_water_kg", pl->background_kg, "background vapour of the cloud air", 1e-9, "Tg");
    sl_report_number(r, "water_below_bands_kg", pl->below_bands_kg, "cloud water below the lowest band", 1e-9, "Tg");
    sl_report_number(r, "injected_vapor_kg", sl_injection_total_vapor_kg(inj), "vapour injected (all bands)", 1e-9, "Tg");
    sl_report_number(r, "injected_ice_kg", sl_injection_total_ice_kg(inj), "ice remaining (all bands)", 1e-9, "Tg");
    sl_report_number(r, "stratospheric_water_kg", pl->stratospheric_water_kg, "vapour above the tropopause", 1e-9, "Tg");
    sl_report_number(r, "stratospheric_ice_kg", pl->stratospheric_ice_kg, "ice above the tropopause", 1e-9, "Tg");
    sl_report_begin_array(r, "thermals", r->json ? NULL : "\nThermals");
    for (size_t i = 0; i < pl->n_thermals; i++) {
        const sl_thermal *th = &pl->th[i];
        char label[48];
        snprintf(label, sizeof label, "thermal %zu (%s)", i + 1, source_kind_name(th->kind));
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
        sl_output_text_strat(r, &ch->strat_model, &ch->strat);
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

int sl_output_text_summary(FILE *out, const sl_chain *ch, int json, sl_err *e)
{
    sl_report r;
    sl_report_begin(&r, out, json);
    const sl_scenario *sc = &ch->scenario;
    if (!json)
        fprintf(out, "steamloft run: %s\n", sc->path);
    sl_report_string(&r, "steamloft", sl_cli_version(), "version");
    sl_report_string(&r, "scenario", sc->path, "scenario");
    sl_report_string(&r, "kind", sc->kind == SL_SCENARIO_IMPACTOR ? "impactor" : "explosion", "event");
    sl_report_string(&r, "atmosphere", ch->atmosphere.name, "atmosphere");
    char site_line[640]; /* site-aware defaults and a low column's join (site.c) */
    if (sl_site_describe(&ch->site, &ch->atmosphere, site_line, sizeof site_line))
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
    if (!json)
        fputc('\n', out);
    sl_report_string(&r, "caution", sl_cli_caution(), "caution");
    return sl_report_end(&r, e);
}
