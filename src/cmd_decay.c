/* cmd_decay: `steamloft decay` is the chain entered at the injection stage
 * (sl_chain_run_from, chain.h): an injection profile (CSV or CF netCDF, read
 * by the injection module) or a single layer from the command line goes into
 * the same box model `run` sets up, from the same scenario keys ([site] month
 * and [strat]) with the same defaults, and the same summary is printed.  The
 * keys come from --scenario FILE (else the table's defaults) and --set; the
 * options --month, --span-years, --step-days and the atmosphere options are
 * short forms of --set (an atmosphere that is not a built-in name is taken
 * as a profile file).  With --calibrate it re-runs the calibration of the
 * transport constants against the published time scales (the reproducible
 * trail of the defaults in sl_strat_params_default).  Units at this boundary:
 * kg, m, degrees in the options; Tg, ppmv, years in the text summary; the
 * JSON keys carry their unit. */
#include "steamloft/chain.h"
#include "steamloft/cli.h"
#include "steamloft/cmd.h"
#include "steamloft/output_decay.h"
#include "steamloft/output_request.h"
#include "steamloft/output_text.h"
#include "steamloft/units.h"

#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <sysexits.h>

/* The scenario decay uses when no --scenario is given: the keys it reads take
 * the table's defaults; the event itself is never run. */
static const char decay_defaults[] = "[explosion]\nenergy_Mt = 1\n[site]\nlatitude_deg = 0\n";

static void usage(FILE *out)
{
    fprintf(out,
            "Usage: steamloft decay [OPTIONS] PROFILE\n"
            "       steamloft decay [OPTIONS] --inject MASS_KG --between BOTTOM_M TOP_M --latitude DEG\n"
            "Run the stratospheric box model of 'steamloft run' (leaky tropical pipe: 3 latitude\n"
            "regions x layers from the tropopause to 100 km) on an injection profile (CSV or CF\n"
            "netCDF, such as the -o file of 'run') or on one layer of water vapour.  The box\n"
            "model reads the scenario keys [site] month and [strat] (steamloft params), with\n"
            "the same defaults as 'run'.\n"
            "\n"
            "Options:\n"
            "      --scenario FILE      take the keys from this scenario file\n" SL_CLI_SET_HELP
            "      --month N            = --set site.month=N (0 = unknown: the polar winter sink\n"
            "                           then acts at its annual mean)\n"
            "      --span-years Y       = --set strat.span_years=Y\n"
            "      --step-days D        = --set strat.step_days=D\n"
            "      --tropics-atmosphere NAME|FILE  = --set strat.tropics_atmosphere=NAME, or a file\n"
            "      --extratropics-atmosphere NAME|FILE  the same for strat.extratropics_atmosphere\n"
            "      --atmosphere NAME|FILE  both of them\n"
            "      --inject MASS_KG     water mass of a single layer, kg\n"
            "      --between BOTTOM_M TOP_M  altitude range of that layer, m (or BOTTOM_M,TOP_M);\n"
            "                           values up to 120 are taken for km and refused\n"
            "      --latitude DEG       latitude of the event (overrides the profile's; a single\n"
            "                           layer without it takes the scenario's [site] latitude_deg)\n"
            "      --cloud-area M2      area of the young cloud, m2 (for the local column)\n"
            "      --freeze-out         freeze out at once what the young cloud cannot hold as\n"
            "                           vapour (raw lofted water; steamloft's profiles are frozen out)\n"
            "      --json               print the summary as JSON\n"
            "      --series             also print the time series (CSV) after the summary\n"
            "      --calibrate          fit the transport constants to published time scales\n"
            "  -h, --help               print this help\n"
            "\n" SL_OUTPUT_HELP "\n%s\n",
            sl_cli_caution());
}

typedef struct decay_opts {
    const char *profile, *scenario;
    int have_inject, have_between, have_latitude, have_area;
    double inject_kg, bottom_m, top_m, latitude_deg, area_m2;
    int json, series, calibrate;
    sl_chain_box_input box; /* profile files, --freeze-out */
    sl_cli_sets sets;       /* --set and its short forms, in the order given */
    sl_output_request out; /* -o, --format, --csv, --plot */
} decay_opts;

