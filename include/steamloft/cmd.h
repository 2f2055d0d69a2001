/* cmd: the commands of the command line, one per src/cmd_<name>.c (help lives
 * in cli.c).  Each takes the command's own argc/argv (argv[0] = command name)
 * and the global options, and returns an exit code from <sysexits.h>.
 * SL_CMD_TABLE is the one list of commands, in the order --help shows them. */
#ifndef STEAMLOFT_CMD_H
#define STEAMLOFT_CMD_H

#include "steamloft/cli.h"

int sl_cmd_help(int argc, char **argv, const sl_cli_globals *g);
int sl_cmd_params(int argc, char **argv, const sl_cli_globals *g);
int sl_cmd_run(int argc, char **argv, const sl_cli_globals *g);
int sl_cmd_ensemble(int argc, char **argv, const sl_cli_globals *g);
int sl_cmd_sweep(int argc, char **argv, const sl_cli_globals *g);
int sl_cmd_atmos(int argc, char **argv, const sl_cli_globals *g);
int sl_cmd_decay(int argc, char **argv, const sl_cli_globals *g);
int sl_cmd_tabulate(int argc, char **argv, const sl_cli_globals *g);

#define SL_CMD_TABLE \
    {"help", "print the help of steamloft or of one command", sl_cmd_help}, \
    {"run", "run one scenario and print a summary (text or --json)", sl_cmd_run}, \
    {"ensemble", "run the chain on members drawn from the scenario's distributions", sl_cmd_ensemble}, \
    {"sweep", "run the chain over a grid of scenario values (--vary)", sl_cmd_sweep}, \
    {"tabulate", "run many scenarios (files, folders, CSV rows) and print one row each", sl_cmd_tabulate}, \
    {"decay", "stratospheric box model on an injection profile or one layer", sl_cmd_decay}, \
    {"atmos", "print or check an atmosphere profile (built-in or file)", sl_cmd_atmos}, \
    {"params", "list every scenario key with unit, default, range and meaning", sl_cmd_params},

#endif
