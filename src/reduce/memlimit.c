/* memlimit.c - memory accounting of the reducer's accumulators for
 * --max-memory: what they hold, what building the summary will add, and
 * the message when a limit is reached. */
#include "memlimit.h"

#include <stdio.h>  /* snprintf */
#include <string.h> /* strcmp, strlen */

static uint64_t hist_bytes(const mc_hist *h)
{
    return h ? (uint64_t)mc_hist_memory(h) : 0u;
}

void mc__memuse_add_acc(mc__memuse *u, const mc__acc *a)
{
    for (size_t k = 0; k < MC__NOPKEYS; k++) {
        if (!a->op[k])
            continue;
        u->bytes += hist_bytes(a->op[k]);
        u->sizes += mc_hist_distinct(a->op[k]);
    }
    u->bytes +=
        (uint64_t)a->comm.cap * (sizeof *a->comm.keys + sizeof *a->comm.vals);
    u->comm_keys += a->comm.n;
    for (size_t i = 0; i < a->comm.cap; i++) {
        if (!a->comm.vals[i])
            continue;
        u->bytes += hist_bytes(a->comm.vals[i]);
        u->comm_sizes += mc_hist_distinct(a->comm.vals[i]);
    }
    u->bytes += (uint64_t)a->caprows * sizeof *a->rows +
                (uint64_t)a->capedges * sizeof *a->edges;
    u->edges += a->nedges;
}

void mc__memuse_add(mc__memuse *u, const mc__memuse *v)
{
    u->bytes += v->bytes;
    u->sizes += v->sizes;
    u->comm_keys += v->comm_keys;
    u->comm_sizes += v->comm_sizes;
    u->edges += v->edges;
}

uint64_t mc__memuse_build(const mc__acc *a)
{
    mc__memuse u = {0, 0, 0, 0, 0};
    mc__memuse_add_acc(&u, a);
    uint64_t table = 0;
    for (size_t k = 0; k < MC__NOPKEYS; k++)
        table += hist_bytes(a->op[k]);
    /* 16 bytes per entry for a sorted (size, count) array. Each key: its
     * own view and copy (32), its copies in up to two groups (32); then one
     * group at a time: a table as large as all key tables together and its
     * sorted view. Per-communicator populations: view and copy. Then the
     * file's image in memory (mc_summary_write): at most the uncompressed
     * histograms of every population (48 per key entry, 16 per
     * communicator entry) and 1 MiB for the rest of the file. */
    return 64u * u.sizes + table + 16u * u.sizes + 32u * u.comm_sizes +
           48u * u.sizes + 16u * u.comm_sizes + (1u << 20);
}

/* "301.25 MiB" style: two decimals, so a need just above the limit
 * does not print as the limit. */
static void fmt_bytes(uint64_t b, char *buf, size_t cap)
{
    static const char *const unit[] = {"B", "KiB", "MiB", "GiB", "TiB"};
    double v = (double)b;
    int i = 0;
    while (v >= 1024.0 && i < 4) {
        v /= 1024.0;
        i++;
    }
    if (i == 0)
        snprintf(buf, cap, "%llu B", (unsigned long long)b);
    else
        snprintf(buf, cap, "%.2f %s", v, unit[i]);
}

int mc__memuse_check(uint64_t limit, uint64_t need, const mc__memuse *u,
                     const char *stage, const char *path, mc_errinfo *err)
{
    if (!limit || need <= limit)
        return 0;
    char n[64], l[64];
    fmt_bytes(need, n, sizeof n);
    fmt_bytes(limit, l, sizeof l);
    if (strcmp(n, l) == 0) {
        /* Just above: the rounded figures would read the same. */
        snprintf(n + strlen(n), sizeof n - strlen(n), " (%llu bytes)",
                 (unsigned long long)need);
        snprintf(l + strlen(l), sizeof l - strlen(l), " (%llu bytes)",
                 (unsigned long long)limit);
    }
    return mc_errinfo_set(err, MC_ELIMIT, path, -1, -1,
                          "%s needs %s, above --max-memory %s: %llu distinct "
                          "sizes, %llu per-communicator keys (%llu sizes), "
                          "%llu matrix entries",
                          stage, n, l, (unsigned long long)u->sizes,
                          (unsigned long long)u->comm_keys,
                          (unsigned long long)u->comm_sizes,
                          (unsigned long long)u->edges);
}
