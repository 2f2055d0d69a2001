/* units_table: unit suffixes accepted in scenario keys and options, with their
 * factor to SI.  Part of the units module (src/units.c). */
#ifndef STEAMLOFT_UNITS_TABLE_H
#define STEAMLOFT_UNITS_TABLE_H

typedef struct sl_unit {
    const char *suffix;    /* as it ends a key name: "km_s" in speed_km_s */
    const char *symbol;    /* as printed for people: "km/s" */
    const char *si_symbol; /* the SI unit it converts to, UDUNITS spelling: "m s-1" */
    double to_si;          /* multiply a value in this unit by to_si to get SI */
} sl_unit;

/* The unit with this exact suffix, or NULL. */
const sl_unit *sl_units_lookup(const char *suffix);

/* The unit whose suffix ends KEY after an underscore (longest match), or NULL
 * when the key carries no known unit. */
const sl_unit *sl_units_for_key(const char *key);

#endif
