/* libFuzzer harness for ensemble plans (src/ensemble.c): the input is split
 * at newlines into --vary specifications (KEY=START:STOP:STEP or
 * KEY=V1,V2,...) and --threshold specifications; the valid ones go into a
 * grid plan that is finished and sampled (a few members).  Any crash,
 * sanitizer report or leak is a bug.  `make fuzz` builds and runs it. */
#include "steamloft/ensemble.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    gsl_set_error_handler_off();
    char *text = malloc(size + 1);
    if (!text)
        return 0;
    memcpy(text, data, size);
    text[size] = '\0';
    sl_ens_plan p;
    memset(&p, 0, sizeof p);
    p.mode = size > 0 && data[0] & 1 ? SL_ENS_MONTE_CARLO : SL_ENS_GRID;
    p.n_members = 4;
    p.seed = 7;
    char *save = NULL;
    for (char *line = strtok_r(text, "\n", &save); line; line = strtok_r(NULL, "\n", &save)) {
        sl_err e;
        char key[SL_ENS_KEY_LEN];
        sl_dist d;
        if (line[0] == '>') {
            sl_ens_threshold t;
            (void)sl_ens_parse_threshold(line + 1, &t, &e);
            continue;
        }
        if (sl_ens_parse_vary(line, key, &d, &e) == SL_OK) {
            if (sl_ens_plan_add(&p, key, 1.0, &d, &e) != SL_OK)
                sl_dist_free(&d);
        }
    }
    sl_err e;
    if (p.n_inputs > 0 && sl_ens_plan_finish(&p, &e) == SL_OK) {
        size_t count = p.n_members < 4 ? p.n_members : 4;
        double *v = malloc((count * p.n_inputs + 1) * sizeof *v);
        if (v)
            (void)sl_ens_sample(&p, 0, count, v, &e);
        free(v);
    }
    sl_ens_plan_free(&p);
    free(text);
    return 0;
}
