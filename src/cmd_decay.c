/* cmd_decay: `steamloft decay` runs the stratospheric box model (strat.c) on
 * an injection profile (CSV or CF netCDF, read by the injection module) or on
 * a single layer given on the command line, and prints the summary: e-folding
 * time, mean residence time, peak anomaly against the background, columns,
 * forcing indicator and the fractions left after one and three years.  With
 * --calibrate it re-runs the calibration of the transport constants against
 * the published time scales and prints it (the reproducible trail of the
 * defaults in sl_strat_params_default).  Units at this boundary: kg, m,
 * degrees, days, years in the options; Tg, ppmv, years in the text summary;
 * the JSON keys carry their unit. */
#include "steamloft/cli.h"
#include "steamloft/cmd.h"
#include "steamloft/output_request.h"
#include "steamloft/output_text.h"
#include "steamloft/strat.h"
#include "steamloft/units.h"

#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sysexits.h>

/* Background profiles per region: tropics and extratropics.  USSA76 is an
 * idealised mid-latitude annual mean, so it stands for both extratropical
 * regions (PRACTICE). */
#define DEFAULT_TROPICS_ATMOSPHERE "tropical"
#define DEFAULT_EXTRATROPICS_ATMOSPHERE "us1976-humid"

static void usage(FILE *out)
{
    fprintf(out,
            "Usage: steamloft decay [OPTIONS] PROFILE\n"
            "       steamloft decay [OPTIONS] --inject MASS_KG --between BOTTOM_M TOP_M --latitude DEG\n"
            "Run the stratospheric box model (leaky tropical pipe: 3 latitude regions x layers\n"
            "from the tropopause to 100 km) on an injection profile (CSV or CF netCDF, see the\n"
            "injection formats in DEVELOPERS.md) or on one layer of water vapour.\n"
            "\n"
            "Options:\n"
            "  --inject MASS_KG         water mass of a single layer, kg\n"
            "  --between BOTTOM_M TOP_M altitude range of that layer, m (or BOTTOM_M,TOP_M);\n"
            "                           values up to 120 are taken for km and refused\n"
            "  --latitude DEG           latitude of the event, -90..90 (overrides the profile's)\n"
            "  --cloud-area M2          area of the young cloud, m2 (for the local column)\n"
            "  --freeze-out             freeze out at once the water above ice saturation in\n"
            "                           the young cloud (for raw lofted water; profiles from\n"
            "                           steamloft are frozen out already)\n"
            "  --month N                calendar month of the event, 1-12 (default 1); 0 = unknown\n"
            "                           (the polar winter sink then acts at its annual mean)\n"
            "  --span-years Y           length of the time series, years (default 20)\n"
            "  --step-days D            output step, days (default 30.4375 = 1/12 year)\n"
            "  --atmosphere NAME|FILE   background profile for all regions\n"
            "  --tropics-atmosphere NAME|FILE       (default " DEFAULT_TROPICS_ATMOSPHERE ")\n"
            "  --extratropics-atmosphere NAME|FILE  (default " DEFAULT_EXTRATROPICS_ATMOSPHERE ")\n"
            "  --json                   print the summary as JSON\n"
            "  --series                 also print the time series (CSV) after the summary\n"
            "  --calibrate              fit the transport constants to the published time\n"
            "                           scales and print them (no run)\n"
            "  -h, --help               print this help\n"
            "\n" SL_OUTPUT_HELP
            "\n"
            "%s\n",
            sl_cli_caution());
}

typedef struct decay_opts {
    const char *profile;
    int have_inject, have_between, have_latitude, have_area;
    double inject_kg, bottom_m, top_m, latitude_deg, area_m2;
    int month;
    double span_years, step_days;
    const char *atm_tropics, *atm_extra;
    int json, series, calibrate, freeze_out;
    sl_output_request out; /* -o, --format, --csv, --plot */
} decay_opts;

