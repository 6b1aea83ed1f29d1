/* cmd_reduce.c - the reduce subcommand: reduce a campaign into one HDF5
 * summary with MPI (under mpirun, or alone as a singleton). */
#include "cli.h"

#include <stdio.h>  /* fprintf */
#include <string.h> /* strcmp */
#include <unistd.h> /* isatty */

#include <mpi.h> /* MPI_Init, MPI_Finalize: only in this subcommand */

#include <msgcensus/common.h>

#include "reduce.h"

static void usage(FILE *out)
{
    fprintf(out,
            "usage: msgcensus reduce [OPTIONS] CAMPAIGN_DIR -o SUMMARY.h5\n\n"
            "Reduce every trace file of a campaign (its regular files ending "
            "in .mct)\ninto exact message-size histograms and statistics, "
            "written to one HDF5\nsummary. Run it under 'mpirun -np P' to "
            "spread the reading over P ranks,\nor alone for one rank; the "
            "summary's datasets do not depend on P.\n\n"
            "Options:\n"
            "  -o, --output FILE  the summary to write (required)\n"
            "  --label TEXT       run label stored in the summary (e.g. the "
            "input deck)\n"
            "  --per-comm         add one population per communicator\n"
            "  --skip-damaged     count damaged blocks and invalid records "
            "and go on\n"
            "                     (default: stop at the first one)\n"
            "  -f, --force        replace an existing summary\n"
            "  --checkpoint DIR   keep each finished unit of work in DIR; a "
            "run that was\n"
            "                     killed resumes from there when started "
            "again with the\n"
            "                     same arguments (any number of ranks); "
            "removed once the\n"
            "                     summary is written\n"
            "  --checkpoint-unit SIZE  bytes per unit of work with "
            "--checkpoint (default\n"
            "                     64MiB): a kill loses at most this much "
            "reading per rank\n"
            "  --max-memory SIZE  stop with a message when the histograms "
            "and tables of one\n"
            "                     rank would hold more (e.g. 2GiB); "
            "default: no limit\n"
            "  -q, --quiet        no progress and no result line\n"
            "  -v, --verbose      more detail in the result line; phase times\n"
            "  -h, --help         this help\n\n"
            "Exit status: 0 done, 1 the reduction failed (nothing is written), "
            "2 usage.\n");
}

/* Progress on stderr from rank 0: a rewritten line on a terminal, else a
 * plain line at most every 5 seconds. */
typedef struct progress_state {
    int tty;
    double last_print;
    int printed;
} progress_state;

static void show_progress(void *ud, uint64_t done, uint64_t total,
                          double elapsed, int final)
{
    progress_state *ps = ud;
    if (final) {
        if (ps->tty && ps->printed)
            fprintf(stderr, "\n");
        return;
    }
    if (!ps->tty && elapsed - ps->last_print < 5.0)
        return;
    if (ps->tty && elapsed - ps->last_print < 0.5)
        return;
    ps->last_print = elapsed;
    ps->printed = 1;
    char d[32], t[32], r[32];
    const double rate = elapsed > 0 ? (double)done / elapsed : 0;
    const double pct = total ? 100.0 * (double)done / (double)total : 100.0;
    char eta[32] = "--";
    if (rate > 0 && done < total)
        snprintf(eta, sizeof eta, "%.0f s", (double)(total - done) / rate);
    mc_format_bytes((double)done, d, sizeof d);
    mc_format_bytes((double)total, t, sizeof t);
    mc_format_bytes(rate, r, sizeof r);
    fprintf(stderr, "%sreduce: %s of %s (%.0f %%), %s/s, ETA %s%s",
            ps->tty ? "\r" : "", d, t, pct, r, eta, ps->tty ? "   " : "\n");
    fflush(stderr);
}

/* Checkpoint and leftover-file lines: warnings always, notes at normal
 * verbosity; a progress line on a terminal is ended first. */
static void show_note(void *ud, int level, const char *msg)
{
    progress_state *ps = ud;
    if (level > mc_cli_verbosity)
        return;
    if (ps->tty && ps->printed) {
        fprintf(stderr, "\n");
        ps->printed = 0;
    }
    if (level == 0)
        fprintf(stderr, "msgcensus: warning: %s\n", msg);
    else
        fprintf(stderr, "reduce: %s\n", msg);
}

/* What to do when --max-memory stopped the run. */
static void memory_hint(void)
{
    fprintf(stderr,
            "msgcensus: hint: raise --max-memory (the figure above is what "
            "that step needed),\n"
            "  or drop --per-comm when per-communicator keys are many. Every "
            "distinct size\n"
            "  is kept exactly: 16 to 32 bytes each while reading, about 100 "
            "on rank 0\n"
            "  while the summary is built. More reducer ranks split the "
            "reading, but rank 0\n"
            "  holds the merged histograms.\n");
}