/* A short form of --set; an atmosphere that is no built-in name is taken
 * for the box model's profile file instead. */
static int short_set(decay_opts *o, const sl_cli_globals *g, const char *opt, sl_param_id id, const char *arg)
{
    sl_err e = {0};
    int region = id == SL_P_STRAT_TROPICS_ATMOSPHERE ? 0 : 1;
    int atmosphere = sl_scenario_params[id].type == SL_PT_CHOICE;
    if (atmosphere && !sl_cli_is_choice(id, arg)) {
        o->box.atmosphere[region] = arg;
        return EX_OK;
    }
    if (sl_cli_sets_add_key(&o->sets, opt, id, arg, &e) != SL_OK)
        return sl_cli_usage_error(g, "decay", "%s", e.msg);
    if (atmosphere) /* a built-in name replaces an earlier file */
        o->box.atmosphere[region] = NULL;
    return EX_OK;
}

/* --between BOTTOM_M TOP_M (or BOTTOM_M,TOP_M). */
static int parse_between(decay_opts *o, const sl_cli_globals *g, int argc, char **argv)
{
    char buf[128], *second = NULL;
    sl_err e = {0};
    snprintf(buf, sizeof buf, "%s", optarg);
    char *comma = strchr(buf, ',');
    if (comma) {
        *comma = '\0';
        second = comma + 1;
    } else if (optind < argc) {
        second = argv[optind++];
    } else {
        return sl_cli_usage_error(g, "decay", "--between needs two altitudes, BOTTOM_M TOP_M");
    }
    if (sl_cli_between_m(buf, second, 1.0e5, &o->bottom_m, &o->top_m, &e) != SL_OK)
        return sl_cli_usage_error(g, "decay", "%s", e.msg);
    o->have_between = 1;
    return EX_OK;
}

/* A number option with a range of its own (the layer and the cloud). */
static int number_opt(const sl_cli_globals *g, const char *opt, double lo, double hi, double *out, int *have)
{
    sl_err e = {0};
    if (sl_cli_parse_double(optarg, opt, out, &e) != SL_OK)
        return sl_cli_usage_error(g, "decay", "%s", e.msg);
    if (!(*out >= lo && *out <= hi))
        return sl_cli_usage_error(g, "decay", "%s %s: valid range %g to %g", opt, optarg, lo, hi);
    *have = 1;
    return EX_OK;
}