static int parse_opts(int argc, char **argv, const sl_cli_globals *g, decay_opts *o, int *done)
{
    enum { O_INJECT = 256, O_BETWEEN, O_LAT, O_AREA, O_MONTH, O_SPAN, O_STEP, O_ATM, O_ATM_T, O_ATM_X, O_JSON,
           O_SERIES, O_CAL, O_FREEZE };
    static const struct option lo[] = {
        {"inject", required_argument, NULL, O_INJECT},   {"between", required_argument, NULL, O_BETWEEN},
        {"latitude", required_argument, NULL, O_LAT},    {"cloud-area", required_argument, NULL, O_AREA},
        {"month", required_argument, NULL, O_MONTH},     {"span-years", required_argument, NULL, O_SPAN},
        {"step-days", required_argument, NULL, O_STEP},  {"atmosphere", required_argument, NULL, O_ATM},
        {"tropics-atmosphere", required_argument, NULL, O_ATM_T},
        {"extratropics-atmosphere", required_argument, NULL, O_ATM_X},
        {"json", no_argument, NULL, O_JSON},             {"series", no_argument, NULL, O_SERIES},
        {"calibrate", no_argument, NULL, O_CAL},         {"help", no_argument, NULL, 'h'},
        {"freeze-out", no_argument, NULL, O_FREEZE},
        SL_OUTPUT_LONG_OPTIONS,
        {NULL, 0, NULL, 0}};
    sl_err e = {0};
    int c;
    *done = 0;
    while ((c = getopt_long(argc, argv, ":ho:", lo, NULL)) != -1) {
        double v;
        switch (c) {
        case 'h':
            usage(stdout);
            *done = 1;
            return EX_OK;
        case O_INJECT:
            if (sl_cli_parse_double(optarg, "--inject", &o->inject_kg, &e) != SL_OK)
                return sl_cli_usage_error(g, "decay", "%s", e.msg);
            /* Upper end: about the mass of all the air above 100 hPa (a tenth of
             * the atmosphere's 5.1e18 kg; common practice, no source). */
            if (!(o->inject_kg > 0.0) || o->inject_kg > 5.0e17)
                return sl_cli_usage_error(g, "decay", "--inject %s: valid range above 0 to 5e17 kg", optarg);
            o->have_inject = 1;
            break;
        case O_BETWEEN: {
            char buf[128];
            snprintf(buf, sizeof buf, "%s", optarg);
            char *comma = strchr(buf, ','), *second = NULL;
            if (comma) {
                *comma = '\0';
                second = comma + 1;
            } else if (optind < argc) {
                second = argv[optind++];
            } else {
                return sl_cli_usage_error(g, "decay", "--between needs two altitudes, BOTTOM_M TOP_M");
            }
            if (sl_cli_parse_double(buf, "--between BOTTOM_M", &o->bottom_m, &e) != SL_OK ||
                sl_cli_parse_double(second, "--between TOP_M", &o->top_m, &e) != SL_OK)
                return sl_cli_usage_error(g, "decay", "%s", e.msg);
            /* A layer that ends below 120 m cannot reach the stratosphere: such
             * values are kilometres written where metres are wanted. */
            if (o->top_m > o->bottom_m && o->bottom_m >= 0.0 && o->top_m <= 120.0)
                return sl_cli_usage_error(g, "decay",
                                          "--between %g %g: the altitudes are in metres and these look like "
                                          "kilometres; for %g to %g km write --between %g %g",
                                          o->bottom_m, o->top_m, o->bottom_m, o->top_m, o->bottom_m * 1000.0,
                                          o->top_m * 1000.0);
            if (!(o->bottom_m >= 0.0 && o->top_m > o->bottom_m && o->top_m <= 1.0e5))
                return sl_cli_usage_error(g, "decay", "--between %g %g: need 0 <= BOTTOM_M < TOP_M <= 100000 m",
                                          o->bottom_m, o->top_m);
            o->have_between = 1;
            break;
        }
        case O_LAT:
            if (sl_cli_parse_double(optarg, "--latitude", &o->latitude_deg, &e) != SL_OK)
                return sl_cli_usage_error(g, "decay", "%s", e.msg);
            if (!(o->latitude_deg >= -90.0 && o->latitude_deg <= 90.0))
                return sl_cli_usage_error(g, "decay", "--latitude %s: valid range -90 to 90 degrees", optarg);
            o->have_latitude = 1;
            break;
        case O_AREA:
            if (sl_cli_parse_double(optarg, "--cloud-area", &o->area_m2, &e) != SL_OK)
                return sl_cli_usage_error(g, "decay", "%s", e.msg);
            if (!(o->area_m2 >= 1.0e6 && o->area_m2 <= SL_EARTH_AREA_M2))
                return sl_cli_usage_error(g, "decay", "--cloud-area %s: valid range 1e6 to %.4g m2", optarg,
                                          SL_EARTH_AREA_M2);
            o->have_area = 1;
            break;
        case O_MONTH:
            if (sl_cli_parse_double(optarg, "--month", &v, &e) != SL_OK)
                return sl_cli_usage_error(g, "decay", "%s", e.msg);
            if (!(v >= 0.0 && v <= 12.0 && v == floor(v)))
                return sl_cli_usage_error(g, "decay", "--month %s: valid values 0 (unknown) to 12", optarg);
            o->month = (int)v;
            break;
        case O_SPAN:
            if (sl_cli_parse_double(optarg, "--span-years", &o->span_years, &e) != SL_OK)
                return sl_cli_usage_error(g, "decay", "%s", e.msg);
            if (!(o->span_years >= 0.1 && o->span_years <= 1000.0))
                return sl_cli_usage_error(g, "decay", "--span-years %s: valid range 0.1 to 1000", optarg);
            break;
        case O_STEP:
            if (sl_cli_parse_double(optarg, "--step-days", &o->step_days, &e) != SL_OK)
                return sl_cli_usage_error(g, "decay", "%s", e.msg);
            if (!(o->step_days >= 1.0 && o->step_days <= 365.25))
                return sl_cli_usage_error(g, "decay", "--step-days %s: valid range 1 to 365.25", optarg);
            break;
        case O_ATM: o->atm_tropics = o->atm_extra = optarg; break;
        case O_ATM_T: o->atm_tropics = optarg; break;
        case O_ATM_X: o->atm_extra = optarg; break;
        case O_JSON: o->json = 1; break;
        case O_SERIES: o->series = 1; break;
        case O_CAL: o->calibrate = 1; break;
        case O_FREEZE: o->freeze_out = 1; break;
        default:
            if (sl_output_request_is_option(c)) {
                if (sl_output_request_option(&o->out, c, optarg, &e) != SL_OK)
                    return sl_cli_usage_error(g, "decay", "%s", e.msg);
                break;
            }
            return sl_cli_option_error(g, "decay", c, argv);
        }
    }
    if (optind < argc)
        o->profile = argv[optind++];
    if (optind < argc)
        return sl_cli_usage_error(g, "decay", "unexpected argument '%s'", argv[optind]);
    if (o->calibrate)
        return EX_OK;
    if (o->profile && (o->have_inject || o->have_between))
        return sl_cli_usage_error(g, "decay", "give either PROFILE or --inject/--between, not both");
    if (!o->profile && !(o->have_inject && o->have_between && o->have_latitude))
        return sl_cli_usage_error(g, "decay", "give PROFILE, or --inject MASS_KG --between BOTTOM_M TOP_M --latitude DEG");
    /* Output destinations are checked before the run: a bad one fails at once. */
    int st = sl_output_request_preflight(&o->out, g->force, &e);
    if (st == SL_EUSAGE)
        return sl_cli_usage_error(g, "decay", "%s", e.msg);
    if (st != SL_OK)
        return sl_cli_report(g, "decay", &e);
    return EX_OK;
}

