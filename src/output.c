/* output: checks on the results view shared by the writers, and the list of
 * published methods for the `references` attribute (see
 * include/steamloft/output.h).
 *
 * No physics is computed here.  The reference list names the methods each
 * stage implements, by their usual citations: U.S. Standard Atmosphere 1976
 * (NOAA-S/T 76-1562) and the WMO (1957) lapse-rate tropopause; Murphy & Koop
 * 2005 (QJRMS 131, 1539) for saturation over ice and liquid water; Chyba,
 * Thomas & Zahnle 1993 (Nature 361, 40) and Hills & Goda 1993 (AJ 105,
 * 1114) for entry and pancake breakup, Collins, Melosh & Marcus 2005 (MAPS
 * 40, 817) as cross-check; Melosh 1989 and Pierazzo, Vickery & Melosh 1997
 * (Icarus 127, 408) for shock vaporisation; Morton, Taylor & Turner 1956
 * (Proc. R. Soc. A 234, 1) for the buoyant thermal; Plumb 1996 (JGR 101,
 * 3957) and Neu & Plumb 1999 (JGR 104, 19243) for the box model with Hurst
 * et al. 1999 (JGR 104, 8191) for the background water. */
#include "steamloft/output.h"
#include "steamloft/outfile.h"

#include "steamloft/scenario.h"
#include "steamloft/strat.h"
#include "steamloft/units.h"

#include <stdlib.h>

#include <math.h>
#include <stdio.h>
#include <string.h>

static const struct {
    unsigned bit;
    const char *text;
} refs[] = {
    {SL_OUTPUT_USED_ATMOSPHERE,
     "U.S. Standard Atmosphere 1976, NOAA-S/T 76-1562; WMO 1957 lapse-rate definition of the "
     "tropopause"},
    {SL_OUTPUT_USED_WATER,
     "Murphy and Koop 2005, Q. J. R. Meteorol. Soc. 131, 1539-1565, doi:10.1256/qj.04.94"},
    {SL_OUTPUT_USED_ENTRY,
     "Chyba, Thomas and Zahnle 1993, Nature 361, 40-44; Hills and Goda 1993, Astron. J. 105, "
     "1114-1144; Collins, Melosh and Marcus 2005, Meteorit. Planet. Sci. 40, 817-840, "
     "doi:10.1111/j.1945-5100.2005.tb00157.x"},
    {SL_OUTPUT_USED_SHOCK,
     "Melosh 1989, Impact Cratering: A Geologic Process, Oxford University Press; Pierazzo, "
     "Vickery and Melosh 1997, Icarus 127, 408-423"},
    {SL_OUTPUT_USED_PLUME,
     "Morton, Taylor and Turner 1956, Proc. R. Soc. Lond. A 234, 1-23"},
    {SL_OUTPUT_USED_STRAT,
     "Plumb 1996, J. Geophys. Res. 101, 3957-3972; Neu and Plumb 1999, J. Geophys. Res. 104, "
     "19243-19255; Hurst et al. 1999, J. Geophys. Res. 104, 8191-8200"},
};

const char *sl_output_references(unsigned methods, char *buf, size_t len)
{
    if (len == 0)
        return buf;
    buf[0] = '\0';
    size_t used = 0;
    for (size_t i = 0; i < sizeof refs / sizeof refs[0]; i++) {
        if (!(methods & refs[i].bit))
            continue;
        int n = snprintf(buf + used, len - used, "%s%s", used ? "; " : "", refs[i].text);
        if (n < 0 || (size_t)n >= len - used) {
            buf[len - 1] = '\0';
            break;
        }
        used += (size_t)n;
    }
    return buf;
}

void sl_output_params_from_provenance(const struct sl_param_value *pv, size_t n,
                                      sl_output_param *out)
{
    for (size_t i = 0; i < n; i++) {
        out[i].name = pv[i].name;
        out[i].text = isfinite(pv[i].value) ? NULL : pv[i].text;
        out[i].value = pv[i].value;
        out[i].origin = pv[i].origin;
    }
}

