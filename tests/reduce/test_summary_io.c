/* test_summary_io.c - the HDF5 summary writer and reader: round trip, safety
 * and layout checks read back with the plain HDF5 C API. */
#include <setjmp.h> /* cmocka needs these before cmocka.h */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>

#include <cmocka.h>

#include <stdio.h>  /* snprintf */
#include <stdlib.h> /* calloc, mkdtemp */
#include <string.h> /* strdup, strcmp */
#include <unistd.h> /* unlink, rmdir */

#include <hdf5.h> /* the reference reader of the layout */

#include <msgcensus/hist.h>
#include <msgcensus/modes.h>
#include <msgcensus/stats.h>
#include <msgcensus/summary.h>

#include "summary_internal.h" /* mc__pop_group_name */

static char tmpdir[64];
static char path[128];

static int setup(void **state)
{
    (void)state;
    snprintf(tmpdir, sizeof tmpdir, "/tmp/mc-sumio-XXXXXX");
    if (!mkdtemp(tmpdir))
        return -1;
    snprintf(path, sizeof path, "%s/s.h5", tmpdir);
    return 0;
}

static int teardown(void **state)
{
    (void)state;
    unlink(path);
    rmdir(tmpdir);
    return 0;
}

/* A population from sizes/counts with the statistics of the library. */
static void make_pop(mc_summary_pop *p, const char *name, const uint64_t *s,
                     const uint64_t *c, size_t k)
{
    p->name = strdup(name);
    uint64_t *ss = calloc(k ? k : 1, sizeof *ss),
             *cc = calloc(k ? k : 1, sizeof *cc);
    if (k) {
        memcpy(ss, s, k * sizeof *ss);
        memcpy(cc, c, k * sizeof *cc);
    }
    p->hist.sizes = ss;
    p->hist.counts = cc;
    p->hist.k = k;
    if (k == 0)
        return;
    assert_int_equal(mc_stats_compute(&p->hist, &p->stats), 0);
    assert_int_equal(mc_fitness_compute(&p->hist, &p->stats, &p->fitness), 0);
    p->top = calloc(4, sizeof *p->top);
    p->ntop = mc_topk(&p->hist, 4, p->top);
    p->peaks = calloc(4, sizeof *p->peaks);
    const int np = mc_peaks(&p->hist, 4, 0.01, p->peaks, 4);
    assert_true(np >= 0);
    p->npeaks = (size_t)np;
    assert_int_equal(mc_gmm_fit(&p->hist, 3, 1, &p->gmm), 0);
}

static mc_summary *make_summary(void)
{
    mc_summary *s = calloc(1, sizeof *s);
    mc_summary_meta *m = &s->meta;
    m->format_name = strdup(MC_SUMMARY_FORMAT_NAME);
    m->version_major = MC_SUMMARY_VERSION_MAJOR;
    m->version_minor = MC_SUMMARY_VERSION_MINOR;
    m->tool_version = strdup("0.1.0");
    m->created = strdup("2026-01-01T00:00:00Z");
    m->campaign_path = strdup("/scratch/halo3d/run-7");
    m->run_label = strdup("deck-a weak scaling");
    m->host = strdup("node-001");
    m->shared_note = strdup("");
    m->app_ranks = 2;
    m->reducer_ranks = 3;
    m->files = 2;
    m->records_read = 1000;
    m->records_rejected = 16;
    m->bytes_read = 123456789;
    m->elapsed_s = 1.25;
    s->nsources = 2;
    s->sources = calloc(2, sizeof *s->sources);
    for (int i = 0; i < 2; i++) {
        char b[32];
        snprintf(b, sizeof b, "rank-%06d.mct", i);
        s->sources[i].path = strdup(b);
        s->sources[i].app_rank = i;
        s->sources[i].bytes = 1000u + (uint64_t)i;
        s->sources[i].records = 500u - 16u * (uint64_t)i;
        s->sources[i].blocks = 8;
        s->sources[i].skipped_blocks = (uint64_t)i;
        s->sources[i].skipped_records = 16u * (uint64_t)i;
        s->sources[i].checksum = 0x0123456789abcdefull + (uint64_t)i;
        s->sources[i].status = strdup(i ? "skipped: 1 block(s)" : "ok");
    }
    static const uint64_t sz[] = {0, 8, 4096, 65536, 1u << 20};
    static const uint64_t ct[] = {3, 400, 500, 80, 17};
    s->pops = calloc(3, sizeof *s->pops);
    make_pop(&s->pops[0], "all", sz, ct, 5);
    make_pop(&s->pops[1], "op/MPI_Isend", sz + 1, ct + 1, 3);
    make_pop(&s->pops[2], "onesided", NULL, NULL, 0);
    s->npops = 3;
    s->nranks = 2;
    s->ranks = calloc(2, sizeof *s->ranks);
    s->ranks[0] = (mc_summary_rank){0, 10, 100, 11, 110, 12, 120, 13, 130};
    s->ranks[1] = (mc_summary_rank){1, 20, 200, 21, 210, 22, 220, 23, 230};
    s->nedges = 3;
    s->edges = calloc(3, sizeof *s->edges);
    s->edges[0] = (mc_summary_edge){0, 1, 5, 50};
    s->edges[1] = (mc_summary_edge){1, 0, 6, 60};
    s->edges[2] = (mc_summary_edge){1, 1, 7, 70};
    return s;
}

