/* The built-in profiles the box model's defaults were calibrated on, shared by
 * the box-model tests: tropical for the tropics, us1976-humid (the standard
 * with background water) for both extratropical regions. */
#ifndef STEAMLOFT_TEST_STRAT_FIXTURE_H
#define STEAMLOFT_TEST_STRAT_FIXTURE_H

#include "sl_test.h"

#include "steamloft/atmosphere.h"
#include "steamloft/strat.h"

#include <string.h>

typedef struct fixture {
    sl_atmosphere trop, us;
    const sl_atmosphere *atm[SL_STRAT_N_REGIONS];
} fixture;

static void fixture_init(fixture *f)
{
    sl_err e = {0};
    memset(f, 0, sizeof *f);
    ck_assert_int_eq(sl_atmosphere_init(&f->trop, "tropical", &e), SL_OK);
    ck_assert_int_eq(sl_atmosphere_init(&f->us, "us1976-humid", &e), SL_OK);
    f->atm[SL_STRAT_SOUTH] = &f->us;
    f->atm[SL_STRAT_TROPICS] = &f->trop;
    f->atm[SL_STRAT_NORTH] = &f->us;
}

static void fixture_free(fixture *f)
{
    sl_atmosphere_free(&f->trop);
    sl_atmosphere_free(&f->us);
}

#endif
