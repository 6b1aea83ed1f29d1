/* memlimit.h - what the reducer's accumulators hold in memory, checked
 * against --max-memory with a message that says what uses it. */
#ifndef MSGCENSUS_REDUCE_MEMLIMIT_H
#define MSGCENSUS_REDUCE_MEMLIMIT_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* uint64_t */

#include "reduce_internal.h"

/* Records between two looks at the memory while a unit is read: between
 * them at most this many new keys arrive (and at most one growth of each
 * table), and the look costs a pass over the histogram pointers. */
#define MC__MEM_CHECK_RECORDS 16384u

/* Memory held by accumulators and what it is made of. */
typedef struct mc__memuse {
    uint64_t bytes;      /* bytes held (tables, arrays) */
    uint64_t sizes;      /* distinct sizes, summed over the (operation,
                            direction) histograms */
    uint64_t comm_keys;  /* per-communicator histograms */
    uint64_t comm_sizes; /* distinct sizes, summed over those */
    uint64_t edges;      /* matrix entries (and peers of a unit) */
} mc__memuse;

/*! mc__memuse_add_acc() : add what @a holds to @u: mc_hist_memory() of
 *  every histogram, the communicator map, rows and matrix entries. */
void mc__memuse_add_acc(mc__memuse *u, const mc__acc *a);

/*! mc__memuse_add() : @u += @v. */
void mc__memuse_add(mc__memuse *u, const mc__memuse *v);

/*! mc__memuse_build() : an upper estimate of the memory rank 0 needs to
 *  build the summary from the merged @a, on top of what @a holds: the
 *  sorted view and the copy of every population (each (operation,
 *  direction) key appears in its own population and in at most two
 *  groups), the largest group histogram while it is built, and the
 *  HDF5 file's image before it is written. */
uint64_t mc__memuse_build(const mc__acc *a);

/*! mc__memuse_check() :
 *  @return 0 when @need bytes fit in @limit (0 = no limit), else
 *  MC_ELIMIT with @err naming @path and saying, for @stage ("reading",
 *  "merging", "building the summary"), how much is needed and what holds
 *  it (the counts of @u). */
int mc__memuse_check(uint64_t limit, uint64_t need, const mc__memuse *u,
                     const char *stage, const char *path, mc_errinfo *err);

#endif /* MSGCENSUS_REDUCE_MEMLIMIT_H */
