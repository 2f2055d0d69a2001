/* atmosphere_internal: functions shared by the two files of the atmosphere
 * module (atmosphere.c: profiles, interpolation, markers; atmosphere_file.c:
 * text and CF netCDF profiles).  Not part of the public interface. */
#ifndef STEAMLOFT_ATMOSPHERE_INTERNAL_H
#define STEAMLOFT_ATMOSPHERE_INTERNAL_H

#include "steamloft/atmosphere.h"

/* How sl_atmosphere_build_ fills the water when H2O is NULL. */
enum { SL_ATM_WATER_DRY = 0, SL_ATM_WATER_BACKGROUND = 1 };

/* Copy N levels into ATM (zeroed by the caller or freed), complete pressure
 * (hydrostatic from 101325 Pa when P is NULL) and water (dry or the background
 * model of atmosphere.c when H2O is NULL, per WATER_MODE), then build the
 * interpolants and the markers.  SOURCE is the provenance line. */
int sl_atmosphere_build_(sl_atmosphere *atm, const char *name, const char *source, size_t n,
                         const double *altitude_m, const double *temperature_K, const double *pressure_Pa,
                         const double *h2o_mole_fraction, int water_mode, sl_err *e);

/* Read a text profile (atmospheres/README.md) or a CF netCDF profile. */
int sl_atmosphere_read_text_(sl_atmosphere *atm, const char *path, sl_err *e);
int sl_atmosphere_read_netcdf_(sl_atmosphere *atm, const char *path, sl_err *e);

#endif
