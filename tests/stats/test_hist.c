/* test_hist.c - the exact sparse histogram and its failure paths. */
#include <setjmp.h> /* cmocka needs jmp_buf */
#include <stdarg.h> /* cmocka needs va_list */
#include <stddef.h>
#include <cmocka.h>

#include <msgcensus/error.h>
#include <msgcensus/hist.h>
#include <msgcensus/modes.h>
#include <msgcensus/stats.h>

#include "alloc.h" /* mc__alloc_fail_after */
#include "stats/stats_util.h"

/* Reference: counting by sorting the raw stream and collapsing runs. */
static size_t brute_hist(const uint64_t *x, size_t n, uint64_t *sizes,
                         uint64_t *counts)
{
    uint64_t *s = malloc(n * sizeof *s);
    memcpy(s, x, n * sizeof *s);
    qsort(s, n, sizeof *s, tu_cmp_u64);
    size_t k = 0;
    for (size_t i = 0; i < n; i++) {
        if (k > 0 && sizes[k - 1] == s[i]) {
            counts[k - 1]++;
        } else {
            sizes[k] = s[i];
            counts[k++] = 1;
        }
    }
    free(s);
    return k;
}

static void assert_hist_equals_stream(mc_hist *h, const uint64_t *x, size_t n)
{
    uint64_t *rs = malloc(n * sizeof *rs), *rc = malloc(n * sizeof *rc);
    const size_t k = brute_hist(x, n, rs, rc);
    assert_int_equal(mc_hist_distinct(h), k);
    assert_int_equal(mc_hist_total(h), n);
    uint64_t *es = malloc((k + 1) * sizeof *es),
             *ec = malloc((k + 1) * sizeof *ec);
    mc_hist_export(h, es, ec);
    assert_memory_equal(es, rs, k * sizeof *es);
    assert_memory_equal(ec, rc, k * sizeof *ec);
    mc_hview v;
    assert_int_equal(mc_hist_sorted(h, &v), 0);
    assert_int_equal(v.k, k);
    assert_memory_equal(v.sizes, rs, k * sizeof *es);
    assert_memory_equal(v.counts, rc, k * sizeof *ec);
    free(rs);
    free(rc);
    free(es);
    free(ec);
}

static void test_hist_counts_match_sorted_stream(void **state)
{
    (void)state;
    const size_t n = 200000;
    uint64_t *x = tu_stream(1, n, 1);
    mc_hist *h = tu_hist_of(x, n);
    assert_non_null(h);
    assert_hist_equals_stream(h, x, n);
    mc_hist_free(h);
    free(x);
}

static void test_hist_size_zero_is_a_valid_key(void **state)
{
    (void)state;
    mc_hist *h;
    assert_int_equal(mc_hist_create(&h), 0);
    const uint64_t x[] = {0, 0, 5, 0, 5, 7, 0};
    assert_int_equal(mc_hist_add_sizes(h, x, 7, NULL), 0);
    assert_int_equal(mc_hist_add(h, 0, 3), 0);
    assert_int_equal(mc_hist_distinct(h), 3);
    mc_hview v;
    assert_int_equal(mc_hist_sorted(h, &v), 0);
    assert_int_equal(v.sizes[0], 0);
    assert_int_equal(v.counts[0], 7);
    assert_int_equal(v.sizes[1], 5);
    assert_int_equal(v.counts[1], 2);
    assert_int_equal(v.sizes[2], 7);
    mc_hist_free(h);
}

static void test_hist_add_zero_count_creates_no_entry(void **state)
{
    (void)state;
    mc_hist *h;
    assert_int_equal(mc_hist_create(&h), 0);
    assert_int_equal(mc_hist_add(h, 42, 0), 0);
    assert_int_equal(mc_hist_distinct(h), 0);
    assert_int_equal(mc_hist_total(h), 0);
    mc_hist_free(h);
}

