/* rng: MT19937 draws as GSL's gsl_rng_mt19937 makes them, made lazily
 * (include/steamloft/rng.h). */
#include "steamloft/rng.h"

enum { N = SL_RNG_MT_N, M = 397 };
#define UPPER 0x80000000u
#define LOWER 0x7fffffffu
#define MATRIX_A 0x9908b0dfu

static uint32_t twist(uint32_t a, uint32_t b, uint32_t c)
{
    const uint32_t y = (a & UPPER) | (b & LOWER);
    return c ^ (y >> 1) ^ ((y & 1u) ? MATRIX_A : 0u);
}

static uint32_t temper(uint32_t k)
{
    k ^= k >> 11;
    k ^= (k << 7) & 0x9d2c5680u;
    k ^= (k << 15) & 0xefc60000u;
    k ^= k >> 18;
    return k;
}

/* GSL's seeding recurrence (mod 2^32) up to word N_WORDS - 1. */
static void seed_to(sl_rng *g, size_t n_words)
{
    for (size_t i = g->n_seed; i < n_words; i++)
        g->mt[i] = 1812433253u * (g->mt[i - 1] ^ (g->mt[i - 1] >> 30)) + (uint32_t)i;
    if (n_words > g->n_seed)
        g->n_seed = n_words;
}

/* The regeneration of the whole state, in GSL's order. */
static void twist_all(uint32_t *mt)
{
    int kk;
    for (kk = 0; kk < N - M; kk++)
        mt[kk] = twist(mt[kk], mt[kk + 1], mt[kk + M]);
    for (; kk < N - 1; kk++)
        mt[kk] = twist(mt[kk], mt[kk + 1], mt[kk + (M - N)]);
    mt[N - 1] = twist(mt[N - 1], mt[0], mt[M - 1]);
}

void sl_rng_set(sl_rng *g, unsigned long seed)
{
    if (seed == 0)
        seed = 4357;
    g->mt[0] = (uint32_t)(seed & 0xffffffffUL);
    g->n_seed = 1;
    g->next = 0;
    g->full = 0;
}

uint32_t sl_rng_get(sl_rng *g)
{
    if (!g->full) {
        if (g->next < (size_t)(N - M)) {
            /* Word j of the first twist reads the seed words j, j + 1 and
             * j + M, none of them twisted yet. */
            const size_t j = g->next++;
            seed_to(g, j + M + 1);
            return temper(twist(g->mt[j], g->mt[j + 1], g->mt[j + M]));
        }
        seed_to(g, N);
        twist_all(g->mt);
        g->full = 1; /* g->next = N - M: GSL's mti after as many draws */
    }
    if (g->next >= (size_t)N) {
        twist_all(g->mt);
        g->next = 0;
    }
    return temper(g->mt[g->next++]);
}

double sl_rng_uniform_pos(sl_rng *g)
{
    double x;
    do
        x = sl_rng_get(g) / 4294967296.0;
    while (x == 0);
    return x;
}
