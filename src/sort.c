/* sort: exact, stable LSD radix sorts of doubles (see include/steamloft/sort.h). */
#include "steamloft/sort.h"

#include <stdlib.h>
#include <string.h>

enum { DIGIT_BITS = 11, N_BINS = 1 << DIGIT_BITS, N_DIGITS = (64 + DIGIT_BITS - 1) / DIGIT_BITS };

/* The order-preserving key of V: unsigned comparison of keys is < of values
 * (both zeros give the key of +0). */
static inline uint64_t order_key(double v)
{
    if (v == 0.0)
        v = 0.0;
    uint64_t u;
    memcpy(&u, &v, sizeof u);
    return (u >> 63) ? ~u : (u | UINT64_C(0x8000000000000000));
}

static inline size_t digit(uint64_t key, int d)
{
    return (size_t)(key >> (d * DIGIT_BITS)) & (N_BINS - 1);
}

/* COUNT holds the histogram of each digit; turns each into starting offsets
 * and returns the mask of the digits whose keys are not all in one bin (the
 * passes that move anything). */
static unsigned offsets(size_t *count, size_t n)
{
    unsigned mask = 0;
    for (int d = 0; d < N_DIGITS; d++) {
        size_t *c = count + (size_t)d * N_BINS, sum = 0;
        int single = 0;
        for (size_t b = 0; b < N_BINS; b++) {
            single |= c[b] == n;
            size_t t = c[b];
            c[b] = sum;
            sum += t;
        }
        if (!single)
            mask |= 1u << d;
    }
    return mask;
}

/* One sort per element type (the key is read and the element moved with
 * the type known, so the compiler keeps both inline). */
#define DEFINE_RADIX_SORT(NAME, TYPE, KEY_OF)                                                                       \
    int NAME(TYPE *a, size_t n, sl_err *e)                                                                          \
    {                                                                                                               \
        if (n < 2)                                                                                                  \
            return SL_OK;                                                                                           \
        size_t *count = calloc((size_t)N_DIGITS * N_BINS, sizeof *count);                                          \
        TYPE *tmp = malloc(n * sizeof *tmp);                                                                        \
        if (count == NULL || tmp == NULL) {                                                                         \
            free(count);                                                                                            \
            free(tmp);                                                                                              \
            SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory sorting %zu values", n);                                    \
        }                                                                                                           \
        for (size_t i = 0; i < n; i++) {                                                                            \
            const uint64_t k = order_key(KEY_OF(a[i]));                                                             \
            for (int d = 0; d < N_DIGITS; d++)                                                                      \
                count[(size_t)d * N_BINS + digit(k, d)]++;                                                          \
        }                                                                                                           \
        const unsigned mask = offsets(count, n);                                                                    \
        TYPE *src = a, *dst = tmp;                                                                                  \
        for (int d = 0; d < N_DIGITS; d++) {                                                                        \
            if (!(mask & (1u << d)))                                                                                \
                continue;                                                                                           \
            size_t *off = count + (size_t)d * N_BINS;                                                               \
            for (size_t i = 0; i < n; i++)                                                                          \
                dst[off[digit(order_key(KEY_OF(src[i])), d)]++] = src[i];                                           \
            TYPE *t = src;                                                                                          \
            src = dst;                                                                                              \
            dst = t;                                                                                                \
        }                                                                                                           \
        if (src != a)                                                                                               \
            memcpy(a, src, n * sizeof *a);                                                                          \
        free(count);                                                                                                \
        free(tmp);                                                                                                  \
        return SL_OK;                                                                                               \
    }

#define KEY_OF_DOUBLE(x) (x)
#define KEY_OF_PAIR(p) ((p).value)

DEFINE_RADIX_SORT(sl_sort_doubles, double, KEY_OF_DOUBLE)
DEFINE_RADIX_SORT(sl_sort_pairs, sl_sort_pair, KEY_OF_PAIR)
