/* gen_distinct.c - writes a campaign whose point-to-point sends have N
 * distinct, randomly spread message sizes, for the --max-memory tests
 * (tests/ckpt/ckpt_memory.py). */
#include <stdio.h>  /* fprintf, snprintf */
#include <stdlib.h> /* strtoull, malloc */
#include <string.h> /* memset */

#include <msgcensus/ops.h>   /* MC_OP_Send, MC_DIR_SEND */
#include <msgcensus/trace.h> /* the writer */

/* A permutation of [0, 2^34): odd multiplier and xor-shifts are each
 * bijective modulo 2^k (common practice for integer hash mixing), so
 * distinct inputs give distinct sizes that look random. */
#define BITS 34u
#define MASK ((UINT64_C(1) << BITS) - 1u)

static uint64_t perm(uint64_t x)
{
    x = (x * UINT64_C(0x9E3779B97F4A7C15)) & MASK;
    x ^= x >> 17;
    x = (x * UINT64_C(0xBF58476D1CE4E5B9)) & MASK;
    x ^= x >> 15;
    return x;
}

int main(int argc, char **argv)
{
    if (argc != 4) {
        fprintf(stderr, "usage: gen_distinct DIR FILES RECORDS\n"
                        "  writes DIR/rank-K.mct for K < FILES; record i of "
                        "the campaign (over all files)\n  is an MPI_Send of "
                        "1 + perm(i) bytes, so all RECORDS sizes differ.\n");
        return 2;
    }
    const int nfiles = atoi(argv[2]);
    const unsigned long long total = strtoull(argv[3], NULL, 10);
    if (nfiles < 1 || total == 0 || total > MASK)
        return 2;
    enum { CHUNK = 16384 };
    mc_record *recs = malloc(CHUNK * sizeof *recs);
    if (!recs)
        return 1;
    unsigned long long next = 0;
    for (int f = 0; f < nfiles; f++) {
        char path[4096];
        snprintf(path, sizeof path, "%s/rank-%06d.mct", argv[1], f);
        mc_trace_header hdr;
        mc_trace_header_init(&hdr, f, nfiles);
        mc_trace_writer *w = NULL;
        mc_errinfo err;
        mc_errinfo_clear(&err);
        if (mc_trace_writer_open(path, &hdr, NULL, &w, &err) != 0) {
            fprintf(stderr, "gen_distinct: %s: %s\n", path, err.detail);
            return 1;
        }
        const unsigned long long end =
            total / (unsigned)nfiles * (unsigned)(f + 1) +
            (f + 1 == nfiles ? total % (unsigned)nfiles : 0);
        while (next < end) {
            size_t n = 0;
            for (; n < CHUNK && next < end; n++, next++) {
                mc_record *r = &recs[n];
                memset(r, 0, sizeof *r);
                r->bytes = 1u + perm(next);
                r->t_start_ns = next * 10u;
                r->t_end_ns = r->t_start_ns + 5u;
                r->comm_size = (uint32_t)nfiles;
                r->peer = (f + 1) % nfiles;
                r->tag = 7;
                r->op = MC_OP_Send;
                r->dir = MC_DIR_SEND;
            }
            if (mc_trace_write(w, recs, n, &err) != 0) {
                fprintf(stderr, "gen_distinct: %s: %s\n", path, err.detail);
                return 1;
            }
        }
        if (mc_trace_writer_close(w, &err) != 0) {
            fprintf(stderr, "gen_distinct: %s: %s\n", path, err.detail);
            return 1;
        }
    }
    free(recs);
    printf("%llu\n", next);
    return 0;
}
