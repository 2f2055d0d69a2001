/* cli: global options and command dispatch.  See include/steamloft/cli.h. */
#include "steamloft/cli.h"
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
            "Global options:\n"
            "  -v, --verbose   more messages on stderr (repeatable)\n"
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

int sl_cli_report(const sl_cli_globals *g, const char *cmd, const sl_err *e)
{
    const char *prog = g && g->prog ? g->prog : "steamloft";
    fprintf(stderr, "%s%s%s: error: %s\n", prog, cmd ? " " : "", cmd ? cmd : "",
            e->msg[0] ? e->msg : sl_err_name(e->code));
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

int sl_cli_parse_double(const char *text, const char *what, double *out, sl_err *e)
{
    char *end = NULL;
    errno = 0;
    double v = strtod(text, &end);
    if (end == text || *end != '\0' || errno == ERANGE || !isfinite(v))
        SL_FAIL_RETURN(e, SL_EUSAGE, "%s: '%s' is not a finite number", what, text);
    *out = v;
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
        case 'h': print_help(stdout); return EX_OK;
        case 'V':
            printf("%s\n", sl_cli_version());
            printf("Copyright (C) 2026 the steamloft developers. License GPL-3.0-or-later.\n");
            return EX_OK;
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
            optind = 0; /* glibc: full reset for the command's own getopt_long */
            opterr = 1;
            return commands[i].fn(argc - first, argv + first, &g);
        }
    }
    return sl_cli_usage_error(&g, NULL, "unknown command '%s'", name);
}