void sl_output_strat_free(sl_output_strat *os)
{
    if (os == NULL)
        return;
    free(os->layer_bottom_m);
    free(os->layer_top_m);
    free(os->excess_kg);
    free(os->box_bottom_m);
    free(os->box_top_m);
    free(os->sink_kg);
    memset(os, 0, sizeof *os);
}

int sl_output_strat_init(sl_output_strat *os, const struct sl_strat_model *m,
                         const struct sl_strat_result *r, sl_err *e)
{
    memset(os, 0, sizeof *os);
    const size_t nt = r->n_times, nl = m->n_layers, nr = SL_STRAT_N_REGIONS, ns = SL_STRAT_N_SINKS;
    if (nt == 0 || nl == 0)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "box-model result without times or layers");
    os->layer_bottom_m = malloc(nl * sizeof(double));
    os->layer_top_m = malloc(nl * sizeof(double));
    os->excess_kg = malloc(nt * nr * nl * sizeof(double));
    os->sink_kg = malloc(ns * nt * sizeof(double));
    os->box_bottom_m = malloc(nr * nl * sizeof(double));
    os->box_top_m = malloc(nr * nl * sizeof(double));
    if (!os->layer_bottom_m || !os->layer_top_m || !os->excess_kg || !os->sink_kg || !os->box_bottom_m ||
        !os->box_top_m) {
        sl_output_strat_free(os);
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory for the box-model output");
    }
    double lowest = INFINITY;
    for (size_t b = 0; b < m->n_boxes; b++)
        if (m->box_layer[b] == 0)
            lowest = fmin(lowest, m->box_bottom_m[b]);
    for (size_t l = 0; l < nl; l++) {
        os->layer_top_m[l] = m->layer_top_m[l];
        os->layer_bottom_m[l] = l > 0 ? m->layer_top_m[l - 1] : (isfinite(lowest) ? lowest : 0.0);
    }
    /* A region without a box in a layer (the layer lies below its tropopause)
     * has no excess there: undefined, never 0. */
    for (size_t i = 0; i < nt * nr * nl; i++)
        os->excess_kg[i] = NAN;
    for (size_t i = 0; i < nr * nl; i++)
        os->box_bottom_m[i] = os->box_top_m[i] = NAN;
    for (size_t b = 0; b < m->n_boxes; b++) {
        size_t k = (size_t)m->box_region[b] * nl + (size_t)m->box_layer[b];
        os->box_bottom_m[k] = m->box_bottom_m[b];
        os->box_top_m[k] = m->box_top_m[b];
    }
    for (size_t t = 0; t < nt; t++)
        for (size_t b = 0; b < m->n_boxes; b++) {
            size_t reg = (size_t)m->box_region[b], lay = (size_t)m->box_layer[b];
            os->excess_kg[(t * nr + reg) * nl + lay] = r->box_excess_kg[t * m->n_boxes + b];
        }
    for (size_t k = 0; k < ns; k++)
        for (size_t t = 0; t < nt; t++)
            os->sink_kg[k * nt + t] = r->sink_kg[t * ns + k];
    double edge = m->par.tropics_edge_deg;
    double south[3] = {-90.0, -edge, edge}, north[3] = {-edge, edge, 90.0};
    for (size_t g = 0; g < nr; g++) {
        os->region_south_deg[g] = south[g];
        os->region_north_deg[g] = north[g];
        os->region_tropopause_m[g] = m->tropopause_m[g];
    }
    os->series = (sl_output_series){nt, nr, nl, r->time_s, os->region_south_deg,
                                    os->region_north_deg, os->layer_bottom_m, os->layer_top_m,
                                    os->excess_kg, r->layer_anomaly_mole_fraction,
                                    r->global_excess_kg, r->global_column_kg_m2,
                                    r->local_column_kg_m2, r->percent_of_background, r->forcing_W_m2,
                                    ns, sl_strat_sink_names, os->sink_kg, os->region_tropopause_m,
                                    os->box_bottom_m, os->box_top_m};
    const struct {
        const char *name, *long_name, *units;
        double value;
    } sc[] = {
        {"injected_water_mass", "water (vapour and ice) above the tropopause at the start", "kg",
         r->injected_kg},
        {"not_entered_water_mass", "water of the profile below the tropopause (never entered)", "kg",
         r->not_entered_kg},
        {"initial_excess_water_mass", "excess after the young-cloud freeze-out", "kg",
         r->initial_excess_kg},
        {"efolding_time", "time for the global excess to fall to 1/e of its initial value", "s",
         r->efolding_s},
        {"mean_residence_time", "time integral of the excess divided by the initial excess", "s",
         r->mean_residence_s},
        {"peak_percent_of_background",
         "largest excess as a percentage of the background stratospheric water", "percent",
         r->percent_of_background_peak},
        {"peak_mole_fraction_anomaly", "largest global-mean excess mole fraction above ~100 hPa",
         "mol mol-1", r->peak_global_anomaly_mole_fraction},
        {"peak_column_anomaly", "largest global-mean column of excess water", "kg m-2",
         r->peak_global_column_kg_m2},
        {"peak_local_column_anomaly", "largest column of excess water over the early local cloud",
         "kg m-2", r->peak_local_column_kg_m2},
        {"peak_forcing_indicator", "largest first-order radiative forcing indicator (coarse)",
         "W m-2", r->forcing_indicator_W_m2},
        {"fraction_remaining_1y", "fraction of the initial excess left after one year", "1",
         r->fraction_remaining_1y},
        {"fraction_remaining_3y", "fraction of the initial excess left after three years", "1",
         r->fraction_remaining_3y},
        {"reference_background_water_mass",
         "background water in the box model's reference domain (above ~100 hPa)", "kg",
         m->reference_background_kg},
        {"budget_max_relative_error",
         "largest |injected - remaining - removed| / injected over the run (mass conservation)", "1",
         r->budget_max_rel_error},
    };
    /* Times and fractions of a decay are undefined when nothing entered the
     * stratosphere (as in the JSON and text reports, output_text.c): NaN here,
     * _FillValue in the netCDF, never 0. */
    const int undefined_decay = !(r->initial_excess_kg > 0.0);
    for (size_t i = 0; i < sizeof sc / sizeof sc[0] && i < SL_OUTPUT_STRAT_MAX_SCALARS; i++) {
        double x = sc[i].value;
        if (undefined_decay && (strcmp(sc[i].name, "efolding_time") == 0 || strcmp(sc[i].name, "mean_residence_time") == 0 ||
                                strncmp(sc[i].name, "fraction_remaining_", 19) == 0))
            x = NAN;
        if (!isfinite(x))
            x = NAN; /* undefined (an infinite result is not a number either) */
        os->scalars[os->n_scalars++] = (sl_output_scalar){sc[i].name, sc[i].long_name, sc[i].units, NULL, x};
    }
    return SL_OK;
}