static void test_summary_round_trip_keeps_every_field(void **state)
{
    (void)state;
    mc_summary *s = make_summary();
    mc_errinfo err;
    mc_errinfo_clear(&err);
    assert_int_equal(mc_summary_write(path, s, &err), 0);
    mc_summary *r = NULL;
    assert_int_equal(mc_summary_read(path, &r, &err), 0);
    assert_string_equal(r->meta.format_name, MC_SUMMARY_FORMAT_NAME);
    assert_string_equal(r->meta.run_label, "deck-a weak scaling");
    assert_string_equal(r->meta.campaign_path, "/scratch/halo3d/run-7");
    assert_int_equal(r->meta.reducer_ranks, 3);
    assert_int_equal(r->meta.records_read, 1000);
    assert_int_equal(r->meta.records_rejected, 16);
    assert_int_equal(r->meta.bytes_read, 123456789);
    assert_true(r->meta.elapsed_s == 1.25);
    assert_int_equal(r->nsources, 2);
    assert_string_equal(r->sources[1].path, "rank-000001.mct");
    assert_string_equal(r->sources[1].status, "skipped: 1 block(s)");
    assert_int_equal(r->sources[1].checksum, 0x0123456789abcdf0ull);
    assert_int_equal(r->sources[1].skipped_records, 16);
    assert_int_equal(r->npops, 3);
    for (size_t i = 0; i < 3; i++) {
        const mc_summary_pop *a = &s->pops[i], *b = &r->pops[i];
        assert_string_equal(a->name, b->name); /* creation order kept */
        assert_int_equal(a->hist.k, b->hist.k);
        for (size_t j = 0; j < a->hist.k; j++) {
            assert_int_equal(a->hist.sizes[j], b->hist.sizes[j]);
            assert_int_equal(a->hist.counts[j], b->hist.counts[j]);
        }
        assert_int_equal(a->stats.count, b->stats.count);
        assert_int_equal(a->stats.total_bytes, b->stats.total_bytes);
        assert_int_equal(a->stats.min, b->stats.min);
        assert_int_equal(a->stats.max, b->stats.max);
        assert_int_equal(a->stats.mode, b->stats.mode);
        assert_int_equal(a->stats.mode_ties, b->stats.mode_ties);
        assert_true(a->stats.mean == b->stats.mean);
        assert_true(a->stats.trimean == b->stats.trimean);
        assert_true(a->stats.stddev == b->stats.stddev);
        for (int q = 0; q < MC_NQUANTILES; q++) {
            assert_true(a->stats.quantiles[q] == b->stats.quantiles[q]);
            assert_true(a->stats.byte_quantiles[q] ==
                        b->stats.byte_quantiles[q]);
        }
        for (int c = 0; c < MC_NCENTERS; c++) {
            assert_true(a->fitness.fit[c].mad == b->fitness.fit[c].mad);
            assert_true(a->fitness.fit[c].rel_mad == b->fitness.fit[c].rel_mad);
            assert_int_equal(a->fitness.fit[c].rank, b->fitness.fit[c].rank);
            assert_int_equal(a->fitness.fit[c].defined,
                             b->fitness.fit[c].defined);
        }
        assert_int_equal(a->fitness.best, b->fitness.best);
        assert_int_equal(a->ntop, b->ntop);
        for (size_t j = 0; j < a->ntop; j++)
            assert_memory_equal(&a->top[j], &b->top[j], sizeof a->top[j]);
        assert_int_equal(a->npeaks, b->npeaks);
        for (size_t j = 0; j < a->npeaks; j++)
            assert_memory_equal(&a->peaks[j], &b->peaks[j], sizeof a->peaks[j]);
        assert_int_equal(a->gmm.ncomp, b->gmm.ncomp);
        for (int j = 0; j < a->gmm.ncomp; j++) {
            assert_true(a->gmm.mu[j] == b->gmm.mu[j]);
            assert_true(a->gmm.weight[j] == b->gmm.weight[j]);
        }
        assert_true(a->gmm.bic == b->gmm.bic);
    }
    assert_int_equal(r->nranks, 2);
    assert_memory_equal(r->ranks, s->ranks, 2 * sizeof *s->ranks);
    assert_int_equal(r->nedges, 3);
    assert_memory_equal(r->edges, s->edges, 3 * sizeof *s->edges);
    assert_non_null(mc_summary_find_pop(r, "op/MPI_Isend"));
    assert_null(mc_summary_find_pop(r, "op/MPI_Irecv"));
    mc_summary_free(r);
    mc_summary_free(s);
}

