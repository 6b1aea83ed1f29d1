/* test_modes.c - top sizes, log2 peaks and the Gaussian mixture fit. */
#include <setjmp.h> /* cmocka needs jmp_buf */
#include <stdarg.h> /* cmocka needs va_list */
#include <stddef.h>
#include <cmocka.h>

#include <math.h> /* fabs, isfinite, log2 */

#include <gsl/gsl_randist.h> /* gsl_ran_gaussian */
#include <gsl/gsl_rng.h>     /* gsl_rng_alloc */

#include <msgcensus/error.h>
#include <msgcensus/hist.h>
#include <msgcensus/modes.h>

#include "alloc.h" /* mc__alloc_fail_after */

static void test_topk_orders_by_count_then_size(void **state)
{
    (void)state;
    const uint64_t s[] = {0, 8, 16, 32, 64, 128}, c[] = {2, 5, 9, 5, 1, 9};
    const mc_hview v = {s, c, 6};
    mc_topsize t[10];
    assert_int_equal(mc_topk(&v, 4, t), 4);
    /* By hand: counts 9, 9, 5, 5 with ties broken by the smaller size. */
    assert_int_equal(t[0].size, 16);
    assert_int_equal(t[1].size, 128);
    assert_int_equal(t[2].size, 8);
    assert_int_equal(t[3].size, 32);
    assert_true(fabs(t[0].msg_share - 9.0 / 31.0) < 1e-15);
    /* bytes: 0 + 40 + 144 + 160 + 64 + 1152 = 1560 */
    assert_true(fabs(t[1].byte_share - 1152.0 / 1560.0) < 1e-15);
    assert_int_equal(mc_topk(&v, 10, t), 6);
    assert_int_equal(t[5].size, 64);
    assert_int_equal(t[4].size, 0);
}

static void test_peaks_find_two_modes_with_basins_and_prominence(void **state)
{
    (void)state;
    /* Octave bins (1 per octave): [64,128) holds 100, [128,256) 10,
     * [256,512) 0, [512,1024) 40. Two peaks: 100 (prominence 100: it is
     * the highest) and 40 (prominence 40 - 0). Basins split at the empty
     * bin, which goes to the left peak. */
    const uint64_t s[] = {64, 100, 200, 600, 700}, c[] = {60, 40, 10, 30, 10};
    const mc_hview v = {s, c, 5};
    mc_peak p[4];
    assert_int_equal(mc_peaks(&v, 1, 0.05, p, 4), 2);
    assert_int_equal(p[0].lo, 64);
    assert_int_equal(p[0].hi, 128);
    assert_int_equal(p[0].peak_size, 64);
    assert_int_equal(p[0].count, 110);
    assert_true(fabs(p[0].prominence - 100.0 / 150.0) < 1e-15);
    assert_int_equal(p[1].lo, 512);
    assert_int_equal(p[1].peak_size, 600);
    assert_int_equal(p[1].count, 40);
    assert_true(fabs(p[1].prominence - 40.0 / 150.0) < 1e-15);
    assert_true(fabs(p[1].msg_share - 40.0 / 150.0) < 1e-15);
    /* A high threshold keeps only the main peak, which then owns all. */
    assert_int_equal(mc_peaks(&v, 1, 0.5, p, 4), 1);
    assert_int_equal(p[0].count, 150);
    /* cap limits what is written. */
    assert_int_equal(mc_peaks(&v, 1, 0.0, p, 1), 1);
}

static void test_peaks_give_size_zero_its_own_bin(void **state)
{
    (void)state;
    const uint64_t s[] = {0, 1, 4096}, c[] = {50, 1, 30};
    const mc_hview v = {s, c, 3};
    mc_peak p[4];
    assert_int_equal(mc_peaks(&v, 4, 0.01, p, 4), 2);
    assert_int_equal(p[0].lo, 0);
    assert_int_equal(p[0].hi, 1);
    assert_int_equal(p[1].lo, 4096);
}

static void test_peaks_reject_bad_arguments(void **state)
{
    (void)state;
    const uint64_t s[] = {1}, c[] = {1};
    const mc_hview v = {s, c, 1};
    mc_peak p[1];
    assert_int_equal(mc_peaks(&v, 0, 0.1, p, 1), MC_EINVAL);
    assert_int_equal(mc_peaks(&v, 65, 0.1, p, 1), MC_EINVAL);
    assert_int_equal(mc_peaks(&v, 2, -1.0, p, 1), MC_EINVAL);
    assert_int_equal(mc_peaks(&v, 2, NAN, p, 1), MC_EINVAL);
    const mc_hview empty = {NULL, NULL, 0};
    assert_int_equal(mc_peaks(&empty, 2, 0.1, p, 1), 0);
    mc__alloc_fail_after(0);
    assert_int_equal(mc_peaks(&v, 2, 0.1, p, 1), MC_ENOMEM);
    mc__alloc_fail_after(-1);
}

/* Two log-normal families: 70 % around 2^6 (sigma 0.3 octave), 30 %
 * around 2^16 (sigma 0.5). Drawn with GSL 2.7's gsl_ran_gaussian; EM must
 * recover the generating parameters and BIC must prefer k = 2 over 1. */
