/* event_kind: what a scenario describes, the one fact about the scenario
 * that the physics stages need to know (the partition stage treats an
 * impact and a prescribed explosion differently).  Kept apart from
 * scenario.h so that the physics modules do not depend on the input layer. */
#ifndef STEAMLOFT_EVENT_KIND_H
#define STEAMLOFT_EVENT_KIND_H

typedef enum sl_scenario_kind {
    SL_SCENARIO_NONE = 0,
    SL_SCENARIO_IMPACTOR,  /* [impactor]: entry, then partition at the sea */
    SL_SCENARIO_EXPLOSION  /* [explosion]: a source given directly */
} sl_scenario_kind;

#endif
