/* output_chain: the results view (output.h) of one scenario run through the
 * chain (chain.h), optionally with the box model's results (strat.h), for
 * the writers (netCDF, CSV, plots).  Used by `run`; usable by any command
 * that runs the chain.
 *
 * The view points into CH, M and R, which must outlive it.  Scalars are the
 * chain's key results in SI (energy, burst altitude, water vaporised, plume
 * top, neutral level, cloud, lofted, fallen out, frozen out, stratospheric
 * vapour and ice) plus the box model's scalars; a result that does not apply
 * (NaN: no burst, no entry) is left out, never written as NaN.  Every
 * scenario parameter goes in with its value, unit-suffixed name and origin. */
#ifndef STEAMLOFT_OUTPUT_CHAIN_H
#define STEAMLOFT_OUTPUT_CHAIN_H

#include "steamloft/chain.h"
#include "steamloft/cli.h"
#include "steamloft/output.h"
#include "steamloft/scenario.h"
#include "steamloft/strat.h"

enum { SL_OUTPUT_CHAIN_MAX_SCALARS = 24 + SL_OUTPUT_STRAT_MAX_SCALARS };

typedef struct sl_output_chain {
    sl_output_view view;
    sl_output_scalar scalars[SL_OUTPUT_CHAIN_MAX_SCALARS];
    sl_param_value prov[SL_P_COUNT];
    sl_output_param params[SL_P_COUNT];
    sl_output_strat strat;
    int have_strat;
    char title[320], event_time[32], regime_note[320];
} sl_output_chain;

/* Fill OC from a successful sl_chain_run (CH) and, when M and R are not
 * NULL, a box-model run on CH's injection.  G gives the command line for
 * history (may be NULL).  SL_EINTERNAL when CH has no injection profile,
 * SL_ENOMEM.  OC must be zeroed or freed. */
int sl_output_chain_init(sl_output_chain *oc, const sl_chain *ch, const sl_strat_model *m,
                         const sl_strat_result *r, const sl_cli_globals *g, sl_err *e);

/* Release; safe on a zeroed struct. */
void sl_output_chain_free(sl_output_chain *oc);

#endif
