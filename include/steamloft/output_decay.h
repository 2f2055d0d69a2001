/* output_decay: the files `steamloft decay` was asked for (-o, --csv, --plot;
 * output_request.h), from a chain run from the box model on
 * (sl_chain_run_from): the injection profile, the background at the event's
 * latitude, the box model's series and scalars, and as provenance what was
 * decayed (decay.source) and the box model's keys ([site] month, [strat],
 * with their origins, and any background profile files) under the names the
 * scenario table gives them.  The event time is nominal: 2000, the month of
 * the scenario (January when unknown), day 1. */
#ifndef STEAMLOFT_OUTPUT_DECAY_H
#define STEAMLOFT_OUTPUT_DECAY_H

#include "steamloft/chain.h"
#include "steamloft/cli.h"
#include "steamloft/err.h"
#include "steamloft/output_request.h"

/* SOURCE: what was decayed, in words; PROFILE: the profile file, or NULL. */
int sl_output_decay_write(const sl_output_request *out, const sl_chain *ch, const char *source,
                          const char *profile, const sl_cli_globals *g, sl_err *e);

#endif
