/* cmd_plot.c - the plot subcommand: SVG figures of one summary, or an
 * overlay of several runs. */
#include "cli.h"

#include <errno.h>    /* errno, EEXIST */
#include <stdlib.h>   /* calloc, free */
#include <string.h>   /* strcmp */
#include <sys/stat.h> /* mkdir */

#include <msgcensus/summary.h>

#include "outfile.h" /* mc_outfile_* */
#include "study.h"   /* figures */

static void help(void)
{
    printf(
        "usage: msgcensus plot SUMMARY.h5 -o DIR [OPTIONS]\n"
        "       msgcensus plot --overlay A.h5 B.h5 ... -o FILE.svg "
        "[OPTIONS]\n\n"
        "Draw SVG figures. Into DIR (created if missing; figures of the same\n"
        "name are replaced):\n"
        "  sizes-POP.svg   probability of each exact size with the candidate "
        "centers\n"
        "  cdf-POP.svg     count- and byte-weighted cumulative distributions\n"
        "  mad.svg         MAD of each candidate center per population\n"
        "  matrix-msgs.svg, matrix-bytes.svg  rank-to-rank heat maps\n"
        "With --overlay, one figure of population POP (default 'all') in every "
        "run.\n\n"
        "Options:\n"
        "  -o, --output PATH      output directory, or file with --overlay\n"
        "  --population NAME      only this population's figures\n"
        "  --matrix msgs|bytes|both|none  heat maps to draw (default both)\n"
        "  --tiles N              at most N x N tiles in a heat map (default "
        "256)\n"
        "  -q, --quiet            no messages on stderr\n"
        "  -h, --help             this help\n");
}

/* Write one figure to @path through a temporary name. */
static int write_figure(const char *path, const mc_sbuf *b)
{
    mc_outfile o;
    mc_errinfo err;
    mc_errinfo_clear(&err);
    int rc = mc_outfile_begin(&o, path, 1, &err);
    if (rc == 0) {
        FILE *f = fopen(o.tmp, "w");
        if (!f) {
            rc = mc_errinfo_set(&err, MC_EOPEN, o.tmp, -1, -1, "%s",
                                strerror(errno));
        } else {
            const size_t w = fwrite(b->data, 1, b->len, f);
            if (fclose(f) != 0 || w != b->len) {
                rc =
                    mc_errinfo_set(&err, MC_EIO, o.tmp, -1, -1, "write failed");
                mc_outfile_discard(&o);
            } else {
                rc = mc_outfile_commit(&o, &err);
            }
        }
    }
    if (rc != 0) {
        mc_cli_error(&err, rc, path);
        return MC_EXIT_FAIL;
    }
    MC_SAY(2, "msgcensus plot: wrote %s\n", path);
    return MC_EXIT_OK;
}

typedef int (*pop_fig_fn)(const mc_summary *, const mc_summary_pop *,
                          mc_sbuf *);

static int plot_pop(const char *dir, const char *prefix, pop_fig_fn fn,
                    const mc_summary *s, const mc_summary_pop *p)
{
    char safe[256], path[2048];
    mc_sbuf b;
    mc_sbuf_init(&b);
    const int rc = fn(s, p, &b);
    int status = MC_EXIT_OK;
    if (rc == MC_ENODATA) {
        MC_SAY(2, "msgcensus plot: population %s is empty, no %s figure\n",
               p->name, prefix);
    } else if (rc != 0) {
        mc_cli_error(NULL, rc, NULL);
        status = MC_EXIT_FAIL;
    } else {
        mc_study_file_name(p->name, safe, sizeof safe);
        snprintf(path, sizeof path, "%s/%s-%s.svg", dir, prefix, safe);
        status = write_figure(path, &b);
    }
    mc_sbuf_free(&b);
    return status;
}

static int plot_one(const char *file, const char *dir, const char *pop,
                    int matrix_mask, unsigned tiles)
{
    mc_summary *s = NULL;
    mc_errinfo err;
    mc_errinfo_clear(&err);
    int rc = mc_summary_read(file, &s, &err);
    if (rc != 0) {
        mc_cli_error(&err, rc, file);
        return MC_EXIT_FAIL;
    }
    if (mkdir(dir, 0777) != 0 && errno != EEXIST) {
        mc_errinfo_set(&err, MC_EOPEN, dir, -1, -1,
                       "cannot create directory: %s", strerror(errno));
        mc_cli_error(&err, MC_EOPEN, dir);
        mc_summary_free(s);
        return MC_EXIT_FAIL;
    }
    int status = MC_EXIT_OK;
    size_t drawn = 0;
    for (size_t i = 0; i < s->npops && status == MC_EXIT_OK; i++) {
        const mc_summary_pop *p = &s->pops[i];
        if (pop && strcmp(p->name, pop) != 0)
            continue;
        drawn++;
        status = plot_pop(dir, "sizes", mc_study_fig_sizes, s, p);
        if (status == MC_EXIT_OK)
            status = plot_pop(dir, "cdf", mc_study_fig_cdf, s, p);
    }
    if (pop && drawn == 0 && status == MC_EXIT_OK) {
        mc_errinfo_set(&err, MC_ENODATA, file, -1, -1, "no population '%s'",
                       pop);
        mc_cli_error(&err, MC_ENODATA, file);
        status = MC_EXIT_FAIL;
    }
    char path[2048];
    if (status == MC_EXIT_OK) {
        mc_sbuf b;
        mc_sbuf_init(&b);
        rc = mc_study_fig_mad(s, 0, &b);
        if (rc == 0) {
            snprintf(path, sizeof path, "%s/mad.svg", dir);
            status = write_figure(path, &b);
        } else if (rc != MC_ENODATA) {
            mc_cli_error(NULL, rc, NULL);
            status = MC_EXIT_FAIL;
        }
        mc_sbuf_free(&b);
    }
    for (int w = 0; w < 2 && status == MC_EXIT_OK; w++) {
        if (!(matrix_mask & (1 << w)))
            continue;
        mc_sbuf b;
        mc_sbuf_init(&b);
        rc = mc_study_fig_matrix(s, w, tiles, &b);
        if (rc == 0) {
            snprintf(path, sizeof path, "%s/matrix-%s.svg", dir,
                     w ? "bytes" : "msgs");
            status = write_figure(path, &b);
        } else if (rc == MC_ENODATA) {
            MC_SAY(w == 0 ? 1 : 2,
                   "msgcensus plot: %s has no rank-to-rank "
                   "matrix, no heat map\n",
                   file);
        } else {
            mc_cli_error(NULL, rc, NULL);
            status = MC_EXIT_FAIL;
        }
        mc_sbuf_free(&b);
    }
    mc_summary_free(s);
    return status;
}