const char *sl_output_event_time(const sl_output_view *v)
{
    return v && v->event_time && v->event_time[0] ? v->event_time : "2000-01-01 00:00:00";
}

static int check_finite(const double *a, size_t n, const char *what, sl_err *e)
{
    if (a == NULL)
        return SL_OK;
    for (size_t i = 0; i < n; i++)
        if (!isfinite(a[i]))
            SL_FAIL_RETURN(e, SL_EINTERNAL, "result '%s' is not finite at index %zu (%g): not written",
                           what, i, a[i]);
    return SL_OK;
}

/* Finite or NaN (undefined, written as _FillValue), never infinite. */
static int check_defined(const double *a, size_t n, const char *what, sl_err *e)
{
    for (size_t i = 0; a != NULL && i < n; i++)
        if (isinf(a[i]))
            SL_FAIL_RETURN(e, SL_EINTERNAL, "result '%s' is infinite at index %zu: not written", what, i);
    return SL_OK;
}

/* Contiguous, strictly increasing cells [bottom[i], top[i]]. */
static int check_cells(const double *bottom, const double *top, size_t n, const char *what,
                       sl_err *e)
{
    if (n == 0 || bottom == NULL || top == NULL)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "%s: no cells", what);
    SL_TRY_RETURN(e, check_finite(bottom, n, what, e));
    SL_TRY_RETURN(e, check_finite(top, n, what, e));
    for (size_t i = 0; i < n; i++) {
        if (!(top[i] > bottom[i]))
            SL_FAIL_RETURN(e, SL_EINTERNAL, "%s: cell %zu has top %g <= bottom %g", what, i, top[i],
                           bottom[i]);
        if (i > 0 && bottom[i] != top[i - 1])
            SL_FAIL_RETURN(e, SL_EINTERNAL, "%s: cells %zu and %zu are not contiguous (%g != %g)",
                           what, i - 1, i, top[i - 1], bottom[i]);
    }
    return SL_OK;
}

