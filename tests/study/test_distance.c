/* test_distance.c - exact W1 (log2 size) and KS distances, and coarsening
 * onto log2/k bins, on hand-made histograms. */
#include <setjmp.h> /* cmocka needs jmp_buf */
#include <stdarg.h> /* cmocka needs va_list */
#include <stddef.h>
#include <cmocka.h>

#include <math.h>   /* fabs */
#include <stdint.h> /* uint64_t */

#include <msgcensus/coarsen.h>
#include <msgcensus/distance.h>
#include <msgcensus/error.h>

#include "alloc.h" /* mc__alloc_fail_after */

#define VIEW(s, c)                                                             \
    {                                                                          \
        (s), (c), sizeof(s) / sizeof((s)[0])                                   \
    }

/* The values below follow from the definitions, worked by hand:
 * W1(F, G) = integral of |F(x) - G(x)| dx over the log2 axis, and
 * KS = sup |F - G| (both common practice for one-dimensional distributions). */

static void test_distance_identical_histograms_are_zero(void **state)
{
    (void)state;
    const uint64_t s[] = {0, 8, 4096, 65536}, c[] = {3, 10, 7, 1};
    const mc_hview a = VIEW(s, c);
    mc_distance d;
    assert_int_equal(mc_distance_compute(&a, &a, &d), 0);
    assert_true(d.w1_log2 == 0.0);
    assert_true(d.ks == 0.0);
    assert_int_equal(d.ks_at, 0);
}

static void test_distance_point_masses_two_octaves_apart(void **state)
{
    (void)state;
    const uint64_t sa[] = {1024}, ca[] = {5}, sb[] = {4096}, cb[] = {2};
    const mc_hview a = VIEW(sa, ca), b = VIEW(sb, cb);
    mc_distance d;
    assert_int_equal(mc_distance_compute(&a, &b, &d), 0);
    /* All mass moves from log2 = 10 to log2 = 12: two octaves. */
    assert_true(fabs(d.w1_log2 - 2.0) < 1e-12);
    assert_true(d.ks == 1.0);
    assert_int_equal(d.ks_at, 1024);
}

static void
test_distance_places_size_zero_one_octave_below_one_byte(void **state)
{
    (void)state;
    const uint64_t sa[] = {0}, ca[] = {1}, sb[] = {1}, cb[] = {4};
    const mc_hview a = VIEW(sa, ca), b = VIEW(sb, cb);
    mc_distance d;
    assert_int_equal(mc_distance_compute(&a, &b, &d), 0);
    assert_true(mc_log2_axis(0) == -1.0);
    assert_true(mc_log2_axis(1) == 0.0);
    assert_true(fabs(d.w1_log2 - 1.0) < 1e-12);
    assert_true(d.ks == 1.0);
    assert_int_equal(d.ks_at, 0);
}

static void test_distance_half_the_mass_moves(void **state)
{
    (void)state;
    /* A = {1 B, 4 B} equally, B = {4 B}: half the mass moves 2 octaves,
     * W1 = 1; F_A - F_B = 1/2 on [0, 2), so KS = 1/2, first at 1 B. */
    const uint64_t sa[] = {1, 4}, ca[] = {1, 1}, sb[] = {4}, cb[] = {2};
    const mc_hview a = VIEW(sa, ca), b = VIEW(sb, cb);
    mc_distance d;
    assert_int_equal(mc_distance_compute(&a, &b, &d), 0);
    assert_true(fabs(d.w1_log2 - 1.0) < 1e-12);
    assert_true(fabs(d.ks - 0.5) < 1e-15);
    assert_int_equal(d.ks_at, 1);
}

static void test_distance_is_symmetric(void **state)
{
    (void)state;
    const uint64_t sa[] = {0, 3, 100, 5000}, ca[] = {2, 9, 4, 1};
    const uint64_t sb[] = {3, 64, 100, 1u << 20}, cb[] = {1, 1, 7, 3};
    const mc_hview a = VIEW(sa, ca), b = VIEW(sb, cb);
    mc_distance ab, ba;
    assert_int_equal(mc_distance_compute(&a, &b, &ab), 0);
    assert_int_equal(mc_distance_compute(&b, &a, &ba), 0);
    assert_true(fabs(ab.w1_log2 - ba.w1_log2) < 1e-12);
    assert_true(ab.ks == ba.ks);
    assert_int_equal(ab.ks_at, ba.ks_at);
}

