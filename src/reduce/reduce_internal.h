/* reduce_internal.h - the reducer's plan, accumulators and merge steps,
 * shared by the files of src/reduce/. */
#ifndef MSGCENSUS_REDUCE_INTERNAL_H
#define MSGCENSUS_REDUCE_INTERNAL_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* fixed-width integers */

#include <mpi.h> /* MPI_Comm, MPI_Win */

#include <msgcensus/error.h>
#include <msgcensus/hist.h>
#include <msgcensus/ops.h>
#include <msgcensus/summary.h>
#include <msgcensus/trace.h>

/* ---- plan (plan.c) ------------------------------------------------------ */

/* Unit of work: a whole file, or a run of consecutive blocks of a large one. */
#define MC__TO_END UINT64_MAX

typedef struct mc__unit {
    uint32_t file;        /* index into the plan's files */
    int32_t owner;        /* reducer rank that reads it */
    uint64_t first_block; /* index of the first block */
    uint64_t nblocks;     /* blocks to read, or MC__TO_END */
    uint64_t bytes;       /* bytes of the file this unit accounts for */
    mc_block_info start;  /* the first block, used when first_block > 0 */
} mc__unit;

/* File state decided by the scan. */
enum { MC__FILE_OK = 0, MC__FILE_SKIPPED = 1 };

typedef struct mc__file {
    char *name; /* file name inside the campaign directory */
    uint64_t size;
    int32_t app_rank;
    int32_t app_size;
    int32_t state;     /* MC__FILE_* */
    int32_t skip_code; /* MC_E* that made the scan skip it */
} mc__file;

typedef struct mc__plan {
    char *dir;
    size_t nfiles;
    mc__file *files;
    size_t nunits;
    mc__unit *units; /* sorted by (file, first_block) */
    uint64_t total_bytes;
    int32_t app_size;
} mc__plan;

/* Rank 0: list DIR/NAME.mct (regular files, sorted by name), read headers,
 * split files above a fair share at block boundaries and assign units by
 * LPT. @return 0 or MC_E* with @err. With @skip_damaged a file whose header
 * cannot be read is kept as MC__FILE_SKIPPED instead of failing. */
int mc__plan_build(const char *dir, int nranks, int skip_damaged,
                   mc__plan *plan, mc_errinfo *err);

/* Collective: rank 0's @plan is copied to every rank. @return 0 or
 * MC_ENOMEM / MC_ELIMIT on the calling rank (agree afterwards). */
int mc__plan_bcast(MPI_Comm comm, mc__plan *plan);

/* Set every unit's owner: largest unit (by bytes) first onto the least
 * loaded of @nranks ranks, ties to the lower rank (LPT). @return 0 or
 * MC_ENOMEM. */
int mc__plan_assign(mc__plan *plan, int nranks);

void mc__plan_free(mc__plan *plan);

/* ---- accumulators (accum.c) --------------------------------------------- */

/* Histogram key of an (operation, direction) pair. */
#define MC__NDIRS 3u
#define MC__NOPKEYS ((MC_OP_MAX_CODE + 1u) * MC__NDIRS)

/* A map from u32 keys to histograms (communicator ids). */
typedef struct mc__histmap {
    size_t cap, n;
    uint32_t *keys;
    mc_hist **vals; /* NULL marks an empty slot */
} mc__histmap;

/* One per-application-rank totals row (the summary's /ranks columns). */
typedef struct mc__row {
    int32_t rank;
    uint64_t v[8]; /* p2p msgs, bytes, recv msgs, bytes, coll..., os... */
} mc__row;

typedef struct mc__edge {
    int32_t src, dst;
    uint64_t msgs, bytes;
} mc__edge;

/* Everything reduced so far: one per unit (then merged) and one per rank.
 * Memory is bounded by the number of distinct keys, never by records. */
typedef struct mc__acc {
    mc_hist *op[MC__NOPKEYS]; /* NULL until the key appears */
    mc__histmap comm;         /* only with per-communicator populations */
    size_t nrows, caprows;
    mc__row *rows;
    size_t nedges, capedges;
    mc__edge *edges;
} mc__acc;