/* The summary, text or JSON, through the same report as `run` (same keys). */
static int print_summary(const sl_strat_model *m, const sl_strat_result *r, const char *source, int json, sl_err *e)
{
    sl_report rep;
    sl_report_begin(&rep, stdout, json);
    if (!json)
        printf("steamloft decay: stratospheric box model (%zu boxes, %zu layers x 3 regions)\n", m->n_boxes,
               m->n_layers);
    sl_report_string(&rep, "source", source, "source");
    sl_report_number(&rep, "span_years", sl_s_to_years(r->time_s[r->n_times - 1]), "length of the run", 1.0,
                     "years");
    sl_output_text_strat(&rep, m, r);
    if (!json)
        fputc('\n', stdout);
    sl_report_string(&rep, "caution", sl_cli_caution(), "caution");
    return sl_report_end(&rep, e);
}

static void print_series(const sl_strat_result *r)
{
    printf("time_days,global_excess_kg,global_anomaly_ppmv,global_column_kg_m2,local_column_kg_m2,"
           "percent_of_background,forcing_W_m2");
    for (int s = 0; s < SL_STRAT_N_SINKS; s++)
        printf(",sink_%s_kg", sl_strat_sink_names[s]);
    printf("\n");
    for (size_t i = 0; i < r->n_times; i++) {
        printf("%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g", sl_s_to_days(r->time_s[i]), r->global_excess_kg[i],
               sl_mole_fraction_to_ppmv(r->global_anomaly_mole_fraction[i]), r->global_column_kg_m2[i],
               r->local_column_kg_m2[i], r->percent_of_background[i], r->forcing_W_m2[i]);
        for (int s = 0; s < SL_STRAT_N_SINKS; s++)
            printf(",%.6g", r->sink_kg[i * SL_STRAT_N_SINKS + s]);
        printf("\n");
    }
}

