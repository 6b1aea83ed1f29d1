/* distance_driver.c - prints mc_distance_compute() and mc_log2_bin() results
 * for histograms given on the command line, for the SciPy comparison.
 *   distance_driver dist "s:c,s:c,..." "s:c,..."  -> "w1 ks ks_at"
 *   distance_driver bins K s1 s2 ...              -> one bin per line */
#include <stdio.h>  /* printf */
#include <stdlib.h> /* strtoull, malloc */
#include <string.h> /* strcmp */

#include <msgcensus/coarsen.h>
#include <msgcensus/distance.h>

static size_t parse(const char *arg, uint64_t *sizes, uint64_t *counts,
                    size_t cap)
{
    size_t k = 0;
    const char *p = arg;
    while (*p && k < cap) {
        char *end;
        sizes[k] = strtoull(p, &end, 10);
        counts[k] = strtoull(end + 1, &end, 10);
        k++;
        p = *end == ',' ? end + 1 : end;
    }
    return k;
}

int main(int argc, char **argv)
{
    if (argc >= 4 && strcmp(argv[1], "dist") == 0) {
        const size_t cap = strlen(argv[2]) + strlen(argv[3]) + 1;
        uint64_t *sa = malloc(cap * sizeof *sa), *ca = malloc(cap * sizeof *ca);
        uint64_t *sb = malloc(cap * sizeof *sb), *cb = malloc(cap * sizeof *cb);
        if (!sa || !ca || !sb || !cb)
            return 1;
        const mc_hview a = {sa, ca, parse(argv[2], sa, ca, cap)};
        const mc_hview b = {sb, cb, parse(argv[3], sb, cb, cap)};
        mc_distance d;
        const int rc = mc_distance_compute(&a, &b, &d);
        if (rc != 0) {
            printf("error %d\n", rc);
            return 1;
        }
        printf("%.17g %.17g %llu\n", d.w1_log2, d.ks,
               (unsigned long long)d.ks_at);
        free(sa);
        free(ca);
        free(sb);
        free(cb);
        return 0;
    }
    if (argc >= 3 && strcmp(argv[1], "bins") == 0) {
        const unsigned k = (unsigned)strtoul(argv[2], NULL, 10);
        for (int i = 3; i < argc; i++) {
            const uint64_t s = strtoull(argv[i], NULL, 10);
            const int b = mc_log2_bin(s, k);
            uint64_t lo = 0, hi = 0;
            const int rc = mc_log2_bin_range(b, k, &lo, &hi);
            printf("%d %llu %llu %d %llu\n", b, (unsigned long long)lo,
                   (unsigned long long)hi, rc,
                   (unsigned long long)mc_log2_bin_rep(b, k));
        }
        return 0;
    }
    fprintf(stderr, "usage: distance_driver dist A B | bins K SIZE...\n");
    return 2;
}
