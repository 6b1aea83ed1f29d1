/* test_synth.c - unit tests of the synthetic campaign library API. */
#include <setjmp.h> /* cmocka needs it */
#include <stdarg.h> /* cmocka needs it */
#include <stddef.h> /* cmocka needs it */
#include <stdint.h>
#include <cmocka.h>

#include <dirent.h>   /* opendir, readdir */
#include <stdio.h>    /* snprintf, fopen */
#include <stdlib.h>   /* malloc, free, mkdtemp */
#include <string.h>   /* memcmp */
#include <sys/stat.h> /* stat */
#include <unistd.h>   /* unlink, rmdir */

#include <msgcensus/ops.h>
#include <msgcensus/synth.h>
#include <msgcensus/trace.h>

/* Every record of @rank; *n receives the count. Caller frees. */
static mc_record *generate(const mc_synth_params *p, int32_t rank, size_t *n)
{
    mc_synth_gen *g = NULL;
    assert_int_equal(mc_synth_gen_create(p, rank, &g, NULL), 0);
    size_t cap = 4096, len = 0;
    mc_record *all = malloc(cap * sizeof *all);
    assert_non_null(all);
    for (;;) {
        if (cap - len < 2048) {
            cap *= 2;
            all = realloc(all, cap * sizeof *all);
            assert_non_null(all);
        }
        const size_t k = mc_synth_gen_fill(g, all + len, cap - len);
        if (k == 0)
            break;
        len += k;
    }
    assert_true(mc_synth_gen_done(g));
    mc_synth_gen_free(g);
    *n = len;
    return all;
}

/* The rank-grid rule, written out again as a plain search over all
 * triples (docs/synth.md): smallest box surface, then smallest dims[0]. */
static void factor_reference(int32_t P, int32_t d[3])
{
    long best = -1;
    for (int32_t a = 1; a <= P; a++)
        for (int32_t b = 1; b <= a; b++)
            for (int32_t c = 1; c <= b; c++) {
                if ((long)a * b * c != P)
                    continue;
                const long s = (long)a * b + (long)b * c + (long)a * c;
                if (best < 0 || s < best || (s == best && a < d[0])) {
                    best = s;
                    d[0] = a;
                    d[1] = b;
                    d[2] = c;
                }
            }
}

static void test_factor_is_closest_to_a_cube(void **state)
{
    (void)state;
    int32_t d[3], r[3];
    /* By hand: 8 = 2x2x2, 12 = 3x2x2, 24 = 4x3x2, 7 = 7x1x1, 1 = 1x1x1
     * (the most cubic boxes; common practice for rank grids). */
    const int32_t cases[][4] = {{8, 2, 2, 2}, {12, 3, 2, 2}, {24, 4, 3, 2},
                                {7, 7, 1, 1}, {1, 1, 1, 1},  {64, 4, 4, 4}};
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        mc_synth_factor(cases[i][0], d);
        assert_int_equal(d[0], cases[i][1]);
        assert_int_equal(d[1], cases[i][2]);
        assert_int_equal(d[2], cases[i][3]);
    }
    for (int32_t P = 1; P <= 120; P++) {
        mc_synth_factor(P, d);
        factor_reference(P, r);
        assert_int_equal(d[0] * d[1] * d[2], P);
        assert_memory_equal(d, r, sizeof d);
    }
}

static void test_rank_records_matches_generator(void **state)
{
    (void)state;
    mc_synth_params p;
    for (int variant = 0; variant < 4; variant++) {
        mc_synth_params_init(&p);
        p.ranks = 6;
        p.steps = 57;
        p.seed = 11u + (uint64_t)variant;
        p.deck = mc_synth_deck_at((size_t)variant % 2);
        p.uneven = variant >= 2;
        p.periodic = variant == 3;
        if (variant == 1) {
            p.scaling = MC_SYNTH_STRONG;
            p.global[0] = 31;
            p.global[1] = 17;
            p.global[2] = 9;
        } else {
            p.local[0] = p.local[1] = p.local[2] = 6;
        }
        assert_int_equal(mc_synth_check(&p, NULL), 0);
        for (int32_t r = 0; r < p.ranks; r++) {
            size_t n;
            mc_record *recs = generate(&p, r, &n);
            assert_int_equal(n, mc_synth_rank_records(&p, r));
            for (size_t i = 0; i < n; i++) {
                assert_int_equal(mc_record_check(&recs[i], NULL), 0);
                if (i)
                    assert_true(recs[i].t_start_ns >= recs[i - 1].t_end_ns);
            }
            free(recs);
        }
    }
}