static int run_calibration(const sl_strat_params *p, const sl_atmosphere *const atm[SL_STRAT_N_REGIONS],
                           const sl_cli_globals *g)
{
    sl_err e = {0};
    sl_strat_params fit;
    sl_strat_calibration before, after;
    if (sl_strat_diagnose(p, atm, &before, &e) != SL_OK || sl_strat_calibrate(p, atm, &fit, &after, &e) != SL_OK)
        return sl_cli_report(g, "decay", &e);
    printf("steamloft decay --calibrate: transport constants fitted to published time scales\n");
    printf("  %-34s %12s %12s   %s\n", "quantity", "defaults", "fitted", "target (source)");
    printf("  %-34s %12.4g %12.4g   %s\n", "mean age, tropics 20 km (yr)", sl_s_to_years(before.age_tropics_20km_s),
           sl_s_to_years(after.age_tropics_20km_s), "about 1 (Waugh & Hall 2002)");
    printf("  %-34s %12.4g %12.4g   %s\n", "mean age, extratropics 25-40 km (yr)",
           sl_s_to_years(before.age_extratropics_25_40km_s), sl_s_to_years(after.age_extratropics_25_40km_s),
           "4-5 (Waugh & Hall 2002)");
    printf("  %-34s %12.4g %12.4g   %s\n", "slowest mode (yr)", sl_s_to_years(before.slowest_mode_s),
           sl_s_to_years(after.slowest_mode_s), "3.8-5.3 (Ehhalt et al. 2004)");
    printf("  %-34s %12.4g %12.4g   %s\n", "upwelling 20-30 km (mm/s)", before.upwelling_20_30km_m_s * 1e3,
           after.upwelling_20_30km_m_s * 1e3, "0.2-0.4 (Mote et al. 1996)");
    printf("  %-34s %12.4g %12.4g   %s\n", "in-mixing time (months)", p->inmixing_time_s / (SL_S_PER_YEAR / 12.0),
           fit.inmixing_time_s / (SL_S_PER_YEAR / 12.0), "about 13.5 (Volk et al. 1996)");
    printf("  %-34s %12.4g %12.4g\n", "cost (squared misfits)", before.cost, after.cost);
    printf("fitted constants (%zu Nelder-Mead iterations):\n", after.iterations);
    printf("  deep_branch_fraction   = %.6g\n", fit.deep_branch_fraction);
    printf("  inmixing_time_s        = %.6g   (%.6g years)\n", fit.inmixing_time_s, sl_s_to_years(fit.inmixing_time_s));
    printf("  kzz_m2_s               = %.6g\n", fit.kzz_m2_s);
    printf("%s\n", sl_cli_caution());
    return EX_OK;
}

/* The files asked for with -o/--csv/--plot: the profile, the background at
 * the event's latitude, the box-model series and scalars, and the options of
 * this command as the provenance. */
static int write_outputs(const decay_opts *o, const sl_strat_model *m, const sl_strat_result *r,
                         const sl_injection *inj, const sl_atmosphere *atm, const char *source,
                         const sl_cli_globals *g, sl_err *e)
{
    sl_output_strat os;
    SL_TRY_RETURN(e, sl_output_strat_init(&os, m, r, e));
    char title[600], event_time[32];
    snprintf(title, sizeof title, "steamloft decay of %s", source);
    /* Nominal date: the month is known, the day and year are not. */
    snprintf(event_time, sizeof event_time, "2000-%02d-01 00:00:00",
             o->month >= 1 && o->month <= 12 ? o->month : 1);
    const sl_output_param params[] = {
        {"decay.source", source, 0, NULL},
        {"decay.month", NULL, (double)o->month, NULL},
        {"decay.span_years", NULL, o->span_years, NULL},
        {"decay.step_days", NULL, o->step_days, NULL},
        {"decay.tropics_atmosphere", o->atm_tropics, 0, NULL},
        {"decay.extratropics_atmosphere", o->atm_extra, 0, NULL},
    };
    sl_output_view v = {inj, atm, &os.series, os.scalars, os.n_scalars, params,
                        sizeof params / sizeof params[0], title, o->profile, event_time, NULL,
                        SL_OUTPUT_USED_ATMOSPHERE | SL_OUTPUT_USED_WATER | SL_OUTPUT_USED_STRAT,
                        g->full_argc, g->full_argv};
    int rc = sl_output_request_write(&o->out, &v, g, "decay", e);
    sl_output_strat_free(&os);
    return rc;
}