int mc_cmd_reduce(int argc, char **argv)
{
    const char *cmd = argv[0];
    mc_reduce_opts o;
    mc_reduce_opts_init(&o);
    o.tool_version = mc_version();
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) {
            usage(stdout);
            return MC_EXIT_OK;
        } else if (!strcmp(a, "-o") || !strcmp(a, "--output")) {
            if (++i == argc)
                return mc_cli_usage_error(cmd, "%s needs a file name", a);
            o.output = argv[i];
        } else if (!strcmp(a, "--label")) {
            if (++i == argc)
                return mc_cli_usage_error(cmd, "--label needs a text");
            o.label = argv[i];
        } else if (!strcmp(a, "--per-comm")) {
            o.per_comm = 1;
        } else if (!strcmp(a, "--skip-damaged")) {
            o.skip_damaged = 1;
        } else if (!strcmp(a, "--checkpoint")) {
            if (++i == argc)
                return mc_cli_usage_error(cmd,
                                          "--checkpoint needs a directory");
            o.checkpoint = argv[i];
        } else if (!strcmp(a, "--checkpoint-unit") ||
                   !strcmp(a, "--max-memory")) {
            uint64_t v = 0;
            if (++i == argc || mc_parse_u64(argv[i], &v) != 0 || v == 0)
                return mc_cli_usage_error(
                    cmd, "%s needs a positive size like 512MiB or 2GiB", a);
            if (a[2] == 'c')
                o.checkpoint_unit = v;
            else
                o.max_memory = v;
        } else if (!strcmp(a, "-f") || !strcmp(a, "--force")) {
            o.force = 1;
        } else if (!strcmp(a, "-q") || !strcmp(a, "--quiet")) {
            mc_cli_verbosity = 0;
        } else if (!strcmp(a, "-v") || !strcmp(a, "--verbose")) {
            mc_cli_verbosity = 2;
        } else if (a[0] == '-' && a[1] != '\0') {
            return mc_cli_usage_error(cmd, "unknown option '%s'", a);
        } else if (!o.campaign) {
            o.campaign = a;
        } else {
            return mc_cli_usage_error(cmd, "one campaign directory only ('%s')",
                                      a);
        }
    }
    if (!o.campaign)
        return mc_cli_usage_error(cmd, "no campaign directory given");
    if (!o.output)
        return mc_cli_usage_error(cmd, "no output given (-o SUMMARY.h5)");
    if (o.checkpoint_unit && !o.checkpoint)
        return mc_cli_usage_error(cmd, "--checkpoint-unit needs --checkpoint");

    if (MPI_Init(&argc, &argv) != MPI_SUCCESS) {
        fprintf(stderr, "msgcensus: %s\n", mc_strerror(MC_EMPI));
        return MC_EXIT_FAIL;
    }
    int me = 0, np = 1;
    MPI_Comm_rank(MPI_COMM_WORLD, &me);
    MPI_Comm_size(MPI_COMM_WORLD, &np);
    progress_state ps = {isatty(2), 0.0, 0};
    if (mc_cli_verbosity >= 1) {
        o.progress = show_progress;
        o.progress_ud = &ps;
    }
    o.note = show_note;
    o.note_ud = &ps;
    mc_reduce_result res;
    mc_errinfo err;
    mc_errinfo_clear(&err);
    const int rc = mc_reduce_run(MPI_COMM_WORLD, &o, &res, &err);
    if (me == 0) {
        if (rc) {
            if (ps.tty && ps.printed)
                fprintf(stderr, "\n"); /* end the progress line first */
            mc_cli_error(&err, rc, o.campaign);
            if (rc == MC_ELIMIT)
                memory_hint();
        } else if (mc_cli_verbosity >= 1) {
            char b[32], r[32];
            const double rate =
                res.elapsed_s > 0 ? (double)res.bytes / res.elapsed_s : 0;
            fprintf(stderr, "reduce: %llu records, %s in %.3f s (%s/s) -> %s\n",
                    (unsigned long long)res.records,
                    mc_format_bytes((double)res.bytes, b, sizeof b),
                    res.elapsed_s, mc_format_bytes(rate, r, sizeof r),
                    o.output);
            if (res.rejected || mc_cli_verbosity >= 2)
                fprintf(stderr,
                        "reduce: %llu files, %llu records rejected, "
                        "%d reducer rank(s), %llu units, %llu files "
                        "split\n",
                        (unsigned long long)res.files,
                        (unsigned long long)res.rejected, np,
                        (unsigned long long)res.units,
                        (unsigned long long)res.split_files);
            if (mc_cli_verbosity >= 2)
                fprintf(stderr,
                        "reduce: phases: plan %.3f s, read %.3f s, merge "
                        "%.3f s, summary %.3f s\n",
                        res.plan_s, res.read_s, res.merge_s, res.summary_s);
        }
    }
    MPI_Finalize();
    return rc ? MC_EXIT_FAIL : MC_EXIT_OK;
}