static void test_fill_refuses_buffer_smaller_than_a_step(void **state)
{
    (void)state;
    mc_synth_params p;
    mc_synth_params_init(&p);
    mc_synth_gen *g = NULL;
    assert_int_equal(mc_synth_gen_create(&p, 0, &g, NULL), 0);
    mc_record buf[64];
    const size_t need = mc_synth_gen_max_step(g);
    assert_true(need > 4 && need <= 64);
    assert_int_equal(mc_synth_gen_fill(g, buf, need - 1), 0);
    assert_true(mc_synth_gen_fill(g, buf, need) > 0);
    mc_synth_gen_free(g);
    mc_synth_gen_free(NULL);
}

static void test_same_seed_same_records_other_seed_other_times(void **state)
{
    (void)state;
    mc_synth_params p;
    mc_synth_params_init(&p);
    p.steps = 30;
    size_t n1, n2, n3;
    mc_record *a = generate(&p, 3, &n1);
    mc_record *b = generate(&p, 3, &n2);
    p.seed = 2;
    mc_record *c = generate(&p, 3, &n3);
    assert_int_equal(n1, n2);
    assert_memory_equal(a, b, n1 * sizeof *a);
    assert_int_equal(n1, n3);
    int times_differ = 0;
    for (size_t i = 0; i < n1; i++) {
        assert_int_equal(a[i].bytes, c[i].bytes); /* geometry unchanged */
        assert_int_equal(a[i].peer, c[i].peer);
        times_differ |= a[i].t_end_ns != c[i].t_end_ns;
    }
    assert_true(times_differ);
    free(a);
    free(b);
    free(c);
}

static void test_check_rejects_subdomain_thinner_than_halo(void **state)
{
    (void)state;
    mc_synth_params p;
    mc_synth_params_init(&p);
    p.deck = mc_synth_deck_find("deck-b"); /* halo 2 */
    assert_non_null(p.deck);
    p.local[2] = 1;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_synth_check(&p, &e), MC_EINVAL);
    assert_non_null(strstr(e.detail, "halo"));
    p.local[2] = 2;
    assert_int_equal(mc_synth_check(&p, NULL), 0);
    p.ranks = 0;
    assert_int_equal(mc_synth_check(&p, NULL), MC_ERANGE);
    assert_null(mc_synth_deck_find("deck-z"));
}

static void test_uneven_makes_file_sizes_very_different(void **state)
{
    (void)state;
    mc_synth_params p;
    mc_synth_params_init(&p);
    p.ranks = 16;
    p.uneven = 1;
    uint64_t lo = UINT64_MAX, hi = 0;
    for (int32_t r = 0; r < p.ranks; r++) {
        const uint64_t n = mc_synth_rank_records(&p, r);
        lo = n < lo ? n : lo;
        hi = n > hi ? n : hi;
    }
    assert_true(hi >= 8 * lo);
    /* Without --uneven only the boundary (fewer neighbours) varies. */
    p.uneven = 0;
    lo = UINT64_MAX;
    hi = 0;
    for (int32_t r = 0; r < p.ranks; r++) {
        const uint64_t n = mc_synth_rank_records(&p, r);
        lo = n < lo ? n : lo;
        hi = n > hi ? n : hi;
    }
    assert_true(hi < 3 * lo);
}

static void test_steps_for_size_brackets_the_target(void **state)
{
    (void)state;
    mc_synth_params p;
    mc_synth_params_init(&p);
    p.ranks = 5;
    const uint64_t target = 3u << 20;
    assert_int_equal(mc_synth_steps_for_size(&p, target, 0, 1, &p.steps), 0);
    assert_true(mc_synth_campaign_bytes(&p, 0, 1) <= target);
    p.steps++;
    assert_true(mc_synth_campaign_bytes(&p, 0, 1) > target);
}

