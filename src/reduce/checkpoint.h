/* checkpoint.h - resumable reduction: units of work that do not depend on
 * the number of reducer ranks, and one self-checking file per finished
 * unit in a checkpoint directory (layout in docs/summary-format.md,
 * "Checkpoints"). */
#ifndef MSGCENSUS_REDUCE_CHECKPOINT_H
#define MSGCENSUS_REDUCE_CHECKPOINT_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* fixed-width integers */

#include <mpi.h> /* MPI_Comm */

#include "reduce_internal.h"

/* Default size of a unit of a checkpointed run: a killed run loses at most
 * about this much reading per reducer rank. */
#define MC__CKPT_DEFAULT_UNIT (64ull << 20)

/* Version of the checkpoint file layout; a reader accepts only its own. */
#define MC__CKPT_VERSION 1u

/* Message levels of mc__ckpt_note_fn. */
enum { MC__NOTE_WARN = 0, MC__NOTE_INFO = 1 };

/* Receives one line (no newline) about checkpoints. Warnings about a
 * checkpoint file that one rank could not read or write come from that
 * rank; everything else from rank 0. */
typedef void (*mc__ckpt_note_fn)(void *ud, int level, const char *msg);

/* State of the checkpoint directory of one run. */
typedef struct mc__ckpt mc__ckpt;

/*! mc__ckpt_plan_build() :
 *  Rank 0: like mc__plan_build(), but a file is split into units of about
 *  @unit_bytes bytes at block boundaries (block offsets passing multiples
 *  of @unit_bytes), so a unit's definition depends only on its own file
 *  and @unit_bytes, never on @nranks or on the other files. Units are
 *  assigned to the @nranks ranks largest first to the least-loaded rank.
 *  @return 0 or MC_E* with @err (the plan is then empty). */
int mc__ckpt_plan_build(const char *dir, int nranks, int skip_damaged,
                        uint64_t unit_bytes, mc__plan *plan, mc_errinfo *err);

/*! mc__ckpt_open() :
 *  Collective. Rank 0 creates @dir when missing, removes temporary files
 *  left by killed runs, reads the fingerprint of every checkpoint file and
 *  sorts them: usable for a unit of @plan; stale (its campaign file
 *  changed: removed, with a warning naming the file); damaged (removed,
 *  with a warning); or of other settings (kept until the run succeeds).
 *  Every rank learns which units can be resumed.
 *  @return 0 and *out, or MC_EOPEN / MC_EIO / MC_ENOMEM with @err (same on
 *  every rank). */
int mc__ckpt_open(MPI_Comm comm, const char *dir, const mc__plan *plan,
                  int per_comm, int skip_damaged, mc__ckpt_note_fn note,
                  void *note_ud, mc__ckpt **out, mc_errinfo *err);

/*! mc__ckpt_resume() :
 *  Unit @i of @plan from its checkpoint, when one with the unit's
 *  fingerprint was found: merged into @acc, @res filled, its bytes added
 *  to @prog. A checkpoint that cannot be read is reported (warning) and
 *  the unit must be read again.
 *  @return 1 when resumed, 0 when the caller must read the unit, or
 *  MC_ENOMEM with @err. */
int mc__ckpt_resume(mc__ckpt *ck, const mc__plan *plan, size_t i, mc__acc *acc,
                    mc__unit_result *res, mc__progress *prog, mc_errinfo *err);

/*! mc__ckpt_keep() :
 *  Save unit @i, just read into its own accumulator @ua (not yet merged)
 *  with result @res, with mc__ckpt_save(). A checkpoint that cannot be
 *  written is reported once per rank (warning) and counted; the run goes
 *  on, its result does not depend on it. @ck NULL: nothing. */
void mc__ckpt_keep(mc__ckpt *ck, const mc__plan *plan, size_t i, mc__acc *ua,
                   const mc__unit_result *res);

/*! mc__ckpt_report() :
 *  Collective, after the reading: rank 0 notes
 *  "resumed: N of M units from checkpoint DIR" and how many checkpoints
 *  could not be written. @return the number of resumed units (every rank).
 */
uint64_t mc__ckpt_report(mc__ckpt *ck, MPI_Comm comm);

/*! mc__ckpt_finish() :
 *  Rank 0, after the summary is in place at @output: make it durable (fsync
 *  of the file and of its directory), then remove the checkpoint files of
 *  the units of @plan, the other checkpoints of this campaign and our
 * temporaries, and the directory when nothing else is left in it. Files that
 * are not ours stay. Failures here only produce a warning: the summary is
 * complete. */
void mc__ckpt_finish(mc__ckpt *ck, const mc__plan *plan, const char *output);

/*! mc__ckpt_free() : NULL is accepted. Leaves every file in place. */
void mc__ckpt_free(mc__ckpt *ck);

/* ---- the file form, also used by the unit tests ------------------------- */

/* What identifies a unit's checkpoint: its campaign file as it was when the
 * run started, the unit's block range and the options that change results. */
typedef struct mc__ckpt_key {
    const char *name; /* file name inside the campaign directory */
    uint64_t file_size;
    int64_t mtime_ns; /* modification time, ns since 1970 */
    uint64_t first_block;
    uint64_t nblocks;      /* or MC__TO_END */
    uint64_t bytes;        /* the unit's bytes of the file */
    uint64_t start_offset; /* offset of the first block (0 for block 0) */
    int32_t app_rank, app_size;
    uint32_t flags; /* MC__CKPT_F_* */
} mc__ckpt_key;

#define MC__CKPT_F_PER_COMM 1u
#define MC__CKPT_F_SKIP_DAMAGED 2u

/*! mc__ckpt_file_name() : "mcck-<16 hex digits>.ckpt", the XXH64 of the
 *  unit's definition (file name, first block, block count), into @buf. */
void mc__ckpt_file_name(const mc__ckpt_key *k, char *buf, size_t cap);

/*! mc__ckpt_save() :
 *  Write @acc and @res for @k to DIR/NAME atomically. @return 0, or MC_EIO
 *  / MC_EOPEN / MC_ENOMEM with @err (no file at DIR/NAME is changed and
 *  the temporary file is gone). */
int mc__ckpt_save(const char *dir, const mc__ckpt_key *k, mc__acc *acc,
                  const mc__unit_result *res, mc_errinfo *err);

/*! mc__ckpt_load() :
 *  Read DIR/NAME of @k into @acc (empty, initialised) and @res. Every byte
 *  is covered by the trailing XXH64 and every length is checked against
 *  the file size before anything is allocated.
 *  @return 0; MC_ESTALE when the fingerprint differs from @k (detail says
 *  which field); MC_EOPEN, MC_EMAGIC, MC_EVERSION, MC_ETRUNC, MC_ECHECKSUM,
 *  MC_ERANGE or MC_ENOMEM with @err. On failure @acc and @res are emptied.
 */
int mc__ckpt_load(const char *dir, const mc__ckpt_key *k, mc__acc *acc,
                  mc__unit_result *res, mc_errinfo *err);

#endif /* MSGCENSUS_REDUCE_CHECKPOINT_H */