void mc__acc_init(mc__acc *a);
void mc__acc_free(mc__acc *a);
/* Add everything of @src to @dst. @return 0 or MC_ENOMEM / MC_ERANGE. */
int mc__acc_merge(mc__acc *dst, const mc__acc *src);
/* The histogram of communicator @id, created when absent (NULL on ENOMEM). */
mc_hist *mc__histmap_get(mc__histmap *m, uint32_t id);

/* What reading one unit found. */
typedef struct mc__unit_result {
    uint64_t unit;
    uint64_t records, blocks, skipped_blocks, skipped_records, invalid;
    uint64_t bytes;
    int64_t damage_code;  /* first damage seen (0 = none) */
    int64_t damage_block; /* its block index */
    int64_t tail_lost;    /* 1 if blocks after a damaged header are lost */
    size_t nsums;
    uint64_t *sums; /* per-block raw checksums, in block order */
} mc__unit_result;

/* Progress and early stop: a two-counter window on rank 0. */
typedef struct mc__progress {
    MPI_Comm comm;
    MPI_Win win;
    uint64_t *base;   /* rank 0's two counters: bytes done, errors */
    uint64_t pending; /* bytes not yet published */
    double last;      /* MPI_Wtime of the last publish */
    double interval;
    double t0;
    uint64_t total;
    uint64_t seen_done; /* global done bytes at the last publish */
    int stop;           /* another rank reported an error */
    void (*cb)(void *, uint64_t, uint64_t, double, int);
    void *ud;
    /* --max-memory (memlimit.h): the limit (0 = none), what the rank holds
     * besides the unit being read, and the records read since the last
     * look; set after mc__progress_open. */
    uint64_t mem_limit;
    const struct mc__memuse *mem_base;
    uint64_t mem_unchecked;
} mc__progress;

int mc__progress_open(mc__progress *p, MPI_Comm comm, uint64_t total,
                      double interval, double t0);
/* Add @bytes; publish when the interval passed (or @force). @error marks
 * this rank failed so others stop. */
void mc__progress_add(mc__progress *p, uint64_t bytes, int error, int force);
void mc__progress_close(mc__progress *p);

/* Read one unit into @acc and @res. @return 0, 1 when it stopped because
 * another rank failed, or the damage's MC_E* code when it must stop the run
 * (err filled). */
int mc__unit_reduce(const mc__plan *plan, const mc__unit *u,
                    uint64_t unit_index, int per_comm, int skip_damaged,
                    mc__acc *acc, mc__unit_result *res, mc__progress *prog,
                    mc_errinfo *err);

/* ---- merge (merge.c) ---------------------------------------------------- */

/* Collective: the first failure among the ranks (lowest rank with rc != 0)
 * becomes every rank's return value and @err. */
int mc__agree(MPI_Comm comm, int rc, mc_errinfo *err);

/* Collective: binomial-tree merge of every rank's histograms into rank 0's
 * @acc, in sorted (size, count) form. @return 0 or MC_E* on this rank. */
int mc__merge_hists(MPI_Comm comm, mc__acc *acc);

/* Collective: gather rows, edges and unit results to rank 0 and combine
 * rows and edges (sorted, duplicates summed). On rank 0 *results gets all
 * unit results sorted by unit. @return 0 or MC_E* on this rank. */
int mc__gather_tables(MPI_Comm comm, mc__acc *acc, mc__unit_result **results,
                      size_t *nresults);

void mc__unit_result_free(mc__unit_result *r);

/* ---- summary (build.c) --------------------------------------------------- */

/* Run metadata the summary records besides the counts. */
typedef struct mc__build_meta {
    const char *tool_version, *created, *campaign, *label, *host;
    int64_t reducer_ranks;
    int per_comm;
} mc__build_meta;

/* Rank 0: the summary model of the merged @acc (combined rows and edges)
 * and the unit results sorted by unit. Statistics are computed here, once,
 * from the exact merged histograms. @return 0 and *out, or MC_E*. */
int mc__build_summary(const mc__plan *plan, mc__acc *acc,
                      const mc__unit_result *res, size_t nres,
                      const mc__build_meta *bm, mc_summary **out);

#endif /* MSGCENSUS_REDUCE_INTERNAL_H */
