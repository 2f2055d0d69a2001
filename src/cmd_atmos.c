/* cmd_atmos: `steamloft atmos` prints, converts and checks atmosphere
 * profiles (the atmosphere module, src/atmosphere.c).
 *
 *   steamloft atmos list                       built-in profile names
 *   steamloft atmos NAME|FILE                  the profile as a table (the text
 *                                              profile format; --csv for CSV,
 *                                              --json for JSON arrays)
 *   steamloft atmos --at ALTITUDE_M NAME|FILE  one level (text, --csv, --json);
 *                                              --at 10hPa / --at 1000Pa: the
 *                                              level of that pressure
 *   steamloft atmos --summary NAME|FILE        tropopause, cold point,
 *                                              stratopause, stratospheric water
 *
 * Reading a file checks it completely, so `steamloft atmos FILE --summary` is
 * also the way to validate a user profile (exit 65 with file, line or
 * variable on bad data).  Output units are SI with the unit in each key;
 * water in ppmv (mole fraction x 1e6), the column also in precipitable
 * micrometres and the burden also in Tg, converted via units.h. */
#include "steamloft/atmosphere.h"
#include "steamloft/cli.h"
#include "steamloft/cmd.h"
#include "steamloft/units.h"
#include "steamloft/water.h"

#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <sysexits.h>

static void usage(FILE *f)
{
    fprintf(f,
            "Usage: steamloft atmos list\n"
            "       steamloft atmos [--csv | --json] [--at ALTITUDE_M | --at PRESSURE{hPa|Pa} |\n"
            "                       --summary] NAME|FILE\n"
            "Print an atmosphere profile: a built-in one (see 'list') or a user file, either\n"
            "the text profile format of atmospheres/README.md or CF netCDF (variables found\n"
            "by standard_name: altitude or geopotential_height, air_temperature,\n"
            "air_pressure, optionally mole_fraction_of_water_vapor_in_air,\n"
            "humidity_mixing_ratio or specific_humidity).\n"
            "\n"
            "Without options the whole profile is printed in the text profile format\n"
            "(altitude_m temperature_K pressure_Pa h2o_ppmv density_kg_m3 n2_per_s2\n"
            "ice_saturation_ppmv); the shipped files in atmospheres/ are exactly this output.\n"
            "\n"
            "Options:\n"
            "  --at ALTITUDE_M  print the state at one geometric altitude in metres\n"
            "  --at PRESSURE    ... or at the level of a pressure, written with its unit\n"
            "                   hPa or Pa (e.g. --at 10hPa, --at 1000Pa)\n"
            "  --summary        print tropopause (WMO lapse-rate rule), cold point,\n"
            "                   stratopause and the background stratospheric water\n"
            "                   (column between tropopause and stratopause, and the\n"
            "                   global burden of that column over the Earth's area)\n"
            "  --csv            comma-separated values with one header line\n"
            "  --json           JSON (keys carry their unit)\n"
            "  -h, --help       print this help and exit\n"
            "\n"
            "Exit status: 0 ok, 64 usage, 65 bad profile data or altitude outside the\n"
            "profile, 66 file not found, 74 write error.\n");
}

static const char *const builtin_about[] = {
    "U.S. Standard Atmosphere 1976, dry, 0-1000 km, from its defining constants and equations",
    "us1976 temperature and pressure with the steamloft background water (humid variant)",
    "tropical: AFGL 1986 tropopause 17 km 194.8 K, stratopause 50 km 270.2 K",
    "mid-latitude summer: tropopause 13 km 215.8 K, stratopause 50 km 275.7 K",
    "mid-latitude winter: tropopause 11 km 219.2 K, stratopause 50 km 265.7 K",
    "sub-arctic summer: tropopause 10 km 225.2 K, stratopause 50 km 277.2 K",
    "sub-arctic winter: tropopause 9 km 217.2 K, cold point 25 km 211.2 K",
};