static int parse_opts(int argc, char **argv, const sl_cli_globals *g, decay_opts *o, int *done)
{
    enum { O_INJECT = 256, O_BETWEEN, O_LAT, O_AREA, O_MONTH, O_SPAN, O_STEP, O_ATM, O_ATM_T, O_ATM_X, O_JSON,
           O_SERIES, O_CAL, O_FREEZE, O_SCEN };
    static const struct option lo[] = {
        {"inject", required_argument, NULL, O_INJECT}, {"between", required_argument, NULL, O_BETWEEN},
        {"latitude", required_argument, NULL, O_LAT}, {"cloud-area", required_argument, NULL, O_AREA},
        {"month", required_argument, NULL, O_MONTH}, {"span-years", required_argument, NULL, O_SPAN},
        {"step-days", required_argument, NULL, O_STEP}, {"atmosphere", required_argument, NULL, O_ATM},
        {"tropics-atmosphere", required_argument, NULL, O_ATM_T},
        {"extratropics-atmosphere", required_argument, NULL, O_ATM_X}, {"json", no_argument, NULL, O_JSON},
        {"series", no_argument, NULL, O_SERIES}, {"calibrate", no_argument, NULL, O_CAL},
        {"help", no_argument, NULL, 'h'}, {"freeze-out", no_argument, NULL, O_FREEZE},
        {"scenario", required_argument, NULL, O_SCEN}, SL_CLI_SET_OPTION, SL_OUTPUT_LONG_OPTIONS,
        {NULL, 0, NULL, 0}};
    sl_err e = {0};
    int c, rc = EX_OK, have = 0;
    *done = 0;
    while (rc == EX_OK && (c = getopt_long(argc, argv, ":ho:", lo, NULL)) != -1) {
        switch (c) {
        case 'h': usage(stdout); *done = 1; return EX_OK;
        case O_INJECT:
            /* Upper end: about the mass of all the air above 100 hPa (a tenth of
             * the atmosphere's 5.1e18 kg; common practice, no source). */
            rc = number_opt(g, "--inject", -HUGE_VAL, HUGE_VAL, &o->inject_kg, &o->have_inject);
            if (rc == EX_OK && (!(o->inject_kg > 0.0) || o->inject_kg > 5.0e17))
                return sl_cli_usage_error(g, "decay", "--inject %s: valid range above 0 to 5e17 kg", optarg);
            break;
        case O_BETWEEN: rc = parse_between(o, g, argc, argv); break;
        case O_LAT: /* the range of [site] latitude_deg */
            rc = number_opt(g, "--latitude", sl_scenario_params[SL_P_SITE_LATITUDE].min_value,
                            sl_scenario_params[SL_P_SITE_LATITUDE].max_value, &o->latitude_deg, &o->have_latitude);
            break;
        case O_AREA: rc = number_opt(g, "--cloud-area", 1.0e6, SL_EARTH_AREA_M2, &o->area_m2, &o->have_area); break;
        case O_MONTH: rc = short_set(o, g, "--month", SL_P_SITE_MONTH, optarg); break;
        case O_SPAN: rc = short_set(o, g, "--span-years", SL_P_STRAT_SPAN, optarg); break;
        case O_STEP: rc = short_set(o, g, "--step-days", SL_P_STRAT_STEP, optarg); break;
        case O_ATM:
            rc = short_set(o, g, "--atmosphere", SL_P_STRAT_TROPICS_ATMOSPHERE, optarg);
            if (rc == EX_OK)
                rc = short_set(o, g, "--atmosphere", SL_P_STRAT_EXTRATROPICS_ATMOSPHERE, optarg);
            break;
        case O_ATM_X:
            rc = short_set(o, g, "--extratropics-atmosphere", SL_P_STRAT_EXTRATROPICS_ATMOSPHERE, optarg);
            break;
        case O_ATM_T: rc = short_set(o, g, "--tropics-atmosphere", SL_P_STRAT_TROPICS_ATMOSPHERE, optarg); break;
        case O_JSON: o->json = 1; break;
        case O_SERIES: o->series = 1; break;
        case O_CAL: o->calibrate = 1; break;
        case O_FREEZE: o->box.cloud_freeze_out = 1; break;
        case O_SCEN: o->scenario = optarg; break;
        case SL_CLI_OPT_SET:
            if (sl_cli_sets_add(&o->sets, optarg, &e) != SL_OK)
                return sl_cli_usage_error(g, "decay", "%s", e.msg);
            break;
        default:
            if (!sl_output_request_is_option(c))
                return sl_cli_option_error(g, "decay", c, argv);
            if (sl_output_request_option(&o->out, c, optarg, &e) != SL_OK)
                return sl_cli_usage_error(g, "decay", "%s", e.msg);
        }
    }
    if (rc != EX_OK)
        return rc;
    if (optind < argc)
        o->profile = argv[optind++];
    if (optind < argc)
        return sl_cli_usage_error(g, "decay", "unexpected argument '%s'", argv[optind]);
    if (o->calibrate)
        return EX_OK;
    if (o->profile && (o->have_inject || o->have_between))
        return sl_cli_usage_error(g, "decay", "give either PROFILE or --inject/--between, not both");
    have = o->have_inject && o->have_between && (o->have_latitude || o->scenario);
    if (!o->profile && !have)
        return sl_cli_usage_error(g, "decay", "give PROFILE, or --inject MASS_KG --between BOTTOM_M TOP_M --latitude DEG");
    /* Output destinations are checked before the run: a bad one fails at once. */
    int st = sl_output_request_preflight(&o->out, g->force, &e);
    if (st == SL_EUSAGE)
        return sl_cli_usage_error(g, "decay", "%s", e.msg);
    return st == SL_OK ? EX_OK : sl_cli_report(g, "decay", &e);
}

/* The keys: --scenario FILE or the table's defaults, then --set in order. */
static int load_keys(const decay_opts *o, sl_scenario *sc, sl_err *e)
{
    if (o->scenario)
        return sl_cli_scenario_load(o->scenario, &o->sets, sc, e);
    SL_TRY_RETURN(e, sl_scenario_read_string(sc, "decay defaults", decay_defaults, e));
    SL_TRY_RETURN(e, sl_cli_sets_apply(&o->sets, sc, e));
    return sl_scenario_finish(sc, e);
}

