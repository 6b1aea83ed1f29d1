/* test_study.c - compare tables, figures and the shareable copy on summaries
 * built in memory. */
#include <setjmp.h> /* cmocka needs jmp_buf */
#include <stdarg.h> /* cmocka needs va_list */
#include <stddef.h>
#include <cmocka.h>

#include <stdio.h>  /* open_memstream is POSIX 2008 */
#include <stdlib.h> /* free */
#include <string.h> /* strstr, strlen */

#include <msgcensus/distance.h>
#include <msgcensus/stats.h>
#include <msgcensus/summary.h>

#include "study.h"

/* A population over static arrays with statistics from the library. */
static void make_pop(mc_summary_pop *p, const char *name, const uint64_t *s,
                     const uint64_t *c, size_t k)
{
    memset(p, 0, sizeof *p);
    p->name = (char *)(uintptr_t)name;
    p->hist.sizes = s;
    p->hist.counts = c;
    p->hist.k = k;
    if (k == 0)
        return;
    assert_int_equal(mc_stats_compute(&p->hist, &p->stats), 0);
    assert_int_equal(mc_fitness_compute(&p->hist, &p->stats, &p->fitness), 0);
}

/* Three populations; @variant moves the halo sizes so runs differ. */
static const uint64_t halo_s[2][5] = {{0, 8, 512, 4096, 65536},
                                      {0, 8, 1024, 8192, 65536}};
static const uint64_t halo_c[2][5] = {{2, 40, 300, 120, 6},
                                      {1, 10, 90, 400, 30}};
static const uint64_t coll_s[] = {8, 16}, coll_c[] = {50, 5};
static const uint64_t comm_s[] = {64}, comm_c[] = {9};

typedef struct fixture {
    mc_summary s;
    mc_summary_pop pops[3];
    mc_summary_source src[2];
    mc_summary_rank ranks[2];
    mc_summary_edge edges[3];
} fixture;

static void make_run(fixture *f, int variant, const char *label, int64_t ranks)
{
    memset(f, 0, sizeof *f);
    mc_summary_meta *m = &f->s.meta;
    m->format_name = (char *)(uintptr_t)MC_SUMMARY_FORMAT_NAME;
    m->tool_version = (char *)(uintptr_t) "0.1.0";
    m->created = (char *)(uintptr_t) "2026-01-01T00:00:00Z";
    m->campaign_path = (char *)(uintptr_t) "/scratch/secret-project/run7";
    m->run_label = (char *)(uintptr_t)label;
    m->host = (char *)(uintptr_t) "node-hidden-017";
    m->shared_note = (char *)(uintptr_t) "";
    m->app_ranks = ranks;
    m->version_major = 1;
    make_pop(&f->pops[0], "p2p", halo_s[variant], halo_c[variant], 5);
    make_pop(&f->pops[1], "coll", coll_s, coll_c, 2);
    make_pop(&f->pops[2], "comm/7", comm_s, comm_c, 1);
    f->s.pops = f->pops;
    f->s.npops = 3;
    f->src[0].path =
        (char *)(uintptr_t) "/scratch/secret-project/run7/rank-0.mct";
    f->src[0].status = (char *)(uintptr_t) "ok";
    f->src[0].checksum = 0x1234;
    f->src[1] = f->src[0];
    f->src[1].app_rank = 1;
    f->s.sources = f->src;
    f->s.nsources = 2;
    f->ranks[0].rank = 0;
    f->ranks[1].rank = 1;
    f->s.ranks = f->ranks;
    f->s.nranks = 2;
    const mc_summary_edge e[3] = {
        {0, 1, 10, 100}, {1, 0, 10, 100}, {1, 1, 1, 8}};
    memcpy(f->edges, e, sizeof e);
    f->s.edges = f->edges;
    f->s.nedges = 3;
}

static char *compare_to_string(const mc_summary *const *runs, size_t n,
                               const char *pop, mc_study_format fmt, int *rc)
{
    static const char *const files[] = {"a.h5", "b.h5", "c.h5", "d.h5",
                                        "e.h5", "f.h5", "g.h5"};
    char *text = NULL;
    size_t len = 0;
    FILE *out = open_memstream(&text, &len);
    assert_non_null(out);
    *rc = mc_study_compare(out, runs, files, n, pop, fmt, NULL);
    fclose(out);
    return text;
}

static size_t count_of(const char *hay, const char *needle)
{
    size_t n = 0;
    for (const char *p = strstr(hay, needle); p; p = strstr(p + 1, needle))
        n++;
    return n;
}

