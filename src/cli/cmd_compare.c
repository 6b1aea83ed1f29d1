/* cmd_compare.c - the compare subcommand: several runs side by side. */
#include "cli.h"

#include <stdlib.h> /* calloc, free */
#include <string.h> /* strcmp */

#include <msgcensus/summary.h>

#include "study.h" /* mc_study_compare */

static void help(void)
{
    printf(
        "usage: msgcensus compare [OPTIONS] A.h5 B.h5 ...\n\n"
        "Show several runs side by side, per population: messages, bytes,\n"
        "median, mode, mean, the best center and its MAD, "
        "MAD(mean)/MAD(best),\n"
        "a flag when the best center differs, and the exact distances between\n"
        "every pair of runs (Wasserstein-1 on log2 size, "
        "Kolmogorov-Smirnov).\n\n"
        "Options:\n"
        "  --population NAME      only this population (default: all)\n"
        "  --format text|csv|json output format (default: text, 80 columns)\n"
        "  -q, --quiet            no messages on stderr\n"
        "  -h, --help             this help\n");
}

int mc_cmd_compare(int argc, char **argv)
{
    const char *pop = NULL;
    mc_study_format fmt = MC_STUDY_TEXT;
    const char **files = calloc((size_t)argc, sizeof *files);
    size_t n = 0;
    if (!files) {
        mc_cli_error(NULL, MC_ENOMEM, NULL);
        return MC_EXIT_FAIL;
    }
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) {
            help();
            free(files);
            return MC_EXIT_OK;
        } else if (!strcmp(a, "-q") || !strcmp(a, "--quiet")) {
            mc_cli_verbosity = 0;
        } else if (!strcmp(a, "--population") || !strcmp(a, "--format")) {
            if (i + 1 >= argc) {
                free(files);
                return mc_cli_usage_error(argv[0], "%s needs a value", a);
            }
            const char *v = argv[++i];
            if (!strcmp(a, "--population")) {
                pop = v;
            } else if (!strcmp(v, "text")) {
                fmt = MC_STUDY_TEXT;
            } else if (!strcmp(v, "csv")) {
                fmt = MC_STUDY_CSV;
            } else if (!strcmp(v, "json")) {
                fmt = MC_STUDY_JSON;
            } else {
                free(files);
                return mc_cli_usage_error(argv[0], "unknown format '%s'", v);
            }
        } else if (a[0] == '-' && a[1] != '\0') {
            free(files);
            return mc_cli_usage_error(argv[0], "unknown option '%s'", a);
        } else {
            files[n++] = a;
        }
    }
    if (n == 0) {
        free(files);
        return mc_cli_usage_error(argv[0], "no summaries given");
    }

    mc_summary **runs = mc_cli_read_summaries(files, n);
    if (!runs) {
        free(files);
        return MC_EXIT_FAIL;
    }
    int status = MC_EXIT_OK;
    mc_errinfo err;
    mc_errinfo_clear(&err);
    const int rc = mc_study_compare(stdout, (const mc_summary *const *)runs,
                                    files, n, pop, fmt, &err);
    if (rc != 0) {
        mc_cli_error(&err, rc, NULL);
        status = MC_EXIT_FAIL;
    }
    mc_cli_free_summaries(runs, n);
    free(files);
    return status;
}
