/* cli: global options and command dispatch.  See include/steamloft/cli.h. */
#include "steamloft/cli.h"
#include "steamloft/infile.h"
#include "steamloft/cmd.h"

#include "sl_gitversion.h"

#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sysexits.h>

/* The command table: the one place commands are listed. */
static const sl_cli_command commands[] = {
    SL_CMD_TABLE
};
static const size_t n_commands = sizeof commands / sizeof commands[0];

const char *sl_cli_caution(void)
{
    return "Screening estimate with order-of-magnitude uncertainty; not a substitute for full "
           "simulations. Decisions rest with the responsible authorities.";
}

const char *sl_cli_version(void)
{
    return "steamloft " SL_VERSION " (git " SL_GIT_HASH ")";
}

static void print_help(FILE *out)
{
    fprintf(out,
            "Usage: steamloft [OPTIONS] COMMAND [COMMAND OPTIONS] [FILE]\n"
            "Screening estimates of the water vapour that an ocean impact or a large\n"
            "explosion lofts into the stratosphere, and how long it stays there.\n"
            "\n"
            "Commands:\n");
    for (size_t i = 0; i < n_commands; i++)
        fprintf(out, "  %-10s %s\n", commands[i].name, commands[i].summary);
    fprintf(out,
            "\n"
            "Global options (-v, -q and -f also anywhere after the command):\n"
            "  -v, --verbose   more detail: the full summary of every stage, messages on\n"
            "                  stderr (repeatable)\n"
            "  -q, --quiet     errors only\n"
            "  -f, --force     allow overwriting existing output files\n"
            "  -h, --help      print this help and exit\n"
            "  -V, --version   print the version and exit\n"
            "\n"
            "Run 'steamloft COMMAND --help' for a command's options.\n"
            "FILE '-' reads the scenario from standard input.\n"
            "\n"
            "Exit status: 0 ok, 64 usage, 65 bad data, 66 no input, 70 internal or\n"
            "numerical failure, 71 out of memory, 73 cannot create output, 74 I/O error,\n"
            "78 scenario syntax.\n"
            "\n"
            "%s\n",
            sl_cli_caution());
}

/* One word of a command line, quoted where a shell would split or expand it. */
static void print_shell_word(const char *a)
{
    if (a[0] != '\0' && strspn(a, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ"
                                   "0123456789-_./=,:+%@") == strlen(a)) {
        fputs(a, stderr);
        return;
    }
    fputc('\'', stderr);
    for (const char *p = a; *p; p++) {
        if (*p == '\'')
            fputs("'\\''", stderr);
        else
            fputc(*p, stderr);
    }
    fputc('\'', stderr);
}

/* After "exists; not overwritten": the same command line (the program as it
 * was typed, the same arguments) with --force, so the hint is a command that
 * works as printed. */
static void print_force_hint(const sl_cli_globals *g, const char *prog)
{
    if (g == NULL || g->full_argv == NULL || g->full_argc < 2)
        return;
    fprintf(stderr, "%s: to replace it, run: ", prog);
    print_shell_word(g->full_argv[0] ? g->full_argv[0] : prog);
    fputs(" --force", stderr);
    for (int i = 1; i < g->full_argc; i++) {
        const char *a = g->full_argv[i];
        if (strcmp(a, "-f") == 0 || strcmp(a, "--force") == 0)
            continue;
        fputc(' ', stderr);
        print_shell_word(a);
    }
    fputc('\n', stderr);
}

int sl_cli_report(const sl_cli_globals *g, const char *cmd, const sl_err *e)
{
    const char *prog = g && g->prog ? g->prog : "steamloft";
    fprintf(stderr, "%s%s%s: error: %s\n", prog, cmd ? " " : "", cmd ? cmd : "",
            e->msg[0] ? e->msg : sl_err_name(e->code));
    if (e->code == SL_ECANTCREAT && strstr(e->msg, "not overwritten") != NULL && !(g && g->force))
        print_force_hint(g, prog);
    if (g && g->verbosity > 0 && e->trace[0])
        fprintf(stderr, "%s: trace: %s\n", prog, e->trace);
    return sl_err_exit_code(e->code == SL_OK ? SL_EINTERNAL : e->code);
}

