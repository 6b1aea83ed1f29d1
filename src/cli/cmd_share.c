/* cmd_share.c - the share subcommand: write a coarsened copy of a summary
 * that leaves out what identifies the site, the job and its files. */
#include "cli.h"

#include <string.h> /* strcmp, strncmp */

#include <msgcensus/summary.h>

#include "outfile.h" /* mc_outfile_* */
#include "study.h"   /* mc_study_share */

static void help(void)
{
    printf(
        "usage: msgcensus share IN.h5 -o OUT.h5 [OPTIONS]\n\n"
        "Write a copy of a summary to hand outside the team. Always removed:\n"
        "the campaign path, host names and source file paths. Removed unless\n"
        "kept: the per-file table, the per-rank table, the rank-to-rank "
        "matrix\n"
        "and the per-communicator populations. Every histogram is coarsened\n"
        "and the statistics are recomputed from it and marked approximate.\n"
        "The file records what was removed and how (meta shared_note).\n\n"
        "Options:\n"
        "  -o, --output OUT.h5   the copy (not replaced without --force)\n"
        "  --bins log2|log2/K    bin width: one octave, or 1/K octave, K <= "
        "16\n"
        "                        (default log2)\n"
        "  --round-counts N      round each bin count to a multiple of N\n"
        "                        (bins that round to 0 are dropped)\n"
        "  --keep-ranks          keep the per-rank table\n"
        "  --keep-matrix         keep the rank-to-rank matrix\n"
        "  --keep-comms          keep the per-communicator populations\n"
        "  --keep-sources        keep the per-file table (without paths)\n"
        "  --label TEXT          replace the run label\n"
        "  --force               replace OUT.h5 if it exists\n"
        "  -q, --quiet           no messages on stderr (the caution stays)\n"
        "  -h, --help            this help\n");
}

static int parse_bins(const char *v, unsigned *k)
{
    uint64_t n = 1;
    if (!strcmp(v, "log2")) {
        *k = 1;
        return 0;
    }
    if (strncmp(v, "log2/", 5) != 0 || mc_parse_u64(v + 5, &n) != 0 || n < 1 ||
        n > 16)
        return MC_EINVAL;
    *k = (unsigned)n;
    return 0;
}

int mc_cmd_share(int argc, char **argv)
{
    const char *in = NULL, *outp = NULL;
    int force = 0;
    mc_share_opts o;
    mc_share_opts_init(&o);
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        const int takes = !strcmp(a, "-o") || !strcmp(a, "--output") ||
                          !strcmp(a, "--bins") ||
                          !strcmp(a, "--round-counts") || !strcmp(a, "--label");
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) {
            help();
            return MC_EXIT_OK;
        } else if (!strcmp(a, "-q") || !strcmp(a, "--quiet")) {
            mc_cli_verbosity = 0;
        } else if (!strcmp(a, "--force")) {
            force = 1;
        } else if (!strcmp(a, "--keep-ranks")) {
            o.keep_ranks = 1;
        } else if (!strcmp(a, "--keep-matrix")) {
            o.keep_matrix = 1;
        } else if (!strcmp(a, "--keep-comms")) {
            o.keep_comms = 1;
        } else if (!strcmp(a, "--keep-sources")) {
            o.keep_sources = 1;
        } else if (takes) {
            if (i + 1 >= argc)
                return mc_cli_usage_error(argv[0], "%s needs a value", a);
            const char *v = argv[++i];
            if (!strcmp(a, "-o") || !strcmp(a, "--output")) {
                outp = v;
            } else if (!strcmp(a, "--label")) {
                o.label = v;
            } else if (!strcmp(a, "--bins")) {
                if (parse_bins(v, &o.per_octave) != 0)
                    return mc_cli_usage_error(
                        argv[0],
                        "--bins wants log2 or "
                        "log2/K with K in 1..16, not '%s'",
                        v);
            } else if (mc_parse_u64(v, &o.round_to) != 0 || o.round_to < 1) {
                return mc_cli_usage_error(argv[0],
                                          "--round-counts wants a "
                                          "positive number, not '%s'",
                                          v);
            }
        } else if (a[0] == '-' && a[1] != '\0') {
            return mc_cli_usage_error(argv[0], "unknown option '%s'", a);
        } else if (!in) {
            in = a;
        } else {
            return mc_cli_usage_error(argv[0], "one input summary at a time");
        }
    }
    if (!in)
        return mc_cli_usage_error(argv[0], "no input summary given");
    if (!outp)
        return mc_cli_usage_error(argv[0], "no output given (-o)");

    mc_errinfo err;
    mc_errinfo_clear(&err);
    mc_outfile of;
    int rc = mc_outfile_begin(&of, outp, force, &err);
    if (rc != 0) {
        mc_cli_error(&err, rc, outp);
        return MC_EXIT_FAIL;
    }
    mc_summary *s = NULL, *copy = NULL;
    rc = mc_summary_read(in, &s, &err);
    if (rc != 0) {
        mc_cli_error(&err, rc, in);
        return MC_EXIT_FAIL;
    }
    rc = mc_study_share(s, &o, &copy, &err);
    if (rc == 0) {
        rc = mc_summary_write(of.tmp, copy, &err);
        if (rc == 0)
            rc = mc_outfile_commit(&of, &err);
        else
            mc_outfile_discard(&of);
    }
    if (rc != 0) {
        mc_cli_error(&err, rc, outp);
    } else {
        MC_SAY(1, "msgcensus share: wrote %s\n", outp);
        /* The caution is printed even with --quiet: it is about what the
         * file still shows, not about progress. */
        fprintf(stderr,
                "msgcensus share: caution: the copy still reveals the shape of "
                "the communication\npattern (sizes to within a bin, message "
                "counts, rank count%s%s). Your\ninstitution's release review "
                "decides what may leave; follow its rules before\nsending the "
                "file anywhere.\n",
                o.keep_ranks ? ", per-rank totals" : "",
                o.keep_matrix ? ", who talks to whom" : "");
    }
    mc_study_share_free(copy);
    mc_summary_free(s);
    return rc == 0 ? MC_EXIT_OK : MC_EXIT_FAIL;
}
