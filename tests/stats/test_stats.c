/* test_stats.c - statistics and MAD against GSL and worked examples. */
#include <setjmp.h> /* cmocka needs jmp_buf */
#include <stdarg.h> /* cmocka needs va_list */
#include <stddef.h>
#include <cmocka.h>

#include <math.h> /* isfinite, fabs */

#include <gsl/gsl_sort.h>              /* gsl_sort */
#include <gsl/gsl_statistics_double.h> /* quantiles, mad0 */

#include <msgcensus/error.h>
#include <msgcensus/hist.h>
#include <msgcensus/stats.h>

#include "stats/stats_util.h"

static void assert_close(double got, double want, double rel)
{
    const double tol = rel * fmax(1.0, fabs(want));
    if (!(fabs(got - want) <= tol))
        fail_msg("got %.17g, want %.17g", got, want);
}

/* A random histogram with a random number of distinct sizes and counts,
 * its view (owned by *h) and the expanded raw data, sorted. */
typedef struct sample {
    mc_hist *h;
    mc_hview v;
    double *raw;
    size_t n;
} sample;

static sample random_sample(uint64_t seed)
{
    uint64_t st = seed;
    sample s;
    assert_int_equal(mc_hist_create(&s.h), 0);
    const size_t k = 1 + (size_t)tu_below(&st, seed % 3 == 0 ? 8 : 300);
    const uint64_t span = seed % 2 ? 100 : (UINT64_C(1) << 24);
    for (size_t i = 0; i < k; i++)
        assert_int_equal(mc_hist_add(s.h, tu_below(&st, span),
                                     1 + tu_below(&st, seed % 4 ? 20 : 3)),
                         0);
    assert_int_equal(mc_hist_sorted(s.h, &s.v), 0);
    s.n = (size_t)mc_hist_total(s.h);
    s.raw = malloc(s.n * sizeof *s.raw);
    size_t j = 0;
    for (size_t i = 0; i < s.v.k; i++)
        for (uint64_t c = 0; c < s.v.counts[i]; c++)
            s.raw[j++] = (double)s.v.sizes[i];
    return s;
}

static void sample_free(sample *s)
{
    mc_hist_free(s->h);
    free(s->raw);
}

static mc_hview view_of(const uint64_t *sizes, const uint64_t *counts, size_t k)
{
    mc_hview v = {sizes, counts, k};
    return v;
}

static void test_median_and_quantiles_match_gsl(void **state)
{
    (void)state;
    for (uint64_t seed = 1; seed <= 60; seed++) {
        sample s = random_sample(seed);
        mc_stats st;
        assert_int_equal(mc_stats_compute(&s.v, &st), 0);
        /* Reference: GSL 2.7 gsl_stats_median_from_sorted_data and
         * gsl_stats_quantile_from_sorted_data (Hyndman & Fan rule 7). */
        assert_close(st.median,
                     gsl_stats_median_from_sorted_data(s.raw, 1, s.n), 1e-15);
        for (int q = 0; q < MC_NQUANTILES; q++) {
            const double want = gsl_stats_quantile_from_sorted_data(
                s.raw, 1, s.n, mc_quantile_levels[q]);
            assert_close(st.quantiles[q], want, 1e-12);
            double got;
            assert_int_equal(mc_quantile(&s.v, mc_quantile_levels[q], &got), 0);
            assert_close(got, want, 1e-12);
        }
        for (int i = 0; i <= 20; i++) {
            const double p = i / 20.0;
            double got;
            assert_int_equal(mc_quantile(&s.v, p, &got), 0);
            /* GSL 2.7 gsl_stats_quantile_from_sorted_data */
            assert_close(got,
                         gsl_stats_quantile_from_sorted_data(s.raw, 1, s.n, p),
                         1e-12);
        }
        /* Reference: GSL 2.7 gsl_stats_mean, gsl_stats_sd_m with the
         * population divisor recovered from the n-1 one. */
        assert_close(st.mean, gsl_stats_mean(s.raw, 1, s.n), 1e-13);
        if (s.n > 1) {
            const double sd1 = gsl_stats_sd(s.raw, 1, s.n);
            assert_close(st.stddev, sd1 * sqrt((double)(s.n - 1) / (double)s.n),
                         1e-9);
        }
        sample_free(&s);
    }
}

