/* synth.h - deterministic synthetic campaigns of a 3-D halo solver. */
/* The scenario, its input decks, the rank-grid rule, the timing model and the
 * file conventions are described in docs/synth.md. Everything here is a pure
 * function of the parameters (including the seed): the same parameters give
 * the same records and the same bytes on every run and every thread count. */
#ifndef MSGCENSUS_SYNTH_H
#define MSGCENSUS_SYNTH_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* fixed-width integers */

#include "common.h"
#include "error.h"
#include "trace.h"

/* ---- scenario ----------------------------------------------------------- */

/* An input deck: the solver settings that shape the message-size mix. */
typedef struct mc_synth_deck {
    const char *name;          /* "deck-a", "deck-b" */
    const char *summary;       /* one line for --help and campaign.txt */
    uint32_t vars;             /* variables per cell (8-byte doubles) */
    uint32_t halo;             /* halo (ghost layer) width in cells */
    uint32_t transpose_every;  /* row-communicator MPI_Alltoall period */
    uint32_t bcast_every;      /* parameter MPI_Bcast period (and step 0) */
    uint32_t checkpoint_every; /* MPI_Gather(v) to rank 0 period (and end) */
    uint32_t put_every;        /* MPI_Put fence epoch period, 0 = none */
    uint32_t allreduce_bytes;  /* per-step MPI_Allreduce payload */
    uint32_t bcast_bytes;      /* parameter block size */
} mc_synth_deck;

/*! mc_synth_deck_count() / mc_synth_deck_at() : the built-in decks, in a
 *  fixed order; mc_synth_deck_at() returns NULL past the end. */
MC_API size_t mc_synth_deck_count(void);
MC_API const mc_synth_deck *mc_synth_deck_at(size_t i);

/*! mc_synth_deck_find() : @return the deck named @name, or NULL. */
MC_API const mc_synth_deck *mc_synth_deck_find(const char *name);

typedef enum mc_synth_scaling {
    MC_SYNTH_WEAK = 0,  /* fixed sub-domain per rank (local[]) */
    MC_SYNTH_STRONG = 1 /* fixed global grid (global[]) split over ranks */
} mc_synth_scaling;

/* Everything that determines a campaign. */
typedef struct mc_synth_params {
    int32_t ranks;  /* P >= 1 */
    uint64_t steps; /* solver steps >= 1 */
    uint64_t seed;  /* jitter, time stamps, uneven skew */
    const mc_synth_deck *deck;
    mc_synth_scaling scaling;
    uint32_t local[3];  /* weak scaling: cells per rank, x y z */
    uint32_t global[3]; /* strong scaling: global cells, x y z */
    int periodic;       /* 1 = periodic in all three dimensions */
    int uneven;         /* 1 = skewed extra local work per rank */
} mc_synth_params;

/*! mc_synth_params_init() : defaults: 8 ranks, 100 steps, seed 1, deck-a,
 *  weak scaling with 32^3 cells per rank (strong: 128^3 global),
 *  non-periodic, even. */
MC_API void mc_synth_params_init(mc_synth_params *p);

/*! mc_synth_factor() : split @ranks into dims[0] >= dims[1] >= dims[2] with
 *  dims[0]*dims[1]*dims[2] == ranks, as close to a cube as possible: the
 *  factorisation with the smallest dims[0]*dims[1] + dims[1]*dims[2] +
 *  dims[0]*dims[2] (the surface of the rank box); ties go to the one with
 *  the smallest dims[0]. @ranks < 1 gives 1 1 1. */
MC_API void mc_synth_factor(int32_t ranks, int32_t dims[3]);

/*! mc_synth_check() : validate @p (ranks, steps, deck, sub-domain at least
 *  one halo width thick in every dimension on every rank, no 32-bit
 *  overflow of sizes). @return 0 or MC_EINVAL / MC_ERANGE with the reason
 *  in @err->detail. */
MC_API int mc_synth_check(const mc_synth_params *p, mc_errinfo *err);

/* Geometry and derived facts of one rank. */
typedef struct mc_synth_rank_info {
    int32_t dims[3];       /* rank grid px py pz */
    int32_t coord[3];      /* this rank's position; rank = x + px*(y + py*z) */
    uint32_t cells[3];     /* sub-domain nx ny nz */
    uint32_t neighbours;   /* halo partners (faces + edges + corners) */
    uint32_t faces;        /* face partners (MPI_Put targets) */
    uint32_t extra_blocks; /* --uneven: refined blocks exchanged locally */
    uint32_t row_comm_id;  /* transpose communicator id (>= 1) */
    int32_t row_size;      /* its size (= px) */
    int even_volumes;      /* 1 = all ranks have the same sub-domain */
} mc_synth_rank_info;

/*! mc_synth_rank_geometry() : geometry of @rank under checked parameters @p.
 *  @return 0, or MC_EINVAL if @rank is out of range. */
MC_API int mc_synth_rank_geometry(const mc_synth_params *p, int32_t rank,
                                  mc_synth_rank_info *out);

/*! mc_synth_rank_records() : exact number of records the generator emits
 *  for @rank (closed form; agrees with mc_synth_gen_fill). */
