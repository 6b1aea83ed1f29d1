/* hist.h - exact sparse histogram of message sizes (size -> count). */
#ifndef MSGCENSUS_HIST_H
#define MSGCENSUS_HIST_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* uint64_t */

#include "common.h"

/* An exact histogram: every distinct u64 size with its u64 count. No
 * binning, no sampling; the same content whatever order data arrives in. */
typedef struct mc_hist mc_hist;

/* A read-only, sorted view of a histogram: sizes strictly ascending, every
 * count > 0. This is the form statistics, MPI transfer and HDF5 use. */
typedef struct mc_hview {
    const uint64_t *sizes;
    const uint64_t *counts;
    size_t k; /* number of distinct sizes */
} mc_hview;

/*! mc_hist_create() : an empty histogram. @return 0 or MC_ENOMEM. */
MC_API int mc_hist_create(mc_hist **out);

/*! mc_hist_free() : NULL is accepted. */
MC_API void mc_hist_free(mc_hist *h);

/*! mc_hist_clear() : remove every entry, keep the allocated table. */
MC_API void mc_hist_clear(mc_hist *h);

/*! mc_hist_add() : count @n more messages of @size.
 *  @return 0, MC_ERANGE if a count would overflow u64, or MC_ENOMEM if the
 *  table could not grow (the histogram is unchanged in both cases). */
MC_API int mc_hist_add(mc_hist *h, uint64_t size, uint64_t n);

/*! mc_hist_add_sizes() : count one message for each of @sizes[0..n). This is
 *  the streaming hot path; prefer it to mc_hist_add() in loops.
 *  @return 0 or a negative code; on failure the first *done sizes were added
 *  (done may be NULL). */
MC_API int mc_hist_add_sizes(mc_hist *h, const uint64_t *sizes, size_t n,
                             size_t *done);

/*! mc_hist_merge() : add every entry of @src to @dst (@dst == @src doubles
 *  every count). @return as add; on failure @dst is unchanged. */
MC_API int mc_hist_merge(mc_hist *dst, const mc_hist *src);

/*! mc_hist_add_sorted() : add a sorted (size, count) array, e.g. received
 *  over MPI or read from HDF5. Sizes must ascend strictly; entries with
 *  count 0 are skipped. @return 0, MC_EINVAL if not sorted, or as add; on
 *  failure @h is unchanged. */
MC_API int mc_hist_add_sorted(mc_hist *h, const uint64_t *sizes,
                              const uint64_t *counts, size_t k);

/*! mc_hist_distinct() : number of distinct sizes K. */
MC_API size_t mc_hist_distinct(const mc_hist *h);

/*! mc_hist_total() : number of messages (sum of counts). */
MC_API uint64_t mc_hist_total(const mc_hist *h);

/*! mc_hist_memory() : bytes of memory the histogram holds. */
MC_API size_t mc_hist_memory(const mc_hist *h);

/*! mc_hist_export() : write the K entries sorted by size into @sizes and
 *  @counts (each with room for mc_hist_distinct() values). Cannot fail:
 *  without scratch memory it sorts in place, more slowly. */
MC_API void mc_hist_export(const mc_hist *h, uint64_t *sizes, uint64_t *counts);

/*! mc_hist_sorted() : a sorted view owned by the histogram, valid until the
 *  next change or free. @return 0 or MC_ENOMEM. */
MC_API int mc_hist_sorted(mc_hist *h, mc_hview *view);

#endif /* MSGCENSUS_HIST_H */