/* JSON number or null for NaN (JSON has no NaN). */
static void json_num(FILE *f, const char *key, double v, int last)
{
    if (isfinite(v))
        fprintf(f, "  \"%s\": %.10g%s\n", key, v, last ? "" : ",");
    else
        fprintf(f, "  \"%s\": null%s\n", key, last ? "" : ",");
}

static void json_str(FILE *f, const char *key, const char *s)
{
    fprintf(f, "  \"%s\": \"", key);
    for (; *s; s++) {
        if (*s == '"' || *s == '\\')
            fprintf(f, "\\%c", *s);
        else if ((unsigned char)*s < 0x20)
            fprintf(f, "\\u%04x", (unsigned char)*s);
        else
            fputc(*s, f);
    }
    fprintf(f, "\",\n");
}

static void print_at(const sl_atmos_state *s, int csv, int json)
{
    const double h2o_ppmv = sl_mole_fraction_to_ppmv(s->h2o_mole_fraction);
    const double ice_ppmv = sl_mole_fraction_to_ppmv(s->ice_saturation_mole_fraction);
    if (json) {
        printf("{\n");
        json_num(stdout, "altitude_m", s->altitude_m, 0);
        json_num(stdout, "temperature_K", s->temperature_K, 0);
        json_num(stdout, "pressure_Pa", s->pressure_Pa, 0);
        json_num(stdout, "density_kg_m3", s->density_kg_m3, 0);
        json_num(stdout, "h2o_ppmv", h2o_ppmv, 0);
        json_num(stdout, "n2_per_s2", s->n2_per_s2, 0);
        json_num(stdout, "ice_saturation_ppmv", ice_ppmv, 1);
        printf("}\n");
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
}

static void print_summary(const sl_atmosphere *a, int csv, int json)
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
        printf("{\n");
        json_str(stdout, "name", a->name);
        json_str(stdout, "source", a->source);
        for (size_t i = 0; i < nr; i++)
            json_num(stdout, rows[i].key, rows[i].v, i + 1 == nr);
        printf("}\n");
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
}

static void print_json_table(const sl_atmosphere *a)
{
    printf("{\n");
    json_str(stdout, "name", a->name);
    json_str(stdout, "source", a->source);
    const char *keys[7] = {"altitude_m",    "temperature_K", "pressure_Pa",        "h2o_ppmv",
                           "density_kg_m3", "n2_per_s2",     "ice_saturation_ppmv"};
    for (int k = 0; k < 7; k++) {
        printf("  \"%s\": [", keys[k]);
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
            printf("%s%.10g", i ? ", " : "", v);
        }
        printf("]%s\n", k == 6 ? "" : ",");
    }
    printf("}\n");
}

