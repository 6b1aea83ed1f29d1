/* cmd_export.c - the export subcommand: a trace file as CSV text records. */
#include "cli.h"
#include "outfile.h"

#include <errno.h>  /* errno */
#include <stdio.h>  /* fopen, fputs */
#include <string.h> /* strcmp */

#include <msgcensus/csv.h>
#include <msgcensus/trace.h>

static void usage(FILE *out)
{
    fprintf(
        out,
        "usage: msgcensus export IN.mct [-o OUT.csv] [OPTIONS]\n\n"
        "Write the records of a trace as CSV text (docs/trace-format.md, "
        "\"CSV text\nform\"), with the trace header as '# key=value' "
        "lines. Standard output\nby default. 'msgcensus import' reads "
        "the result back into identical records.\n\n"
        "Options:\n"
        "  -o, --output FILE   CSV file to write instead of standard output\n"
        "  -f, --force         replace FILE if it exists\n"
        "  -q, --quiet         print errors only\n"
        "  -v, --verbose       say more\n"
        "  -h, --help          this help\n");
}

int mc_cmd_export(int argc, char **argv)
{
    const char *cmd = argv[0], *in_path = NULL, *out_path = NULL;
    int force = 0;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) {
            usage(stdout);
            return MC_EXIT_OK;
        } else if (!strcmp(a, "-o") || !strcmp(a, "--output")) {
            if (i + 1 >= argc)
                return mc_cli_usage_error(cmd, "%s needs a file name", a);
            out_path = argv[++i];
        } else if (!strcmp(a, "-f") || !strcmp(a, "--force")) {
            force = 1;
        } else if (!strcmp(a, "-q") || !strcmp(a, "--quiet")) {
            mc_cli_verbosity = 0;
        } else if (!strcmp(a, "-v") || !strcmp(a, "--verbose")) {
            mc_cli_verbosity = 2;
        } else if (a[0] == '-' && a[1] != '\0') {
            return mc_cli_usage_error(cmd, "unknown option '%s'", a);
        } else if (!in_path) {
            in_path = a;
        } else {
            return mc_cli_usage_error(cmd, "one input file only ('%s')", a);
        }
    }
    if (!in_path)
        return mc_cli_usage_error(cmd, "no input file");

    int status = MC_EXIT_FAIL, rc;
    mc_errinfo err;
    mc_errinfo_clear(&err);
    mc_trace_reader *r = NULL;
    FILE *out = stdout;
    mc_outfile of;
    int began = 0;
    uint64_t nrec = 0;
    if ((rc = mc_trace_open(in_path, &r, &err)))
        goto fail;
    if (out_path) {
        if ((rc = mc_outfile_begin(&of, out_path, force, &err)))
            goto fail;
        began = 1;
        out = fopen(of.tmp, "wx");
        if (!out) {
            err.sys_errno = errno;
            mc_errinfo_set(&err, MC_EOPEN, out_path, -1, -1, "cannot create");
            goto fail;
        }
    }
    if (mc_csv_write_preamble(out, mc_trace_get_header(r)))
        goto write_failed;
    const mc_record *recs;
    size_t n;
    while ((rc = mc_trace_next_block(r, &recs, &n, &err)) == 1) {
        uint64_t bi, boff;
        mc_trace_current_block(r, &bi, &boff);
        for (size_t i = 0; i < n; i++) {
            char line[256];
            mc_errinfo rerr;
            mc_errinfo_clear(&rerr);
            const int k =
                mc_csv_format_record(&recs[i], line, sizeof line, &rerr);
            if (k < 0) {
                mc_errinfo_set(&err, MC_ERECORD, in_path, (int64_t)bi,
                               (int64_t)boff, "record %zu of the block: %s", i,
                               rerr.detail);
                goto fail;
            }
            if (fputs(line, out) == EOF)
                goto write_failed;
        }
        nrec += n;
    }
    if (rc < 0)
        goto fail;
    if (fflush(out) != 0)
        goto write_failed;
    if (out != stdout) {
        const int cl = fclose(out);
        out = stdout;
        if (cl != 0)
            goto write_failed;
        if ((rc = mc_outfile_commit(&of, &err))) {
            began = 0;
            goto fail;
        }
        began = 0;
    }
    MC_SAY(2, "msgcensus export: %llu records from %s\n",
           (unsigned long long)nrec, in_path);
    status = MC_EXIT_OK;
    goto done;
write_failed:
    err.sys_errno = errno;
    mc_errinfo_set(&err, MC_EIO, out_path ? out_path : "(standard output)", -1,
                   -1, "write failed");
fail:
    mc_cli_error(&err, err.code ? err.code : MC_EIO, in_path);
done:
    if (out != stdout)
        fclose(out);
    if (began)
        mc_outfile_discard(&of);
    mc_trace_close(r);
    return status;
}