static void test_distance_rejects_empty_and_unsorted_views(void **state)
{
    (void)state;
    const uint64_t s[] = {8, 4}, c[] = {1, 1}, z[] = {8, 16}, zc[] = {1, 0};
    const mc_hview bad = VIEW(s, c), zero_count = VIEW(z, zc);
    const mc_hview empty = {NULL, NULL, 0};
    const uint64_t ok_s[] = {1}, ok_c[] = {1};
    const mc_hview ok = VIEW(ok_s, ok_c);
    mc_distance d;
    assert_int_equal(mc_distance_compute(&ok, &empty, &d), MC_ENODATA);
    assert_int_equal(mc_distance_compute(&bad, &ok, &d), MC_EINVAL);
    assert_int_equal(mc_distance_compute(&ok, &zero_count, &d), MC_EINVAL);
    assert_int_equal(mc_distance_compute(NULL, &ok, &d), MC_EINVAL);
}

static void test_log2_bins_of_small_sizes(void **state)
{
    (void)state;
    /* log2 bins: [1], [2,3], [4,7], [8,15]; size 0 alone. */
    const int want[] = {MC_BIN_ZERO, 0, 1, 1, 2, 2, 2, 2, 3, 3};
    for (uint64_t s = 0; s < 10; s++)
        assert_int_equal(mc_log2_bin(s, 1), want[s]);
    assert_int_equal(mc_log2_bin(UINT64_MAX, 1), 63);
    assert_int_equal(mc_log2_bin(5, 0), MC_BIN_ZERO - 1);
    assert_int_equal(mc_log2_bin(5, MC_COARSEN_MAX_K + 1), MC_BIN_ZERO - 1);
}

static void test_log2_half_octave_edge_is_exact(void **state)
{
    (void)state;
    /* k = 2: the edge 2^7.5 = 181.02: 181^2 = 32761 < 2^15 <= 182^2 = 33124.
     * Near 2^31.5: 3037000499^2 < 2^63 <= 3037000500^2 (integer arithmetic,
     * checked with Python's exact integers). */
    assert_int_equal(mc_log2_bin(181, 2), 14);
    assert_int_equal(mc_log2_bin(182, 2), 15);
    assert_int_equal(mc_log2_bin(UINT64_C(3037000499), 2), 62);
    assert_int_equal(mc_log2_bin(UINT64_C(3037000500), 2), 63);
    /* Powers of two sit exactly on an edge for every k. */
    for (unsigned k = 1; k <= MC_COARSEN_MAX_K; k++)
        for (int e = 0; e < 64; e++)
            assert_int_equal(mc_log2_bin(UINT64_C(1) << e, k), (int)k * e);
}

static void test_log2_bin_range_and_representative(void **state)
{
    (void)state;
    uint64_t lo, hi;
    assert_int_equal(mc_log2_bin_range(10, 1, &lo, &hi), 0);
    assert_int_equal(lo, 1024);
    assert_int_equal(hi, 2047);
    /* 2^10.5 = 1448.15 */
    assert_int_equal(mc_log2_bin_rep(10, 1), 1448);
    assert_int_equal(mc_log2_bin_rep(0, 1), 1);
    assert_int_equal(mc_log2_bin_rep(1, 1), 3); /* 2^1.5 = 2.83 */
    assert_int_equal(mc_log2_bin_range(63, 1, &lo, &hi), 0);
    assert_true(lo == UINT64_C(1) << 63 && hi == UINT64_MAX);
    /* k = 4 has no integer between 2^(1/4) and 2^(2/4). */
    assert_int_equal(mc_log2_bin_range(1, 4, &lo, &hi), MC_ENODATA);
    assert_int_equal(mc_log2_bin_range(64, 1, &lo, &hi), MC_EINVAL);
    assert_int_equal(mc_log2_bin_range(MC_BIN_ZERO, 3, &lo, &hi), 0);
    assert_true(lo == 0 && hi == 0);
}

