/* stats_driver.c - every statistic of a size list as JSON. */
#include <inttypes.h> /* PRIu64, SCNu64 */
#include <stdio.h>    /* FILE, printf */
#include <stdlib.h>   /* strtoull */
#include <string.h>   /* strcmp */

#include <msgcensus/error.h>
#include <msgcensus/hist.h>
#include <msgcensus/modes.h>
#include <msgcensus/stats.h>

#include "stats/stats_util.h"

static void print_array(const char *name, const double *x, int n)
{
    printf("\"%s\": [", name);
    for (int i = 0; i < n; i++)
        printf("%s%.17g", i ? ", " : "", x[i]);
    printf("],\n");
}

static int usage(void)
{
    fprintf(stderr, "usage: stats_driver FILE\n"
                    "       stats_driver --seed SEED N OUT  (generate, write "
                    "sizes to OUT)\n");
    return 2;
}

/* Read one unsigned size per line. */
static int read_sizes(const char *path, mc_hist *h)
{
    FILE *f = fopen(path, "r");
    if (!f)
        return MC_EOPEN;
    uint64_t x;
    int rc = 0;
    while (rc == 0 && fscanf(f, "%" SCNu64, &x) == 1)
        rc = mc_hist_add(h, x, 1);
    fclose(f);
    return rc;
}

static int generate(uint64_t seed, size_t n, const char *out, mc_hist *h)
{
    uint64_t *x = tu_stream(seed, n, 1);
    FILE *f = fopen(out, "w");
    if (!f) {
        free(x);
        return MC_EOPEN;
    }
    for (size_t i = 0; i < n; i++)
        fprintf(f, "%" PRIu64 "\n", x[i]);
    fclose(f);
    const int rc = mc_hist_add_sizes(h, x, n, NULL);
    free(x);
    return rc;
}

int main(int argc, char **argv)
{
    mc_hist *h;
    if (mc_hist_create(&h) != 0)
        return 1;
    int rc;
    if (argc == 2)
        rc = read_sizes(argv[1], h);
    else if (argc == 5 && strcmp(argv[1], "--seed") == 0)
        rc = generate(strtoull(argv[2], NULL, 10),
                      (size_t)strtoull(argv[3], NULL, 10), argv[4], h);
    else {
        mc_hist_free(h);
        return usage();
    }
    if (rc != 0) {
        fprintf(stderr, "stats_driver: %s\n", mc_strerror(rc));
        mc_hist_free(h);
        return 1;
    }
    mc_hview v;
    mc_stats s;
    mc_fitness fit;
    if (mc_hist_sorted(h, &v) != 0 || (rc = mc_stats_compute(&v, &s)) < 0 ||
        mc_fitness_compute(&v, &s, &fit) != 0) {
        fprintf(stderr, "stats_driver: %s\n", mc_strerror(rc));
        mc_hist_free(h);
        return 1;
    }
    printf("{\n\"count\": %" PRIu64 ", \"zero_count\": %" PRIu64
           ", \"distinct\": %" PRIu64 ", \"total_bytes\": %" PRIu64 ",\n",
           s.count, s.zero_count, s.distinct, s.total_bytes);
    printf("\"min\": %" PRIu64 ", \"max\": %" PRIu64
           ", \"positive_count\": %" PRIu64 ",\n",
           s.min, s.max, s.positive_count);
    printf("\"mean\": %.17g, \"median\": %.17g, \"harmonic\": %.17g, "
           "\"geometric\": %.17g,\n",
           s.mean, s.median, s.harmonic, s.geometric);
    printf("\"quadratic\": %.17g, \"trimean\": %.17g, \"hinge_lo\": %.17g, "
           "\"hinge_hi\": %.17g, \"stddev\": %.17g,\n",
           s.quadratic, s.trimean, s.hinge_lo, s.hinge_hi, s.stddev);
    printf("\"mode\": %" PRIu64 ", \"mode_count\": %" PRIu64
           ", \"mode_ties\": %zu,\n",
           s.mode, s.mode_count, s.mode_ties);
    print_array("quantile_levels", mc_quantile_levels, MC_NQUANTILES);
    print_array("quantiles", s.quantiles, MC_NQUANTILES);
    print_array("byte_quantiles", s.byte_quantiles, MC_NQUANTILES);
    printf("\"byte_median\": %.17g,\n", s.byte_median);
    uint64_t *modes = malloc((v.k + 1) * sizeof *modes);
    const size_t nm = mc_modes_all(&v, modes, v.k);
    printf("\"modes\": [");
    for (size_t i = 0; i < nm; i++)
        printf("%s%" PRIu64, i ? ", " : "", modes[i]);
    printf("],\n");
    free(modes);
    printf("\"fitness\": {\n");
    for (int c = 0; c < MC_NCENTERS; c++)
        printf(
            "  \"%s\": {\"value\": %.17g, \"mad\": %.17g, \"rel_mad\": %.17g, "
            "\"rank\": %d, \"defined\": %d},\n",
            mc_center_name((mc_center)c), fit.fit[c].value, fit.fit[c].mad,
            fit.fit[c].rel_mad, fit.fit[c].rank, fit.fit[c].defined);
    printf("  \"best\": \"%s\", \"mad_ratio_mean\": %.17g\n},\n",
           mc_center_name(fit.best), fit.mad_ratio_mean);
    mc_topsize top[5];
    const size_t nt = mc_topk(&v, 5, top);
    printf("\"top\": [");
    for (size_t i = 0; i < nt; i++)
        printf("%s[%" PRIu64 ", %" PRIu64 ", %.17g, %.17g]", i ? ", " : "",
               top[i].size, top[i].count, top[i].msg_share, top[i].byte_share);
    printf("],\n");
    mc_peak peaks[64];
    const int np = mc_peaks(&v, 2, 0.01, peaks, 64);
    printf("\"peaks\": [");
    for (int i = 0; i < np; i++)
        printf("%s{\"lo\": %" PRIu64 ", \"hi\": %" PRIu64
               ", \"peak_size\": %" PRIu64 ", \"count\": %" PRIu64
               ", \"prominence\": %.17g}",
               i ? ", " : "", peaks[i].lo, peaks[i].hi, peaks[i].peak_size,
               peaks[i].count, peaks[i].prominence);
    printf("],\n");
    mc_gmm g;
    const int grc = mc_gmm_fit(&v, MC_GMM_MAX, 1, &g);
    printf("\"gmm\": {\"rc\": %d, \"ncomp\": %d, \"loglik\": %.17g, \"bic\": "
           "%.17g, ",
           grc, g.ncomp, g.loglik, g.bic);
    print_array("weight", g.weight, g.ncomp);
    print_array("mu", g.mu, g.ncomp);
    printf("\"sigma\": [");
    for (int i = 0; i < g.ncomp; i++)
        printf("%s%.17g", i ? ", " : "", g.sigma[i]);
    printf("]}\n}\n");
    mc_hist_free(h);
    return 0;
}
