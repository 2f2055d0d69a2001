/* `steamloft params`: every scenario key with its unit, default, valid range
 * and meaning, straight from the parameter table (include/steamloft/scenario.h).
 * With --ini it prints a commented scenario template that runs as printed;
 * with a scenario (and --set overrides) it prints the resolved values. */
#include "steamloft/cmd.h"
#include "steamloft/scenario.h"

#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <sysexits.h>

/* Example values of the keys a template must fill in, so that it runs as
 * printed: an invented 200 m stony body in the tropical Pacific (as
 * examples/demo.ini) and, commented out, a 10 Mt explosion.  They are
 * examples, not defaults: a scenario without them is refused. */
static const struct {
    sl_param_id id;
    const char *value;
} template_examples[] = {
    {SL_P_IMPACTOR_DIAMETER, "200"}, {SL_P_IMPACTOR_DENSITY, "2700"},
    {SL_P_IMPACTOR_SPEED, "18"},     {SL_P_IMPACTOR_ANGLE, "45"},
    {SL_P_EXPLOSION_ENERGY, "10"},   {SL_P_SITE_LATITUDE, "-8"},
};

static const char *template_example(int id)
{
    for (size_t i = 0; i < sizeof template_examples / sizeof template_examples[0]; i++)
        if ((int)template_examples[i].id == id)
            return template_examples[i].value;
    return NULL;
}

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

/* The default as a value a user can write after "key =" (no unit), or "". */
static void default_value_text(const sl_param_def *d, char *buf, size_t n)
{
    buf[0] = '\0';
    if (d->flags & (SL_PF_REQUIRED | SL_PF_DERIVED | SL_PF_OPTIONAL))
        return;
    if (d->type == SL_PT_TEXT)
        snprintf(buf, n, "us1976");
    else if (d->type == SL_PT_CHOICE) {
        const char *bar = strchr(d->choices, '|');
        size_t wl = bar ? (size_t)(bar - d->choices) : strlen(d->choices);
        snprintf(buf, n, "%.*s", (int)wl, d->choices);
    } else
        snprintf(buf, n, "%g", d->default_value);
}

/* TEXT as ';'-comment lines of at most WIDTH characters, each starting with PREFIX. */
static void print_comment(const char *prefix, const char *text, int width)
{
    const char *p = text;
    int plen = (int)strlen(prefix);
    while (*p) {
        while (*p == ' ')
            p++;
        int len = (int)strlen(p);
        int take = len;
        if (plen + len > width) {
            take = width - plen;
            while (take > 0 && p[take] != ' ' && p[take - 1] != '|') /* a space, or after a '|' */
                take--;
            if (take == 0) { /* one long word: break it at the width */
                take = width - plen;
            }
        }
        printf("%s%.*s\n", prefix, take, p);
        p += take;
    }
}

/* Check a scenario (with its --set overrides) and print its resolved parameters. */
static int print_resolved(const char *path, const sl_cli_sets *sets, const sl_cli_globals *g)
{
    sl_scenario sc;
    sl_err e = {0};
    if (sl_cli_scenario_load(path, sets, &sc, &e) != SL_OK)
        return e.code == SL_EUSAGE ? sl_cli_usage_error(g, "params", "%s", e.msg)
                                   : sl_cli_report(g, "params", &e);
    sl_param_value rec[SL_P_COUNT];
    size_t n = sl_scenario_provenance(&sc, rec, SL_P_COUNT);
    printf("# %s: %zu parameters\n", sc.path, n);
    for (size_t i = 0; i < n; i++) {
        const char *u = strcmp(rec[i].unit, "1") == 0 ? "" : rec[i].unit;
        printf("%-40s %-14s %-8s %s", rec[i].name, rec[i].text, u, rec[i].origin);
        if (rec[i].line > 0)
            printf(" (line %d)", rec[i].line);
        else if (strcmp(rec[i].origin, "set") == 0)
            printf(" (--set)");
        printf("\n");
    }
    printf("\n%s\n", sl_cli_caution());
    return EX_OK;
}

/* One key of the template.  PRE is "" or ";" (a section commented out as a whole). */
static void template_key(int id, const char *pre)
{
    const sl_param_def *d = &sl_scenario_params[id];
    char def[64], range[96], cpre[8], line[600];
    print_default(d, (sl_param_id)id, def, sizeof def);
    sl_scenario_range_text((sl_param_id)id, range, sizeof range);
    snprintf(cpre, sizeof cpre, "%s; ", pre);
    if (d->flags & (SL_PF_REQUIRED | SL_PF_DERIVED | SL_PF_OPTIONAL))
        snprintf(line, sizeof line, "%s (%s; %s)", d->meaning, range,
                 (d->flags & SL_PF_REQUIRED) ? "required"
                 : (d->flags & SL_PF_DERIVED) ? "derived when absent" : "optional");
    else
        snprintf(line, sizeof line, "%s (%s; default %s)", d->meaning, range, def);
    print_comment(cpre, line, 78);
    const char *ex = template_example(id);
    char dv[64];
    default_value_text(d, dv, sizeof dv);
    if (id == SL_P_SCENARIO_NAME)
        printf("%s;%s = my-scenario\n", pre, d->key);
    else if (ex)
        printf("%s%s = %s\n", pre, d->key, ex);
    else if (dv[0])
        printf("%s;%s = %s\n", pre, d->key, dv);
    else
        printf("%s;%s =\n", pre, d->key);
}

