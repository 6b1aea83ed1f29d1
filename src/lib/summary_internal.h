/* summary_internal.h - HDF5 row types and names shared by the summary writer
 * and reader (layout: docs/summary-format.md). */
#ifndef MSGCENSUS_SUMMARY_INTERNAL_H
#define MSGCENSUS_SUMMARY_INTERNAL_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* fixed-width integers */

#include <hdf5.h> /* hid_t */

#include <msgcensus/summary.h>

/* Width of the fixed-length metric name in the stats table. */
#define MC__METRIC_LEN 24

/* Kinds of a stats row (column "kind"). */
enum {
    MC__KIND_COUNT = 0,  /* an exact integer; "exact" holds it */
    MC__KIND_REAL = 1,   /* a real statistic; "value" holds it */
    MC__KIND_CENTER = 2, /* a candidate center with MAD, rel. MAD and rank */
    MC__KIND_SIZE = 3    /* an exact size, also in "exact" (min, max, mode) */
};

/* Row of /sources in memory. */
typedef struct mc__source_row {
    const char *path;
    int32_t app_rank;
    uint64_t bytes, records, blocks, skipped_blocks, skipped_records;
    uint64_t checksum;
    const char *status;
} mc__source_row;

/* Row of a population's stats table. */
typedef struct mc__stat_row {
    char metric[MC__METRIC_LEN];
    double value;
    uint64_t exact;
    double mad;
    double rel_mad;
    int32_t rank;
    int32_t kind;
} mc__stat_row;

/* Row of a population's quantiles table. */
typedef struct mc__quantile_row {
    double level;
    double value;      /* count-weighted */
    double byte_value; /* byte-weighted */
} mc__quantile_row;

/* Row of a population's mixture table. */
typedef struct mc__mixture_row {
    double weight, mu, sigma, center;
} mc__mixture_row;

/* Compound types; each returns a type id the caller closes, or < 0. */
hid_t mc__h5_source_type(void);
hid_t mc__h5_stat_type(void);
hid_t mc__h5_quantile_type(void);
hid_t mc__h5_top_type(void);
hid_t mc__h5_peak_type(void);
hid_t mc__h5_mixture_type(void);
hid_t mc__h5_rank_type(void);

/* Group name of a population: every '/' becomes ':' ("op/MPI_Isend" ->
 * "op:MPI_Isend"). Writes at most @cap bytes; @return 0, or -1 if the name
 * does not fit or contains a character outside [A-Za-z0-9_:/.+-]. */
int mc__pop_group_name(const char *name, char *out, size_t cap);

#endif /* MSGCENSUS_SUMMARY_INTERNAL_H */
