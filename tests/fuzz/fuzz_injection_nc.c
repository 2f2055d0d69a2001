/* libFuzzer harness for the netCDF injection-profile reader
 * (read_netcdf in src/injection.c), structure-aware: tests/fuzz/fuzz_nc_build.h
 * turns the fuzzer's bytes into a nearly valid profile file (altitude with
 * bounds, masses, scalars; shapes, types and units varied) or a damaged copy
 * of a valid one.  Any crash, sanitizer report or leak is a bug.
 * `make fuzz` builds and runs it. */
#include "steamloft/injection.h"
#include "fuzz_nc_build.h"

#include <gsl/gsl_errno.h>
#include <unistd.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static char path[64];
    if (!path[0]) {
        gsl_set_error_handler_off();
        snprintf(path, sizeof path, "/tmp/sl_fuzz_injnc_%ld.nc", (long)getpid());
    }
    if (fz_write_input(data, size, FZ_INJECTION, path) != 0)
        return 0;
    sl_injection inj;
    sl_err e;
    if (sl_injection_read(&inj, path, &e) == SL_OK) {
        (void)sl_injection_total_vapor_kg(&inj);
        sl_injection_free(&inj);
    }
    return 0;
}
