/* stage_params: a validated scenario turned into each physics stage's
 * parameter struct (see src/stage_params.c).  Every value is SI, straight
 * from the parameter table of scenario.h; nothing here is a default of its
 * own (defaults live in the table, or for constants that are not scenario
 * keys, in the stage's _params_default function). */
#ifndef STEAMLOFT_STAGE_PARAMS_H
#define STEAMLOFT_STAGE_PARAMS_H

#include "steamloft/emission.h"
#include "steamloft/entry.h"
#include "steamloft/partition.h"
#include "steamloft/plume.h"
#include "steamloft/scenario.h"
#include "steamloft/strat.h"

/* Fill P from an impactor scenario. */
void sl_entry_params_from_scenario(sl_entry_params *p, const sl_scenario *sc);

/* Set the break-up members of P (the members after flat_no_gravity) to the
 * table's defaults, for callers that build the rest of P themselves. */
void sl_entry_params_breakup_defaults(sl_entry_params *p);

/* Fill IN from a finished scenario (everything except the entry results and
 * the ambient air, which the chain supplies). */
void sl_partition_input_from_scenario(sl_partition_input *in, const sl_scenario *sc);

/* The plume defaults overridden by the scenario's [plume] keys. */
void sl_plume_params_from_scenario(sl_plume_params *par, const sl_scenario *sc);

/* The box-model defaults overridden by the scenario's [strat] keys and
 * [site] month (0 = unknown).  The region backgrounds are named by
 * sl_scenario_text(sc, SL_P_STRAT_TROPICS_ATMOSPHERE / _EXTRATROPICS_ATMOSPHERE). */
void sl_strat_params_from_scenario(sl_strat_params *p, const sl_scenario *sc);

/* The event time (NaN without [site] date), month, pulse and footprint radius
 * (NaN: derive it from the cloud) of the [site] and [emission] keys. */
void sl_emission_params_from_scenario(sl_emission_params *p, const sl_scenario *sc);

#endif
