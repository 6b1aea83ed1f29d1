/* reduce.h - the MPI reducer: turn a campaign directory into one HDF5
 * summary. The API the `reduce` subcommand uses. */
#ifndef MSGCENSUS_REDUCE_H
#define MSGCENSUS_REDUCE_H

#include <stdint.h> /* uint64_t */

#include <mpi.h> /* MPI_Comm */

#include <msgcensus/error.h>

/* Called on reducer rank 0 while the campaign is read: @done of @total
 * trace bytes over all ranks, @elapsed seconds since the start. @final is
 * 1 for the last call. */
typedef void (*mc_reduce_progress_fn)(void *ud, uint64_t done, uint64_t total,
                                      double elapsed, int final);

typedef struct mc_reduce_opts {
    const char *campaign; /* directory of rank-NNNNNN.mct files */
    const char *output;   /* summary path */
    const char *label;    /* run label, may be NULL */
    const char *tool_version;
    int per_comm;     /* 1 = add one population per communicator */
    int skip_damaged; /* 1 = count damaged blocks and go on */
    int force;        /* 1 = replace an existing output */
    mc_reduce_progress_fn progress; /* may be NULL */
    void *progress_ud;
    double progress_interval_s; /* seconds between progress calls */
    /* Resumable runs: one checkpoint file per finished unit of work in this
     * directory (created when missing; every rank must see it), NULL for
     * none. */
    const char *checkpoint;
    uint64_t checkpoint_unit; /* bytes per unit then; 0 = 64 MiB */
    /* Bytes the accumulators of one rank may hold; 0 = no limit. */
    uint64_t max_memory;
    /* Called with one line about checkpoints or files left by interrupted
     * runs: level 0 = warning (on the rank that has it), 1 = note (rank
     * 0). May be NULL. */
    void (*note)(void *ud, int level, const char *msg);
    void *note_ud;
} mc_reduce_opts;

/* Totals of a finished run, valid on every rank. */
typedef struct mc_reduce_result {
    uint64_t files;
    uint64_t records;       /* records counted */
    uint64_t rejected;      /* records skipped or invalid (with skip_damaged) */
    uint64_t bytes;         /* trace bytes read */
    uint64_t units;         /* units of work in the plan */
    uint64_t split_files;   /* files split over several units */
    uint64_t resumed_units; /* units taken from the checkpoint */
    double elapsed_s;
    /* Wall seconds of each phase on rank 0, from the start of the run:
     * plan (scan + broadcast), read (this rank's units and the wait for
     * the others), merge (histogram tree + table gather), summary
     * (statistics + HDF5 write + rename). They add up to elapsed_s. */
    double plan_s, read_s, merge_s, summary_s;
} mc_reduce_result;

/*! mc_reduce_opts_init() : no label, no per-communicator populations, stop
 *  at damage, never overwrite, no progress, no checkpoint, no memory limit.
 */
void mc_reduce_opts_init(mc_reduce_opts *o);

/*! mc_reduce_run() :
 *  Collective over @comm. Rank 0 scans the campaign and broadcasts a plan;
 *  every rank reduces its units; histograms are merged by a binomial tree,
 *  tables gathered, and rank 0 computes the statistics and writes the
 *  summary under a temporary name before renaming it into place.
 *  @return 0 on every rank, or the same negative MC_E* code on every rank
 *  with @err (may be NULL) describing the first failure (file, block,
 *  offset). After a failure no file is left at o->output (an existing one
 *  is untouched) and no temporary file remains. */
int mc_reduce_run(MPI_Comm comm, const mc_reduce_opts *o, mc_reduce_result *res,
                  mc_errinfo *err);

#endif /* MSGCENSUS_REDUCE_H */
