/* `steamloft params`: every scenario key with its unit, default, valid range
 * and meaning, straight from the parameter table (include/steamloft/scenario.h).
 * With --ini it prints a commented scenario template instead. */
#include "steamloft/cmd.h"
#include "steamloft/scenario.h"

#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <sysexits.h>

static void print_default(const sl_param_def *d, sl_param_id id, char *buf, size_t n)
{
    if (d->flags & SL_PF_REQUIRED)
        snprintf(buf, n, "required");
    else if (d->flags & SL_PF_DERIVED)
        snprintf(buf, n, "derived");
    else if (d->flags & SL_PF_OPTIONAL)
        snprintf(buf, n, "unset");
    else if (d->type == SL_PT_TEXT)
        snprintf(buf, n, "us1976-humid");
    else if (d->type == SL_PT_CHOICE) {
        const char *bar = strchr(d->choices, '|');
        size_t wl = bar ? (size_t)(bar - d->choices) : strlen(d->choices);
        snprintf(buf, n, "%.*s", (int)wl, d->choices);
    } else {
        const char *u = sl_scenario_unit_symbol(id);
        if (strcmp(u, "1") == 0)
            u = "";
        snprintf(buf, n, "%g%s%s", d->default_value, u[0] ? " " : "", u);
    }
}

/* Check a scenario and print its resolved parameters. */
static int print_resolved(const char *path, const sl_cli_globals *g)
{
    sl_scenario sc;
    sl_err e = {0};
    if (sl_scenario_load(&sc, path, &e) != SL_OK)
        return sl_cli_report(g, "params", &e);
    sl_param_value rec[SL_P_COUNT];
    size_t n = sl_scenario_provenance(&sc, rec, SL_P_COUNT);
    printf("# %s: %zu parameters\n", sc.path, n);
    for (size_t i = 0; i < n; i++) {
        const char *u = strcmp(rec[i].unit, "1") == 0 ? "" : rec[i].unit;
        printf("%-40s %-14s %-8s %s", rec[i].name, rec[i].text, u, rec[i].origin);
        if (rec[i].line > 0)
            printf(" (line %d)", rec[i].line);
        printf("\n");
    }
    printf("\n%s\n", sl_cli_caution());
    return EX_OK;
}

int sl_cmd_params(int argc, char **argv, const sl_cli_globals *g)
{
    static const struct option opts[] = {
        {"help", no_argument, NULL, 'h'}, {"ini", no_argument, NULL, 'i'}, {NULL, 0, NULL, 0}};
    int ini = 0, c;
    while ((c = getopt_long(argc, argv, "hi", opts, NULL)) != -1) {
        switch (c) {
        case 'h':
            printf("Usage: steamloft params [--ini] [SCENARIO]\n"
                   "List every scenario key: section, key (its name ends in its unit), default,\n"
                   "valid range and meaning.  'required' keys must be given when their section\n"
                   "is used; 'derived' ones are computed from other keys when absent.\n"
                   "With SCENARIO ('-' = standard input): check it and print every resolved\n"
                   "value with its unit and origin (file, default, derived).\n"
                   "  -i, --ini   print a commented scenario template instead\n"
                   "  -h, --help  print this help\n"
                   "Scenario errors exit 78 (syntax: unknown or duplicate key, missing required key)\n"
                   "or 65 (a value that is not a number or out of its range).\n");
            return EX_OK;
        case 'i': ini = 1; break;
        default: return sl_cli_usage_error(g, "params", "unknown option");
        }
    }
    if (optind + 1 < argc)
        return sl_cli_usage_error(g, "params", "give at most one scenario file");
    if (optind < argc)
        return print_resolved(argv[optind], g);
    for (int s = 0; s < SL_S_COUNT; s++) {
        const char *sec = sl_scenario_section_names[s];
        if (ini)
            printf("%s[%s]\n; %s\n", s ? "\n" : "", sec, sl_scenario_section_meanings[s]);
        else
            printf("%s[%s]  %s\n", s ? "\n" : "", sec, sl_scenario_section_meanings[s]);
        for (int id = 0; id < SL_P_COUNT; id++) {
            const sl_param_def *d = &sl_scenario_params[id];
            if (strcmp(d->section, sec) != 0)
                continue;
            char def[64], range[96];
            print_default(d, (sl_param_id)id, def, sizeof def);
            sl_scenario_range_text((sl_param_id)id, range, sizeof range);
            if (ini) {
                printf("; %s (%s; default %s)\n", d->meaning, range, def);
                if (d->flags & SL_PF_REQUIRED)
                    printf("%s = \n", d->key);
                else
                    printf(";%s = \n", d->key);
            } else {
                printf("  %-28s default %-12s range %s\n  %-28s %s\n", d->key, def, range, "",
                       d->meaning);
            }
        }
    }
    if (!ini)
        printf("\n%s\n", sl_cli_caution());
    return EX_OK;
}
