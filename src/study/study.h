/* study.h - study tools over HDF5 summaries: figures as SVG text, the
 * side-by-side comparison of runs, the self-contained HTML report and the
 * coarsened copy for sharing. Uses only the library's public headers. */
#ifndef MSGCENSUS_STUDY_H
#define MSGCENSUS_STUDY_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* uint64_t */
#include <stdio.h>  /* FILE */

#include <msgcensus/error.h>
#include <msgcensus/summary.h>

/* ---- text buffer -------------------------------------------------------- */

/* A growing NUL-terminated text buffer. After an allocation failure it
 * stops growing and keeps oom = 1; callers check once at the end. */
typedef struct mc_sbuf {
    char *data;
    size_t len, cap;
    int oom;
} mc_sbuf;

void mc_sbuf_init(mc_sbuf *b);
void mc_sbuf_free(mc_sbuf *b);
void mc_sbuf_printf(mc_sbuf *b, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;
/* Append @s with &, <, >, " and ' escaped for XML text and attributes. */
void mc_sbuf_xml(mc_sbuf *b, const char *s);

/*! mc_study_file_name() : population @name made safe for a file name:
 *  every character outside [A-Za-z0-9.-] becomes '_' ("op/MPI_Isend" ->
 *  "op_MPI_Isend"). Writes at most @cap bytes, NUL-terminated. */
void mc_study_file_name(const char *name, char *out, size_t cap);

/* ---- figures ------------------------------------------------------------
 * Each appends one complete <svg> element to @out. @return 0, MC_ENODATA
 * when there is nothing to draw (empty population, no matrix), or
 * MC_ENOMEM (then @out holds a partial figure and oom = 1). */

/*! mc_study_fig_sizes() : (a) probability of each exact size of @p on a
 *  log2 axis, as spikes, with one marker per defined candidate center. */
int mc_study_fig_sizes(const mc_summary *s, const mc_summary_pop *p,
                       mc_sbuf *out);

/*! mc_study_fig_cdf() : (b) count-weighted and byte-weighted cumulative
 *  distributions of @p on one log2 axis. */
int mc_study_fig_cdf(const mc_summary *s, const mc_summary_pop *p,
                     mc_sbuf *out);

/*! mc_study_fig_mad() : (c) MAD of each candidate center, one row per
 *  population (at most @max_rows, 0 = 60), on a log2 byte axis. */
int mc_study_fig_mad(const mc_summary *s, size_t max_rows, mc_sbuf *out);

/*! mc_study_fig_matrix() : (d) heat map of the point-to-point matrix,
 *  messages (@bytes = 0) or bytes (@bytes = 1), ranks aggregated into at
 *  most @max_tiles x @max_tiles tiles (0 = 256). */
int mc_study_fig_matrix(const mc_summary *s, int bytes, unsigned max_tiles,
                        mc_sbuf *out);

/*! mc_study_fig_overlay() : (e) distributions of population @pop in @n
 *  runs on one figure (share per half-octave bin, and the cumulative
 *  distribution), with the distances of each run to the first.
 *  @return also MC_ENODATA when no run has the population. */
int mc_study_fig_overlay(const mc_summary *const *runs, size_t n,
                         const char *pop, mc_sbuf *out);

/* ---- compare ------------------------------------------------------------ */

typedef enum mc_study_format {
    MC_STUDY_TEXT = 0, /* 80 columns */
    MC_STUDY_CSV,
    MC_STUDY_JSON
} mc_study_format;

/*! mc_study_compare() :
 *  Write the comparison of @n runs (@files names them) to @out: per
 *  population messages, bytes, median, mode, mean, best center and its MAD,
 *  MAD(mean)/MAD(best), whether the best center differs between runs, and
 *  W1 (log2 size) and KS distances between every pair of runs. @pop limits
 *  it to one population (NULL = every population of any run).
 *  @return 0, MC_ENODATA when @pop is in no run, MC_EIO on a write error
 *  or MC_ENOMEM. */
int mc_study_compare(FILE *out, const mc_summary *const *runs,
                     const char *const *files, size_t n, const char *pop,
                     mc_study_format fmt, mc_errinfo *err);

/* ---- HTML report -------------------------------------------------------- */

/*! mc_study_html_report() :
 *  Write one self-contained HTML page for @s to @out_path: run metadata,
 *  per population the tables of `report` (counts, bytes, each candidate
 *  center with MAD, relative MAD and the best marked, quantiles, top sizes,
 *  peaks, mixture) and the figures as inline SVG. No external resources
 *  of any kind. Written to a temporary name in the same directory and
 *  renamed, so a reader never sees half a page; an existing @out_path is
 *  replaced. @only as for mc_study_html_write().
 *  @return 0, or MC_EOPEN / MC_EIO / MC_ENOMEM with @err filled. */
int mc_study_html_report(const mc_summary *s, const char *only,
                         const char *out_path, mc_errinfo *err);

/*! mc_study_html_write() : the same page into @out (which stays open).
 *  With @only (not NULL) the overview and the sections show only the
 *  population of that name; the run metadata and the matrix stay.
 *  @return 0, MC_EIO or MC_ENOMEM. */
int mc_study_html_write(FILE *out, const mc_summary *s, const char *only);

/* ---- shareable copy ----------------------------------------------------- */

typedef struct mc_share_opts {
    unsigned per_octave; /* coarsening bins per octave, 1..16 (1 = log2) */
    uint64_t round_to;   /* round counts to multiples of this; 0 = exact */
    int keep_ranks;      /* keep the per-rank table */
    int keep_matrix;     /* keep the point-to-point matrix */
    int keep_comms;      /* keep per-communicator populations */
    int keep_sources;    /* keep the per-file table (paths still removed) */
    const char *label;   /* new run label, NULL = keep */
} mc_share_opts;

/*! mc_share_opts_init() : log2 bins, exact counts, drop everything. */
void mc_share_opts_init(mc_share_opts *o);

/*! mc_share_is_comm_pop() : 1 when population @name is per communicator
 *  (it names a communicator id), else 0. */
int mc_share_is_comm_pop(const char *name);

/*! mc_study_share() :
 *  Build in *out a copy of @in fit to hand outside the team: campaign path,
 *  host name and source paths removed; per-rank table, matrix, per-file
 *  table and communicator populations removed unless kept by @o; every
 *  histogram coarsened (mc_coarsen) and statistics, fitness, top sizes,
 *  peaks and mixture recomputed from it; meta.approximate = 1 and
 *  meta.shared_note saying what was done. Every field is its own heap
 *  allocation, as in a summary that was read, so *out is freed with
 *  mc_study_share_free() (the same as mc_summary_free()).
 *  @return 0, MC_EINVAL (bad options) or MC_ENOMEM with @err filled. */
int mc_study_share(const mc_summary *in, const mc_share_opts *o,
                   mc_summary **out, mc_errinfo *err);

/*! mc_study_share_free() : free a summary made by mc_study_share(); NULL ok. */
void mc_study_share_free(mc_summary *s);

#endif /* MSGCENSUS_STUDY_H */
