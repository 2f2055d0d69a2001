/* site: site-aware defaults (see include/steamloft/site.h for the rules and
 * their sources; docs/physics.md section 1). */
#include "steamloft/site.h"
#include "steamloft/units.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

static void say(char *why, size_t n, const char *text)
{
    if (why && n > 0)
        snprintf(why, n, "%s", text);
}

const char *sl_site_atmosphere(double latitude_deg, int month, char *why, size_t why_len)
{
    const double a = fabs(latitude_deg);
    /* The reason is written only when asked for (the ensemble resolves every
     * member's site without one: no formatting per member). */
    const int tell = why && why_len > 0;
    if (!(a < 90.0 + 1e-9) || month < 0 || month > 12) {
        say(why, why_len, "latitude or month out of range: us1976-humid");
        return "us1976-humid";
    }
    if (a < SL_SITE_TROPICS_EDGE_DEG) {
        if (tell)
            snprintf(why, why_len, "latitude %.1f deg is within %.0f deg of the equator: tropical (all year)",
                     latitude_deg, SL_SITE_TROPICS_EDGE_DEG);
        return "tropical";
    }
    const int sub = a >= SL_SITE_SUBARCTIC_EDGE_DEG;
    const char *band = sub ? "sub-arctic" : "mid-latitude";
    if (month == 0) {
        if (tell)
            snprintf(why, why_len,
                     "latitude %.1f deg is %s, month not given: the annual-mean standard us1976-humid", latitude_deg,
                     band);
        return "us1976-humid";
    }
    /* Northern summer April-September; the southern hemisphere flips. */
    int summer = month >= 4 && month <= 9;
    if (latitude_deg < 0.0)
        summer = !summer;
    const char *name = sub ? (summer ? "subarctic-summer" : "subarctic-winter")
                           : (summer ? "midlatitude-summer" : "midlatitude-winter");
    if (tell)
        snprintf(why, why_len, "latitude %.1f deg is %s (%s hemisphere), month %d is its %s: %s", latitude_deg,
                 band, latitude_deg < 0.0 ? "southern" : "northern", month, summer ? "summer" : "winter", name);
    return name;
}

/* Half-amplitude (K) of the annual cycle of the zonal-mean SST at |latitude|
 * A_DEG in the northern (NORTH = 1) or southern hemisphere (site.h: MEM). */
static double seasonal_half_amplitude_K(double a_deg, int north)
{
    static const double lat[5] = {0.0, 20.0, 40.0, 55.0, 70.0};
    static const double amp_n[5] = {0.5, 1.0, 3.0, 2.5, 1.0};
    static const double amp_s[5] = {0.5, 1.0, 1.5, 1.0, 0.5};
    const double *amp = north ? amp_n : amp_s;
    if (a_deg >= lat[4])
        return amp[4];
    int i = 0;
    while (a_deg > lat[i + 1])
        i++;
    double w = (a_deg - lat[i]) / (lat[i + 1] - lat[i]);
    return amp[i] + w * (amp[i + 1] - amp[i]);
}

double sl_site_sea_surface_K(double latitude_deg, int month, char *why, size_t why_len)
{
    const double a = fabs(latitude_deg);
    double t_C = 0.0;
    if (a < 60.0) {
        const double s = sin(1.5 * sl_deg_to_rad(a));
        const double s2 = s * s;
        t_C = 27.0 * (1.0 - 0.5 * (s2 + s2 * s2));
    }
    double cycle_C = 0.0;
    if (month >= 1 && month <= 12) {
        const int north = latitude_deg >= 0.0;
        const double m_max = north ? 8.0 : 2.0;
        cycle_C = seasonal_half_amplitude_K(a, north) * cos(2.0 * SL_PI * ((double)month - m_max) / 12.0);
    }
    const double t_K = fmax(t_C + cycle_C, -1.8) + 273.15;
    if (why && why_len > 0) {
        if (month >= 1 && month <= 12)
            snprintf(why, why_len,
                     "zonal-mean climatology at latitude %.1f deg in month %d: %.2f K (Neale & Hoskins 2000 "
                     "Qobs annual mean %+.2f K annual cycle)",
                     latitude_deg, month, t_K, cycle_C);
        else
            snprintf(why, why_len,
                     "zonal-mean climatology at latitude %.1f deg: %.2f K (Neale & Hoskins 2000 Qobs, annual mean)",
                     latitude_deg, t_K);
    }
    return t_K;
}

void sl_site_choose(const sl_scenario *sc, sl_site_choice *out)
{
    memset(out, 0, sizeof *out);
    const double lat = sl_rad_to_deg(sl_scenario_value(sc, SL_P_SITE_LATITUDE));
    const double mv = sl_scenario_value(sc, SL_P_SITE_MONTH);
    const int month = isfinite(mv) ? (int)lround(mv) : 0;
    snprintf(out->atmosphere, sizeof out->atmosphere, "%s", sl_scenario_text(sc, SL_P_SITE_ATMOSPHERE));
    out->atmosphere_derived = sc->origin[SL_P_SITE_ATMOSPHERE] == SL_ORIGIN_DERIVED;
    if (out->atmosphere_derived)
        sl_site_atmosphere(lat, month, out->atmosphere_why, sizeof out->atmosphere_why);
    else
        snprintf(out->atmosphere_why, sizeof out->atmosphere_why, "given in the scenario");
    out->sea_surface_K = sl_scenario_value(sc, SL_P_SITE_SST);
    out->sea_surface_derived = sc->origin[SL_P_SITE_SST] == SL_ORIGIN_DERIVED;
    if (out->sea_surface_derived)
        sl_site_sea_surface_K(lat, month, out->sea_surface_why, sizeof out->sea_surface_why);
    else
        snprintf(out->sea_surface_why, sizeof out->sea_surface_why, "given in the scenario");
}

int sl_site_describe(const sl_site_choice *c, const sl_atmosphere *atm, char *buf, size_t n)
{
    if (n == 0)
        return 0;
    buf[0] = '\0';
    size_t used = 0;
    if (c->atmosphere_derived)
        used += (size_t)snprintf(buf + used, n - used, "no atmosphere given: %s", c->atmosphere_why);
    if (c->sea_surface_derived && used < n)
        used += (size_t)snprintf(buf + used, n - used, "%sno sea-surface temperature given: %s", used ? "; " : "",
                                 c->sea_surface_why);
    if (atm && isfinite(atm->join_altitude_m) && used < n)
        used += (size_t)snprintf(buf + used, n - used, "%sthe profile ends at %.1f km and is joined there onto %s",
                                 used ? "; " : "", atm->join_altitude_m * 1e-3, atm->joined_onto);
    return used > 0;
}
