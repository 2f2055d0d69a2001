/* units: the table of units accepted at the input boundary.  Scenario keys and
 * command-line values carry their unit in the name (diameter_m, speed_km_s,
 * energy_Mt); this table maps each unit suffix to its factor to SI, so the
 * conversion happens here and nowhere else.  Constants: include/steamloft/units.h. */
#include "steamloft/units.h"
#include "steamloft/units_table.h"

#include <string.h>

static const sl_unit unit_table[] = {
    /* suffix, printed symbol, SI symbol, factor to SI */
    {"m", "m", "m", 1.0},
    {"km", "km", "m", 1.0e3},
    {"m_s", "m/s", "m s-1", 1.0},
    {"km_s", "km/s", "m s-1", 1.0e3},
    {"kg", "kg", "kg", 1.0},
    {"Tg", "Tg", "kg", SL_KG_PER_TG},
    {"kg_m3", "kg/m3", "kg m-3", 1.0},
    {"Pa", "Pa", "Pa", 1.0},
    {"hPa", "hPa", "Pa", 100.0},
    {"MPa", "MPa", "Pa", 1.0e6},
    {"K", "K", "K", 1.0},
    {"J", "J", "J", 1.0},
    {"J_kg", "J/kg", "J kg-1", 1.0},
    {"Mt", "Mt TNT", "J", SL_J_PER_MT_TNT},
    {"deg", "degree", "rad", SL_PI / 180.0},
    {"ppmv", "ppmv", "mol mol-1", 1.0e-6},
    {"s", "s", "s", 1.0},
    {"days", "day", "s", SL_S_PER_DAY},
    {"years", "year", "s", SL_S_PER_YEAR},
    {"1", "1", "1", 1.0},
};

const sl_unit *sl_units_lookup(const char *suffix)
{
    if (suffix == NULL)
        return NULL;
    for (size_t i = 0; i < sizeof unit_table / sizeof unit_table[0]; i++)
        if (strcmp(unit_table[i].suffix, suffix) == 0)
            return &unit_table[i];
    return NULL;
}

const sl_unit *sl_units_for_key(const char *key)
{
    if (key == NULL)
        return NULL;
    /* Try the longest suffix first: "speed_km_s" must match km_s, not s. */
    const sl_unit *best = NULL;
    size_t best_len = 0, klen = strlen(key);
    for (size_t i = 0; i < sizeof unit_table / sizeof unit_table[0]; i++) {
        size_t slen = strlen(unit_table[i].suffix);
        if (slen + 1 < klen && slen > best_len && key[klen - slen - 1] == '_' &&
            strcmp(key + klen - slen, unit_table[i].suffix) == 0) {
            best = &unit_table[i];
            best_len = slen;
        }
    }
    return best;
}