static int plot_overlay(char **files, size_t n, const char *out,
                        const char *pop)
{
    mc_summary **runs = mc_cli_read_summaries((const char *const *)files, n);
    if (!runs)
        return MC_EXIT_FAIL;
    int status = MC_EXIT_OK;
    mc_sbuf b;
    mc_sbuf_init(&b);
    const int rc = mc_study_fig_overlay((const mc_summary *const *)runs, n,
                                        pop ? pop : "all", &b);
    if (rc == 0) {
        status = write_figure(out, &b);
    } else {
        mc_errinfo err;
        mc_errinfo_clear(&err);
        if (rc == MC_ENODATA)
            mc_errinfo_set(&err, rc, NULL, -1, -1,
                           "no run has a non-empty population '%s'",
                           pop ? pop : "all");
        mc_cli_error(&err, rc, NULL);
        status = MC_EXIT_FAIL;
    }
    mc_sbuf_free(&b);
    mc_cli_free_summaries(runs, n);
    return status;
}

int mc_cmd_plot(int argc, char **argv)
{
    const char *out = NULL, *pop = NULL;
    int overlay = 0, matrix_mask = 3;
    unsigned tiles = 256;
    char **files = calloc((size_t)argc, sizeof *files);
    size_t n = 0;
    int status = MC_EXIT_OK;
    if (!files) {
        mc_cli_error(NULL, MC_ENOMEM, NULL);
        return MC_EXIT_FAIL;
    }
    for (int i = 1; i < argc && status == MC_EXIT_OK; i++) {
        const char *a = argv[i];
        const int takes = !strcmp(a, "-o") || !strcmp(a, "--output") ||
                          !strcmp(a, "--population") ||
                          !strcmp(a, "--matrix") || !strcmp(a, "--tiles");
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) {
            help();
            free(files);
            return MC_EXIT_OK;
        } else if (!strcmp(a, "-q") || !strcmp(a, "--quiet")) {
            mc_cli_verbosity = 0;
        } else if (!strcmp(a, "-v") || !strcmp(a, "--verbose")) {
            mc_cli_verbosity = 2;
        } else if (!strcmp(a, "--overlay")) {
            overlay = 1;
        } else if (takes) {
            if (i + 1 >= argc) {
                status = mc_cli_usage_error(argv[0], "%s needs a value", a);
                break;
            }
            const char *v = argv[++i];
            uint64_t t;
            if (!strcmp(a, "-o") || !strcmp(a, "--output")) {
                out = v;
            } else if (!strcmp(a, "--population")) {
                pop = v;
            } else if (!strcmp(a, "--tiles")) {
                if (mc_parse_u64(v, &t) != 0 || t < 1 || t > 4096)
                    status = mc_cli_usage_error(
                        argv[0], "--tiles wants 1..4096, not '%s'", v);
                else
                    tiles = (unsigned)t;
            } else if (!strcmp(v, "msgs")) {
                matrix_mask = 1;
            } else if (!strcmp(v, "bytes")) {
                matrix_mask = 2;
            } else if (!strcmp(v, "both")) {
                matrix_mask = 3;
            } else if (!strcmp(v, "none")) {
                matrix_mask = 0;
            } else {
                status =
                    mc_cli_usage_error(argv[0], "unknown --matrix '%s'", v);
            }
        } else if (a[0] == '-' && a[1] != '\0') {
            status = mc_cli_usage_error(argv[0], "unknown option '%s'", a);
        } else {
            files[n++] = argv[i];
        }
    }
    if (status == MC_EXIT_OK && !out)
        status = mc_cli_usage_error(argv[0], "no output given (-o)");
    if (status == MC_EXIT_OK && n == 0)
        status = mc_cli_usage_error(argv[0], "no summary given");
    if (status == MC_EXIT_OK && !overlay && n > 1)
        status = mc_cli_usage_error(argv[0], "one summary at a time; use "
                                             "--overlay for several runs");
    if (status == MC_EXIT_OK)
        status = overlay ? plot_overlay(files, n, out, pop)
                         : plot_one(files[0], out, pop, matrix_mask, tiles);
    free(files);
    return status;
}
