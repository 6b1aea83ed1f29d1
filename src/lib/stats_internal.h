/* stats_internal.h - helpers shared by the statistics files of the library. */
#ifndef MSGCENSUS_STATS_INTERNAL_H
#define MSGCENSUS_STATS_INTERNAL_H

#include <stdint.h> /* uint64_t */

#include <msgcensus/hist.h>

/* Exact sums of bytes: n * size fits in 128 bits for any u64 n and size. */
__extension__ typedef unsigned __int128 mc__u128;

/* Neumaier's compensated sum (Neumaier 1974, an improved Kahan sum), in
 * long double. */
typedef struct mc__ksum {
    long double s, c;
} mc__ksum;

void mc__ksum_add(mc__ksum *k, long double x);
long double mc__ksum_value(const mc__ksum *k);

/*! mc__view_total() : messages in @v; sets *ok = 0 (and returns
 *  UINT64_MAX) when the sum overflows u64, else *ok = 1. */
uint64_t mc__view_total(const mc_hview *v, int *ok);

/*! mc__view_count() : messages of @v into *n. @return 0, MC_ENODATA when
 *  there are none, or MC_ERANGE when they overflow u64. */
int mc__view_count(const mc_hview *v, uint64_t *n);

/*! mc__view_bytes() : exact byte total of @v. */
mc__u128 mc__view_bytes(const mc_hview *v);

#endif /* MSGCENSUS_STATS_INTERNAL_H */
