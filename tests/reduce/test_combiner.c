/* test_combiner.c - the reducer's record loop (src/reduce/combiner.h):
 * its record check is exactly mc_record_valid() / mc_record_check(), the
 * rule of docs/trace-format.md ("Records"), for every op code and
 * direction and for random records; and what it counts, after every
 * eviction and the final flush, equals a plain count of the counted
 * records by (op key, size, peer), computed by sorting. End to end, the
 * reducer's histograms are checked against NumPy in reduce_reference.py. */
#include <setjmp.h> /* cmocka needs these before cmocka.h */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>

#include <cmocka.h>

#include <stdlib.h> /* qsort, malloc */
#include <string.h> /* memset */

#include <msgcensus/trace.h>

#include "combiner.h"

static uint64_t rng = 0x9E3779B97F4A7C15ull;
static uint64_t next(void) /* xorshift64 */
{
    rng ^= rng << 13;
    rng ^= rng >> 7;
    rng ^= rng << 17;
    return rng;
}

/* A record that is valid with op @op and dir @dir otherwise. */
static mc_record base(unsigned op, unsigned dir)
{
    mc_record r;
    memset(&r, 0, sizeof r);
    r.bytes = 4096;
    r.t_start_ns = 100;
    r.t_end_ns = 200;
    r.comm_id = 1;
    r.comm_size = 8;
    r.peer = 3;
    r.tag = 7;
    r.op = (uint16_t)op;
    r.dir = (uint8_t)dir;
    return r;
}

/* The triples the loop hands back, in the order it flushes them. */
typedef struct triple {
    uint64_t kp, size, n;
} triple;

typedef struct sink {
    triple *t;
    size_t n, cap;
} sink;

static void sink_put(sink *k, uint64_t kp, uint64_t size, uint64_t n)
{
    if (k->n == k->cap) {
        k->cap = k->cap ? 2 * k->cap : 1024;
        k->t = realloc(k->t, k->cap * sizeof *k->t);
        assert_non_null(k->t);
    }
    k->t[k->n++] = (triple){kp, size, n};
}

static int miss(void *ctx, mc__comb_slot *s, uint64_t size, uint64_t kp)
{
    if (s->n)
        sink_put(ctx, s->kp, s->size, s->n);
    s->size = size;
    s->kp = kp;
    s->n = 1;
    return 0;
}

static int miss_count_only(void *ctx, mc__comb_slot *s, uint64_t size,
                           uint64_t kp)
{
    (void)ctx;
    s->size = size;
    s->kp = kp;
    s->n = 1;
    return 0;
}

/* The loop's table and key table, made fresh by each test. */
static mc__comb_slot comb[MC__COMB_SLOTS];
static uint16_t keys[MC__REC_KEYS_LEN];

static void fresh(void)
{
    mc__comb_init(comb);
    mc__rec_keys_init(keys);
}

/* 1 when the loop accepts the single record @r. */
static int loop_accepts(const mc_record *r)
{
    size_t stop = 99;
    assert_int_equal(
        mc__comb_count(comb, keys, r, 0, 1, &stop, miss_count_only, NULL), 0);
    assert_true(stop <= 1);
    return stop == 1;
}

/* Every op code (all 65536 values of the field) with every direction. */
static void test_check_every_op_and_dir(void **state)
{
    (void)state;
    fresh();
    const unsigned char *known = mc_op_known_table();
    size_t valid = 0;
    for (unsigned op = 0; op <= 0xffffu; op++)
        for (unsigned dir = 0; dir <= 0xffu; dir++) {
            const mc_record r = base(op, dir);
            const int want = mc_record_valid(&r, known);
            assert_int_equal(want, mc_record_check(&r, NULL) == 0);
            assert_int_equal(loop_accepts(&r), want);
            valid += (size_t)want;
        }
    /* docs/trace-format.md: three directions for every known op code. */
    size_t nknown = 0;
    for (unsigned op = 0; op <= MC_OP_MAX_CODE; op++)
        nknown += known[op];
    assert_int_equal(valid, 3 * nknown);
}

/* Random flags, reserved words and time stamps on known and unknown ops. */
static void test_check_random_records(void **state)
{
    (void)state;
    fresh();
    const unsigned char *known = mc_op_known_table();
    size_t nvalid = 0, ninvalid = 0;
    for (int i = 0; i < 2000000; i++) {
        const uint64_t x = next(), y = next();
        mc_record r = base((unsigned)(x % (MC_OP_MAX_CODE + 40)),
                           (unsigned)((x >> 16) % 5));
        /* Each field is usually right and sometimes not. */
        if ((y & 7) == 0)
            r.flags = (uint8_t)(y >> 8);
        else
            r.flags = (uint8_t)((y >> 8) & MC_RF_KNOWN_MASK);
        if ((y >> 16 & 15) == 0)
            r.reserved = (uint32_t)(1u << (y >> 20 & 31));
        if ((y >> 25 & 15) == 0)
            r.t_end_ns = r.t_start_ns - 1 - (y >> 40 & 0xff);
        if ((y >> 30 & 31) == 0)
            r.dir = (uint8_t)(y >> 48);
        const int want = mc_record_valid(&r, known);
        assert_int_equal(want, mc_record_check(&r, NULL) == 0);
        assert_int_equal(loop_accepts(&r), want);
        if (want)
            nvalid++;
        else
            ninvalid++;
    }
    assert_true(nvalid > 100000 && ninvalid > 100000); /* both paths ran */
}

