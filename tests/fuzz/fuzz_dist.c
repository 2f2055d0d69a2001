/* libFuzzer harness for distribution expressions (src/dist.c), the values
 * an ensemble scenario may hold: each input is parsed as the value of
 * impactor.diameter_m and, when valid, its quantiles and median taken at a
 * few points.  Any crash, sanitizer report or non-finite quantile of a valid
 * distribution inside (0,1) is a bug.  `make fuzz` builds and runs it. */
#include "steamloft/dist.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    gsl_set_error_handler_off();
    char *text = malloc(size + 1);
    if (!text)
        return 0;
    memcpy(text, data, size);
    text[size] = '\0';
    (void)sl_dist_is_distribution(text);
    (void)sl_dist_looks_like_law(text);
    sl_dist d;
    sl_err e;
    if (sl_dist_parse(text, "diameter_m", "fuzz", &d, &e) == SL_OK) {
        static const double u[] = {1e-12, 0.25, 0.5, 0.75, 1.0 - 1e-12};
        for (size_t i = 0; i < sizeof u / sizeof u[0]; i++)
            if (isnan(sl_dist_quantile(&d, u[i])))
                abort();
        (void)sl_dist_median(&d);
        sl_dist_free(&d);
    }
    free(text);
    return 0;
}
