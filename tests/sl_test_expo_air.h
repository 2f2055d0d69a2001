/* An exponential atmosphere rho(h) = rho0 exp(-h/H) for the entry and
 * partition tests: the air of the closed forms of Collins, Melosh & Marcus
 * 2005 (eq. 5: rho0 = 1 kg/m3, H = 8 km), used to cross-check the numerical
 * entry.  Plugs into sl_entry_air. */
#ifndef SL_TEST_EXPO_AIR_H
#define SL_TEST_EXPO_AIR_H

#include <math.h>

#include "steamloft/err.h"

typedef struct expo_air {
    double rho0_kg_m3, scale_height_m;
} expo_air;

static int expo_density(void *ctx, double h, double *rho, sl_err *e)
{
    (void)e;
    const expo_air *x = ctx;
    *rho = x->rho0_kg_m3 * exp(-h / x->scale_height_m);
    return SL_OK;
}

#endif