static void test_compare_text_fits_80_columns_with_many_runs(void **state)
{
    (void)state;
    fixture f[7];
    const mc_summary *runs[7];
    for (int i = 0; i < 7; i++) {
        make_run(&f[i], i % 2, i % 2 ? "deck-b" : "deck-a", 8 << i);
        runs[i] = &f[i].s;
    }
    int rc;
    char *text = compare_to_string(runs, 7, NULL, MC_STUDY_TEXT, &rc);
    assert_int_equal(rc, 0);
    size_t col = 0, widest = 0;
    for (const char *p = text; *p; p++) {
        col = *p == '\n' ? 0 : col + 1;
        if (col > widest)
            widest = col;
    }
    assert_true(widest <= 80);
    /* 7 runs: the run columns wrap into a block of 5 and one of 2, and all
     * 21 pairs of runs get a distance line per population. */
    assert_non_null(strstr(text, "R7"));
    assert_int_equal(count_of(text, "R1 vs R2"), 3);
    assert_int_equal(count_of(text, "R6 vs R7"), 3);
    assert_non_null(strstr(text, "deck-b, 16 ranks"));
    free(text);
}

static void test_compare_flags_best_center_that_differs(void **state)
{
    (void)state;
    fixture a, b;
    make_run(&a, 0, "deck-a", 8);
    make_run(&b, 1, "deck-b", 8);
    const mc_summary *runs[2] = {&a.s, &b.s};
    int rc;
    char *text = compare_to_string(runs, 2, "p2p", MC_STUDY_TEXT, &rc);
    assert_int_equal(rc, 0);
    const int differs = a.pops[0].fitness.best != b.pops[0].fitness.best;
    assert_int_equal(strstr(text, "best center differs") != NULL, differs);
    free(text);
    /* The same run twice never differs, and its distances are 0. */
    const mc_summary *same[2] = {&a.s, &a.s};
    text = compare_to_string(same, 2, "p2p", MC_STUDY_TEXT, &rc);
    assert_null(strstr(text, "best center differs"));
    assert_non_null(strstr(text, "0.0000   0.0000"));
    free(text);
}

static void test_compare_json_distances_match_library(void **state)
{
    (void)state;
    fixture a, b;
    make_run(&a, 0, "deck-a", 8);
    make_run(&b, 1, "deck-b", 16);
    const mc_summary *runs[2] = {&a.s, &b.s};
    int rc;
    char *text = compare_to_string(runs, 2, "p2p", MC_STUDY_JSON, &rc);
    assert_int_equal(rc, 0);
    mc_distance d;
    assert_int_equal(mc_distance_compute(&a.pops[0].hist, &b.pops[0].hist, &d),
                     0);
    char want[128];
    snprintf(want, sizeof want, "\"w1_log2\": %.17g, \"ks\": %.17g", d.w1_log2,
             d.ks);
    assert_non_null(strstr(text, want));
    assert_non_null(strstr(text, "\"label\": \"deck-b\", \"app_ranks\": 16"));
    free(text);
}

static void test_compare_marks_population_missing_in_a_run(void **state)
{
    (void)state;
    fixture a, b;
    make_run(&a, 0, "deck-a", 8);
    make_run(&b, 0, "deck-a", 16);
    b.s.npops = 2; /* no comm/7 in run 2 */
    const mc_summary *runs[2] = {&a.s, &b.s};
    int rc;
    char *text = compare_to_string(runs, 2, "comm/7", MC_STUDY_CSV, &rc);
    assert_int_equal(rc, 0);
    /* Run 2's row has empty statistics and there is no distance row. */
    assert_non_null(
        strstr(text, "run,comm/7,R2,,b.h5,deck-a,16,0,,,,,,,,,,,,,\n"));
    assert_null(strstr(text, "distance,comm/7"));
    free(text);
    text = compare_to_string(runs, 2, "nosuch", MC_STUDY_TEXT, &rc);
    assert_int_equal(rc, MC_ENODATA);
    free(text);
}

