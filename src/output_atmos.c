/* output_atmos: what `steamloft atmos` prints (include/steamloft/output_atmos.h):
 * one level, the summary, the whole profile as JSON, and the list of the
 * built-in profiles, as text, CSV or JSON (through the one JSON writer). */
#include "steamloft/output_atmos.h"
#include "steamloft/json.h"
#include "steamloft/units.h"
#include "steamloft/water.h"

#include <math.h>
#include <stdio.h>

static const char *const builtin_about[] = {
    "U.S. Standard Atmosphere 1976, dry, 0-1000 km, from its defining constants and equations",
    "us1976 temperature and pressure with the steamloft background water (humid variant)",
    "tropical: AFGL 1986 tropopause 17 km 194.8 K, stratopause 50 km 270.2 K",
    "mid-latitude summer: tropopause 13 km 215.8 K, stratopause 50 km 275.7 K",
    "mid-latitude winter: tropopause 11 km 219.2 K, stratopause 50 km 265.7 K",
    "sub-arctic summer: tropopause 10 km 225.2 K, stratopause 50 km 277.2 K",
    "sub-arctic winter: tropopause 9 km 217.2 K, cold point 25 km 211.2 K",
};

int sl_output_atmos_level(const sl_atmos_state *s, int csv, int json, sl_err *e)
{
    const double h2o_ppmv = sl_mole_fraction_to_ppmv(s->h2o_mole_fraction);
    const double ice_ppmv = sl_mole_fraction_to_ppmv(s->ice_saturation_mole_fraction);
    if (json) {
        sl_json j;
        sl_json_begin(&j, stdout);
        sl_json_number(&j, "altitude_m", s->altitude_m);
        sl_json_number(&j, "temperature_K", s->temperature_K);
        sl_json_number(&j, "pressure_Pa", s->pressure_Pa);
        sl_json_number(&j, "density_kg_m3", s->density_kg_m3);
        sl_json_number(&j, "h2o_ppmv", h2o_ppmv);
        sl_json_number(&j, "n2_per_s2", s->n2_per_s2);
        sl_json_number(&j, "ice_saturation_ppmv", ice_ppmv);
        return sl_json_end(&j, e);
    } else if (csv) {
        printf("altitude_m,temperature_K,pressure_Pa,density_kg_m3,h2o_ppmv,n2_per_s2,ice_saturation_ppmv\n");
        printf("%.10g,%.10g,%.10g,%.10g,%.10g,%.10g,%.10g\n", s->altitude_m, s->temperature_K, s->pressure_Pa,
               s->density_kg_m3, h2o_ppmv, s->n2_per_s2, ice_ppmv);
    } else {
        printf("altitude_m            %.10g\n", s->altitude_m);
        printf("temperature_K         %.10g\n", s->temperature_K);
        printf("pressure_Pa           %.10g\n", s->pressure_Pa);
        printf("density_kg_m3         %.10g\n", s->density_kg_m3);
        printf("h2o_ppmv              %.10g\n", h2o_ppmv);
        printf("n2_per_s2             %.10g\n", s->n2_per_s2);
        printf("ice_saturation_ppmv   %.10g\n", ice_ppmv);
    }
    return SL_OK;
}