int sl_cli_usage_error(const sl_cli_globals *g, const char *cmd, const char *fmt, ...)
{
    const char *prog = g && g->prog ? g->prog : "steamloft";
    fprintf(stderr, "%s%s%s: ", prog, cmd ? " " : "", cmd ? cmd : "");
    va_list ap;
    va_start(ap, fmt);
    vfprintf(stderr, fmt, ap);
    va_end(ap);
    fprintf(stderr, "\nTry '%s%s%s --help' for more information.\n", prog, cmd ? " " : "",
            cmd ? cmd : "");
    return EX_USAGE;
}

int sl_cli_option_error(const sl_cli_globals *g, const char *cmd, int c, char **argv)
{
    const char *tok = (optind > 0 && argv[optind - 1]) ? argv[optind - 1] : "";
    int is_long = strncmp(tok, "--", 2) == 0;
    if (c == ':') {
        if (!is_long && optopt > 0 && optopt < 128)
            return sl_cli_usage_error(g, cmd, "option '-%c' needs a value", optopt);
        return sl_cli_usage_error(g, cmd, "option '%s' needs a value", tok);
    }
    if (!is_long && optopt > 0 && optopt < 128)
        return sl_cli_usage_error(g, cmd, "unknown option '-%c'", optopt);
    return sl_cli_usage_error(g, cmd, "unknown option '%s'", tok);
}

