/* source: one hot, moist buoyant source handed from the energy partition (or
 * from an [explosion] section) to the plume stage.  Several sources may come
 * from one event (an airburst's heated air and the plume over the sea); each
 * rises on its own and their water adds up.  Plain data, SI units. */
#ifndef STEAMLOFT_SOURCE_H
#define STEAMLOFT_SOURCE_H

#include <stddef.h>

typedef enum sl_source_kind {
    SL_SOURCE_SEA_PLUME = 0, /* vapour and heated air above the impact point on the sea */
    SL_SOURCE_AIRBURST = 1,  /* air heated by energy deposited aloft */
    SL_SOURCE_EXPLOSION = 2  /* a prescribed explosion */
} sl_source_kind;

typedef struct sl_source {
    sl_source_kind kind;
    double altitude_m;        /* centre of the initial fireball/plume */
    double radius_m;          /* radius of the initial fireball/plume */
    double air_mass_kg;       /* dry air in the initial plume */
    double vapor_mass_kg;     /* water vapour in the initial plume */
    double liquid_mass_kg;    /* condensed water (spray, droplets) carried */
    double temperature_K;     /* mean temperature of the initial plume */
    double heat_J;            /* buoyant heat: enthalpy excess over ambient at that level */
    double vertical_speed_m_s;/* initial upward speed (0 for a fireball at rest) */
} sl_source;

enum { SL_MAX_SOURCES = 4 };

typedef struct sl_source_list {
    size_t n;
    sl_source src[SL_MAX_SOURCES];
} sl_source_list;

#endif
