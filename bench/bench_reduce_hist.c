/* bench_reduce_hist.c - ways to turn records into per-(op, dir)
 * histograms: one mc_hist_add() per record; per block a counting sort by
 * key and one mc_hist_add_sizes() batch per key; and a small direct-mapped
 * combiner of (key, size, peer) counts flushed with mc_hist_add(..., n):
 * the reducer's own loop from src/reduce/combiner.h, record checks
 * included (the other two do not check records). All three must give
 * identical histograms.
 * Usage: bench_reduce_hist TRACE.mct */
#include <stdio.h>  /* printf */
#include <stdlib.h> /* malloc */
#include <string.h> /* memset */
#include <time.h>   /* clock_gettime */

#include <msgcensus/hist.h>
#include <msgcensus/ops.h>
#include <msgcensus/trace.h>

#include "combiner.h" /* src/reduce: the reducer's record loop */

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
            if (r[j].flags & MC_RF_PER_PEER) /* as the reducer */
                continue;
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
            if (!(r[j].flags & MC_RF_PER_PEER))
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
            if (!(r[j].flags & MC_RF_PER_PEER))
                mc_hist_add(h[(unsigned)r[j].op * 3u + r[j].dir], r[j].bytes,
                            1);
    }
    return now() - t0;
}

/* The reducer's own record loop (src/reduce/combiner.h), flushing into
 * the histograms only; the reducer also feeds the totals row and the send
 * matrix from the same flush. */
typedef struct comb_ctx {
    mc_hist **h;
} comb_ctx;

static int comb_miss(void *ctx, mc__comb_slot *s, uint64_t size, uint64_t kp)
{
    mc_hist **h = ((comb_ctx *)ctx)->h;
    if (s->n && mc_hist_add(h[s->kp & 0xffffffffu], s->size, s->n) != 0)
        return -1;
    s->size = size;
    s->kp = kp;
    s->n = 1;
    return 0;
}

static double run_combined(const blocks *b, mc_hist **h)
{
    static mc__comb_slot comb[MC__COMB_SLOTS];
    static uint16_t keys[MC__REC_KEYS_LEN];
    comb_ctx ctx = {h};
    mc__comb_init(comb);
    mc__rec_keys_init(keys);
    const double t0 = now();
    for (size_t i = 0; i < b->n; i++) {
        size_t stop = 0;
        if (mc__comb_count(comb, keys, b->recs[i], 0, b->len[i], &stop,
                           comb_miss, &ctx) != 0 ||
            stop != b->len[i]) {
            fprintf(stderr, "bench_reduce_hist: invalid record or no memory\n");
            exit(1);
        }
    }
    for (size_t i = 0; i < MC__COMB_SLOTS; i++)
        if (comb[i].n)
            mc_hist_add(h[comb[i].kp & 0xffffffffu], comb[i].size, comb[i].n);
    return now() - t0;
}

/* Identical content: the same sorted (size, count) lists. */
static int same_hists(mc_hist **a, mc_hist **b)
{
    for (size_t k = 0; k < NKEYS; k++) {
        mc_hview va, vb;
        if (mc_hist_sorted(a[k], &va) || mc_hist_sorted(b[k], &vb) ||
            va.k != vb.k ||
            memcmp(va.sizes, vb.sizes, va.k * sizeof *va.sizes) ||
            memcmp(va.counts, vb.counts, va.k * sizeof *va.counts))
            return 0;
    }
    return 1;
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
    mc_hist **h1 = calloc(NKEYS, sizeof *h1), **h2 = calloc(NKEYS, sizeof *h2),
            **h3 = calloc(NKEYS, sizeof *h3);
    for (size_t k = 0; k < NKEYS; k++) {
        mc_hist_create(&h1[k]);
        mc_hist_create(&h2[k]);
        mc_hist_create(&h3[k]);
    }
    double best1 = 1e30, best2 = 1e30, best3 = 1e30;
    for (int rep = 0; rep < 5; rep++) {
        for (size_t k = 0; k < NKEYS; k++) {
            mc_hist_clear(h1[k]);
            mc_hist_clear(h2[k]);
            mc_hist_clear(h3[k]);
        }
        const double a = run_batched(&b, h1), c = run_per_record(&b, h2),
                     d = run_combined(&b, h3);
        best1 = a < best1 ? a : best1;
        best2 = c < best2 ? c : best2;
        best3 = d < best3 ? d : best3;
    }
    if (!same_hists(h1, h2) || !same_hists(h2, h3)) {
        fprintf(stderr, "bench_reduce_hist: the histograms differ\n");
        return 1;
    }
    printf("records %zu, best of 5, ns/record: per-record mc_hist_add %.2f, "
           "batched (counting sort + mc_hist_add_sizes) %.2f, combiner "
           "(the reducer's) %.2f; histograms identical\n",
           b.total, 1e9 * best2 / (double)b.total,
           1e9 * best1 / (double)b.total, 1e9 * best3 / (double)b.total);
    return 0;
}
