/* site: site-aware defaults.  When a scenario gives no [site] atmosphere, the
 * climate-zone profile is chosen from latitude and month; when it gives no
 * sea_surface_temperature_K, the sea surface takes the zonal-mean temperature
 * of a published climatology at that latitude.  The rules live here only
 * (docs/physics.md section 1): the scenario resolves its derived defaults
 * with these functions and the chain records the choice and its reason for
 * the summary and the outputs.
 *
 * Zones (the reference latitudes of the AFGL 1986 profiles are 15, 45 and
 * 60 deg N; the band edges lie halfway between them):
 *   |latitude| <  30 deg      tropical (all year)
 *   30 <= |latitude| < 52.5   midlatitude-summer or -winter
 *   |latitude| >= 52.5        subarctic-summer or -winter
 * Season: summer is April-September in the northern hemisphere and
 * October-March in the southern (flipped); month 0 (not given, annual-mean
 * conditions) takes the annual-mean profile us1976-humid outside the tropics
 * (the standard represents the mid-latitude year-round mean; there is no
 * annual sub-arctic profile) and tropical inside them.
 *
 * Sea surface: the "Qobs" zonal-mean distribution of Neale & Hoskins (2000,
 * Atmos. Sci. Lett. 1, 101-107), fitted to the observed zonal- and annual-
 * mean sea-surface temperature: T = 27 (1 - (sin^2 f + sin^4 f)/2) deg C with
 * f = 3 latitude / 2 for |latitude| < 60 deg, 0 deg C poleward.  For a
 * month 1-12 the annual cycle of the zonal mean is added as one harmonic,
 * A(|lat|, hemisphere) cos(2 pi (month - m_max) / 12), warmest in August in
 * the north and in February in the south (m_max = 8 and 2: the zonal-mean SST
 * peaks about two months after the solstice).  The half-amplitude A grows
 * from 0.5 K at the equator to 3 K near 40 N (the seasonal range of about
 * 6 K of the northern mid-latitude oceans) and 1.5 K near 40 S (the southern
 * oceans' smaller range), falling to 1 K (north) and 0.5 K (south) at 70 deg
 * where sea ice limits it; piecewise linear in latitude between 0, 20, 40, 55
 * and 70 deg.  The amplitudes and the phase are MEMory of the monthly
 * climatologies (Shea, Trenberth & Reynolds 1992, J. Climate 5, 987; Reynolds
 * et al. 2002, J. Climate 15, 1609), good to about 1 K; the result is never
 * below -1.8 deg C, the freezing point of sea water.  Month 0 gives the
 * annual mean. */
#ifndef STEAMLOFT_SITE_H
#define STEAMLOFT_SITE_H

#include <stddef.h>

#include "steamloft/atmosphere.h"
#include "steamloft/scenario.h"

/* Latitude band edges of the zone rule, degrees. */
#define SL_SITE_TROPICS_EDGE_DEG 30.0
#define SL_SITE_SUBARCTIC_EDGE_DEG 52.5

/* The built-in profile for LATITUDE_DEG (-90..90) and MONTH (0 = annual,
 * 1-12).  WHY (may be NULL): one line saying why, for the summary. */
const char *sl_site_atmosphere(double latitude_deg, int month, char *why, size_t why_len);

/* Zonal-mean sea-surface temperature (K) at LATITUDE_DEG (Neale & Hoskins
 * 2000 "Qobs") in MONTH (1-12, or 0 for the annual mean), with the annual
 * cycle above.  WHY as above. */
double sl_site_sea_surface_K(double latitude_deg, int month, char *why, size_t why_len);

/* What the chain records about the site (the summary prints it). */
typedef struct sl_site_choice {
    char atmosphere[SL_SCENARIO_RAW_LEN]; /* the profile used */
    int atmosphere_derived;               /* 1: chosen by the rule (no atmosphere key) */
    char atmosphere_why[192];
    double sea_surface_K;                 /* the sea-surface temperature used */
    int sea_surface_derived;              /* 1: from the climatology (no key) */
    char sea_surface_why[192];
} sl_site_choice;

/* Fill OUT from the finished scenario SC: the values SC resolved (it calls
 * the two functions above for keys it was not given) and the reasons. */
void sl_site_choose(const sl_scenario *sc, sl_site_choice *out);

/* One line for the summary: what was derived and why, and where a user
 * column ATM was joined onto a climate-zone profile (ATM may be NULL).
 * Returns 0 (and an empty line) when nothing was derived or joined. */
int sl_site_describe(const sl_site_choice *c, const sl_atmosphere *atm, char *buf, size_t n);

#endif
