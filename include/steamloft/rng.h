/* rng: the Monte Carlo draws of an ensemble member.
 *
 * The sequence is MT19937 (Matsumoto & Nishimura 1998, ACM TOMACS 8, 3)
 * exactly as GSL's gsl_rng_mt19937 gives it after gsl_rng_set(r, seed), and
 * sl_rng_uniform_pos is gsl_rng_uniform_pos on it (the 32-bit output over
 * 2^32, drawn again if 0), so the numbers are GSL's to the bit
 * (tests/test_ensemble.c compares them).  It is made lazily: each member is
 * seeded afresh and draws a few numbers, and draw j of a freshly seeded
 * generator (counting from 0, j < 227) needs only the first j + 398 of the
 * 624 seed words and one step of the state's twist, where gsl_rng_set
 * computes all 624 words and the first draw twists all of them.  From draw
 * 227 on the whole state is completed as GSL's and the generator goes on as
 * GSL's does.  No allocation; a generator is one thread's. */
#ifndef STEAMLOFT_RNG_H
#define STEAMLOFT_RNG_H

#include <stddef.h>
#include <stdint.h>

enum { SL_RNG_MT_N = 624 };

typedef struct sl_rng {
    uint32_t mt[SL_RNG_MT_N]; /* the seed words (lazy) or, once full, GSL's state */
    size_t n_seed;            /* seed words computed (lazy phase) */
    size_t next;              /* draws made (lazy phase), else GSL's mti */
    int full;                 /* the whole state completed */
} sl_rng;

/* Seed as gsl_rng_set(r, SEED) seeds gsl_rng_mt19937 (seed 0 is 4357). */
void sl_rng_set(sl_rng *g, unsigned long seed);

/* The next 32-bit output, as gsl_rng_get. */
uint32_t sl_rng_get(sl_rng *g);

/* A uniform number in (0, 1), as gsl_rng_uniform_pos. */
double sl_rng_uniform_pos(sl_rng *g);

#endif
