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
#include "steamloft/output_atmos.h"
#include "steamloft/units.h"

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
            double v = NAN;
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
        if (sl_output_atmos_list(csv, json, &e) != SL_OK)
            return sl_cli_report(g, "atmos", &e);
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
                rc = sl_output_atmos_level(&s, csv, json, &e);
        } else if (rc == SL_OK && summary) {
            rc = sl_output_atmos_summary(&atm, csv, json, &e);
        } else if (rc == SL_OK) {
            if (json)
                rc = sl_output_atmos_json(&atm, &e);
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
