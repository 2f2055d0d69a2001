/* libFuzzer harness for the CSV injection-profile reader (read_csv in
 * src/injection.c): each input is written to a private file and read as a
 * profile.  Any crash, sanitizer report or leak is a bug; a clean SL_EDATA
 * is the expected answer to garbage.  `make fuzz` builds and runs it. */
#include "steamloft/injection.h"

#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static char path[64];
    if (!path[0]) {
        gsl_set_error_handler_off();
        snprintf(path, sizeof path, "/tmp/sl_fuzz_injcsv_%ld.csv", (long)getpid());
    }
    FILE *f = fopen(path, "wb");
    if (!f)
        return 0;
    fwrite(data, 1, size, f);
    fclose(f);
    sl_injection inj;
    sl_err e;
    if (sl_injection_read(&inj, path, &e) == SL_OK) {
        (void)sl_injection_mass_above_kg(&inj, 15000.0);
        sl_injection_free(&inj);
    }
    return 0;
}
