/* libFuzzer harness for the netCDF atmosphere-profile reader
 * (src/atmosphere_file.c), structure-aware: tests/fuzz/fuzz_nc_build.h turns
 * the fuzzer's bytes into a nearly valid netCDF file or a damaged copy of a
 * valid one.  Any crash, sanitizer report or leak is a bug; a clean
 * SL_EDATA is the expected answer.  `make fuzz` builds and runs it. */
#include "atmosphere_internal.h"
#include "fuzz_nc_build.h"

#include <gsl/gsl_errno.h>
#include <unistd.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static char path[64];
    if (!path[0]) {
        gsl_set_error_handler_off();
        snprintf(path, sizeof path, "/tmp/sl_fuzz_atmnc_%ld.nc", (long)getpid());
    }
    if (fz_write_input(data, size, FZ_ATMOS, path) != 0)
        return 0;
    sl_atmosphere atm;
    sl_err e;
    memset(&atm, 0, sizeof atm);
    if (sl_atmosphere_read_netcdf_(&atm, path, &e) == SL_OK) {
        sl_atmos_state s;
        (void)sl_atmosphere_at(&atm, atm.altitude_m[0], &s, &e);
        sl_atmosphere_free(&atm);
    }
    return 0;
}
