/* steamloft: screening estimates of stratospheric water lofted by ocean
 * impacts and large explosions.  main() switches off GSL's aborting error
 * handler, installs the signal handlers that remove staged outputs (SIGINT,
 * SIGTERM, SIGHUP: exit 128 + signal) and hands the command line to the cli
 * module. */
#include <stdio.h>

#include "steamloft/cli.h"
#include "steamloft/err.h"
#include "steamloft/outfile.h"

int main(int argc, char **argv)
{
    sl_err_gsl_handler_off();
    sl_err e = {0};
    if (sl_outset_handle_signals(&e) != SL_OK) {
        fprintf(stderr, "steamloft: error: %s\n", e.msg);
        return sl_err_exit_code(e.code);
    }
    return sl_cli_main(argc, argv);
}