int sl_output_view_check(const sl_output_view *v, sl_err *e)
{
    if (v == NULL || v->inj == NULL)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "output: no injection profile to write");
    const sl_injection *inj = v->inj;
    SL_TRY_RETURN(e, check_cells(inj->band_bottom_m, inj->band_top_m, inj->n_bands,
                                 "injection bands", e));
    if (inj->vapor_kg == NULL || inj->ice_kg == NULL)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "injection profile without mass arrays");
    SL_TRY_RETURN(e, check_finite(inj->vapor_kg, inj->n_bands, "vapor_kg", e));
    SL_TRY_RETURN(e, check_finite(inj->ice_kg, inj->n_bands, "ice_kg", e));
    for (size_t i = 0; i < inj->n_bands; i++)
        if (inj->vapor_kg[i] < 0 || inj->ice_kg[i] < 0)
            SL_FAIL_RETURN(e, SL_EINTERNAL, "injection band %zu has a negative mass", i);
    if (!isfinite(inj->latitude_deg) || fabs(inj->latitude_deg) > 90)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "injection latitude %g outside [-90, 90]", inj->latitude_deg);
    if (!isfinite(inj->time_s) || !isfinite(inj->cloud_area_m2) || inj->cloud_area_m2 < 0)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "injection time or cloud area not finite");

    if (v->atm != NULL) {
        const sl_atmosphere *a = v->atm;
        if (a->n < 2 || a->altitude_m == NULL)
            SL_FAIL_RETURN(e, SL_EINTERNAL, "background atmosphere has no levels");
        SL_TRY_RETURN(e, check_finite(a->altitude_m, a->n, "atmosphere altitude_m", e));
        for (size_t i = 1; i < a->n; i++)
            if (!(a->altitude_m[i] > a->altitude_m[i - 1]))
                SL_FAIL_RETURN(e, SL_EINTERNAL, "atmosphere levels not increasing at %zu", i);
        SL_TRY_RETURN(e, check_finite(a->temperature_K, a->n, "temperature_K", e));
        SL_TRY_RETURN(e, check_finite(a->pressure_Pa, a->n, "pressure_Pa", e));
        SL_TRY_RETURN(e, check_finite(a->density_kg_m3, a->n, "density_kg_m3", e));
        SL_TRY_RETURN(e, check_finite(a->h2o_mole_fraction, a->n, "h2o_mole_fraction", e));
        SL_TRY_RETURN(e, check_finite(a->n2_per_s2, a->n, "n2_per_s2", e));
    }

    const sl_output_series *s = v->series;
    if (s != NULL) {
        if (s->n_time == 0 || s->time_s == NULL || s->excess_kg == NULL || s->global_excess_kg == NULL)
            SL_FAIL_RETURN(e, SL_EINTERNAL, "box-model series without times or masses");
        SL_TRY_RETURN(e, check_finite(s->time_s, s->n_time, "time_s", e));
        for (size_t t = 1; t < s->n_time; t++)
            if (!(s->time_s[t] > s->time_s[t - 1]))
                SL_FAIL_RETURN(e, SL_EINTERNAL, "series times not increasing at %zu", t);
        SL_TRY_RETURN(e, check_cells(s->region_south_deg, s->region_north_deg, s->n_region,
                                     "latitude regions", e));
        if (s->region_south_deg[0] < -90 || s->region_north_deg[s->n_region - 1] > 90)
            SL_FAIL_RETURN(e, SL_EINTERNAL, "latitude regions outside [-90, 90]");
        SL_TRY_RETURN(e, check_cells(s->layer_bottom_m, s->layer_top_m, s->n_layer,
                                     "box-model layers", e));
        size_t nt = s->n_time;
        SL_TRY_RETURN(e, check_defined(s->excess_kg, nt * s->n_region * s->n_layer, "excess_kg", e));
        SL_TRY_RETURN(e, check_finite(s->mole_fraction_anomaly, nt * s->n_layer,
                                      "mole_fraction_anomaly", e));
        SL_TRY_RETURN(e, check_finite(s->global_excess_kg, nt, "global_excess_kg", e));
        SL_TRY_RETURN(e, check_finite(s->column_anomaly_kg_m2, nt, "column_anomaly_kg_m2", e));
        SL_TRY_RETURN(e, check_finite(s->local_column_anomaly_kg_m2, nt,
                                      "local_column_anomaly_kg_m2", e));
        SL_TRY_RETURN(e, check_finite(s->percent_of_background, nt, "percent_of_background", e));
        SL_TRY_RETURN(e, check_finite(s->forcing_W_m2, nt, "forcing_W_m2", e));
        SL_TRY_RETURN(e, check_finite(s->region_tropopause_m, s->n_region, "region_tropopause_m", e));
        SL_TRY_RETURN(e, check_defined(s->box_bottom_m, s->n_region * s->n_layer, "box_bottom_m", e));
        SL_TRY_RETURN(e, check_defined(s->box_top_m, s->n_region * s->n_layer, "box_top_m", e));
        if (s->n_sink > 0) {
            if (s->sink_name == NULL || s->sink_kg == NULL)
                SL_FAIL_RETURN(e, SL_EINTERNAL, "series sinks without names or masses");
            SL_TRY_RETURN(e, check_finite(s->sink_kg, s->n_sink * nt, "sink_kg", e));
        }
    }
    for (size_t i = 0; i < v->n_scalars; i++) {
        const sl_output_scalar *sc = &v->scalars[i];
        if (sc->name == NULL || sc->units == NULL || sc->long_name == NULL)
            SL_FAIL_RETURN(e, SL_EINTERNAL, "scalar result %zu lacks a name, long_name or units", i);
        if (isinf(sc->value))
            SL_FAIL_RETURN(e, SL_EINTERNAL, "scalar result '%s' is infinite: not written", sc->name);
    }
    for (size_t i = 0; i < v->n_params; i++) {
        if (v->params[i].name == NULL)
            SL_FAIL_RETURN(e, SL_EINTERNAL, "scenario parameter %zu has no name", i);
        if (v->params[i].text == NULL && !isfinite(v->params[i].value))
            SL_FAIL_RETURN(e, SL_EINTERNAL, "scenario parameter '%s' is not finite",
                           v->params[i].name);
    }
    return SL_OK;
}

int sl_output_write_file(struct sl_outset *set, const char *name, sl_output_writer_fn fn,
                         const sl_output_view *v, sl_err *e)
{
    FILE *fp = NULL;
    SL_TRY_RETURN(e, sl_outset_fopen(set, name, &fp, e));
    fn(fp, v);
    SL_TRY_RETURN(e, sl_outset_fclose(set, name, fp, e));
    return SL_OK;
}