static void test_mad_about_median_matches_gsl_mad0(void **state)
{
    (void)state;
    for (uint64_t seed = 1; seed <= 60; seed++) {
        sample s = random_sample(seed);
        mc_stats st;
        assert_int_equal(mc_stats_compute(&s.v, &st), 0);
        double mad;
        assert_int_equal(mc_mad(&s.v, st.median, &mad), 0);
        double *work = malloc(s.n * sizeof *work);
        /* Reference: GSL 2.7 gsl_stats_mad0 (unscaled MAD about the median). */
        assert_close(mad, gsl_stats_mad0(s.raw, 1, s.n, work), 1e-15);
        free(work);
        sample_free(&s);
    }
}

static void test_mad_walk_equals_brute_force_for_many_centers(void **state)
{
    (void)state;
    int parity_seen[2] = {0, 0};
    for (uint64_t seed = 1; seed <= 40; seed++) {
        sample s = random_sample(seed);
        parity_seen[s.n % 2] = 1;
        double *dev = malloc(s.n * sizeof *dev);
        uint64_t st = seed * 1000;
        const double lo = (double)s.v.sizes[0],
                     hi = (double)s.v.sizes[s.v.k - 1];
        for (int t = 0; t < 40; t++) {
            double c;
            if (t < 10) /* data values */
                c = (double)s.v.sizes[tu_below(&st, s.v.k)];
            else if (t < 30) /* anywhere in the range, usually not data */
                c = lo +
                    (hi - lo) * (double)tu_below(&st, 1u << 20) / 1048576.0 +
                    0.25;
            else if (t < 35) /* below the range */
                c = lo - 1.0 - (double)tu_below(&st, 1000);
            else /* above the range */
                c = hi + 0.5 + (double)tu_below(&st, 1000);
            for (size_t i = 0; i < s.n; i++)
                dev[i] = fabs(s.raw[i] - c);
            const double want = tu_median(dev, s.n); /* brute force */
            double got;
            assert_int_equal(mc_mad(&s.v, c, &got), 0);
            assert_close(got, want, 1e-12);
        }
        free(dev);
        sample_free(&s);
    }
    assert_true(parity_seen[0] && parity_seen[1]); /* even and odd totals */
}

static void test_mad_of_textbook_example_is_one(void **state)
{
    (void)state;
    /* From memory: the standard encyclopedia example of the MAD,
     * {1, 1, 2, 2, 4, 6, 9}, median 2, absolute deviations
     * {1, 1, 0, 0, 2, 4, 7}, MAD 1. */
    const uint64_t s[] = {1, 2, 4, 6, 9}, c[] = {2, 2, 1, 1, 1};
    const mc_hview v = view_of(s, c, 5);
    mc_stats st;
    assert_int_equal(mc_stats_compute(&v, &st), 0);
    assert_true(st.median == 2.0);
    double mad;
    assert_int_equal(mc_mad(&v, st.median, &mad), 0);
    assert_true(mad == 1.0);
}

static void test_trimean_of_hinge_worked_example(void **state)
{
    (void)state;
    /* Published course example on box-plot hinges: 25 31 45 52 63 87 95 has
     * lower hinge 38 and upper hinge 75; the trimean follows as
     * (38 + 2*52 + 75) / 4 = 54.25 (Tukey 1977 definition). */
    const uint64_t s[] = {25, 31, 45, 52, 63, 87, 95},
                   c[] = {1, 1, 1, 1, 1, 1, 1};
    const mc_hview v = view_of(s, c, 7);
    mc_stats st;
    assert_int_equal(mc_stats_compute(&v, &st), 0);
    assert_true(st.hinge_lo == 38.0);
    assert_true(st.hinge_hi == 75.0);
    assert_true(st.median == 52.0);
    assert_true(st.trimean == 54.25);
}

static void test_hinges_of_even_count_split_in_halves(void **state)
{
    (void)state;
    /* Tukey 1977: for n even each half has n/2 values. 1..8: halves 1..4 and
     * 5..8, hinges 2.5 and 6.5, median 4.5, trimean 4.5. */
    const uint64_t s[] = {1, 2, 3, 4, 5, 6, 7, 8},
                   c[] = {1, 1, 1, 1, 1, 1, 1, 1};
    const mc_hview v = view_of(s, c, 8);
    mc_stats st;
    assert_int_equal(mc_stats_compute(&v, &st), 0);
    assert_true(st.hinge_lo == 2.5);
    assert_true(st.hinge_hi == 6.5);
    assert_true(st.trimean == 4.5);
}