static void test_fig_sizes_has_one_marker_per_defined_center(void **state)
{
    (void)state;
    fixture f;
    make_run(&f, 0, "deck-a", 8);
    mc_sbuf b;
    mc_sbuf_init(&b);
    assert_int_equal(mc_study_fig_sizes(&f.s, &f.pops[0], &b), 0);
    int defined = 0;
    for (int c = 0; c < MC_NCENTERS; c++)
        defined += f.pops[0].fitness.fit[c].defined;
    assert_int_equal(count_of(b.data, "class=\"marker\""), (size_t)defined);
    assert_int_equal(count_of(b.data, "<svg"), 1);
    assert_non_null(strstr(b.data, "</svg>"));
    assert_non_null(strstr(b.data, "deck-a, 8 ranks"));
    assert_non_null(strstr(b.data, ">0 B<")); /* the zero slot of the axis */
    /* One spike per distinct size (all five are pixels apart). */
    const char *sp = strstr(b.data, "class=\"spikes\"");
    assert_non_null(sp);
    assert_int_equal(
        count_of(sp, "<line") - count_of(strstr(sp, "</g>"), "<line"), 5);
    mc_sbuf_free(&b);
}

static void test_fig_sizes_sums_sizes_within_one_pixel(void **state)
{
    (void)state;
    fixture f;
    make_run(&f, 0, "deck-a", 8);
    /* 20000 distinct sizes from 1000 B to 21 KB: about 4.4 octaves over a
     * 560-pixel axis, so many sizes share a pixel column. */
    enum { K = 20000 };
    uint64_t *s = malloc(K * sizeof *s), *c = malloc(K * sizeof *c);
    assert_true(s && c);
    for (size_t i = 0; i < K; i++) {
        s[i] = 1000 + i;
        c[i] = 1 + i % 3;
    }
    mc_summary_pop p;
    make_pop(&p, "wide", s, c, K);
    mc_sbuf b;
    mc_sbuf_init(&b);
    assert_int_equal(mc_study_fig_sizes(&f.s, &p, &b), 0);
    assert_non_null(strstr(b.data, "sizes within one pixel summed"));
    const char *sp = strstr(b.data, "class=\"spikes\"");
    const size_t spikes =
        count_of(sp, "<line") - count_of(strstr(sp, "</g>"), "<line");
    assert_true(spikes > 100 && spikes <= 560);
    assert_true(b.len < 200000); /* far below one element per size */
    mc_sbuf_free(&b);
    free(s);
    free(c);
}

static void test_fig_sizes_of_empty_population_is_nodata(void **state)
{
    (void)state;
    fixture f;
    make_run(&f, 0, "deck-a", 8);
    mc_summary_pop empty;
    make_pop(&empty, "onesided", NULL, NULL, 0);
    mc_sbuf b;
    mc_sbuf_init(&b);
    assert_int_equal(mc_study_fig_sizes(&f.s, &empty, &b), MC_ENODATA);
    assert_int_equal(mc_study_fig_cdf(&f.s, &empty, &b), MC_ENODATA);
    assert_int_equal(b.len, 0);
    mc_sbuf_free(&b);
}

static void test_fig_mad_has_one_row_per_population(void **state)
{
    (void)state;
    fixture f;
    make_run(&f, 0, "deck-a", 8);
    mc_sbuf b;
    mc_sbuf_init(&b);
    assert_int_equal(mc_study_fig_mad(&f.s, 0, &b), 0);
    assert_int_equal(count_of(b.data, "class=\"row\""), 3);
    assert_int_equal(count_of(b.data, "class=\"best-ring\""), 3);
    mc_sbuf_free(&b);
}

static void test_fig_matrix_tiles_thousands_of_ranks(void **state)
{
    (void)state;
    fixture f;
    make_run(&f, 0, "deck-a", 5000);
    /* A ring of 5000 ranks: each sends to its right neighbour. */
    mc_summary_edge *e = calloc(5000, sizeof *e);
    assert_non_null(e);
    for (int i = 0; i < 5000; i++)
        e[i] = (mc_summary_edge){i, (i + 1) % 5000, 3, 3000};
    f.s.edges = e;
    f.s.nedges = 5000;
    mc_sbuf b;
    mc_sbuf_init(&b);
    assert_int_equal(mc_study_fig_matrix(&f.s, 0, 256, &b), 0);
    /* ceil(5000 / 256) = 20 ranks per tile, 250 x 250 tiles; the ring fills
     * the diagonal, the tile right of it where a tile's last rank sends to
     * the next tile, and the corner tile of 4999 -> 0. */
    assert_non_null(strstr(b.data, "tiles of 20 x 20 ranks"));
    const char *t = strstr(b.data, "class=\"tiles\"");
    const size_t rects =
        count_of(t, "<rect") - count_of(strstr(t, "</g>"), "<rect");
    assert_int_equal(rects, 250 + 249 + 1);
    mc_sbuf_free(&b);
    free(e);
}

