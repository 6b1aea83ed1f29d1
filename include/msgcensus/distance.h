/* distance.h - exact distances between two message-size histograms. */
#ifndef MSGCENSUS_DISTANCE_H
#define MSGCENSUS_DISTANCE_H

#include <stdint.h> /* uint64_t */

#include "common.h"
#include "hist.h"

/* The log2 axis used for distances and figures. A positive size s sits at
 * x = log2(s), so one unit is one octave (a factor of 2) and 1 B sits at 0.
 * Size 0 has no logarithm; it is placed one octave below 1 B, at
 * MC_LOG2_ZERO = -1. This keeps every positive size at its exact log2
 * (unlike log2(s + 1), which bends the axis for small sizes) and keeps
 * zero-size messages inside the distribution instead of dropping them. */
#define MC_LOG2_ZERO (-1.0)

/*! mc_log2_axis() : @return log2(@size) for size >= 1, MC_LOG2_ZERO for 0. */
MC_API double mc_log2_axis(uint64_t size);

/* Distances between two histograms A and B, each taken as the distribution
 * of one message drawn at random (count-weighted). */
typedef struct mc_distance {
    double w1_log2; /* Wasserstein-1 (earth mover's) distance between the
                       distributions of mc_log2_axis(size), in octaves */
    double ks;      /* two-sample Kolmogorov-Smirnov statistic
                       sup_s |F_A(s) - F_B(s)|, in [0, 1] */
    uint64_t ks_at; /* smallest size s where that supremum is reached */
} mc_distance;

/*! mc_distance_compute() :
 *  Both distances between @a and @b, exactly from the sorted views in one
 *  merge pass, O(K_A + K_B), no binning and no expansion of the counts.
 *  W1 is the integral of |F_A - F_B| over the log2 axis (common practice:
 *  the one-dimensional Wasserstein-1 distance equals the L1 distance of the
 *  cumulative distribution functions). KS is evaluated just after each
 *  distinct size of either histogram, where the step functions jump.
 *  @return 0; MC_EINVAL when a pointer is NULL or a view is not strictly
 *  ascending with positive counts; MC_ENODATA when either view is empty.
 *  *out is zeroed on failure. */
MC_API int mc_distance_compute(const mc_hview *a, const mc_hview *b,
                               mc_distance *out);

#endif /* MSGCENSUS_DISTANCE_H */
