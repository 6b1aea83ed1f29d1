/* bench_reduce_hist.c - the reducer's histogram update: per block, a
 * counting sort by (op, dir) and one mc_hist_add_sizes() batch per key,
 * against one mc_hist_add() per record. Usage: bench_reduce_hist TRACE.mct */
#include <stdio.h>  /* printf */
#include <stdlib.h> /* malloc */
#include <string.h> /* memset */
#include <time.h>   /* clock_gettime */

#include <msgcensus/hist.h>
#include <msgcensus/ops.h>
#include <msgcensus/trace.h>

#define NKEYS ((MC_OP_MAX_CODE + 1u) * 3u)

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Every block's records, copied out of the reader. */
typedef struct blocks {
    size_t n, cap;
    mc_record **recs;
    size_t *len;
    size_t total;
} blocks;

static int load(const char *path, blocks *b)
{
    mc_trace_reader *r = NULL;
    if (mc_trace_open(path, &r, NULL) != 0)
        return -1;
    const mc_record *recs;
    size_t n;
    while (mc_trace_next_block(r, &recs, &n, NULL) == 1) {
        if (b->n == b->cap) {
            b->cap = b->cap ? 2 * b->cap : 64;
            b->recs = realloc(b->recs, b->cap * sizeof *b->recs);
            b->len = realloc(b->len, b->cap * sizeof *b->len);
        }
        b->recs[b->n] = malloc(n * sizeof *recs);
        memcpy(b->recs[b->n], recs, n * sizeof *recs);
        b->len[b->n++] = n;
        b->total += n;
    }
    mc_trace_close(r);
    return 0;
}

static double run_batched(const blocks *b, mc_hist **h)
{
    static uint32_t cnt[NKEYS], pos[NKEYS];
    static uint16_t touched[NKEYS];
    uint16_t *key = malloc(MC_BLOCK_MAX_RECORDS * sizeof *key);
    uint64_t *sizes = malloc(MC_BLOCK_MAX_RECORDS * sizeof *sizes);
    const double t0 = now();
    for (size_t i = 0; i < b->n; i++) {
        const mc_record *r = b->recs[i];
        const size_t n = b->len[i];
        size_t nt = 0;
        for (size_t j = 0; j < n; j++) {
            const unsigned k = (unsigned)r[j].op * 3u + r[j].dir;
            key[j] = (uint16_t)k;
            if (cnt[k]++ == 0)
                touched[nt++] = (uint16_t)k;
        }
        uint32_t at = 0;
        for (size_t t = 0; t < nt; t++) {
            pos[touched[t]] = at;
            at += cnt[touched[t]];
        }
        for (size_t j = 0; j < n; j++)
            sizes[pos[key[j]]++] = r[j].bytes;
        for (size_t t = 0; t < nt; t++) {
            const unsigned k = touched[t];
            mc_hist_add_sizes(h[k], sizes + (pos[k] - cnt[k]), cnt[k], NULL);
            cnt[k] = 0;
        }
    }
    const double dt = now() - t0;
    free(key);
    free(sizes);
    return dt;
}

static double run_per_record(const blocks *b, mc_hist **h)
{
    const double t0 = now();
    for (size_t i = 0; i < b->n; i++) {
        const mc_record *r = b->recs[i];
        for (size_t j = 0; j < b->len[i]; j++)
            mc_hist_add(h[(unsigned)r[j].op * 3u + r[j].dir], r[j].bytes, 1);
    }
    return now() - t0;
}

int main(int argc, char **argv)
{
    if (argc != 2) {
        fprintf(stderr, "usage: bench_reduce_hist TRACE.mct\n");
        return 2;
    }
    blocks b;
    memset(&b, 0, sizeof b);
    if (load(argv[1], &b) != 0 || b.total == 0) {
        fprintf(stderr, "bench_reduce_hist: cannot read %s\n", argv[1]);
        return 1;
    }
    mc_hist **h1 = calloc(NKEYS, sizeof *h1), **h2 = calloc(NKEYS, sizeof *h2);
    for (size_t k = 0; k < NKEYS; k++) {
        mc_hist_create(&h1[k]);
        mc_hist_create(&h2[k]);
    }
    double best1 = 1e30, best2 = 1e30;
    for (int rep = 0; rep < 5; rep++) {
        for (size_t k = 0; k < NKEYS; k++) {
            mc_hist_clear(h1[k]);
            mc_hist_clear(h2[k]);
        }
        const double a = run_batched(&b, h1), c = run_per_record(&b, h2);
        best1 = a < best1 ? a : best1;
        best2 = c < best2 ? c : best2;
    }
    for (size_t k = 0; k < NKEYS; k++)
        if (mc_hist_total(h1[k]) != mc_hist_total(h2[k]))
            return 1;
    printf("records %zu: batched (counting sort + mc_hist_add_sizes) %.2f "
           "ns/record, "
           "per-record mc_hist_add %.2f ns/record\n",
           b.total, 1e9 * best1 / (double)b.total,
           1e9 * best2 / (double)b.total);
    return 0;
}
