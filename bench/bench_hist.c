/* bench_hist.c - histogram inserts, statistics, MADs, mixture fit. */
#include <inttypes.h> /* PRIu64 */
#include <stdio.h>    /* printf */
#include <stdlib.h>   /* malloc, qsort, atoi */
#include <time.h>     /* clock_gettime */

#include <msgcensus/hist.h>
#include <msgcensus/modes.h>
#include <msgcensus/stats.h>

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static uint64_t rnd(uint64_t *s)
{
    uint64_t z = (*s += UINT64_C(0x9E3779B97F4A7C15));
    z = (z ^ (z >> 30)) * UINT64_C(0xBF58476D1CE4E5B9);
    z = (z ^ (z >> 27)) * UINT64_C(0x94D049BB133111EB);
    return z ^ (z >> 31);
}

static int cmp_double(const void *a, const void *b)
{
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* An invented 3-D halo-exchange solver on a 64^3 block per rank: each step
 * sends 6 faces, 12 edges and 8 corners for each of a few fields (field
 * counts vary with the solver phase), then a few 8-byte reductions and now
 * and then a checkpoint chunk or a load-balancing message of varying size.
 * Messages to the same kind of neighbour come back to back. About 300
 * distinct sizes. */
static uint64_t *halo_stream(size_t n, int shuffle)
{
    uint64_t *x = malloc(n * sizeof *x);
    uint64_t st = 12345;
    size_t i = 0;
    while (i < n) {
        const uint64_t fields = 1 + rnd(&st) % 5;
        const uint64_t face = 64 * 64 * 8 * fields, edge = 64 * 8 * fields,
                       corner = 8 * fields;
        for (int k = 0; k < 6 && i < n; k++)
            x[i++] = face;
        for (int k = 0; k < 12 && i < n; k++)
            x[i++] = edge;
        for (int k = 0; k < 8 && i < n; k++)
            x[i++] = corner;
        for (int k = 0; k < 3 && i < n; k++)
            x[i++] = 8;
        if (rnd(&st) % 4 == 0 && i < n)
            x[i++] = 4096 + 16 * (rnd(&st) % 280); /* load balancing */
        if (rnd(&st) % 64 == 0 && i < n)
            x[i++] = 0; /* empty notifications */
    }
    if (shuffle)
        for (size_t j = n; j > 1; j--) {
            const size_t r = (size_t)(rnd(&st) % j);
            const uint64_t t = x[j - 1];
            x[j - 1] = x[r];
            x[r] = t;
        }
    return x;
}

static double median_of(double *t, int n)
{
    qsort(t, (size_t)n, sizeof *t, cmp_double);
    return t[n / 2];
}

static void bench_inserts(const char *what, int shuffle)
{
    const size_t n = (size_t)64 << 20;
    uint64_t *x = halo_stream(n, shuffle);
    enum { RUNS = 7 };
    double t[RUNS];
    size_t k = 0;
    for (int r = 0; r < RUNS; r++) {
        mc_hist *h;
        if (mc_hist_create(&h) != 0)
            return;
        const double t0 = now();
        if (mc_hist_add_sizes(h, x, n, NULL) != 0)
            printf("insert failed\n");
        t[r] = now() - t0;
        k = mc_hist_distinct(h);
        mc_hist_free(h);
    }
    const double med = median_of(t, RUNS);
    printf(
        "inserts (%s, %zu distinct): median of %d runs %.3f s for %zu sizes = "
        "%.0f M inserts/s\n",
        what, k, RUNS, med, n, (double)n / med / 1e6);
    free(x);
}

static void bench_stats(size_t k, int gmm)
{
    mc_hist *h;
    if (mc_hist_create(&h) != 0)
        return;
    uint64_t st = 99;
    /* Distinct sizes spread over 1 B .. 1 GiB, log-uniform, counts 1..1000. */
    while (mc_hist_distinct(h) < k) {
        const unsigned e = (unsigned)(rnd(&st) % 30);
        const uint64_t s = (UINT64_C(1) << e) + rnd(&st) % (UINT64_C(1) << e);
        if (mc_hist_add(h, s, 1 + rnd(&st) % 1000) != 0)
            return;
    }
    mc_hview v;
    double t0 = now();
    if (mc_hist_sorted(h, &v) != 0)
        return;
    const double t_sort = now() - t0;
    mc_stats s;
    mc_fitness f;
    t0 = now();
    mc_stats_compute(&v, &s);
    const double t_stats = now() - t0;
    t0 = now();
    mc_fitness_compute(&v, &s, &f);
    const double t_fit = now() - t0;
    t0 = now();
    mc_topsize top[20];
    mc_topk(&v, 20, top);
    mc_peak pk[32];
    const int np = mc_peaks(&v, 4, 0.01, pk, 32);
    const double t_modes = now() - t0;
    printf(
        "K = %zu: sorted view %.3f s; stats %.3f s; fitness (7 MADs) %.3f s; "
        "stats+fitness %.3f s; top-20 + peaks (%d) %.3f s\n",
        v.k, t_sort, t_stats, t_fit, t_stats + t_fit, np, t_modes);
    if (gmm) {
        mc_gmm g;
        t0 = now();
        const int rc = mc_gmm_fit(&v, MC_GMM_MAX, 1, &g);
        printf("K = %zu: mixture fit k = 1..%d: %.2f s (rc %d, chose %d, %d "
               "iterations)\n",
               v.k, MC_GMM_MAX, now() - t0, rc, g.ncomp, g.iterations);
    }
    mc_hist_free(h);
}

int main(int argc, char **argv)
{
    const int gmm = argc > 1 ? atoi(argv[1]) : 1;
    bench_inserts("halo stream, repeats in runs", 0);
    bench_inserts("same sizes, shuffled", 1);
    bench_stats(1000, gmm);
    bench_stats(1000000, gmm);
    return 0;
}