int sl_cmd_decay(int argc, char **argv, const sl_cli_globals *g)
{
    decay_opts o;
    memset(&o, 0, sizeof o);
    o.month = 1;
    o.span_years = 20.0;
    o.step_days = SL_DAYS_PER_YEAR / 12.0;
    o.atm_tropics = DEFAULT_TROPICS_ATMOSPHERE;
    o.atm_extra = DEFAULT_EXTRATROPICS_ATMOSPHERE;
    int done = 0;
    int rc = parse_opts(argc, argv, g, &o, &done);
    if (rc != EX_OK || done)
        return rc;

    sl_err e = {0};
    sl_atmosphere at = {0}, ax = {0};
    sl_injection inj = {0};
    sl_strat_model m;
    sl_strat_result r;
    memset(&m, 0, sizeof m);
    memset(&r, 0, sizeof r);
    int st = sl_atmosphere_init(&at, o.atm_tropics, &e);
    if (st == SL_OK)
        st = sl_atmosphere_init(&ax, o.atm_extra, &e);
    const sl_atmosphere *atm[SL_STRAT_N_REGIONS] = {&ax, &at, &ax};
    sl_strat_params p;
    sl_strat_params_default(&p);
    p.start_month = o.month;
    p.span_s = sl_years_to_s(o.span_years);
    p.step_s = sl_days_to_s(o.step_days);
    p.cloud_freeze_out = o.freeze_out;
    if (st == SL_OK && o.calibrate) {
        rc = run_calibration(&p, atm, g);
        goto out;
    }
    char source[512];
    if (st == SL_OK) {
        if (o.profile) {
            st = sl_injection_read(&inj, o.profile, &e);
            snprintf(source, sizeof source, "%s", o.profile);
        } else {
            st = sl_injection_init_bands(&inj, (double[]){o.bottom_m, o.top_m}, 2, &e);
            if (st == SL_OK)
                st = sl_injection_add_layer(&inj, o.inject_kg, 0.0, o.bottom_m, o.top_m, &e);
            snprintf(source, sizeof source, "single layer %.6g kg at %.6g-%.6g m", o.inject_kg, o.bottom_m, o.top_m);
        }
    }
    if (st == SL_OK) {
        if (o.have_latitude)
            inj.latitude_deg = o.latitude_deg;
        if (o.have_area)
            inj.cloud_area_m2 = o.area_m2;
        st = sl_strat_model_init(&m, &p, atm, &e);
    }
    /* The pipe's flux is the tropical 100-hPa flux: a mid-latitude profile in
     * the tropics (tropopause near 11 km) slows the whole circulation. */
    if (st == SL_OK && g->verbosity >= 0 && m.tropopause_m[SL_STRAT_TROPICS] < 14.0e3)
        fprintf(stderr,
                "steamloft decay: warning: the tropical background '%s' has its tropopause at %.1f km; the box "
                "model is calibrated for a tropical profile there (--tropics-atmosphere tropical)\n",
                at.name, sl_m_to_km(m.tropopause_m[SL_STRAT_TROPICS]));
    if (st == SL_OK)
        st = sl_strat_result_init(&r, &m, &e);
    if (st == SL_OK)
        st = sl_strat_run(&m, &inj, &r, &e);
    if (st != SL_OK) {
        rc = sl_cli_report(g, "decay", &e);
        goto out;
    }
    if (print_summary(&m, &r, source, o.json, &e) != SL_OK) {
        rc = sl_cli_report(g, "decay", &e);
        goto out;
    }
    if (o.series)
        print_series(&r);
    rc = EX_OK;
    if (sl_output_request_any(&o.out)) {
        st = write_outputs(&o, &m, &r, &inj, inj.latitude_deg < -p.tropics_edge_deg ||
                                                     inj.latitude_deg > p.tropics_edge_deg
                                                 ? &ax : &at,
                           source, g, &e);
        if (st != SL_OK)
            rc = sl_cli_report(g, "decay", &e);
    }
out:
    if (st != SL_OK && rc == EX_OK)
        rc = sl_cli_report(g, "decay", &e);
    sl_strat_result_free(&r);
    sl_strat_model_free(&m);
    sl_injection_free(&inj);
    sl_atmosphere_free(&at);
    sl_atmosphere_free(&ax);
    return rc;
}