int sl_output_atmos_summary(const sl_atmosphere *a, int csv, int json, sl_err *e)
{
    const double col = a->strat_water_column_kg_m2;
    const struct {
        const char *key;
        double v;
    } rows[] = {
        {"tropopause_altitude_m", a->tropopause_altitude_m},
        {"tropopause_temperature_K", a->tropopause_temperature_K},
        {"tropopause_pressure_Pa", a->tropopause_pressure_Pa},
        {"cold_point_altitude_m", a->cold_point_altitude_m},
        {"cold_point_temperature_K", a->cold_point_temperature_K},
        {"stratopause_altitude_m", a->stratopause_altitude_m},
        {"stratopause_temperature_K", a->stratopause_temperature_K},
        {"stratospheric_water_column_kg_m2", col},
        {"stratospheric_water_column_precip_um", isfinite(col) ? sl_kg_m2_to_precip_um(col) : NAN},
        {"stratospheric_water_burden_kg", a->strat_water_burden_kg},
        {"stratospheric_water_burden_Tg",
         isfinite(a->strat_water_burden_kg) ? sl_kg_to_tg(a->strat_water_burden_kg) : NAN},
        {"bottom_altitude_m", a->altitude_m[0]},
        {"top_altitude_m", a->altitude_m[a->n - 1]},
    };
    const size_t nr = sizeof rows / sizeof rows[0];
    if (json) {
        sl_json j;
        sl_json_begin(&j, stdout);
        sl_json_string(&j, "name", a->name);
        sl_json_string(&j, "source", a->source);
        for (size_t i = 0; i < nr; i++)
            sl_json_number(&j, rows[i].key, rows[i].v);
        return sl_json_end(&j, e);
    } else if (csv) {
        printf("name");
        for (size_t i = 0; i < nr; i++)
            printf(",%s", rows[i].key);
        printf("\n\"%s\"", a->name);
        for (size_t i = 0; i < nr; i++) {
            if (isfinite(rows[i].v))
                printf(",%.10g", rows[i].v);
            else
                printf(",");
        }
        printf("\n");
    } else {
        printf("%-38s %s\n", "name", a->name);
        printf("%-38s %s\n", "source", a->source);
        printf("%-38s %zu\n", "levels", a->n);
        for (size_t i = 0; i < nr; i++) {
            if (isfinite(rows[i].v))
                printf("%-38s %.10g\n", rows[i].key, rows[i].v);
            else
                printf("%-38s not found\n", rows[i].key);
        }
        printf("# the column runs from the tropopause to the stratopause; the burden is that column\n"
               "# over the whole Earth's area (%.6g m2)\n",
               SL_EARTH_AREA_M2);
    }
    return SL_OK;
}

/* The whole profile as JSON: one array per quantity. */
int sl_output_atmos_json(const sl_atmosphere *a, sl_err *e)
{
    const char *keys[7] = {"altitude_m",    "temperature_K", "pressure_Pa",        "h2o_ppmv",
                           "density_kg_m3", "n2_per_s2",     "ice_saturation_ppmv"};
    sl_json j;
    sl_json_begin(&j, stdout);
    sl_json_string(&j, "name", a->name);
    sl_json_string(&j, "source", a->source);
    for (int k = 0; k < 7; k++) {
        sl_json_begin_array(&j, keys[k], SL_JSON_INLINE);
        for (size_t i = 0; i < a->n; i++) {
            double v;
            switch (k) {
            case 0: v = a->altitude_m[i]; break;
            case 1: v = a->temperature_K[i]; break;
            case 2: v = a->pressure_Pa[i]; break;
            case 3: v = sl_mole_fraction_to_ppmv(a->h2o_mole_fraction[i]); break;
            case 4: v = a->density_kg_m3[i]; break;
            case 5: v = a->n2_per_s2[i]; break;
            default:
                v = sl_mole_fraction_to_ppmv(sl_water_esat_ice_Pa(a->temperature_K[i]) / a->pressure_Pa[i]);
                break;
            }
            sl_json_number(&j, NULL, v);
        }
        sl_json_end_array(&j);
    }
    return sl_json_end(&j, e);
}

/* `atmos list`: the built-in names and what each is. */
int sl_output_atmos_list(int csv, int json, sl_err *e)
{
    sl_json j;
    if (json) {
        sl_json_begin(&j, stdout);
        sl_json_begin_array(&j, "profiles", SL_JSON_LINES);
    }
    for (int i = 0; sl_atmosphere_builtin_names[i]; i++) {
        if (json) {
            sl_json_begin_object(&j, NULL, SL_JSON_INLINE);
            sl_json_string(&j, "name", sl_atmosphere_builtin_names[i]);
            sl_json_string(&j, "description", builtin_about[i]);
                sl_json_end_object(&j);
        } else if (csv)
            printf("%s%s,\"%s\"\n", i ? "" : "name,description\n", sl_atmosphere_builtin_names[i],
                   builtin_about[i]);
        else
            printf("%-20s %s\n", sl_atmosphere_builtin_names[i], builtin_about[i]);
    }
    if (!json)
        return SL_OK;
    sl_json_end_array(&j);
    return sl_json_end(&j, e);
}