/* A scenario template that runs as printed: the required keys carry the
 * example values, every other key is commented out with its default, and
 * the [explosion] section (which cannot go with [impactor]) is commented out
 * as a whole.  Every line is within the scenario reader's line limit. */
static void print_template(void)
{
    printf("; steamloft scenario template (steamloft params --ini).  It runs as printed:\n"
           ";   steamloft params --ini > my.ini && steamloft run my.ini\n"
           "; The required keys hold example values of an invented event; change them.\n"
           "; Other keys are commented out with their defaults: remove the ';' to set one.\n"
           "; For an explosion instead of an impactor, comment out [impactor] with its keys\n"
           "; (and [airburst], [entry], [partition]) and remove the ';' before [explosion]\n"
           "; and energy_Mt.\n");
    for (int s = 0; s < SL_S_COUNT; s++) {
        const char *sec = sl_scenario_section_names[s];
        const char *pre = s == SL_S_EXPLOSION ? ";" : "";
        printf("\n%s[%s]\n", pre, sec);
        print_comment(s == SL_S_EXPLOSION ? ";; " : "; ", sl_scenario_section_meanings[s], 78);
        for (int id = 0; id < SL_P_COUNT; id++)
            if (strcmp(sl_scenario_params[id].section, sec) == 0)
                template_key(id, pre);
    }
}

int sl_cmd_params(int argc, char **argv, const sl_cli_globals *g)
{
    static const struct option opts[] = {{"help", no_argument, NULL, 'h'},
                                         {"ini", no_argument, NULL, 'i'},
                                         SL_CLI_SET_OPTION,
                                         {NULL, 0, NULL, 0}};
    int ini = 0, c;
    sl_cli_sets sets = {0};
    sl_err e = {0};
    while ((c = getopt_long(argc, argv, ":hi", opts, NULL)) != -1) {
        switch (c) {
        case 'h':
            printf("Usage: steamloft params [--ini] [--set SECTION.KEY=VALUE]... [SCENARIO]\n"
                   "List every scenario key: section, key (its name ends in its unit), default,\n"
                   "valid range and meaning.  'required' keys must be given when their section\n"
                   "is used; 'derived' ones are computed from other keys when absent.\n"
                   "With SCENARIO ('-' = standard input): check it and print every resolved\n"
                   "value with its unit and origin (file, default, derived, set).\n"
                   "  -i, --ini      print a commented scenario template that runs as printed\n"
                   SL_CLI_SET_HELP
                   "  -h, --help     print this help\n"
                   "Scenario errors exit 78 (syntax: unknown or duplicate key, missing required key)\n"
                   "or 65 (a value that is not a number or out of its range); a bad --set 64 or 65.\n");
            return EX_OK;
        case 'i': ini = 1; break;
        case SL_CLI_OPT_SET:
            if (sl_cli_sets_add(&sets, optarg, &e) != SL_OK)
                return sl_cli_usage_error(g, "params", "%s", e.msg);
            break;
        default: return sl_cli_option_error(g, "params", c, argv);
        }
    }
    if (optind + 1 < argc)
        return sl_cli_usage_error(g, "params", "give at most one scenario file");
    if (ini && optind < argc)
        return sl_cli_usage_error(g, "params", "--ini prints the template: give no scenario file");
    if (sets.n > 0 && optind >= argc)
        return sl_cli_usage_error(g, "params", "--set needs a scenario file to apply to");
    if (optind < argc)
        return print_resolved(argv[optind], &sets, g);
    if (ini) {
        print_template();
        return EX_OK;
    }
    for (int s = 0; s < SL_S_COUNT; s++) {
        const char *sec = sl_scenario_section_names[s];
        printf("%s[%s]  %s\n", s ? "\n" : "", sec, sl_scenario_section_meanings[s]);
        for (int id = 0; id < SL_P_COUNT; id++) {
            const sl_param_def *d = &sl_scenario_params[id];
            if (strcmp(d->section, sec) != 0)
                continue;
            char def[64], range[96];
            print_default(d, (sl_param_id)id, def, sizeof def);
            sl_scenario_range_text((sl_param_id)id, range, sizeof range);
            printf("  %-28s default %-12s range %s\n  %-28s %s\n", d->key, def, range, "",
                   d->meaning);
        }
    }
    printf("\n%s\n", sl_cli_caution());
    return EX_OK;
}