static void assert_all_finite(const mc_stats *s)
{
    assert_true(isfinite(s->mean) && isfinite(s->median));
    assert_true(isfinite(s->harmonic) && isfinite(s->geometric));
    assert_true(isfinite(s->quadratic) && isfinite(s->trimean));
    assert_true(isfinite(s->hinge_lo) && isfinite(s->hinge_hi));
    assert_true(isfinite(s->stddev) && isfinite(s->byte_median));
    for (int q = 0; q < MC_NQUANTILES; q++)
        assert_true(isfinite(s->quantiles[q]) &&
                    isfinite(s->byte_quantiles[q]));
}

static void test_empty_population_is_enodata_and_zeroed(void **state)
{
    (void)state;
    const mc_hview v = view_of(NULL, NULL, 0);
    mc_stats st;
    memset(&st, 0x5a, sizeof st);
    assert_int_equal(mc_stats_compute(&v, &st), MC_ENODATA);
    mc_stats zero;
    memset(&zero, 0, sizeof zero);
    assert_memory_equal(&st, &zero, sizeof st);
    double d;
    uint64_t u;
    assert_int_equal(mc_quantile(&v, 0.5, &d), MC_ENODATA);
    assert_int_equal(mc_byte_quantile(&v, 0.5, &u), MC_ENODATA);
    assert_int_equal(mc_mad(&v, 1.0, &d), MC_ENODATA);
    double a, b;
    assert_int_equal(mc_fraction_at_or_below(&v, 10, &a, &b), MC_ENODATA);
    mc_fitness f;
    assert_int_equal(mc_fitness_compute(&v, &st, &f), MC_ENODATA);
}

static void test_only_zero_sizes_leave_means_undefined_without_nan(void **state)
{
    (void)state;
    const uint64_t s[] = {0}, c[] = {12};
    const mc_hview v = view_of(s, c, 1);
    mc_stats st;
    assert_int_equal(mc_stats_compute(&v, &st), 0);
    assert_all_finite(&st);
    assert_int_equal(st.positive_count, 0);
    assert_int_equal(st.zero_count, 12);
    assert_true(st.harmonic == 0.0 && st.geometric == 0.0);
    assert_int_equal(st.total_bytes, 0);
    uint64_t u;
    assert_int_equal(mc_byte_quantile(&v, 0.5, &u), MC_ENODATA);
    mc_fitness f;
    assert_int_equal(mc_fitness_compute(&v, &st, &f), 0);
    assert_false(f.fit[MC_CENTER_HARMONIC].defined);
    assert_false(f.fit[MC_CENTER_GEOMETRIC].defined);
    assert_int_equal(f.fit[MC_CENTER_HARMONIC].rank, 0);
    for (int i = 0; i < MC_NCENTERS; i++) {
        assert_true(isfinite(f.fit[i].value) && isfinite(f.fit[i].mad));
        assert_true(isfinite(f.fit[i].rel_mad));
    }
    assert_true(f.mad_ratio_mean == 1.0); /* 0/0 defined as 1 (stats.h) */
    double a, b;
    assert_int_equal(mc_fraction_at_or_below(&v, 0, &a, &b), 0);
    assert_true(a == 1.0 && b == 0.0);
}

static void test_zeros_are_excluded_from_harmonic_and_geometric(void **state)
{
    (void)state;
    /* By definition: harmonic of {1, 4} = 2 / (1 + 1/4) = 1.6; geometric
     * = sqrt(4) = 2; the zeros only lower positive_count. */
    const uint64_t s[] = {0, 1, 4}, c[] = {3, 1, 1};
    const mc_hview v = view_of(s, c, 3);
    mc_stats st;
    assert_int_equal(mc_stats_compute(&v, &st), 0);
    assert_int_equal(st.positive_count, 2);
    assert_close(st.harmonic, 1.6, 1e-15);
    assert_close(st.geometric, 2.0, 1e-15);
    assert_all_finite(&st);
}

static void test_total_bytes_overflow_is_erange(void **state)
{
    (void)state;
    const uint64_t s[] = {UINT64_C(1) << 40}, c[] = {UINT64_C(1) << 30};
    const mc_hview v = view_of(s, c, 1);
    mc_stats st;
    assert_int_equal(mc_stats_compute(&v, &st), MC_ERANGE);
    assert_int_equal(st.total_bytes, UINT64_MAX); /* saturated, documented */
    assert_true(st.mean == 1099511627776.0); /* still exact from 128-bit sum */
    assert_all_finite(&st);
}