static void test_hist_sorted_view_follows_changes(void **state)
{
    (void)state;
    mc_hist *h;
    assert_int_equal(mc_hist_create(&h), 0);
    assert_int_equal(mc_hist_add(h, 100, 1), 0);
    mc_hview v;
    assert_int_equal(mc_hist_sorted(h, &v), 0);
    assert_int_equal(v.k, 1);
    assert_int_equal(mc_hist_add(h, 50, 2), 0);
    assert_int_equal(mc_hist_sorted(h, &v), 0);
    assert_int_equal(v.k, 2);
    assert_int_equal(v.sizes[0], 50);
    assert_int_equal(v.counts[0], 2);
    const uint64_t more[] = {100, 100};
    assert_int_equal(mc_hist_add_sizes(h, more, 2, NULL), 0);
    assert_int_equal(mc_hist_sorted(h, &v), 0);
    assert_int_equal(v.counts[1], 3);
    mc_hist_clear(h);
    assert_int_equal(mc_hist_sorted(h, &v), 0);
    assert_int_equal(v.k, 0);
    assert_int_equal(mc_hist_total(h), 0);
    assert_int_equal(mc_hist_add(h, 9, 1), 0);
    assert_int_equal(mc_hist_sorted(h, &v), 0);
    assert_int_equal(v.k, 1);
    mc_hist_free(h);
}

static void test_hist_add_sorted_rejects_unsorted_input(void **state)
{
    (void)state;
    mc_hist *h;
    assert_int_equal(mc_hist_create(&h), 0);
    const uint64_t s[] = {1, 5, 5}, c[] = {1, 1, 1};
    assert_int_equal(mc_hist_add_sorted(h, s, c, 3), MC_EINVAL);
    const uint64_t s2[] = {4, 2}, c2[] = {1, 1};
    assert_int_equal(mc_hist_add_sorted(h, s2, c2, 2), MC_EINVAL);
    assert_int_equal(mc_hist_total(h), 0);
    const uint64_t s3[] = {0, 2, 9}, c3[] = {4, 0, 6};
    assert_int_equal(mc_hist_add_sorted(h, s3, c3, 3), 0);
    assert_int_equal(mc_hist_distinct(h), 2); /* count 0 adds no entry */
    assert_int_equal(mc_hist_total(h), 10);
    mc_hist_free(h);
}

static void test_hist_count_overflow_is_erange_and_unchanged(void **state)
{
    (void)state;
    mc_hist *h;
    assert_int_equal(mc_hist_create(&h), 0);
    assert_int_equal(mc_hist_add(h, 8, UINT64_MAX - 1), 0);
    assert_int_equal(mc_hist_add(h, 16, 2), MC_ERANGE);
    assert_int_equal(mc_hist_distinct(h), 1);
    const uint64_t x[] = {8, 8, 8};
    size_t done = 99;
    assert_int_equal(mc_hist_add_sizes(h, x, 3, &done), MC_ERANGE);
    assert_int_equal(done, 1);
    assert_int_equal(mc_hist_total(h), UINT64_MAX);
    const uint64_t s[] = {1}, c[] = {1};
    assert_int_equal(mc_hist_add_sorted(h, s, c, 1), MC_ERANGE);
    mc_hist *g;
    assert_int_equal(mc_hist_create(&g), 0);
    assert_int_equal(mc_hist_add(g, 8, 1), 0);
    assert_int_equal(mc_hist_merge(h, g), MC_ERANGE);
    assert_int_equal(mc_hist_total(h), UINT64_MAX);
    mc_hist_free(g);
    mc_hist_free(h);
}

/* Export and stats of a histogram, for bitwise comparison. */
typedef struct snapshot {
    size_t k;
    uint64_t *sizes, *counts;
    mc_stats st;
    mc_fitness fit;
    mc_topsize top[8];
    mc_peak peaks[16];
    int npeaks;
} snapshot;

