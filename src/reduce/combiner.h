/* combiner.h - the reducer's record loop: check each record and count it
 * in a small direct-mapped table of (op key, size, peer) counts that stays
 * in L1. Header-only so that src/reduce/accum.c and
 * bench/bench_reduce_hist.c run the same code.
 *
 * A record costs a table lookup for its op key, one test of its flag and
 * reserved bits, a hash, one compare and one increment. A triple leaves its
 * slot when another one takes it (the caller's miss function) and at the
 * end of the unit; only then does it go into its histogram, the rank's
 * totals row and the send matrix, as n messages of its size. The
 * histograms are exact and additions commute, and n * size equals n
 * additions of size modulo 2^64, so every table ends up exactly as with one
 * update per record. */
#ifndef MC_REDUCE_COMBINER_H
#define MC_REDUCE_COMBINER_H

#include <msgcensus/trace.h> /* mc_record, mc_op_known_table */

#include <stddef.h> /* size_t */
#include <stdint.h> /* uint64_t */
#include <string.h> /* memcpy */

#define MC__COMB_BITS 9u
#define MC__COMB_SLOTS (1u << MC__COMB_BITS)
/* A kp no record has: op keys are far below 2^32 - 1. */
#define MC__COMB_NO_KEY UINT64_MAX
#define MC__COMB_NDIRS 3u /* MC_DIR_NONE, MC_DIR_SEND, MC_DIR_RECV */
_Static_assert(MC_DIR_RECV == MC__COMB_NDIRS - 1, "three directions");
_Static_assert((MC_OP_MAX_CODE + 1u) * MC__COMB_NDIRS < 0xffffu,
               "op keys + 1 fit in 16 bits");

typedef struct mc__comb_slot {
    uint64_t size;
    uint64_t kp; /* op key in the low 32 bits, peer (as u32) in the high */
    uint64_t n;  /* 0 = nothing pending */
} mc__comb_slot;

/* keys[op * 4 + dir] is the op key + 1 (op * 3 + dir + 1) of a known op
 * code and a direction, 0 for an unknown code or dir == 3; the row
 * op = MC_OP_MAX_CODE + 1 is all 0 and takes every code out of range. */
#define MC__REC_KEYS_LEN ((MC_OP_MAX_CODE + 2u) * 4u)

static inline void mc__rec_keys_init(uint16_t keys[MC__REC_KEYS_LEN])
{
    const unsigned char *known = mc_op_known_table();
    for (unsigned op = 0; op <= MC_OP_MAX_CODE + 1u; op++)
        for (unsigned d = 0; d < 4; d++) {
            const int ok =
                op <= MC_OP_MAX_CODE && known[op] && d < MC__COMB_NDIRS;
            keys[op * 4 + d] = (uint16_t)(ok ? op * MC__COMB_NDIRS + d + 1 : 0);
        }
}

static inline void mc__comb_init(mc__comb_slot comb[MC__COMB_SLOTS])
{
    for (size_t i = 0; i < MC__COMB_SLOTS; i++) {
        comb[i].size = 0;
        comb[i].kp = MC__COMB_NO_KEY;
        comb[i].n = 0;
    }
}

static inline size_t mc__comb_index(uint64_t size, uint64_t kp)
{
    const uint64_t x = size ^ (kp * 0xC2B2AE3D27D4EB4Full);
    return (size_t)((x * 0x9E3779B97F4A7C15ull) >> (64u - MC__COMB_BITS));
}

/* The bits of the 8 bytes op, dir, flags, reserved (offsets 40..47, read
 * as one little-endian word) that no valid record has set: dir above 3,
 * flag bits outside MC_RF_KNOWN_MASK, any reserved bit. dir == 3 and the op
 * code are left to the key table. Other hosts (and tests, with
 * MC__COMB_PORTABLE defined) test the fields one by one. */
#define MC__REC_BAD_BITS                                                       \
    ((0xfcull << 16) | ((uint64_t)(~MC_RF_KNOWN_MASK & 0xffu) << 24) |         \
     (0xffffffffull << 32))
_Static_assert(offsetof(mc_record, dir) == offsetof(mc_record, op) + 2 &&
                   offsetof(mc_record, flags) == offsetof(mc_record, op) + 3 &&
                   offsetof(mc_record, reserved) == offsetof(mc_record, op) + 4,
               "op, dir, flags, reserved fill one 8-byte word");

/* Called when a record's slot holds another triple (or none yet): flush
 * the slot and take it for (size, kp) with n = 1. Non-zero stops the loop
 * and is returned. */
typedef int (*mc__comb_miss_fn)(void *ctx, mc__comb_slot *s, uint64_t size,
                                uint64_t kp);

/* Count recs[i0..n) up to the first invalid record (the test of
 * mc_record_valid()); per-peer records (MC_RF_PER_PEER) are checked but
 * not counted. *stop is the index of the first invalid record, or n. */
static inline int mc__comb_count(mc__comb_slot *restrict comb,
                                 const uint16_t *restrict keys,
                                 const mc_record *recs, size_t i0, size_t n,
                                 size_t *stop, mc__comb_miss_fn miss, void *ctx)
{
    size_t i;
    int rc = 0;
    for (i = i0; i < n; i++) {
        const mc_record *r = &recs[i];
        unsigned op = r->op;
        op = op <= MC_OP_MAX_CODE ? op : MC_OP_MAX_CODE + 1u;
        const unsigned key1 = keys[op * 4u + (r->dir & 3u)];
#if !defined(MC__COMB_PORTABLE) && defined(__BYTE_ORDER__) &&                  \
    __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
        uint64_t w;
        memcpy(&w, &r->op, sizeof w);
        const int bad = (w & MC__REC_BAD_BITS) != 0;
#else
        const int bad = (r->dir > 3u) | ((r->flags & ~MC_RF_KNOWN_MASK) != 0) |
                        (r->reserved != 0);
#endif
        if (bad | (key1 == 0) | (r->t_end_ns < r->t_start_ns))
            break;
        if (r->flags & MC_RF_PER_PEER)
            continue;
        const uint64_t kp = (key1 - 1u) | (uint64_t)(uint32_t)r->peer << 32;
        mc__comb_slot *s = &comb[mc__comb_index(r->bytes, kp)];
        /* A slot left behind by a flush (n == 0) may match: counting from 0
         * is right. */
        if (s->size == r->bytes && s->kp == kp)
            s->n++;
        else if ((rc = miss(ctx, s, r->bytes, kp)) != 0)
            break;
    }
    *stop = i;
    return rc;
}

#endif