/* Brute-force byte quantile from the definition in stats.h. */
static uint64_t brute_byte_quantile(const double *raw, size_t n, double p)
{
    long double total = 0, cum = 0;
    for (size_t i = 0; i < n; i++)
        total += raw[i];
    for (size_t i = 0; i < n; i++) {
        cum += raw[i];
        if (cum >= (long double)p * total &&
            (i + 1 == n || raw[i + 1] != raw[i]))
            return (uint64_t)raw[i];
    }
    return (uint64_t)raw[n - 1];
}

static void test_byte_quantiles_follow_their_definition(void **state)
{
    (void)state;
    for (uint64_t seed = 1; seed <= 30; seed++) {
        sample s = random_sample(seed);
        mc_stats st;
        assert_int_equal(mc_stats_compute(&s.v, &st), 0);
        if (st.total_bytes == 0) {
            sample_free(&s);
            continue;
        }
        for (int q = 0; q < MC_NQUANTILES; q++) {
            const uint64_t want =
                brute_byte_quantile(s.raw, s.n, mc_quantile_levels[q]);
            assert_true(st.byte_quantiles[q] == (double)want);
            uint64_t got;
            assert_int_equal(
                mc_byte_quantile(&s.v, mc_quantile_levels[q], &got), 0);
            assert_int_equal(got, want);
        }
        assert_true(st.byte_median ==
                    (double)brute_byte_quantile(s.raw, s.n, 0.5));
        sample_free(&s);
    }
}

static void test_fraction_at_or_below_counts_messages_and_bytes(void **state)
{
    (void)state;
    const uint64_t s[] = {0, 10, 100, 1000}, c[] = {1, 4, 3, 2};
    const mc_hview v = view_of(s, c, 4);
    double m, b;
    /* By hand: 8 of 10 messages and 340 of 2340 bytes are <= 100. */
    assert_int_equal(mc_fraction_at_or_below(&v, 100, &m, &b), 0);
    assert_close(m, 0.8, 1e-15);
    assert_close(b, 340.0 / 2340.0, 1e-15);
    assert_int_equal(mc_fraction_at_or_below(&v, 99, &m, &b), 0);
    assert_close(m, 0.5, 1e-15);
    assert_int_equal(mc_fraction_at_or_below(&v, UINT64_MAX, &m, &b), 0);
    assert_true(m == 1.0 && b == 1.0);
}

static void test_modes_all_lists_every_tied_size(void **state)
{
    (void)state;
    const uint64_t s[] = {3, 8, 9, 20, 64}, c[] = {5, 7, 2, 7, 7};
    const mc_hview v = view_of(s, c, 5);
    uint64_t m[2];
    assert_int_equal(mc_modes_all(&v, m, 2), 3);
    assert_int_equal(m[0], 8);
    assert_int_equal(m[1], 20);
    mc_stats st;
    assert_int_equal(mc_stats_compute(&v, &st), 0);
    assert_int_equal(st.mode, 8); /* smallest of the tied */
    assert_int_equal(st.mode_count, 7);
    assert_int_equal(st.mode_ties, 3);
}

static void test_invalid_levels_and_centers_are_einval(void **state)
{
    (void)state;
    const uint64_t s[] = {3}, c[] = {1};
    const mc_hview v = view_of(s, c, 1);
    double d;
    uint64_t u;
    assert_int_equal(mc_quantile(&v, 1.5, &d), MC_EINVAL);
    assert_int_equal(mc_quantile(&v, NAN, &d), MC_EINVAL);
    assert_int_equal(mc_byte_quantile(&v, -0.1, &u), MC_EINVAL);
    assert_int_equal(mc_mad(&v, NAN, &d), MC_EINVAL);
}

/* Common practice in message-size studies (no single source): many small
 * control messages and fewer large bulk messages. The mean lands in the
 * empty gap between the modes, and the MAD about it is far larger than the
 * MAD about the median. */