static void test_share_drops_identifying_fields(void **state)
{
    (void)state;
    fixture f;
    make_run(&f, 0, "deck-a", 8);
    mc_share_opts o;
    mc_share_opts_init(&o);
    mc_summary *c = NULL;
    assert_int_equal(mc_study_share(&f.s, &o, &c, NULL), 0);
    assert_string_equal(c->meta.campaign_path, "");
    assert_string_equal(c->meta.host, "");
    assert_int_equal(c->meta.approximate, 1);
    assert_non_null(strstr(c->meta.shared_note, "log2 bins"));
    assert_int_equal(c->nsources, 0);
    assert_int_equal(c->nranks, 0);
    assert_int_equal(c->nedges, 0);
    assert_int_equal(c->npops, 2); /* comm/7 removed */
    for (size_t i = 0; i < c->npops; i++)
        assert_false(mc_share_is_comm_pop(c->pops[i].name));
    /* The p2p histogram lies on log2 bin representatives: 0, 11 (bin [8,15]),
     * 724, 5793 and 92682 (2^(b + 1/2) rounded), counts unchanged. */
    const uint64_t want[] = {0, 11, 724, 5793, 92682};
    assert_int_equal(c->pops[0].hist.k, 5);
    for (size_t i = 0; i < 5; i++) {
        assert_int_equal(c->pops[0].hist.sizes[i], want[i]);
        assert_int_equal(c->pops[0].hist.counts[i], halo_c[0][i]);
    }
    assert_int_equal(c->pops[0].stats.count, f.pops[0].stats.count);
    mc_study_share_free(c);
}

static void test_share_keeps_requested_tables_without_paths(void **state)
{
    (void)state;
    fixture f;
    make_run(&f, 0, "deck-a", 8);
    mc_share_opts o;
    mc_share_opts_init(&o);
    o.keep_ranks = o.keep_matrix = o.keep_comms = o.keep_sources = 1;
    o.label = "study-1";
    o.per_octave = 4;
    mc_summary *c = NULL;
    assert_int_equal(mc_study_share(&f.s, &o, &c, NULL), 0);
    assert_int_equal(c->nranks, 2);
    assert_int_equal(c->nedges, 3);
    assert_int_equal(c->npops, 3);
    assert_int_equal(c->nsources, 2);
    assert_string_equal(c->sources[0].path, "");
    assert_int_equal(c->sources[0].checksum, 0);
    assert_string_equal(c->meta.run_label, "study-1");
    assert_non_null(strstr(c->meta.shared_note, "log2/4 bins"));
    mc_study_share_free(c);
}

static void test_share_rounding_can_empty_a_population(void **state)
{
    (void)state;
    fixture f;
    make_run(&f, 0, "deck-a", 8);
    mc_share_opts o;
    mc_share_opts_init(&o);
    o.round_to = 100;
    mc_summary *c = NULL;
    assert_int_equal(mc_study_share(&f.s, &o, &c, NULL), 0);
    /* coll has 50 + 5 messages in bins {8} and {16}: 50 rounds up to 100,
     * 5 down to 0; p2p keeps 300 and 120 as 300 and 100. */
    assert_int_equal(c->npops, 2);
    assert_int_equal(c->pops[1].hist.k, 1);
    assert_int_equal(c->pops[1].hist.counts[0], 100);
    for (size_t i = 0; i < c->pops[0].hist.k; i++)
        assert_int_equal(c->pops[0].hist.counts[i] % 100, 0);
    assert_non_null(strstr(c->meta.shared_note, "multiple of 100"));
    mc_study_share_free(c);
    o.per_octave = 17;
    assert_int_equal(mc_study_share(&f.s, &o, &c, NULL), MC_EINVAL);
    assert_null(c);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_compare_text_fits_80_columns_with_many_runs),
        cmocka_unit_test(test_compare_flags_best_center_that_differs),
        cmocka_unit_test(test_compare_json_distances_match_library),
        cmocka_unit_test(test_compare_marks_population_missing_in_a_run),
        cmocka_unit_test(test_fig_sizes_has_one_marker_per_defined_center),
        cmocka_unit_test(test_fig_sizes_sums_sizes_within_one_pixel),
        cmocka_unit_test(test_fig_sizes_of_empty_population_is_nodata),
        cmocka_unit_test(test_fig_mad_has_one_row_per_population),
        cmocka_unit_test(test_fig_matrix_tiles_thousands_of_ranks),
        cmocka_unit_test(test_share_drops_identifying_fields),
        cmocka_unit_test(test_share_keeps_requested_tables_without_paths),
        cmocka_unit_test(test_share_rounding_can_empty_a_population),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