static void test_gmm_recovers_two_lognormal_families(void **state)
{
    (void)state;
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 7);
    mc_hist *h;
    assert_int_equal(mc_hist_create(&h), 0);
    for (int i = 0; i < 20000; i++) {
        const int big = gsl_rng_uniform(r) < 0.3;
        const double l = big ? 16.0 + gsl_ran_gaussian(r, 0.5)
                             : 6.0 + gsl_ran_gaussian(r, 0.3);
        assert_int_equal(mc_hist_add(h, (uint64_t)llround(exp2(l)), 1), 0);
    }
    assert_int_equal(mc_hist_add(h, 0, 17), 0);
    gsl_rng_free(r);
    mc_hview v;
    assert_int_equal(mc_hist_sorted(h, &v), 0);
    mc_gmm g;
    assert_int_equal(mc_gmm_fit(&v, 2, 1, &g), 0);
    assert_int_equal(g.ncomp, 2);
    assert_int_equal(g.excluded_zero, 17);
    assert_true(g.bic_by_k[1] < g.bic_by_k[0]);
    assert_true(fabs(g.mu[0] - 6.0) < 0.05 && fabs(g.mu[1] - 16.0) < 0.05);
    assert_true(fabs(g.weight[0] - 0.7) < 0.02 &&
                fabs(g.weight[1] - 0.3) < 0.02);
    /* Rounding to integers widens the small family a little. */
    assert_true(fabs(g.sigma[0] - 0.3) < 0.05 && fabs(g.sigma[1] - 0.5) < 0.05);
    assert_true(fabs(g.center[1] - exp2(g.mu[1])) < 1e-9 * g.center[1]);
    /* Same seed, same result, bit for bit. */
    mc_gmm g2;
    assert_int_equal(mc_gmm_fit(&v, 2, 1, &g2), 0);
    assert_memory_equal(&g, &g2, sizeof g);
    /* The full search keeps the lowest BIC of every k tried. */
    assert_int_equal(mc_gmm_fit(&v, MC_GMM_MAX, 1, &g2), 0);
    for (int k = 0; k < MC_GMM_MAX; k++)
        assert_true(g2.bic <= g2.bic_by_k[k] && isfinite(g2.bic_by_k[k]));
    mc_hist_free(h);
}

/* More than 65536 distinct sizes: EM runs on 1/1024-octave cells. The
 * generating parameters (drawn with GSL 2.7's gsl_ran_gaussian) must still
 * be recovered. */
static void test_gmm_on_many_distinct_sizes_recovers_families(void **state)
{
    (void)state;
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 11);
    mc_hist *h;
    assert_int_equal(mc_hist_create(&h), 0);
    for (int i = 0; i < 150000; i++) {
        const int big = gsl_rng_uniform(r) < 0.4;
        const double l = big ? 28.0 + gsl_ran_gaussian(r, 0.6)
                             : 20.0 + gsl_ran_gaussian(r, 0.4);
        assert_int_equal(mc_hist_add(h, (uint64_t)llround(exp2(l)), 1), 0);
    }
    gsl_rng_free(r);
    assert_true(mc_hist_distinct(h) > 65536);
    mc_hview v;
    assert_int_equal(mc_hist_sorted(h, &v), 0);
    mc_gmm g;
    assert_int_equal(mc_gmm_fit(&v, 3, 1, &g), 0);
    assert_int_equal(g.ncomp, 2);
    assert_true(fabs(g.mu[0] - 20.0) < 0.02 && fabs(g.mu[1] - 28.0) < 0.02);
    assert_true(fabs(g.weight[0] - 0.6) < 0.01);
    assert_true(fabs(g.sigma[0] - 0.4) < 0.02 && fabs(g.sigma[1] - 0.6) < 0.02);
    mc_hist_free(h);
}

static void test_gmm_without_positive_sizes_is_enodata(void **state)
{
    (void)state;
    const uint64_t s[] = {0}, c[] = {4};
    const mc_hview v = {s, c, 1};
    mc_gmm g;
    assert_int_equal(mc_gmm_fit(&v, 3, 1, &g), MC_ENODATA);
    assert_int_equal(g.ncomp, 0);
    assert_int_equal(g.excluded_zero, 4);
    const uint64_t s1[] = {4096}, c1[] = {10};
    const mc_hview one = {s1, c1, 1};
    /* One distinct size: one component at it, sigma at the floor. */
    assert_int_equal(mc_gmm_fit(&one, 8, 1, &g), 0);
    assert_int_equal(g.ncomp, 1);
    assert_true(g.mu[0] == 12.0 && g.sigma[0] == 0.05);
    mc__alloc_fail_after(0);
    assert_int_equal(mc_gmm_fit(&one, 8, 1, &g), MC_ENOMEM);
    mc__alloc_fail_after(-1);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_topk_orders_by_count_then_size),
        cmocka_unit_test(test_peaks_find_two_modes_with_basins_and_prominence),
        cmocka_unit_test(test_peaks_give_size_zero_its_own_bin),
        cmocka_unit_test(test_peaks_reject_bad_arguments),
        cmocka_unit_test(test_gmm_recovers_two_lognormal_families),
        cmocka_unit_test(test_gmm_on_many_distinct_sizes_recovers_families),
        cmocka_unit_test(test_gmm_without_positive_sizes_is_enodata),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