static void test_bimodal_mix_mean_falls_in_gap_and_fits_badly(void **state)
{
    (void)state;
    mc_hist *h;
    assert_int_equal(mc_hist_create(&h), 0);
    uint64_t st = 11;
    for (int i = 0; i < 9000; i++)
        assert_int_equal(mc_hist_add(h, 8 + tu_below(&st, 57), 1), 0);
    for (int i = 0; i < 1000; i++)
        assert_int_equal(mc_hist_add(h, (1u << 20) + tu_below(&st, 4096), 1),
                         0);
    mc_hview v;
    assert_int_equal(mc_hist_sorted(h, &v), 0);
    mc_stats s;
    assert_int_equal(mc_stats_compute(&v, &s), 0);
    assert_true(s.mean > 64.0 && s.mean < (double)(1u << 20));
    double below, above;
    double dummy;
    assert_int_equal(
        mc_fraction_at_or_below(&v, (uint64_t)(s.mean / 2), &below, &dummy), 0);
    assert_int_equal(
        mc_fraction_at_or_below(&v, (uint64_t)(s.mean * 2), &above, &dummy), 0);
    assert_true(above - below < 0.01); /* almost no message near the mean */
    mc_fitness f;
    assert_int_equal(mc_fitness_compute(&v, &s, &f), 0);
    assert_true(f.fit[MC_CENTER_MEAN].mad >
                100.0 * f.fit[MC_CENTER_MEDIAN].mad);
    assert_true(f.mad_ratio_mean > 100.0);
    assert_int_not_equal(f.best, MC_CENTER_MEAN);
    assert_int_equal(f.fit[f.best].rank, 1);
    mc_hist_free(h);
}

static void test_fitness_ranks_share_ties_and_name_centers(void **state)
{
    (void)state;
    /* All messages one size: every center equals it, every MAD is 0, all
     * share rank 1, best is the first in report order, ratio 0/0 = 1. */
    const uint64_t s[] = {512}, c[] = {9};
    const mc_hview v = view_of(s, c, 1);
    mc_stats st;
    assert_int_equal(mc_stats_compute(&v, &st), 0);
    mc_fitness f;
    assert_int_equal(mc_fitness_compute(&v, &st, &f), 0);
    for (int i = 0; i < MC_NCENTERS; i++) {
        assert_int_equal(f.fit[i].rank, 1);
        assert_true(f.fit[i].mad == 0.0 && f.fit[i].rel_mad == 0.0);
        assert_close(f.fit[i].value, 512.0, 1e-15);
    }
    assert_int_equal(f.best, MC_CENTER_MEAN);
    assert_true(f.mad_ratio_mean == 1.0);
    assert_string_equal(mc_center_name(MC_CENTER_TRIMEAN), "trimean");
    assert_string_equal(mc_center_name(MC_CENTER_MEAN), "mean");
    /* A zero center with positive MAD gives rel_mad -1 (stats.h). */
    const uint64_t s2[] = {0, 10}, c2[] = {3, 1};
    const mc_hview v2 = view_of(s2, c2, 2);
    assert_int_equal(mc_stats_compute(&v2, &st), 0);
    assert_int_equal(mc_fitness_compute(&v2, &st, &f), 0);
    assert_true(f.fit[MC_CENTER_MODE].value == 0.0);
    assert_true(f.fit[MC_CENTER_MODE].mad == 0.0); /* 3 of 4 at 0 */
    assert_true(f.fit[MC_CENTER_MODE].rel_mad == 0.0);
    assert_int_equal(f.best, MC_CENTER_MEDIAN); /* median 0 ties mode, first */
    assert_true(f.mad_ratio_mean == -1.0);      /* MAD(mean) > 0 = MAD(best) */
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_median_and_quantiles_match_gsl),
        cmocka_unit_test(test_mad_about_median_matches_gsl_mad0),
        cmocka_unit_test(test_mad_walk_equals_brute_force_for_many_centers),
        cmocka_unit_test(test_mad_of_textbook_example_is_one),
        cmocka_unit_test(test_trimean_of_hinge_worked_example),
        cmocka_unit_test(test_hinges_of_even_count_split_in_halves),
        cmocka_unit_test(test_empty_population_is_enodata_and_zeroed),
        cmocka_unit_test(
            test_only_zero_sizes_leave_means_undefined_without_nan),
        cmocka_unit_test(test_zeros_are_excluded_from_harmonic_and_geometric),
        cmocka_unit_test(test_total_bytes_overflow_is_erange),
        cmocka_unit_test(test_byte_quantiles_follow_their_definition),
        cmocka_unit_test(test_fraction_at_or_below_counts_messages_and_bytes),
        cmocka_unit_test(test_modes_all_lists_every_tied_size),
        cmocka_unit_test(test_invalid_levels_and_centers_are_einval),
        cmocka_unit_test(test_bimodal_mix_mean_falls_in_gap_and_fits_badly),
        cmocka_unit_test(test_fitness_ranks_share_ties_and_name_centers),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
