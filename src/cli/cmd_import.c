/* cmd_import.c - the import subcommand: CSV text records into a trace file. */
#include "cli.h"
#include "outfile.h"

#include <stdio.h>  /* fopen, printf */
#include <stdlib.h> /* strtol */
#include <string.h> /* strcmp */
#include <time.h>   /* clock_gettime */

#include <msgcensus/csv.h>
#include <msgcensus/trace.h>

static void usage(FILE *out)
{
    fprintf(out,
            "usage: msgcensus import IN.csv -o OUT.mct [OPTIONS]\n\n"
            "Convert CSV text records (docs/trace-format.md, \"CSV text "
            "form\") into a\ntrace file. IN.csv may be '-' for standard "
            "input.\n\n"
            "Options:\n"
            "  -o, --output FILE     trace to write (required)\n"
            "  --rank R              application rank (else '# app_rank=')\n"
            "  --size N              application size (else '# app_size=')\n"
            "  --host H              host name (else '# host=', else empty)\n"
            "  --zstd                compress blocks with zstd\n"
            "  --block-records N     records per block (default %u)\n"
            "  --trace-format N      write format N.0: 2 (default), or 1 for\n"
            "                        older readers\n"
            "  -f, --force           replace OUT.mct if it exists\n"
            "  -q, --quiet           print errors only\n"
            "  -v, --verbose         say more\n"
            "  -h, --help            this help\n",
            MC_BLOCK_DEFAULT_RECORDS);
}

/* A 32-bit signed option value. */
static int parse_i32(const char *s, int32_t *v)
{
    uint64_t u;
    if (mc_parse_u64(s, &u) || u > INT32_MAX)
        return -1;
    *v = (int32_t)u;
    return 0;
}

