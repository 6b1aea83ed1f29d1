/* summary.h - the HDF5 summary of a reduced campaign: in-memory model, writer
 * and reader. The file layout is specified in docs/summary-format.md. */
#ifndef MSGCENSUS_SUMMARY_H
#define MSGCENSUS_SUMMARY_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* fixed-width integers */

#include "common.h"
#include "error.h"
#include "modes.h"
#include "stats.h"

#define MC_SUMMARY_FORMAT_NAME "msgcensus-summary"
#define MC_SUMMARY_VERSION_MAJOR 1
#define MC_SUMMARY_VERSION_MINOR 0

/* Run metadata: root attributes of the file. Strings are owned by the
 * summary (heap, NUL-terminated, "" when absent). */
typedef struct mc_summary_meta {
    char *format_name; /* MC_SUMMARY_FORMAT_NAME */
    int version_major, version_minor;
    char *tool_version;
    char *created; /* ISO 8601 UTC */
    char *campaign_path;
    char *run_label;   /* e.g. the input deck's name */
    char *host;        /* host of the reducer's rank 0 */
    int64_t app_ranks; /* application world size */
    int64_t reducer_ranks;
    int64_t files;
    uint64_t records_read;
    uint64_t records_rejected; /* in skipped blocks or invalid */
    uint64_t bytes_read;       /* trace bytes read */
    double elapsed_s;
    /* Set by `share`: what was removed or coarsened ("" when none). */
    char *shared_note;
    int approximate; /* 1 when histograms were coarsened */
} mc_summary_meta;

/* One source trace file. */
typedef struct mc_summary_source {
    char *path; /* relative to the campaign directory */
    int32_t app_rank;
    uint64_t bytes;   /* file size */
    uint64_t records; /* records counted */
    uint64_t blocks;
    uint64_t skipped_blocks;
    uint64_t skipped_records;
    uint64_t checksum; /* XXH64 (seed 0) of the sequence of the stored
                          payload checksums of the blocks read, each as
                          8 little-endian bytes, in block order; a split
                          file can be checked this way, see
                          docs/summary-format.md */
    char *status;      /* "ok", "skipped: ..." */
} mc_summary_source;

/* One population (e.g. "all", "p2p", "op/MPI_Isend"). */
typedef struct mc_summary_pop {
    char *name;
    mc_hview hist;      /* sizes and counts, owned by the summary */
    mc_stats stats;     /* as stored in the file (computed by reduce
                           from hist) */
    mc_fitness fitness; /* as stored in the file */
    size_t ntop;
    mc_topsize *top; /* top sizes */
    size_t npeaks;
    mc_peak *peaks;
    mc_gmm gmm;
} mc_summary_pop;

/* Per application rank totals. */
typedef struct mc_summary_rank {
    int32_t rank;
    uint64_t p2p_msgs, p2p_bytes;   /* sends */
    uint64_t recv_msgs, recv_bytes; /* point-to-point receives */
    uint64_t coll_msgs, coll_bytes; /* collectives incl. neighbourhood */
    uint64_t os_msgs, os_bytes;     /* one-sided */
} mc_summary_rank;

/* One non-zero entry of the point-to-point matrix (send side). */
typedef struct mc_summary_edge {
    int32_t src, dst;
    uint64_t msgs, bytes;
} mc_summary_edge;

/* Tables a summary may leave out (mc_summary.omitted): a shareable copy
 * drops them. A reader sets the bit for each table absent from the file. */
#define MC_OMIT_SOURCES 0x1u
#define MC_OMIT_RANKS 0x2u
#define MC_OMIT_MATRIX 0x4u

typedef struct mc_summary {
    mc_summary_meta meta;
    unsigned omitted; /* MC_OMIT_* bits; 0 for a full summary */
    size_t nsources;
    mc_summary_source *sources;
    size_t npops;
    mc_summary_pop *pops;
    size_t nranks;
    mc_summary_rank *ranks; /* sorted by rank */
    size_t nedges;
    mc_summary_edge *edges; /* sorted by (src, dst) */
} mc_summary;

/*! mc_summary_read() : read @path into a new summary. Statistics, fitness,
 *  top sizes, peaks and the mixture are taken from the file.
 *  @return 0 and *out, or MC_EOPEN / MC_ESUMMARY / MC_EHDF5 / MC_ENOMEM. */
MC_API int mc_summary_read(const char *path, mc_summary **out, mc_errinfo *err);

/*! mc_summary_write() : write @s to @path (created; fails if it exists).
 *  Serial HDF5; the caller does the temporary-name-and-rename dance.
 *  @return 0 or MC_EHDF5 / MC_EEXIST with @err filled. */
MC_API int mc_summary_write(const char *path, const mc_summary *s,
                            mc_errinfo *err);

/* Settings of the standard population analysis (docs/summary-format.md). */
#define MC_SUMMARY_TOP_SIZES 10
#define MC_SUMMARY_PEAK_BINS_PER_OCTAVE 4
#define MC_SUMMARY_PEAK_MIN_PROMINENCE 0.01
#define MC_SUMMARY_PEAK_CAP 16
#define MC_SUMMARY_GMM_MAX_COMP 6
#define MC_SUMMARY_GMM_SEED 1

/*! mc_summary_pop_analyse() :
 *  Fill the statistics, fitness, top sizes, peaks and mixture of @p from its
 *  histogram p->hist (which the caller has set), with the settings above.
 *  The reducer and `share` both use it, so every summary is analysed alike.
 *  An empty histogram gives zero statistics and no modes.
 *  @return 0, MC_ENOMEM, MC_ERANGE (total bytes overflow) or MC_EINVAL. */
MC_API int mc_summary_pop_analyse(mc_summary_pop *p);

/*! mc_summary_pop_set_hist() : copy @v into p->hist (owned by @p, freed by
 *  mc_summary_free) and run mc_summary_pop_analyse().
 *  @return as mc_summary_pop_analyse(), or MC_ENOMEM for the copy. */
MC_API int mc_summary_pop_set_hist(mc_summary_pop *p, const mc_hview *v);

/*! mc_summary_find_pop() : the population called @name, or NULL. */
MC_API const mc_summary_pop *mc_summary_find_pop(const mc_summary *s,
                                                 const char *name);

/*! mc_summary_free() : free everything; NULL is accepted. */
MC_API void mc_summary_free(mc_summary *s);

#endif /* MSGCENSUS_SUMMARY_H */