static void test_coarsen_merges_sizes_of_one_bin(void **state)
{
    (void)state;
    const uint64_t s[] = {0, 5, 6, 7, 1000, 1500, 2047},
                   c[] = {2, 1, 1, 1, 4, 5, 6};
    const mc_hview v = VIEW(s, c);
    mc_coarse *co = NULL;
    assert_int_equal(mc_coarsen(&v, 1, 0, &co), 0);
    mc_hview out;
    mc_coarse_view(co, &out);
    /* Bins: {0}, [4,7] -> rep round(2^2.5 = 5.66) = 6, [512,1023] -> 724,
     * [1024,2047] -> 1448. */
    assert_int_equal(out.k, 4);
    const uint64_t ws[] = {0, 6, 724, 1448}, wc[] = {2, 3, 4, 11};
    for (size_t i = 0; i < 4; i++) {
        assert_int_equal(out.sizes[i], ws[i]);
        assert_int_equal(out.counts[i], wc[i]);
    }
    mc_coarse_info info;
    mc_coarse_get_info(co, &info);
    assert_int_equal(info.msgs_in, 20);
    assert_int_equal(info.msgs_out, 20);
    assert_int_equal(info.bins, 4);
    assert_int_equal(info.distinct_in, 7);
    mc_coarse_free(co);
}

static void test_coarsen_rounds_counts_and_drops_zero_bins(void **state)
{
    (void)state;
    const uint64_t s[] = {1, 2, 4, 8}, c[] = {3, 7, 12, 5};
    const mc_hview v = VIEW(s, c);
    mc_coarse *co = NULL;
    assert_int_equal(mc_coarsen(&v, 1, 10, &co), 0);
    size_t nb;
    const mc_coarse_bin *bins = mc_coarse_bins(co, &nb);
    assert_int_equal(nb, 4);
    /* nearest multiple of 10, halves up: 3 -> 0, 7 -> 10, 12 -> 10, 5 -> 10 */
    assert_int_equal(bins[0].count, 0);
    assert_int_equal(bins[1].count, 10);
    assert_int_equal(bins[2].count, 10);
    assert_int_equal(bins[3].count, 10);
    mc_hview out;
    mc_coarse_view(co, &out);
    assert_int_equal(out.k, 3);
    assert_int_equal(out.sizes[0], 3); /* bin [2,3] */
    mc_coarse_info info;
    mc_coarse_get_info(co, &info);
    assert_int_equal(info.bins_dropped, 1);
    assert_int_equal(info.msgs_dropped, 3);
    assert_int_equal(info.msgs_out, 30);
    mc_coarse_free(co);
}

static void test_coarsen_reports_overflow_of_rounded_count(void **state)
{
    (void)state;
    const uint64_t s[] = {1}, c[] = {UINT64_MAX - 1};
    const mc_hview v = VIEW(s, c);
    mc_coarse *co = NULL;
    assert_int_equal(mc_coarsen(&v, 1, 1000, &co), MC_ERANGE);
    assert_null(co);
}

static void test_coarsen_fails_cleanly_without_memory(void **state)
{
    (void)state;
    const uint64_t s[] = {1, 2, 3}, c[] = {1, 1, 1};
    const mc_hview v = VIEW(s, c);
    for (long n = 0; n < 4; n++) {
        mc_coarse *co = NULL;
        mc__alloc_fail_after(n);
        const int rc = mc_coarsen(&v, 2, 0, &co);
        mc__alloc_fail_after(-1);
        if (rc == 0) {
            mc_coarse_free(co);
            continue;
        }
        assert_int_equal(rc, MC_ENOMEM);
        assert_null(co);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_distance_identical_histograms_are_zero),
        cmocka_unit_test(test_distance_point_masses_two_octaves_apart),
        cmocka_unit_test(
            test_distance_places_size_zero_one_octave_below_one_byte),
        cmocka_unit_test(test_distance_half_the_mass_moves),
        cmocka_unit_test(test_distance_is_symmetric),
        cmocka_unit_test(test_distance_rejects_empty_and_unsorted_views),
        cmocka_unit_test(test_log2_bins_of_small_sizes),
        cmocka_unit_test(test_log2_half_octave_edge_is_exact),
        cmocka_unit_test(test_log2_bin_range_and_representative),
        cmocka_unit_test(test_coarsen_merges_sizes_of_one_bin),
        cmocka_unit_test(test_coarsen_rounds_counts_and_drops_zero_bins),
        cmocka_unit_test(test_coarsen_reports_overflow_of_rounded_count),
        cmocka_unit_test(test_coarsen_fails_cleanly_without_memory),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
