/* steamloft: screening estimates of stratospheric water lofted by ocean
 * impacts and large explosions.  main() only switches off GSL's aborting error
 * handler and hands the command line to the cli module. */
#include "steamloft/cli.h"
#include "steamloft/err.h"

int main(int argc, char **argv)
{
    sl_err_gsl_handler_off();
    return sl_cli_main(argc, argv);
}
