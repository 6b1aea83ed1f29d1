/* summaries.c - read the several summaries that compare and plot take. */
#include "cli.h"

#include <stdlib.h> /* calloc, free */

#include <msgcensus/summary.h>

mc_summary **mc_cli_read_summaries(const char *const *files, size_t n)
{
    mc_summary **runs = calloc(n ? n : 1, sizeof *runs);
    if (!runs) {
        mc_cli_error(NULL, MC_ENOMEM, NULL);
        return NULL;
    }
    for (size_t r = 0; r < n; r++) {
        mc_errinfo err;
        mc_errinfo_clear(&err);
        const int rc = mc_summary_read(files[r], &runs[r], &err);
        if (rc != 0) {
            mc_cli_error(&err, rc, files[r]);
            mc_cli_free_summaries(runs, n);
            return NULL;
        }
    }
    return runs;
}

void mc_cli_free_summaries(mc_summary **runs, size_t n)
{
    if (!runs)
        return;
    for (size_t r = 0; r < n; r++)
        mc_summary_free(runs[r]);
    free(runs);
}