static int cmp_triple(const void *a, const void *b)
{
    const triple *x = a, *y = b;
    if (x->kp != y->kp)
        return x->kp < y->kp ? -1 : 1;
    if (x->size != y->size)
        return x->size < y->size ? -1 : 1;
    return 0;
}

/* Sort, then add up the n of equal (kp, size): the plain count. */
static size_t collapse(triple *t, size_t n)
{
    qsort(t, n, sizeof *t, cmp_triple);
    size_t m = 0;
    for (size_t i = 0; i < n; i++) {
        if (m && t[m - 1].kp == t[i].kp && t[m - 1].size == t[i].size)
            t[m - 1].n += t[i].n;
        else
            t[m++] = t[i];
    }
    return m;
}

/* A stream with a few hot triples and a long tail, so that slots are
 * taken over all the time, cut into blocks at random. */
static void test_counts_equal_plain_count(void **state)
{
    (void)state;
    const size_t n = 1u << 20;
    mc_record *recs = malloc(n * sizeof *recs);
    triple *plain = malloc(n * sizeof *plain);
    assert_non_null(recs);
    assert_non_null(plain);
    const unsigned ops[] = {MC_OP_Send, MC_OP_Isend, MC_OP_Irecv,
                            MC_OP_Allreduce, MC_OP_Put};
    size_t np = 0;
    for (size_t i = 0; i < n; i++) {
        const uint64_t x = next();
        const int hot = (x & 3) != 0;
        mc_record r = base(ops[(x >> 2) % 5], (unsigned)((x >> 5) % 3));
        r.bytes = hot ? 8u << ((x >> 8) % 4) : (x >> 8) % 100000;
        r.peer = hot ? (int32_t)((x >> 30) % 4)
                     : (int32_t)((x >> 30) % 70000) - 1; /* -1: no peer */
        if ((x >> 50) % 16 == 0)
            r.flags = MC_RF_PER_PEER; /* checked, not counted */
        recs[i] = r;
        if (!(r.flags & MC_RF_PER_PEER))
            plain[np++] = (triple){(uint64_t)(r.op * 3u + r.dir) |
                                       (uint64_t)(uint32_t)r.peer << 32,
                                   r.bytes, 1};
    }
    fresh();
    sink got = {NULL, 0, 0};
    for (size_t i = 0; i < n;) {
        const size_t len = 1 + next() % 20000;
        const size_t end = i + len < n ? i + len : n;
        size_t stop = 0;
        assert_int_equal(
            mc__comb_count(comb, keys, recs, i, end, &stop, miss, &got), 0);
        assert_int_equal(stop, end);
        i = end;
    }
    for (size_t i = 0; i < MC__COMB_SLOTS; i++)
        if (comb[i].n)
            sink_put(&got, comb[i].kp, comb[i].size, comb[i].n);
    assert_true(got.n > n / 8); /* evictions happened */
    const size_t a = collapse(plain, np), b = collapse(got.t, got.n);
    assert_int_equal(a, b);
    for (size_t i = 0; i < a; i++) {
        assert_int_equal(plain[i].kp, got.t[i].kp);
        assert_int_equal(plain[i].size, got.t[i].size);
        assert_int_equal(plain[i].n, got.t[i].n);
    }
    free(got.t);
    free(plain);
    free(recs);
}

/* The loop stops at the first invalid record and counts what came before. */
static void test_stops_at_invalid(void **state)
{
    (void)state;
    fresh();
    mc_record recs[10];
    for (int i = 0; i < 10; i++)
        recs[i] = base(MC_OP_Send, MC_DIR_SEND);
    recs[6].reserved = 1;
    sink got = {NULL, 0, 0};
    size_t stop = 0;
    assert_int_equal(mc__comb_count(comb, keys, recs, 0, 10, &stop, miss, &got),
                     0);
    assert_int_equal(stop, 6);
    assert_int_equal(mc__comb_count(comb, keys, recs, 7, 10, &stop, miss, &got),
                     0);
    assert_int_equal(stop, 10);
    uint64_t total = 0;
    for (size_t i = 0; i < MC__COMB_SLOTS; i++)
        total += comb[i].n;
    for (size_t i = 0; i < got.n; i++)
        total += got.t[i].n;
    assert_int_equal(total, 9);
    free(got.t);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_check_every_op_and_dir),
        cmocka_unit_test(test_check_random_records),
        cmocka_unit_test(test_counts_equal_plain_count),
        cmocka_unit_test(test_stops_at_invalid),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
