/* libFuzzer harness for the scenario parser (src/scenario.c): each input is
 * parsed as a scenario file and, when it is valid, its provenance listed and
 * one value set by name.  Any crash, sanitizer report or leak is a bug; a
 * clean SL_ECONFIG or SL_EDATA is the expected answer to garbage.  `make fuzz`
 * builds and runs it. */
#include "steamloft/scenario.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char *text = malloc(size + 1);
    if (!text)
        return 0;
    memcpy(text, data, size);
    text[size] = '\0';
    sl_scenario *sc = malloc(sizeof *sc);
    sl_err e;
    if (sc && sl_scenario_load_string(sc, "fuzz.ini", text, &e) == SL_OK) {
        sl_param_value rec[SL_P_COUNT];
        (void)sl_scenario_provenance(sc, rec, SL_P_COUNT);
        (void)sl_scenario_set(sc, "site.latitude_deg", 0.1, &e);
        (void)sl_scenario_text(sc, SL_P_SITE_ATMOSPHERE);
    }
    free(sc);
    free(text);
    return 0;
}