int mc_cmd_import(int argc, char **argv)
{
    const char *cmd = argv[0], *in_path = NULL, *out_path = NULL;
    const char *host = NULL;
    int32_t rank = -1, size = -1;
    int have_rank = 0, have_size = 0, force = 0;
    mc_writer_opts wo;
    mc_writer_opts_init(&wo);
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        const int has_arg = i + 1 < argc;
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) {
            usage(stdout);
            return MC_EXIT_OK;
        } else if (!strcmp(a, "-o") || !strcmp(a, "--output")) {
            if (!has_arg)
                return mc_cli_usage_error(cmd, "%s needs a file name", a);
            out_path = argv[++i];
        } else if (!strcmp(a, "--rank") || !strcmp(a, "--size")) {
            int32_t v;
            if (!has_arg || parse_i32(argv[i + 1], &v))
                return mc_cli_usage_error(cmd,
                                          "%s needs a number from 0 to "
                                          "2147483647",
                                          a);
            i++;
            if (a[2] == 'r') {
                rank = v;
                have_rank = 1;
            } else {
                size = v;
                have_size = 1;
            }
        } else if (!strcmp(a, "--host")) {
            if (!has_arg)
                return mc_cli_usage_error(cmd, "--host needs a name");
            host = argv[++i];
            if (strlen(host) > MC_TRACE_HOST_LEN)
                return mc_cli_usage_error(cmd, "--host is limited to %u bytes",
                                          MC_TRACE_HOST_LEN);
        } else if (!strcmp(a, "--zstd")) {
            wo.codec = MC_CODEC_ZSTD;
        } else if (!strcmp(a, "--trace-format")) {
            uint64_t v;
            if (!has_arg || mc_parse_u64(argv[i + 1], &v) ||
                v < MC_TRACE_OLDEST_MAJOR || v > MC_TRACE_VERSION_MAJOR)
                return mc_cli_usage_error(cmd, "--trace-format needs %d or %d",
                                          MC_TRACE_OLDEST_MAJOR,
                                          MC_TRACE_VERSION_MAJOR);
            wo.format_major = (unsigned)v;
            i++;
        } else if (!strcmp(a, "--block-records")) {
            uint64_t v;
            if (!has_arg || mc_parse_u64(argv[i + 1], &v) || v == 0 ||
                v > MC_BLOCK_MAX_RECORDS)
                return mc_cli_usage_error(cmd,
                                          "--block-records needs a "
                                          "number from 1 to %u",
                                          MC_BLOCK_MAX_RECORDS);
            wo.block_records = (uint32_t)v;
            i++;
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
    if (!out_path)
        return mc_cli_usage_error(cmd, "no output file (-o OUT.mct)");

    int status = MC_EXIT_FAIL, rc;
    mc_errinfo err;
    mc_errinfo_clear(&err);
    FILE *in = NULL;
    mc_csv_reader *cr = NULL;
    mc_trace_writer *w = NULL;
    mc_outfile of;
    int began = 0;
    const int from_stdin = !strcmp(in_path, "-");
    in = from_stdin ? stdin : fopen(in_path, "r");
    if (!in) {
        mc_errinfo_set(&err, MC_EOPEN, in_path, -1, -1, NULL);
        goto fail;
    }
    if ((rc = mc_csv_reader_open(in, in_path, &cr, &err)))
        goto fail;
    const mc_csv_meta *meta = mc_csv_reader_meta(cr);
    mc_trace_header hdr = meta->header;
    if (have_rank)
        hdr.app_rank = rank;
    if (have_size)
        hdr.app_size = size;
    if (host)
        snprintf(hdr.host, sizeof hdr.host, "%s", host);
    if (!(meta->present & MC_CSV_HAVE_CREATED)) {
        struct timespec ts;
        clock_gettime(CLOCK_REALTIME, &ts);
        hdr.created_unix_ns = (int64_t)ts.tv_sec * 1000000000 + ts.tv_nsec;
    }
    if (!have_rank && !(meta->present & MC_CSV_HAVE_RANK)) {
        mc_errinfo_set(&err, MC_EINVAL, in_path, -1, -1,
                       "the application "
                       "rank is unknown: give --rank or a '# app_rank=' line");
        goto fail;
    }
    if (!have_size && !(meta->present & MC_CSV_HAVE_SIZE)) {
        mc_errinfo_set(&err, MC_EINVAL, in_path, -1, -1,
                       "the application "
                       "size is unknown: give --size or a '# app_size=' line");
        goto fail;
    }
    if (hdr.app_size < 1 || hdr.app_rank < 0 || hdr.app_rank >= hdr.app_size) {
        mc_errinfo_set(&err, MC_ERANGE, in_path, -1, -1,
                       "application rank %d "
                       "is not within 0..size-1 (size %d)",
                       (int)hdr.app_rank, (int)hdr.app_size);
        goto fail;
    }
    if ((rc = mc_outfile_begin(&of, out_path, force, &err)))
        goto fail;
    began = 1;
    if ((rc = mc_trace_writer_open(of.tmp, &hdr, &wo, &w, &err)))
        goto fail;
    mc_record batch[1024];
    size_t nb = 0;
    while ((rc = mc_csv_read(cr, &batch[nb], &err)) == 1) {
        if (++nb == sizeof batch / sizeof batch[0]) {
            if ((rc = mc_trace_write(w, batch, nb, &err)))
                goto fail;
            nb = 0;
        }
    }
    if (rc < 0)
        goto fail;
    if ((rc = mc_trace_write(w, batch, nb, &err)))
        goto fail;
    const uint64_t nrec = mc_trace_writer_records(w);
    rc = mc_trace_writer_close(w, &err);
    w = NULL;
    if (rc)
        goto fail;
    if ((rc = mc_outfile_commit(&of, &err))) {
        began = 0;
        goto fail;
    }
    began = 0;
    MC_SAY(2, "msgcensus import: %llu records from %s into %s\n",
           (unsigned long long)nrec, in_path, out_path);
    status = MC_EXIT_OK;
    goto done;
fail:
    /* The error names the temporary file when the writer failed; name the
     * file the user asked for instead. */
    if (began && !strcmp(err.path, of.tmp))
        snprintf(err.path, sizeof err.path, "%s", out_path);
    mc_cli_error(&err, err.code ? err.code : MC_EIO, in_path);
done:
    mc_trace_writer_abandon(w);
    if (began)
        mc_outfile_discard(&of);
    mc_csv_reader_free(cr);
    if (in && !from_stdin)
        fclose(in);
    return status;
}
