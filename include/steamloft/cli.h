/* cli: the command line.  `steamloft [global options] <command> [options] [file]`.
 *
 * Global options (-v/--verbose, -q/--quiet, -f/--force) may stand anywhere on
 * the line, before or after the command: sl_cli_main takes them out of the
 * command's arguments (up to a "--", and never as the value of an option
 * written "--opt=VALUE"), so `steamloft run x.ini --force -o out.nc` and
 * `steamloft --force run x.ini -o out.nc` are the same command.  -h/--help
 * and -V/--version before the command are steamloft's; after it, --help is
 * the command's.  Each command then parses its own options with a fresh
 * getopt_long (optind = 0, opterr = 0: a mistake is reported once, by
 * sl_cli_option_error).  Commands are listed once in the
 * table in cli.c; each lives in src/cmd_<name>.c and returns an exit code
 * from <sysexits.h>.  --help and --version print to stdout and exit 0;
 * usage errors print one line plus a pointer to --help on stderr and exit 64. */
#ifndef STEAMLOFT_CLI_H
#define STEAMLOFT_CLI_H

#include "steamloft/err.h"
#include "steamloft/scenario.h"

#include <stddef.h>

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

/* The layer of `decay --between BOTTOM_M TOP_M`: parse both altitudes (m) and
 * check 0 <= BOTTOM_M < TOP_M <= MAX_TOP_M.  Altitudes whose top is at most
 * 120 m are kilometres written where metres are wanted (no such layer can
 * reach the stratosphere): SL_EUSAGE with the fix, "for 22 to 27 km write
 * --between 22000 27000".  Other mistakes: SL_EUSAGE naming the option and
 * the valid range.  BOTTOM_M and TOP_M are set only on success. */
int sl_cli_between_m(const char *bottom_text, const char *top_text, double max_top_m,
                     double *bottom_m, double *top_m, sl_err *e);

/* Report the option mistake getopt_long just returned (C is '?' or ':'):
 * one line naming the option, "Try ... --help", exit 64.  Commands put ':'
 * first in their short-option string so a missing value is told apart. */
int sl_cli_option_error(const sl_cli_globals *g, const char *cmd, int c, char **argv);

/* --set SECTION.KEY=VALUE, repeatable, on every command that reads a
 * scenario: put SL_CLI_SET_OPTION in the getopt_long table, pass the code
 * SL_CLI_OPT_SET to sl_cli_sets_add, then load the scenario with
 * sl_cli_scenario_load (or sl_cli_scenario_read + sl_scenario_finish when a
 * command takes keys over before they are converted, as the ensemble does).
 * The values are applied in order with sl_scenario_override (scenario.h):
 * the key's own unit as a user writes it, text and choice keys too. */
enum { SL_CLI_OPT_SET = 0x5380, SL_CLI_MAX_SETS = 128, SL_CLI_MAX_KEY_SETS = 16 };
#define SL_CLI_SET_OPTION {"set", required_argument, NULL, SL_CLI_OPT_SET}
#define SL_CLI_SET_HELP                                                                     \
    "      --set SECTION.KEY=VALUE  override one scenario key (repeatable), VALUE in the\n"  \
    "                           key's own unit, e.g. --set impactor.diameter_m=250\n"

typedef struct sl_cli_sets {
    size_t n;
    const char *item[SL_CLI_MAX_SETS];
    /* the assignments written by sl_cli_sets_add_key */
    char text[SL_CLI_MAX_KEY_SETS][SL_SCENARIO_RAW_LEN + 64];
    size_t n_text;
} sl_cli_sets;

/* Record one --set argument; checks at once that it is SECTION.KEY=VALUE with
 * a known key (SL_EUSAGE naming --set, the key, and the keys of its section). */
int sl_cli_sets_add(sl_cli_sets *s, const char *arg, sl_err *e);

/* A command's own option as a short form of --set for key ID (`decay
 * --month N` is --set site.month=N): recorded in order with the --set values.
 * A number is checked against the table's range at once: SL_EUSAGE naming
 * OPTION, the key and the valid range (the table is the one place for it). */
int sl_cli_sets_add_key(sl_cli_sets *s, const char *option, sl_param_id id, const char *value, sl_err *e);

/* 1 when WORD is one of the choices of the choice key ID. */
int sl_cli_is_choice(sl_param_id id, const char *word);

/* Apply the recorded --set values to a read, unfinished scenario. */
int sl_cli_sets_apply(const sl_cli_sets *s, sl_scenario *sc, sl_err *e);

/* Read PATH ('-' = standard input), apply the --set values (S may be NULL). */
int sl_cli_scenario_read(const char *path, const sl_cli_sets *s, sl_scenario *sc, sl_err *e);

/* Read, apply the --set values, finish: the one way commands load a scenario. */
int sl_cli_scenario_load(const char *path, const sl_cli_sets *s, sl_scenario *sc, sl_err *e);

/* The caution printed with every report. */
const char *sl_cli_caution(void);

/* Version string "steamloft VERSION (git HASH)". */
const char *sl_cli_version(void);

#endif
