/* libFuzzer harness for the emission-grid template reader
 * (sl_emission_grid_init in src/emission.c), structure-aware: tests/fuzz/
 * fuzz_nc_build.h turns the fuzzer's bytes into a nearly valid template
 * (lat, lon and their bounds; shapes, types and units varied) or a damaged
 * copy of a valid one.  Any crash, sanitizer report or leak is a bug.
 * `make fuzz` builds and runs it. */
#include "steamloft/emission.h"
#include "fuzz_nc_build.h"

#include <gsl/gsl_errno.h>
#include <unistd.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static char path[64];
    if (!path[0]) {
        gsl_set_error_handler_off();
        snprintf(path, sizeof path, "/tmp/sl_fuzz_grid_%ld.nc", (long)getpid());
    }
    if (fz_write_input(data, size, FZ_GRID, path) != 0)
        return 0;
    sl_emission_grid g;
    sl_err e;
    memset(&g, 0, sizeof g);
    if (sl_emission_grid_init(&g, path, &e) == SL_OK)
        sl_emission_grid_free(&g);
    return 0;
}
