/* stats_util.h - random histograms for the statistics tests. */
#ifndef MSGCENSUS_TESTS_STATS_UTIL_H
#define MSGCENSUS_TESTS_STATS_UTIL_H

#include <stdint.h> /* uint64_t */
#include <stdlib.h> /* malloc, qsort */
#include <string.h> /* memcmp */

#include <msgcensus/hist.h>
#include <msgcensus/stats.h>

/* splitmix64 (Steele, Lea & Flood 2014): small, seedable, good enough. */
static inline uint64_t tu_rand(uint64_t *state)
{
    uint64_t z = (*state += UINT64_C(0x9E3779B97F4A7C15));
    z = (z ^ (z >> 30)) * UINT64_C(0xBF58476D1CE4E5B9);
    z = (z ^ (z >> 27)) * UINT64_C(0x94D049BB133111EB);
    return z ^ (z >> 31);
}

static inline uint64_t tu_below(uint64_t *state, uint64_t n)
{
    return tu_rand(state) % n;
}

/* A raw message stream: a mix of a few message-size families (small
 * control messages, halo faces, large bulk transfers), sometimes zeros. */
static inline uint64_t *tu_stream(uint64_t seed, size_t n, int with_zeros)
{
    uint64_t st = seed;
    uint64_t *x = malloc(n * sizeof *x);
    for (size_t i = 0; i < n; i++) {
        const uint64_t r = tu_below(&st, 100);
        if (with_zeros && r < 5)
            x[i] = 0;
        else if (r < 45)
            x[i] = 8 + tu_below(&st, 56);
        else if (r < 85)
            x[i] = 4096 * (1 + tu_below(&st, 8));
        else
            x[i] = (UINT64_C(1) << 20) + tu_below(&st, 1u << 18);
    }
    return x;
}

static inline int tu_cmp_u64(const void *a, const void *b)
{
    const uint64_t x = *(const uint64_t *)a, y = *(const uint64_t *)b;
    return (x > y) - (x < y);
}

static inline int tu_cmp_double(const void *a, const void *b)
{
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Fisher-Yates shuffle. */
static inline void tu_shuffle(uint64_t *x, size_t n, uint64_t seed)
{
    uint64_t st = seed;
    for (size_t i = n; i > 1; i--) {
        const size_t j = (size_t)tu_below(&st, i);
        const uint64_t t = x[i - 1];
        x[i - 1] = x[j];
        x[j] = t;
    }
}

static inline mc_hist *tu_hist_of(const uint64_t *x, size_t n)
{
    mc_hist *h = NULL;
    if (mc_hist_create(&h) != 0)
        return NULL;
    if (mc_hist_add_sizes(h, x, n, NULL) != 0) {
        mc_hist_free(h);
        return NULL;
    }
    return h;
}

/* Brute-force median of a double array (sorted in place): the middle
 * value, or the mean of the two middle values. */
static inline double tu_median(double *d, size_t n)
{
    qsort(d, n, sizeof *d, tu_cmp_double);
    if (n % 2)
        return d[n / 2];
    return (d[n / 2 - 1] + d[n / 2]) / 2.0;
}

/* Bitwise equality of two stats structs (same fields, same bits). */
static inline int tu_stats_identical(const mc_stats *a, const mc_stats *b)
{
    return memcmp(a, b, sizeof *a) == 0;
}

#endif /* MSGCENSUS_TESTS_STATS_UTIL_H */
