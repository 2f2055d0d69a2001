/* libFuzzer harness for the text atmosphere-profile reader
 * (src/atmosphere_file.c).  Each input is written to a private temporary
 * file and read as a profile; any crash, sanitizer report or leak is a bug,
 * a clean SL_EDATA is the expected answer to garbage.  `make fuzz` builds
 * and runs it. */
#include "atmosphere_internal.h"

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static char path[64];
    if (!path[0]) {
        gsl_set_error_handler_off();
        snprintf(path, sizeof path, "/tmp/sl_fuzz_atm_%ld.txt", (long)getpid());
    }
    FILE *f = fopen(path, "wb");
    if (!f)
        return 0;
    fwrite(data, 1, size, f);
    fclose(f);
    sl_atmosphere atm;
    sl_err e;
    memset(&atm, 0, sizeof atm);
    if (sl_atmosphere_read_text_(&atm, path, &e) == SL_OK) {
        sl_atmos_state s;
        (void)sl_atmosphere_at(&atm, 0.5 * (atm.altitude_m[0] + atm.altitude_m[atm.n - 1]), &s, &e);
        sl_atmosphere_free(&atm);
    }
    return 0;
}
