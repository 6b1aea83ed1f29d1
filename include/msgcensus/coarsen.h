/* coarsen.h - coarsen an exact size histogram onto log2 or log2/k bins,
 * optionally rounding the counts (for summaries shared outside a team). */
#ifndef MSGCENSUS_COARSEN_H
#define MSGCENSUS_COARSEN_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* uint64_t */

#include "common.h"
#include "hist.h"

/* Bins are 1/k of an octave wide, k = "per octave" in 1..MC_COARSEN_MAX_K:
 * k = 1 gives log2 bins [1,1], [2,3], [4,7], ...; k = 2 gives log2/2 bins.
 * Bin b holds the sizes s >= 1 with floor(k * log2(s)) = b, computed exactly
 * in integers (b = floor(log2(s^k)), the bit length of s^k minus one), so no
 * rounding of a logarithm can move a size across an edge. Size 0 has a bin
 * of its own, MC_BIN_ZERO. */
#define MC_COARSEN_MAX_K 16
#define MC_BIN_ZERO (-1)

/*! mc_log2_bin() : the bin of @size for @k bins per octave (1..16):
 *  floor(k * log2(size)) for size >= 1, MC_BIN_ZERO for size 0.
 *  @return the bin, or MC_BIN_ZERO - 1 (-2) when @k is out of range. */
MC_API int mc_log2_bin(uint64_t size, unsigned k);

/*! mc_log2_bin_range() : the integer sizes in bin @bin, as the inclusive
 *  range [*lo, *hi] (both may be NULL).
 *  @return 0; MC_ENODATA when the bin holds no integer (narrow bins below
 *  a few bytes, e.g. k = 4 between 1 and 2); MC_EINVAL for a bad @k or a
 *  bin beyond 2^64. */
MC_API int mc_log2_bin_range(int bin, unsigned k, uint64_t *lo, uint64_t *hi);

/*! mc_log2_bin_rep() : the size that stands for every message of bin @bin
 *  in a coarsened histogram: the geometric midpoint 2^((bin + 1/2) / k)
 *  rounded to the nearest integer and clamped into the bin's integer range;
 *  0 for MC_BIN_ZERO. @return that size, or 0 when the bin is empty or
 *  invalid (see mc_log2_bin_range). */
MC_API uint64_t mc_log2_bin_rep(int bin, unsigned k);

/* One occupied bin of a coarsened histogram. */
typedef struct mc_coarse_bin {
    int bin;              /* mc_log2_bin() index */
    uint64_t lo, hi;      /* inclusive range of sizes in the bin */
    uint64_t rep;         /* representative size (mc_log2_bin_rep) */
    uint64_t exact_count; /* messages of the input in the bin */
    uint64_t count;       /* after rounding (0: the bin is dropped) */
} mc_coarse_bin;

/* What coarsening did, for the record kept with a shared copy. */
typedef struct mc_coarse_info {
    unsigned k;            /* bins per octave */
    uint64_t round_to;     /* 0 when counts are kept exact */
    size_t distinct_in;    /* distinct sizes of the input */
    size_t bins;           /* occupied bins before rounding */
    size_t bins_dropped;   /* bins whose count rounded to 0 */
    uint64_t msgs_in;      /* messages of the input */
    uint64_t msgs_out;     /* messages after rounding */
    uint64_t msgs_dropped; /* input messages in dropped bins */
} mc_coarse_info;

typedef struct mc_coarse mc_coarse;

/*! mc_coarsen() :
 *  Coarsen @in onto bins of 1/@k octave. Every message of a bin is counted
 *  at the bin's representative size. When @round_to >= 2 each bin count is
 *  rounded to the nearest multiple of @round_to (halves up); bins that
 *  round to 0 are dropped. @round_to 0 or 1 keeps the counts exact.
 *  O(K) in the number of distinct sizes.
 *  @return 0 and *out (free with mc_coarse_free); MC_EINVAL (bad k, NULL,
 *  or an unsorted view), MC_ERANGE (a count overflows u64 when merged or
 *  rounded) or MC_ENOMEM. */
MC_API int mc_coarsen(const mc_hview *in, unsigned k, uint64_t round_to,
                      mc_coarse **out);

/*! mc_coarse_free() : NULL is accepted. */
MC_API void mc_coarse_free(mc_coarse *c);

/*! mc_coarse_view() : the coarsened histogram as a sorted view (one entry
 *  per kept bin: representative size, rounded count), owned by @c and valid
 *  until mc_coarse_free(). The view is empty when every bin was dropped. */
MC_API void mc_coarse_view(const mc_coarse *c, mc_hview *view);

/*! mc_coarse_bins() : the occupied bins in ascending order, dropped ones
 *  included (count 0); *n receives their number. Owned by @c. */
MC_API const mc_coarse_bin *mc_coarse_bins(const mc_coarse *c, size_t *n);

/*! mc_coarse_get_info() : totals of what coarsening did. */
MC_API void mc_coarse_get_info(const mc_coarse *c, mc_coarse_info *info);

#endif /* MSGCENSUS_COARSEN_H */