/* Remove the files of @dir and @dir itself. */
static void remove_tree(const char *dir)
{
    DIR *d = opendir(dir);
    assert_non_null(d);
    const struct dirent *e;
    char path[1024];
    while ((e = readdir(d)) != NULL) {
        if (e->d_name[0] == '.')
            continue;
        snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
        assert_int_equal(unlink(path), 0);
    }
    closedir(d);
    assert_int_equal(rmdir(dir), 0);
}

static void test_written_files_verify_and_have_predicted_size(void **state)
{
    (void)state;
    char tmpl[] = "/tmp/test_synth.XXXXXX";
    char *dir = mkdtemp(tmpl);
    assert_non_null(dir);
    mc_synth_params p;
    mc_synth_params_init(&p);
    p.ranks = 3;
    p.steps = 40;
    p.deck = mc_synth_deck_find("deck-b");
    for (int footer = 0; footer < 2; footer++) {
        mc_synth_write_opts o;
        mc_writer_opts_init(&o.writer);
        o.writer.block_records = 100;
        o.writer.write_footer = footer;
        o.threads = 2;
        mc_synth_result res;
        mc_errinfo e;
        mc_errinfo_clear(&e);
        assert_int_equal(
            mc_synth_write_campaign(&p, dir, &o, 1, NULL, NULL, &res, &e), 0);
        assert_int_equal(res.files, 3);
        uint64_t total = 0;
        for (int32_t r = 0; r < p.ranks; r++) {
            char path[1024];
            assert_int_equal(mc_synth_rank_path(dir, r, path, sizeof path), 0);
            struct stat st;
            assert_int_equal(stat(path, &st), 0);
            const uint64_t recs = mc_synth_rank_records(&p, r);
            assert_int_equal((uint64_t)st.st_size,
                             mc_synth_file_bytes(recs, 100, footer));
            mc_trace_check chk;
            assert_int_equal(mc_trace_verify(path, &chk, &e), 0);
            assert_int_equal(chk.records, recs);
            assert_int_equal(chk.has_footer, footer);
            assert_int_equal(chk.header.app_rank, r);
            assert_int_equal(chk.header.app_size, 3);
            total += (uint64_t)st.st_size;
        }
        assert_int_equal(total, res.bytes);
        assert_int_equal(total, mc_synth_campaign_bytes(&p, 100, footer));
    }
    /* Without replace, the now non-empty directory is refused. */
    assert_int_equal(
        mc_synth_write_campaign(&p, dir, NULL, 0, NULL, NULL, NULL, NULL),
        MC_EEXIST);
    remove_tree(dir);
}

static void test_header_host_and_times_follow_the_seed(void **state)
{
    (void)state;
    mc_synth_params p;
    mc_synth_params_init(&p);
    mc_trace_header h0, h5, again;
    mc_synth_header(&p, 0, &h0);
    mc_synth_header(&p, 5, &h5);
    mc_synth_header(&p, 5, &again);
    assert_string_equal(h0.host, "synth-node-000");
    assert_string_equal(h5.host, "synth-node-001");
    assert_int_equal(h5.clock_res_ps, 1000);
    assert_memory_equal(&h5, &again, sizeof h5);
    /* 2026-01-01T00:00:00Z = 1767225600 s (date -u -d 2026-01-01 +%s). */
    assert_true(h0.epoch_unix_ns >= 1767225600ull * 1000000000ull);
    assert_true(h0.epoch_unix_ns < 1798761600ull * 1000000000ull);
    assert_true((uint64_t)h0.created_unix_ns > h0.epoch_unix_ns);
    p.seed = 99;
    mc_synth_header(&p, 0, &again);
    assert_true(again.epoch_unix_ns != h0.epoch_unix_ns);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_factor_is_closest_to_a_cube),
        cmocka_unit_test(test_rank_records_matches_generator),
        cmocka_unit_test(test_fill_refuses_buffer_smaller_than_a_step),
        cmocka_unit_test(test_same_seed_same_records_other_seed_other_times),
        cmocka_unit_test(test_check_rejects_subdomain_thinner_than_halo),
        cmocka_unit_test(test_uneven_makes_file_sizes_very_different),
        cmocka_unit_test(test_steps_for_size_brackets_the_target),
        cmocka_unit_test(test_written_files_verify_and_have_predicted_size),
        cmocka_unit_test(test_header_host_and_times_follow_the_seed),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