static snapshot snap(mc_hist *h)
{
    snapshot s;
    s.k = mc_hist_distinct(h);
    s.sizes = malloc((s.k + 1) * sizeof *s.sizes);
    s.counts = malloc((s.k + 1) * sizeof *s.counts);
    mc_hist_export(h, s.sizes, s.counts);
    mc_hview v;
    assert_int_equal(mc_hist_sorted(h, &v), 0);
    memset(&s.st, 0, sizeof s.st);
    memset(&s.fit, 0, sizeof s.fit);
    assert_int_equal(mc_stats_compute(&v, &s.st), 0);
    assert_int_equal(mc_fitness_compute(&v, &s.st, &s.fit), 0);
    memset(s.top, 0, sizeof s.top);
    memset(s.peaks, 0, sizeof s.peaks);
    assert_int_equal(mc_topk(&v, 8, s.top), s.k < 8 ? s.k : 8);
    s.npeaks = mc_peaks(&v, 4, 0.001, s.peaks, 16);
    assert_true(s.npeaks > 0);
    return s;
}

static void assert_same_snapshot(const snapshot *a, const snapshot *b)
{
    assert_int_equal(a->k, b->k);
    assert_memory_equal(a->sizes, b->sizes, a->k * sizeof *a->sizes);
    assert_memory_equal(a->counts, b->counts, a->k * sizeof *a->counts);
    assert_true(tu_stats_identical(&a->st, &b->st));
    assert_memory_equal(&a->fit, &b->fit, sizeof a->fit);
    assert_memory_equal(a->top, b->top, sizeof a->top);
    assert_int_equal(a->npeaks, b->npeaks);
    assert_memory_equal(a->peaks, b->peaks, sizeof a->peaks);
}

static void snap_free(snapshot *s)
{
    free(s->sizes);
    free(s->counts);
}

static void test_hist_merge_is_associative_and_commutative(void **state)
{
    (void)state;
    for (uint64_t seed = 1; seed <= 5; seed++) {
        const size_t n = 30000;
        uint64_t *x = tu_stream(seed, 3 * n, seed % 2);
        mc_hist *a = tu_hist_of(x, n), *b = tu_hist_of(x + n, n),
                *c = tu_hist_of(x + 2 * n, n);
        mc_hist *ab_c, *a_bc, *cba;
        assert_int_equal(mc_hist_create(&ab_c), 0);
        assert_int_equal(mc_hist_create(&a_bc), 0);
        assert_int_equal(mc_hist_create(&cba), 0);
        /* (a + b) + c */
        assert_int_equal(mc_hist_merge(ab_c, a), 0);
        assert_int_equal(mc_hist_merge(ab_c, b), 0);
        assert_int_equal(mc_hist_merge(ab_c, c), 0);
        /* a + (b + c), with b + c built in place in a copy of b */
        mc_hist *bc;
        assert_int_equal(mc_hist_create(&bc), 0);
        assert_int_equal(mc_hist_merge(bc, b), 0);
        assert_int_equal(mc_hist_merge(bc, c), 0);
        assert_int_equal(mc_hist_merge(a_bc, a), 0);
        assert_int_equal(mc_hist_merge(a_bc, bc), 0);
        /* c + b + a, through the sorted-array path */
        mc_hist *parts[3] = {c, b, a};
        for (int i = 0; i < 3; i++) {
            const size_t k = mc_hist_distinct(parts[i]);
            uint64_t *s = malloc(k * sizeof *s), *cn = malloc(k * sizeof *cn);
            mc_hist_export(parts[i], s, cn);
            assert_int_equal(mc_hist_add_sorted(cba, s, cn, k), 0);
            free(s);
            free(cn);
        }
        mc_hist *whole = tu_hist_of(x, 3 * n);
        snapshot s1 = snap(ab_c), s2 = snap(a_bc), s3 = snap(cba),
                 s4 = snap(whole);
        assert_same_snapshot(&s1, &s2);
        assert_same_snapshot(&s1, &s3);
        assert_same_snapshot(&s1, &s4);
        snap_free(&s1);
        snap_free(&s2);
        snap_free(&s3);
        snap_free(&s4);
        mc_hist_free(a);
        mc_hist_free(b);
        mc_hist_free(c);
        mc_hist_free(bc);
        mc_hist_free(ab_c);
        mc_hist_free(a_bc);
        mc_hist_free(cba);
        mc_hist_free(whole);
        free(x);
    }
}

