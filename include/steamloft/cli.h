/* cli: the command line.  `steamloft [global options] <command> [options] [file]`.
 *
 * Global options come before the command (getopt_long with a leading '+' so
 * parsing stops at the command); each command then parses its own options
 * with a fresh getopt_long (optind = 0).  Commands are listed once in the
 * table in cli.c; each lives in src/cmd_<name>.c and returns an exit code
 * from <sysexits.h>.  --help and --version print to stdout and exit 0;
 * usage errors print one line plus a pointer to --help on stderr and exit 64. */
#ifndef STEAMLOFT_CLI_H
#define STEAMLOFT_CLI_H

#include "steamloft/err.h"

typedef struct sl_cli_globals {
    int verbosity;      /* 0 normal, -1 quiet (-q), >0 verbose (-v, repeatable) */
    int force;          /* --force: allow overwriting existing outputs */
    const char *prog;   /* program name for messages ("steamloft") */
    int full_argc;      /* the whole command line, for provenance (history) */
    char **full_argv;
} sl_cli_globals;

/* One command: name, one-line summary, and its entry point.  argv[0] is the
 * command name; the function parses the rest and returns an exit code. */
typedef struct sl_cli_command {
    const char *name;
    const char *summary;
    int (*fn)(int argc, char **argv, const sl_cli_globals *g);
} sl_cli_command;

/* Entry point called by main(): parse global options, dispatch. */
int sl_cli_main(int argc, char **argv);

/* Print "steamloft CMD: error: MSG" (and the trace when verbose) to stderr and
 * return the sysexits code for e->code. */
int sl_cli_report(const sl_cli_globals *g, const char *cmd, const sl_err *e);

/* Print a usage error for CMD ("steamloft CMD: REASON" + "Try ... --help") to
 * stderr and return 64 (EX_USAGE). */
int sl_cli_usage_error(const sl_cli_globals *g, const char *cmd, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;

/* Strictly parse a whole string as a finite double (no trailing text).
 * Returns SL_OK or SL_EUSAGE with a message naming what. */
int sl_cli_parse_double(const char *text, const char *what, double *out, sl_err *e);

/* The caution printed with every report. */
const char *sl_cli_caution(void);

/* Version string "steamloft VERSION (git HASH)". */
const char *sl_cli_version(void);

#endif