int sl_cli_sets_add(sl_cli_sets *s, const char *arg, sl_err *e)
{
    if (s->n >= SL_CLI_MAX_SETS)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--set: at most %d overrides", SL_CLI_MAX_SETS);
    /* Check the form and the key now, on a blank scenario: a typo fails at once. */
    sl_scenario *probe = calloc(1, sizeof *probe);
    if (probe == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
    int rc = sl_scenario_override(probe, arg, e);
    free(probe);
    SL_TRY_RETURN(e, rc);
    s->item[s->n++] = arg;
    return SL_OK;
}

int sl_cli_is_choice(sl_param_id id, const char *word)
{
    const char *c = sl_scenario_params[id].choices;
    size_t n = strlen(word);
    for (const char *p = c; p && *p; p = strchr(p, '|') ? strchr(p, '|') + 1 : NULL)
        if (strncmp(p, word, n) == 0 && (p[n] == '|' || p[n] == '\0'))
            return 1;
    return 0;
}

int sl_cli_sets_add_key(sl_cli_sets *s, const char *option, sl_param_id id, const char *value, sl_err *e)
{
    const sl_param_def *d = &sl_scenario_params[id];
    if (d->type == SL_PT_REAL || d->type == SL_PT_INT) {
        double v = 0.0;
        char range[160];
        sl_scenario_range_text(id, range, sizeof range);
        SL_TRY_RETURN(e, sl_cli_parse_double(value, option, &v, e));
        if (!(v >= d->min_value && v <= d->max_value) || (d->type == SL_PT_INT && v != floor(v)))
            SL_FAIL_RETURN(e, SL_EUSAGE, "%s %s: valid range %s (%s.%s)", option, value, range, d->section,
                           d->key);
    }
    if (s->n_text >= SL_CLI_MAX_KEY_SETS)
        SL_FAIL_RETURN(e, SL_EUSAGE, "%s: at most %d such options", option, SL_CLI_MAX_KEY_SETS);
    char *t = s->text[s->n_text];
    snprintf(t, sizeof s->text[0], "%s.%s=%s", d->section, d->key, value);
    SL_TRY_RETURN(e, sl_cli_sets_add(s, t, e));
    s->n_text++;
    return SL_OK;
}

int sl_cli_sets_apply(const sl_cli_sets *s, sl_scenario *sc, sl_err *e)
{
    for (size_t i = 0; s && i < s->n; i++)
        SL_TRY_RETURN(e, sl_scenario_override(sc, s->item[i], e));
    return SL_OK;
}

int sl_cli_scenario_read(const char *path, const sl_cli_sets *s, sl_scenario *sc, sl_err *e)
{
    SL_TRY_RETURN(e, sl_scenario_read(sc, path, e));
    return sl_cli_sets_apply(s, sc, e);
}

int sl_cli_scenario_load(const char *path, const sl_cli_sets *s, sl_scenario *sc, sl_err *e)
{
    SL_TRY_RETURN(e, sl_cli_scenario_read(path, s, sc, e));
    return sl_scenario_finish(sc, e);
}

/* A command that printed its answer onto a full disk or a closed pipe has
 * not succeeded, whatever it returned: exit 74 with the cause.  When an
 * earlier buffered write failed its errno is gone; one more byte written
 * and flushed finds the cause again (the output is incomplete anyway). */
static int stdout_status(const sl_cli_globals *g, const char *cmd, int rc)
{
    if (rc != EX_OK)
        return rc;
    errno = 0;
    if (fflush(stdout) == 0 && !ferror(stdout))
        return rc;
    int err = errno;
    if (err == 0) {
        clearerr(stdout);
        errno = 0;
        if (fputc('\n', stdout) == EOF || fflush(stdout) != 0)
            err = errno;
    }
    fprintf(stderr, "%s%s%s: error: writing standard output: %s\n", g->prog, cmd ? " " : "",
            cmd ? cmd : "", strerror(err ? err : EIO));
    return EX_IOERR;
}

int sl_cli_parse_double(const char *text, const char *what, double *out, sl_err *e)
{
    double v;
    if (sl_infile_parse_double(text, &v) != 0)
        SL_FAIL_RETURN(e, SL_EUSAGE, "%s: '%s' is not a finite number (decimal only, e.g. 250, 1.5e3)",
                       what, text);
    *out = v;
    return SL_OK;
}

int sl_cli_between_m(const char *bottom_text, const char *top_text, double max_top_m,
                     double *bottom_m, double *top_m, sl_err *e)
{
    double b = NAN, t = NAN;
    SL_TRY_RETURN(e, sl_cli_parse_double(bottom_text, "--between BOTTOM_M", &b, e));
    SL_TRY_RETURN(e, sl_cli_parse_double(top_text, "--between TOP_M", &t, e));
    /* A layer that ends at or below 120 m cannot reach the stratosphere:
     * such values are kilometres written where metres are wanted. */
    if (t > b && b >= 0.0 && t <= 120.0)
        SL_FAIL_RETURN(e, SL_EUSAGE,
                       "--between %g %g: the altitudes are in metres and these look like "
                       "kilometres; for %g to %g km write --between %g %g",
                       b, t, b, t, b * 1000.0, t * 1000.0);
    if (!(b >= 0.0 && t > b && t <= max_top_m))
        SL_FAIL_RETURN(e, SL_EUSAGE, "--between %g %g: need 0 <= BOTTOM_M < TOP_M <= %g m", b, t,
                       max_top_m);
    *bottom_m = b;
    *top_m = t;
    return SL_OK;
}

/* `steamloft help [COMMAND]`: the global help, or COMMAND --help. */
int sl_cmd_help(int argc, char **argv, const sl_cli_globals *g)
{
    if (argc < 2) {
        print_help(stdout);
        return EX_OK;
    }
    if (argc > 2)
        return sl_cli_usage_error(g, "help", "give at most one command name");
    if (strcmp(argv[1], "help") == 0) {
        printf("Usage: steamloft help [COMMAND]\nPrint the help of steamloft or of COMMAND.\n");
        return EX_OK;
    }
    for (size_t i = 0; i < n_commands; i++) {
        if (strcmp(argv[1], commands[i].name) == 0) {
            char *sub[] = {argv[1], (char *)"--help", NULL};
            optind = 0;
            return commands[i].fn(2, sub, g);
        }
    }
    return sl_cli_usage_error(g, "help", "unknown command '%s'", argv[1]);
}

/* A global option written after the command: -v, -q, -f, their long forms,
 * or a bundle of those letters ("-vv", "-fq").  Sets it in G; 1 if it was one. */
static int take_global(const char *a, sl_cli_globals *g)
{
    if (strcmp(a, "--verbose") == 0)
        a = "-v";
    else if (strcmp(a, "--quiet") == 0)
        a = "-q";
    else if (strcmp(a, "--force") == 0)
        a = "-f";
    if (a[0] != '-' || a[1] == '\0' || strspn(a + 1, "vqf") != strlen(a + 1))
        return 0;
    for (const char *p = a + 1; *p; p++) {
        if (*p == 'v')
            g->verbosity = g->verbosity < 0 ? 1 : g->verbosity + 1;
        else if (*p == 'q')
            g->verbosity = -1;
        else
            g->force = 1;
    }
    return 1;
}

int sl_cli_main(int argc, char **argv)
{
    sl_cli_globals g = {0, 0, "steamloft", argc, argv};
    static const struct option opts[] = {
        {"verbose", no_argument, NULL, 'v'}, {"quiet", no_argument, NULL, 'q'},
        {"force", no_argument, NULL, 'f'},   {"help", no_argument, NULL, 'h'},
        {"version", no_argument, NULL, 'V'}, {NULL, 0, NULL, 0}};
    opterr = 0;
    int c;
    while ((c = getopt_long(argc, argv, "+vqfhV", opts, NULL)) != -1) {
        switch (c) {
        case 'v': g.verbosity = g.verbosity < 0 ? 1 : g.verbosity + 1; break;
        case 'q': g.verbosity = -1; break;
        case 'f': g.force = 1; break;
        case 'h': print_help(stdout); return stdout_status(&g, NULL, EX_OK);
        case 'V':
            printf("%s\n", sl_cli_version());
            /* Which build this is, so a serial and an MPI binary cannot be
             * mixed up (files written by either are the same byte for byte). */
#ifdef SL_HAVE_MPI
            printf("Build: MPI (make MPI=1): ensemble members are split over the ranks of mpirun.\n");
#else
            printf("Build: serial (without MPI; 'make MPI=1' builds build-mpi/steamloft).\n");
#endif
            printf("Copyright (C) 2026 the steamloft developers. License GPL-3.0-or-later.\n");
            return stdout_status(&g, NULL, EX_OK);
        default:
            if (optopt)
                return sl_cli_usage_error(&g, NULL, "unknown option '-%c'", optopt);
            return sl_cli_usage_error(&g, NULL, "unknown option '%s'", argv[optind - 1]);
        }
    }
    if (optind >= argc)
        return sl_cli_usage_error(&g, NULL, "no command given (one of the commands in --help)");
    const char *name = argv[optind];
    for (size_t i = 0; i < n_commands; i++) {
        if (strcmp(name, commands[i].name) == 0) {
            int first = optind;
            /* The command's arguments without the global options among them. */
            char **sub = malloc(((size_t)(argc - first) + 1) * sizeof *sub);
            if (sub == NULL) {
                fprintf(stderr, "%s: error: out of memory\n", g.prog);
                return EX_OSERR;
            }
            int n = 0, literal = 0;
            for (int k = first; k < argc; k++) {
                if (!literal && k > first && strcmp(argv[k], "--") == 0)
                    literal = 1;
                else if (!literal && k > first && take_global(argv[k], &g))
                    continue;
                sub[n++] = argv[k];
            }
            sub[n] = NULL;
            optind = 0; /* glibc: full reset for the command's own getopt_long */
            opterr = 0; /* one message per mistake: sl_cli_option_error */
            int rc = commands[i].fn(n, sub, &g);
            free(sub);
            return stdout_status(&g, name, rc);
        }
    }
    return sl_cli_usage_error(&g, NULL, "unknown command '%s'", name);
}
