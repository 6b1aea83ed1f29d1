/* stats.h - statistics of a size histogram and the MAD fitness of centers.
 *
 * Every definition is given with its source in docs/statistics.md. */
#ifndef MSGCENSUS_STATS_H
#define MSGCENSUS_STATS_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* uint64_t */

#include "common.h"
#include "hist.h"

#define MC_NQUANTILES 7
/* The quantile levels reported everywhere: 1, 5, 25, 50, 75, 95, 99 %. */
MC_API extern const double mc_quantile_levels[MC_NQUANTILES];

typedef struct mc_stats {
    uint64_t count;       /* messages */
    uint64_t zero_count;  /* messages of size 0 */
    uint64_t distinct;    /* K */
    uint64_t total_bytes; /* sum of sizes (MC_ERANGE if it overflows u64) */
    uint64_t min, max;
    double mean;             /* arithmetic mean */
    double median;           /* = quantile 0.5 */
    double harmonic;         /* over positive sizes only */
    double geometric;        /* over positive sizes only */
    uint64_t positive_count; /* messages that harmonic/geometric used */
    double quadratic;        /* root mean square */
    double trimean;          /* Tukey: (H1 + 2 median + H3) / 4, hinges */
    double hinge_lo, hinge_hi;
    double stddev;       /* population standard deviation (divisor n) */
    uint64_t mode;       /* smallest of the most frequent sizes */
    uint64_t mode_count; /* its count */
    size_t mode_ties;    /* how many sizes share that count (>= 1) */
    double quantiles[MC_NQUANTILES];      /* count-weighted */
    double byte_median;                   /* byte-weighted */
    double byte_quantiles[MC_NQUANTILES]; /* byte-weighted */
} mc_stats;

/*! mc_stats_compute() :
 *  All statistics of @v in O(K).
 *  @return 0; MC_ENODATA for an empty view (then *out is zeroed, no NaN);
 *  MC_ERANGE when the total bytes overflow u64 (then total_bytes is
 *  UINT64_MAX and every other field is still computed, from exact 128-bit
 *  byte sums). Harmonic and geometric means of a view with only zero sizes
 *  are 0 with positive_count = 0, and so are the byte-weighted quantiles
 *  when there are no bytes. */
MC_API int mc_stats_compute(const mc_hview *v, mc_stats *out);

/*! mc_quantile() : count-weighted quantile at level @p in [0,1] (the rule of
 *  docs/statistics.md: Hyndman & Fan definition 7).
 *  @return 0, MC_ENODATA or MC_EINVAL (also MC_ERANGE for a hand-made view
 *  whose counts sum beyond u64). */
MC_API int mc_quantile(const mc_hview *v, double p, double *out);

/*! mc_byte_quantile() : the smallest size s such that messages of size <= s
 *  carry at least the fraction @p of all bytes. @return 0, MC_ENODATA (also
 *  when every size is 0) or MC_EINVAL. */
MC_API int mc_byte_quantile(const mc_hview *v, double p, uint64_t *out);

/*! mc_fraction_at_or_below() : fractions of messages and of bytes with
 *  size <= @threshold (*byte_frac is 0 when there are no bytes).
 *  @return 0 or MC_ENODATA. */
MC_API int mc_fraction_at_or_below(const mc_hview *v, uint64_t threshold,
                                   double *msg_frac, double *byte_frac);

/*! mc_modes_all() : every size sharing the highest count, ascending, at most
 *  @cap written. @return the number of tied modes (may exceed cap). */
MC_API size_t mc_modes_all(const mc_hview *v, uint64_t *out, size_t cap);

/*! mc_mad() : MAD(c) = median over all messages of |x - c|, exact, O(K)
 *  (for an even count the mean of the two middle deviations).
 *  @return 0, MC_ENODATA, or MC_EINVAL when @c is not finite. */
MC_API int mc_mad(const mc_hview *v, double c, double *out);

/* The candidate centers, in report order. */
typedef enum mc_center {
    MC_CENTER_MEAN = 0,
    MC_CENTER_MEDIAN,
    MC_CENTER_MODE,
    MC_CENTER_HARMONIC,
    MC_CENTER_GEOMETRIC,
    MC_CENTER_QUADRATIC,
    MC_CENTER_TRIMEAN,
    MC_NCENTERS
} mc_center;

/*! mc_center_name() : "mean", "median", "mode", "harmonic", "geometric",
 *  "quadratic", "trimean". */
MC_API const char *mc_center_name(mc_center c);

typedef struct mc_center_fit {
    double value;   /* the candidate center */
    double mad;     /* MAD about it */
    double rel_mad; /* mad / value; 0 when value is 0 and mad is 0, and
                       HUGE_VAL never: value 0 with mad > 0 gives -1 */
    int rank;       /* 1 = best (smallest MAD); ties share a rank
                       (competition ranking: 1, 1, 3) */
    int defined;    /* 0 when the center is undefined (e.g. harmonic with
                       no positive sizes); then rank = 0 */
} mc_center_fit;

typedef struct mc_fitness {
    mc_center_fit fit[MC_NCENTERS];
    mc_center best;        /* smallest MAD; ties broken by report order */
    double mad_ratio_mean; /* MAD(mean) / MAD(best); 1 when both are 0,
                              -1 when only MAD(best) is 0 (unbounded) */
} mc_fitness;

/*! mc_fitness_compute() : MAD of each candidate of @s over @v, ranked.
 *  @return 0 or MC_ENODATA. */
MC_API int mc_fitness_compute(const mc_hview *v, const mc_stats *s,
                              mc_fitness *out);

#endif /* MSGCENSUS_STATS_H */