/* The profile, or the single layer, into the chain's injection. */
static int load_injection(const decay_opts *o, sl_scenario *sc, sl_injection *inj, char *source, size_t n,
                          sl_err *e)
{
    if (o->profile) {
        snprintf(source, n, "%s", o->profile);
        SL_TRY_RETURN(e, sl_injection_read(inj, o->profile, e));
        /* A run file carries its event month: decay then reproduces the run. */
        if (inj->month >= 1 && sc->origin[SL_P_SITE_MONTH] <= SL_ORIGIN_DEFAULT)
            SL_TRY_RETURN(e, sl_scenario_set_id(sc, SL_P_SITE_MONTH, inj->month, e));
    } else {
        snprintf(source, n, "single layer %.6g kg at %.6g-%.6g m", o->inject_kg, o->bottom_m, o->top_m);
        SL_TRY_RETURN(e, sl_injection_init_bands(inj, (double[]){o->bottom_m, o->top_m}, 2, e));
        SL_TRY_RETURN(e, sl_injection_add_layer(inj, o->inject_kg, 0.0, o->bottom_m, o->top_m, e));
        inj->latitude_deg = sl_rad_to_deg(sl_scenario_value(sc, SL_P_SITE_LATITUDE));
    }
    if (o->have_latitude)
        inj->latitude_deg = o->latitude_deg;
    if (o->have_area)
        inj->cloud_area_m2 = o->area_m2;
    return SL_OK;
}

/* The decay: keys, injection, the chain from the box model on, the reports. */
static int decay(const decay_opts *o, sl_chain *ch, const sl_cli_globals *g, sl_err *e)
{
    sl_scenario sc;
    char source[512];
    SL_TRY_RETURN(e, load_keys(o, &sc, e));
    ch->box_input = o->box;
    if (o->calibrate) {
        SL_TRY_RETURN(e, sl_chain_prepare_box(&sc, ch, e));
        const sl_atmosphere *atm[SL_STRAT_N_REGIONS] = {ch->box_atm[1], ch->box_atm[0], ch->box_atm[1]};
        return sl_output_text_calibration(stdout, &ch->strat_params, atm, e);
    }
    SL_TRY_RETURN(e, load_injection(o, &sc, &ch->injection, source, sizeof source, e));
    SL_TRY_RETURN(e, sl_chain_run_from(&sc, ch, SL_CHAIN_T_STRAT, e));
    /* The pipe's flux is the tropical 100-hPa flux: a mid-latitude profile in
     * the tropics (tropopause near 11 km) slows the whole circulation. */
    if (g->verbosity >= 0 && ch->box_model->tropopause_m[SL_STRAT_TROPICS] < 14.0e3)
        fprintf(stderr,
                "steamloft decay: warning: the tropical background '%s' has its tropopause at %.1f km; the box "
                "model is calibrated for a tropical profile there (--tropics-atmosphere tropical)\n",
                ch->box_atm[0]->name, sl_m_to_km(ch->box_model->tropopause_m[SL_STRAT_TROPICS]));
    SL_TRY_RETURN(e, sl_output_text_decay(stdout, ch->box_model, &ch->strat, source, o->json, e));
    if (o->series)
        sl_output_text_strat_series(stdout, &ch->strat);
    if (sl_output_request_any(&o->out))
        SL_TRY_RETURN(e, sl_output_decay_write(&o->out, ch, source, o->profile, g, e));
    return SL_OK;
}

int sl_cmd_decay(int argc, char **argv, const sl_cli_globals *g)
{
    decay_opts o;
    memset(&o, 0, sizeof o);
    int done = 0;
    int rc = parse_opts(argc, argv, g, &o, &done);
    if (rc != EX_OK || done)
        return rc;
    sl_err e = {0};
    sl_chain ch = {0};
    rc = decay(&o, &ch, g, &e) == SL_OK ? EX_OK : sl_cli_report(g, "decay", &e);
    sl_chain_free(&ch);
    return rc;
}