static void test_hist_merge_with_itself_doubles_counts(void **state)
{
    (void)state;
    uint64_t *x = tu_stream(9, 5000, 1);
    mc_hist *h = tu_hist_of(x, 5000);
    mc_hist *twice = tu_hist_of(x, 5000);
    assert_int_equal(mc_hist_add_sizes(twice, x, 5000, NULL), 0);
    assert_int_equal(mc_hist_merge(h, h), 0);
    snapshot a = snap(h), b = snap(twice);
    assert_same_snapshot(&a, &b);
    snap_free(&a);
    snap_free(&b);
    mc_hist_free(h);
    mc_hist_free(twice);
    free(x);
}

static void test_hist_insertion_order_does_not_change_any_bit(void **state)
{
    (void)state;
    const size_t n = 100000;
    uint64_t *x = tu_stream(77, n, 1);
    mc_hist *h1 = tu_hist_of(x, n);
    snapshot a = snap(h1);
    mc_hview v;
    mc_gmm g1, g2;
    assert_int_equal(mc_hist_sorted(h1, &v), 0);
    assert_int_equal(mc_gmm_fit(&v, 4, 1, &g1), 0);
    for (uint64_t seed = 1; seed <= 4; seed++) {
        tu_shuffle(x, n, seed);
        mc_hist *h2 = tu_hist_of(x, n);
        snapshot b = snap(h2);
        assert_same_snapshot(&a, &b);
        assert_int_equal(mc_hist_sorted(h2, &v), 0);
        assert_int_equal(mc_gmm_fit(&v, 4, 1, &g2), 0);
        assert_memory_equal(&g1, &g2, sizeof g1);
        snap_free(&b);
        mc_hist_free(h2);
    }
    snap_free(&a);
    mc_hist_free(h1);
    free(x);
}

/* Every entry point that may grow keeps the old content when the
 * allocation fails, and works again once memory is back. */
static void test_hist_growth_failure_keeps_histogram_valid(void **state)
{
    (void)state;
    mc_hist *h;
    assert_int_equal(mc_hist_create(&h), 0);
    uint64_t seq[48];
    for (int i = 0; i < 48; i++)
        seq[i] = (uint64_t)(i + 1) * 8;
    assert_int_equal(mc_hist_add_sizes(h, seq, 48, NULL), 0); /* load 3/4 */
    const uint64_t total = mc_hist_total(h);
    mc_hview v;
    assert_int_equal(mc_hist_sorted(h, &v), 0);

    mc__alloc_fail_after(0);
    assert_int_equal(mc_hist_add(h, 1000, 1), MC_ENOMEM);
    assert_int_equal(mc_hist_total(h), total);
    assert_int_equal(mc_hist_distinct(h), 48);
    /* Existing sizes still count without memory. */
    assert_int_equal(mc_hist_add(h, 8, 1), 0);
    const uint64_t mixed[] = {16, 16, 24, 5000, 16};
    size_t done = 0;
    assert_int_equal(mc_hist_add_sizes(h, mixed, 5, &done), MC_ENOMEM);
    assert_int_equal(done, 3);
    assert_int_equal(mc_hist_total(h), total + 1 + 3);
    const uint64_t s[] = {1, 2, 3}, c[] = {1, 1, 1};
    assert_int_equal(mc_hist_add_sorted(h, s, c, 3), MC_ENOMEM);
    mc_hist *g;
    mc__alloc_fail_after(-1);
    assert_int_equal(mc_hist_create(&g), 0);
    assert_int_equal(mc_hist_add_sorted(g, s, c, 3), 0);
    mc__alloc_fail_after(0);
    assert_int_equal(mc_hist_merge(h, g), MC_ENOMEM);
    mc_hist_free(g);
    assert_int_equal(mc_hist_create(&g), MC_ENOMEM);
    assert_null(g);
    mc__alloc_fail_after(-1);

    /* Still a valid histogram: exactly the stream that was accepted. */
    uint64_t ref[48 + 4];
    memcpy(ref, seq, sizeof seq);
    ref[48] = 8;
    ref[49] = 16;
    ref[50] = 16;
    ref[51] = 24;
    assert_hist_equals_stream(h, ref, 52);
    assert_int_equal(mc_hist_create(&g), 0);
    assert_int_equal(mc_hist_add_sorted(g, s, c, 3), 0);
    assert_int_equal(mc_hist_merge(h, g), 0);
    assert_int_equal(mc_hist_distinct(h), 51);
    mc_hist_free(g);
    mc_hist_free(h);
}