/* Reference: the HDF5 C library itself reads the layout of
 * docs/summary-format.md (group names, datasets, deflate filter). */
static void test_summary_layout_read_by_plain_hdf5(void **state)
{
    (void)state;
    mc_summary *s = make_summary();
    assert_int_equal(mc_summary_write(path, s, NULL), 0);
    const hid_t f = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
    assert_true(f >= 0);
    const hid_t d =
        H5Dopen2(f, "/populations/op:MPI_Isend/hist_counts", H5P_DEFAULT);
    assert_true(d >= 0);
    uint64_t c[3] = {0, 0, 0};
    assert_true(
        H5Dread(d, H5T_NATIVE_UINT64, H5S_ALL, H5S_ALL, H5P_DEFAULT, c) >= 0);
    assert_int_equal(c[0], 400);
    assert_int_equal(c[2], 80);
    const hid_t dcpl = H5Dget_create_plist(d);
    assert_int_equal(H5Pget_layout(dcpl), H5D_CHUNKED);
    int deflate = 0;
    for (int i = 0; i < H5Pget_nfilters(dcpl); i++) {
        unsigned flags = 0;
        size_t n = 0;
        deflate |= H5Pget_filter2(dcpl, (unsigned)i, &flags, &n, NULL, 0, NULL,
                                  NULL) == H5Z_FILTER_DEFLATE;
    }
    assert_true(deflate);
    H5Pclose(dcpl);
    H5Dclose(d);
    const hid_t m = H5Dopen2(f, "/matrix/dst", H5P_DEFAULT);
    int32_t dst[3];
    assert_true(
        H5Dread(m, H5T_NATIVE_INT32, H5S_ALL, H5S_ALL, H5P_DEFAULT, dst) >= 0);
    assert_int_equal(dst[0], 1);
    assert_int_equal(dst[1], 0);
    H5Dclose(m);
    H5Fclose(f);
    mc_summary_free(s);
}

static void test_summary_write_refuses_existing_file(void **state)
{
    (void)state;
    FILE *fp = fopen(path, "w");
    assert_non_null(fp);
    fputs("keep me\n", fp);
    fclose(fp);
    mc_summary *s = make_summary();
    mc_errinfo err;
    mc_errinfo_clear(&err);
    assert_int_equal(mc_summary_write(path, s, &err), MC_EEXIST);
    assert_string_equal(err.path, path);
    fp = fopen(path, "r");
    char line[16] = "";
    assert_non_null(fgets(line, sizeof line, fp));
    fclose(fp);
    assert_string_equal(line, "keep me\n");
    mc_summary_free(s);
}

static void test_summary_read_rejects_foreign_hdf5(void **state)
{
    (void)state;
    const hid_t f = H5Fcreate(path, H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
    assert_true(f >= 0);
    H5Fclose(f);
    mc_summary *r = NULL;
    mc_errinfo err;
    mc_errinfo_clear(&err);
    assert_int_equal(mc_summary_read(path, &r, &err), MC_ESUMMARY);
    assert_null(r);
}

static void test_summary_read_rejects_text_file(void **state)
{
    (void)state;
    FILE *fp = fopen(path, "w");
    fputs("not hdf5\n", fp);
    fclose(fp);
    mc_summary *r = NULL;
    assert_int_equal(mc_summary_read(path, &r, NULL), MC_ESUMMARY);
    unlink(path);
    assert_int_equal(mc_summary_read(path, &r, NULL), MC_EOPEN);
}

static void test_population_group_name_replaces_slash(void **state)
{
    (void)state;
    char b[64];
    assert_int_equal(mc__pop_group_name("op/MPI_Sendrecv/send", b, sizeof b),
                     0);
    assert_string_equal(b, "op:MPI_Sendrecv:send");
    assert_int_equal(mc__pop_group_name("comm/42", b, sizeof b), 0);
    assert_string_equal(b, "comm:42");
    assert_int_equal(mc__pop_group_name("bad name", b, sizeof b), -1);
    assert_int_equal(mc__pop_group_name("", b, sizeof b), -1);
    assert_int_equal(mc__pop_group_name(".hidden", b, sizeof b), -1);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test_setup_teardown(
            test_summary_round_trip_keeps_every_field, setup, teardown),
        cmocka_unit_test_setup_teardown(test_summary_layout_read_by_plain_hdf5,
                                        setup, teardown),
        cmocka_unit_test_setup_teardown(
            test_summary_write_refuses_existing_file, setup, teardown),
        cmocka_unit_test_setup_teardown(test_summary_read_rejects_foreign_hdf5,
                                        setup, teardown),
        cmocka_unit_test_setup_teardown(test_summary_read_rejects_text_file,
                                        setup, teardown),
        cmocka_unit_test(test_population_group_name_replaces_slash),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
