/* output_atmos: the reports of `steamloft atmos` (src/output_atmos.c), on
 * standard output.  CSV when CSV, JSON when JSON, text otherwise; SI values
 * with the unit in each key, water in ppmv, %.10g.  Each returns SL_OK or
 * the JSON writer's status (SL_EIO on a write error). */
#ifndef STEAMLOFT_OUTPUT_ATMOS_H
#define STEAMLOFT_OUTPUT_ATMOS_H

#include "steamloft/atmosphere.h"
#include "steamloft/err.h"

/* One level (`atmos --at`). */
int sl_output_atmos_level(const sl_atmos_state *s, int csv, int json, sl_err *e);
/* Tropopause, cold point, stratopause, background stratospheric water
 * (`atmos --summary`). */
int sl_output_atmos_summary(const sl_atmosphere *a, int csv, int json, sl_err *e);
/* The whole profile as JSON, one array per quantity (`atmos --json NAME`). */
int sl_output_atmos_json(const sl_atmosphere *a, sl_err *e);
/* The built-in profiles and what each is (`atmos list`). */
int sl_output_atmos_list(int csv, int json, sl_err *e);

#endif