int sl_cmd_atmos(int argc, char **argv, const sl_cli_globals *g)
{
    enum { OPT_AT = 1000, OPT_SUMMARY, OPT_CSV, OPT_JSON };
    static const struct option opts[] = {{"at", required_argument, NULL, OPT_AT},
                                         {"summary", no_argument, NULL, OPT_SUMMARY},
                                         {"csv", no_argument, NULL, OPT_CSV},
                                         {"json", no_argument, NULL, OPT_JSON},
                                         {"help", no_argument, NULL, 'h'},
                                         {NULL, 0, NULL, 0}};
    int csv = 0, json = 0, summary = 0, have_at = 0;
    double at_m = 0.0;
    const char *at_text = NULL;
    opterr = 0;
    int c;
    while ((c = getopt_long(argc, argv, "h", opts, NULL)) != -1) {
        switch (c) {
        case OPT_AT:
            have_at = 1;
            at_text = optarg;
            break;
        case OPT_SUMMARY: summary = 1; break;
        case OPT_CSV: csv = 1; break;
        case OPT_JSON: json = 1; break;
        case 'h': usage(stdout); return EX_OK;
        default:
            if (optopt == OPT_AT)
                return sl_cli_usage_error(g, "atmos", "option '--at' needs an altitude in metres or a pressure (10hPa)");
            if (optopt)
                return sl_cli_usage_error(g, "atmos", "unknown option '-%c'", optopt);
            return sl_cli_usage_error(g, "atmos", "unknown option '%s'", argv[optind - 1]);
        }
    }
    if (optind >= argc)
        return sl_cli_usage_error(g, "atmos", "give 'list' or a profile NAME or FILE");
    if (argc - optind > 1)
        return sl_cli_usage_error(g, "atmos", "give one profile, not %d", argc - optind);
    if (csv && json)
        return sl_cli_usage_error(g, "atmos", "choose one of --csv and --json");
    if (have_at && summary)
        return sl_cli_usage_error(g, "atmos", "choose one of --at and --summary");
    sl_err e;
    sl_err_clear(&e);
    /* --at: an altitude in metres, or a pressure with its unit (hPa or Pa). */
    double at_Pa = NAN;
    if (have_at) {
        size_t len = strlen(at_text);
        const char *unit = NULL;
        double factor = 1.0;
        if (len > 3 && strcmp(at_text + len - 3, "hPa") == 0) {
            unit = "hPa";
            factor = 100.0;
        } else if (len > 2 && strcmp(at_text + len - 2, "Pa") == 0) {
            unit = "Pa";
        }
        if (unit) {
            char num[64];
            snprintf(num, sizeof num, "%.*s", (int)(len - strlen(unit)), at_text);
            double v;
            if (sl_cli_parse_double(num, "--at PRESSURE", &v, &e) != SL_OK || !(v > 0.0))
                return sl_cli_usage_error(g, "atmos", "--at %s: the pressure must be a positive number of %s",
                                          at_text, unit);
            at_Pa = v * factor;
        } else if (sl_cli_parse_double(at_text, "--at ALTITUDE_M (or a pressure with hPa or Pa)", &at_m, &e) !=
                   SL_OK) {
            return sl_cli_usage_error(g, "atmos", "%s", e.msg);
        }
    }
    const char *what = argv[optind];

    if (strcmp(what, "list") == 0) {
        if (have_at || summary)
            return sl_cli_usage_error(g, "atmos", "'list' takes no --at or --summary");
        for (int i = 0; sl_atmosphere_builtin_names[i]; i++) {
            if (json)
                printf("%s\"%s\"", i ? ", " : "[", sl_atmosphere_builtin_names[i]);
            else if (csv)
                printf("%s%s,\"%s\"\n", i ? "" : "name,description\n", sl_atmosphere_builtin_names[i],
                       builtin_about[i]);
            else
                printf("%-20s %s\n", sl_atmosphere_builtin_names[i], builtin_about[i]);
        }
        if (json)
            printf("]\n");
    } else {
        sl_atmosphere atm;
        memset(&atm, 0, sizeof atm);
        int rc = sl_atmosphere_init(&atm, what, &e);
        if (rc == SL_OK && have_at) {
            sl_atmos_state s;
            if (isfinite(at_Pa))
                rc = sl_atmosphere_altitude_of_pressure(&atm, at_Pa, &at_m, &e);
            if (rc == SL_OK)
                rc = sl_atmosphere_at(&atm, at_m, &s, &e);
            if (rc == SL_OK)
                print_at(&s, csv, json);
        } else if (rc == SL_OK && summary) {
            print_summary(&atm, csv, json);
        } else if (rc == SL_OK) {
            if (json)
                print_json_table(&atm);
            else
                rc = sl_atmosphere_write_text(&atm, csv, stdout, &e);
        }
        sl_atmosphere_free(&atm);
        if (rc != SL_OK)
            return sl_cli_report(g, "atmos", &e);
    }
    if (fflush(stdout) != 0 || ferror(stdout)) {
        sl_err_set(&e, SL_EIO, __func__, __LINE__, "write error on standard output");
        return sl_cli_report(g, "atmos", &e);
    }
    return EX_OK;
}