static void test_hist_sorted_view_failure_is_enomem_then_recovers(void **state)
{
    (void)state;
    uint64_t *x = tu_stream(4, 1000, 0);
    mc_hist *h = tu_hist_of(x, 1000);
    mc_hview v;
    mc__alloc_fail_after(0);
    assert_int_equal(mc_hist_sorted(h, &v), MC_ENOMEM);
    mc__alloc_fail_after(1); /* the view arrays, but no sort scratch */
    assert_int_equal(mc_hist_sorted(h, &v), MC_ENOMEM);
    mc__alloc_fail_after(2); /* view arrays; sort falls back to in place */
    assert_int_equal(mc_hist_sorted(h, &v), 0);
    mc__alloc_fail_after(-1);
    assert_hist_equals_stream(h, x, 1000);
    mc_hist_free(h);
    free(x);
}

static void test_hist_export_sorts_without_scratch_memory(void **state)
{
    (void)state;
    const size_t n = 50000;
    uint64_t *x = tu_stream(5, n, 1);
    mc_hist *h = tu_hist_of(x, n);
    const size_t k = mc_hist_distinct(h);
    uint64_t *s = malloc(k * sizeof *s), *c = malloc(k * sizeof *c);
    mc__alloc_fail_after(0); /* radix scratch fails: in-place fallback */
    mc_hist_export(h, s, c);
    mc__alloc_fail_after(-1);
    for (size_t i = 1; i < k; i++)
        assert_true(s[i - 1] < s[i]);
    assert_hist_equals_stream(h, x, n);
    free(s);
    free(c);
    mc_hist_free(h);
    free(x);
}

static void test_hist_two_million_distinct_sizes(void **state)
{
    (void)state;
    const size_t k = 2000000;
    uint64_t *x = malloc(k * sizeof *x);
    for (size_t i = 0; i < k; i++) /* distinct: odd multipliers are bijective */
        x[i] = (i + 1) * UINT64_C(0xD1B54A32D192ED03);
    mc_hist *h = tu_hist_of(x, k);
    assert_non_null(h);
    assert_int_equal(mc_hist_add_sizes(h, x, k / 2, NULL), 0);
    assert_int_equal(mc_hist_distinct(h), k);
    assert_int_equal(mc_hist_total(h), k + k / 2);
    mc_hview v;
    assert_int_equal(mc_hist_sorted(h, &v), 0);
    assert_int_equal(v.k, k);
    uint64_t sum = 0;
    for (size_t i = 0; i < k; i++) {
        if (i > 0)
            assert_true(v.sizes[i - 1] < v.sizes[i]);
        sum += v.counts[i];
    }
    assert_int_equal(sum, k + k / 2);
    assert_true(mc_hist_memory(h) < (size_t)200 << 20);
    mc_hist_free(h);
    free(x);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_hist_counts_match_sorted_stream),
        cmocka_unit_test(test_hist_size_zero_is_a_valid_key),
        cmocka_unit_test(test_hist_add_zero_count_creates_no_entry),
        cmocka_unit_test(test_hist_sorted_view_follows_changes),
        cmocka_unit_test(test_hist_add_sorted_rejects_unsorted_input),
        cmocka_unit_test(test_hist_count_overflow_is_erange_and_unchanged),
        cmocka_unit_test(test_hist_merge_is_associative_and_commutative),
        cmocka_unit_test(test_hist_merge_with_itself_doubles_counts),
        cmocka_unit_test(test_hist_insertion_order_does_not_change_any_bit),
        cmocka_unit_test(test_hist_growth_failure_keeps_histogram_valid),
        cmocka_unit_test(test_hist_sorted_view_failure_is_enomem_then_recovers),
        cmocka_unit_test(test_hist_export_sorts_without_scratch_memory),
        cmocka_unit_test(test_hist_two_million_distinct_sizes),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