MC_API uint64_t mc_synth_rank_records(const mc_synth_params *p, int32_t rank);

/*! mc_synth_header() : the file header of @rank: app_rank/app_size, host
 *  "synth-node-NNN" (four ranks per node), 1000 ps clock resolution, and
 *  created/epoch times derived from the seed. */
MC_API void mc_synth_header(const mc_synth_params *p, int32_t rank,
                            mc_trace_header *hdr);

/* ---- record generator --------------------------------------------------- */

typedef struct mc_synth_gen mc_synth_gen;

/*! mc_synth_gen_create() : a generator for the records of @rank. @p is
 *  copied; it must pass mc_synth_check().
 *  @return 0 and *out, or MC_EINVAL / MC_ENOMEM with @err filled. */
MC_API int mc_synth_gen_create(const mc_synth_params *p, int32_t rank,
                               mc_synth_gen **out, mc_errinfo *err);

/*! mc_synth_gen_free() : free @g; NULL is accepted. */
MC_API void mc_synth_gen_free(mc_synth_gen *g);

/*! mc_synth_gen_max_step() : the most records one solver step can emit;
 *  a buffer for mc_synth_gen_fill() must hold at least this many. */
MC_API size_t mc_synth_gen_max_step(const mc_synth_gen *g);

/*! mc_synth_gen_fill() : generate whole solver steps into @buf (capacity
 *  @cap records) until the next step would not fit or the run is over.
 *  No allocation. @return the number of records written; 0 once every step
 *  has been emitted, or when @cap < mc_synth_gen_max_step(). */
MC_API size_t mc_synth_gen_fill(mc_synth_gen *g, mc_record *buf, size_t cap);

/*! mc_synth_gen_done() : 1 once every step has been emitted. */
MC_API int mc_synth_gen_done(const mc_synth_gen *g);

/* ---- campaign directory ------------------------------------------------- */

/* How a campaign is written. */
typedef struct mc_synth_write_opts {
    mc_writer_opts writer; /* block size, codec, footer */
    unsigned threads;      /* rank files written at once; 0 = 1 */
} mc_synth_write_opts;

/* Totals of a written campaign. */
typedef struct mc_synth_result {
    uint64_t files;
    uint64_t records;
    uint64_t bytes; /* file bytes on disk (sum of sizes) */
} mc_synth_result;

/* Progress callback: called from the writing threads, one at a time (under
 * a lock), after each chunk of records and after each file. */
typedef void (*mc_synth_progress_fn)(void *user, uint64_t files_done,
                                     uint64_t files_total, uint64_t bytes_done);

/*! mc_synth_file_bytes() : size of a trace file of @records records written
 *  without compression in blocks of @block_records (0 = default), with or
 *  without the footer index. */
MC_API uint64_t mc_synth_file_bytes(uint64_t records, uint32_t block_records,
                                    int footer);

/*! mc_synth_campaign_bytes() : predicted size of the rank files of @p
 *  without compression (campaign.txt not counted). */
MC_API uint64_t mc_synth_campaign_bytes(const mc_synth_params *p,
                                        uint32_t block_records, int footer);

/*! mc_synth_steps_for_size() : the largest step count (>= 1) whose
 *  uncompressed campaign is at most @target bytes (1 if even one step is
 *  larger). Other fields of @p are kept. @return 0 or MC_EINVAL. */
MC_API int mc_synth_steps_for_size(const mc_synth_params *p, uint64_t target,
                                   uint32_t block_records, int footer,
                                   uint64_t *steps);

/*! mc_synth_rank_path() : "DIR/rank-000017.mct" into @buf of @cap bytes.
 *  @return 0, or MC_ERANGE if it does not fit. */
MC_API int mc_synth_rank_path(const char *dir, int32_t rank, char *buf,
                              size_t cap);

/*! mc_synth_dir_scan() : look at @dir: *entries = names other than . and ..
 *  (0 if @dir does not exist), *traces = how many of them look like rank
 *  files (rank-NNNNNN.mct). @return 0, or MC_EOPEN if @dir exists but
 *  cannot be read or is not a directory. */
MC_API int mc_synth_dir_scan(const char *dir, uint64_t *entries,
                             uint64_t *traces, mc_errinfo *err);

/*! mc_synth_write_campaign() :
 *  Create @dir if needed and write rank-NNNNNN.mct for every rank plus
 *  campaign.txt (key = value lines). Unless @replace is 1, a non-empty @dir
 *  is refused with MC_EEXIST. With @replace, rank files of the campaign are
 *  overwritten and rank-NNNNNN.mct files with a rank >= P are removed, so
 *  the directory holds exactly one campaign; other files are left alone.
 *  @progress may be NULL. @res (may be NULL) receives the totals.
 *  @return 0, or a negative MC_E* code with @err filled (files written so
 *  far stay on disk). */
MC_API int mc_synth_write_campaign(const mc_synth_params *p, const char *dir,
                                   const mc_synth_write_opts *opts, int replace,
                                   mc_synth_progress_fn progress, void *user,
                                   mc_synth_result *res, mc_errinfo *err);

#endif /* MSGCENSUS_SYNTH_H */
