/* test_plan.c - the reducer's partition plan: units cover every block of
 * every file exactly once, large files are split, and the plan depends
 * only on the campaign and the number of ranks. */
#include <setjmp.h> /* cmocka needs these before cmocka.h */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>

#include <cmocka.h>

#include <stdio.h>  /* snprintf */
#include <stdlib.h> /* mkdtemp */
#include <string.h> /* memset */
#include <unistd.h> /* unlink, rmdir */

#include <msgcensus/trace.h>

#include "reduce_internal.h"

#define NFILES 4
static char dir[64];
/* Very uneven files: 1, 3, 10 and 40 blocks of 32 records. */
static const unsigned nblocks_of[NFILES] = {1, 3, 10, 40};

static int setup(void **state)
{
    (void)state;
    snprintf(dir, sizeof dir, "/tmp/mc-plan-XXXXXX");
    if (!mkdtemp(dir))
        return -1;
    for (int f = 0; f < NFILES; f++) {
        char path[128];
        snprintf(path, sizeof path, "%s/rank-%06d.mct", dir, f);
        mc_trace_header h;
        mc_trace_header_init(&h, f, NFILES);
        mc_writer_opts o;
        mc_writer_opts_init(&o);
        o.block_records = 32;
        o.write_footer =
            f % 2; /* footer index for some, block walk for others */
        mc_trace_writer *w = NULL;
        if (mc_trace_writer_open(path, &h, &o, &w, NULL) != 0)
            return -1;
        for (unsigned i = 0; i < nblocks_of[f] * 32u; i++) {
            mc_record r;
            memset(&r, 0, sizeof r);
            r.op = MC_OP_Isend;
            r.dir = MC_DIR_SEND;
            r.bytes = 8u << (i % 5);
            r.peer = (f + 1) % NFILES;
            r.tag = 1;
            if (mc_trace_write(w, &r, 1, NULL) != 0)
                return -1;
        }
        if (mc_trace_writer_close(w, NULL) != 0)
            return -1;
    }
    return 0;
}

static int teardown(void **state)
{
    (void)state;
    for (int f = 0; f < NFILES; f++) {
        char path[128];
        snprintf(path, sizeof path, "%s/rank-%06d.mct", dir, f);
        unlink(path);
    }
    rmdir(dir);
    return 0;
}

static void test_plan_units_cover_every_block_once(void **state)
{
    (void)state;
    for (int np = 1; np <= 7; np++) {
        mc__plan p;
        assert_int_equal(mc__plan_build(dir, np, 0, &p, NULL), 0);
        assert_int_equal(p.nfiles, NFILES);
        size_t u = 0;
        for (size_t f = 0; f < p.nfiles; f++) {
            uint64_t bytes = 0, next_block = 0;
            int last = 0;
            for (; u < p.nunits && p.units[u].file == f; u++) {
                const mc__unit *x = &p.units[u];
                assert_false(last); /* nothing after the open-ended unit */
                assert_int_equal(x->first_block, next_block);
                assert_true(x->owner >= 0 && x->owner < np);
                bytes += x->bytes;
                if (x->nblocks == MC__TO_END)
                    last = 1;
                else
                    next_block += x->nblocks;
            }
            assert_true(last);
            assert_int_equal(bytes,
                             p.files[f].size); /* bytes partition the file */
        }
        assert_int_equal(u, p.nunits);
        mc__plan_free(&p);
    }
}

static void test_plan_splits_files_above_a_fair_share(void **state)
{
    (void)state;
    mc__plan p;
    assert_int_equal(mc__plan_build(dir, 4, 0, &p, NULL), 0);
    size_t units_of_largest = 0;
    for (size_t i = 0; i < p.nunits; i++)
        units_of_largest += p.units[i].file == 3;
    /* 40 of 54 blocks in one file with 4 ranks: about 3 shares. */
    assert_true(units_of_largest >= 2);
    uint64_t load[4] = {0, 0, 0, 0}, max = 0;
    for (size_t i = 0; i < p.nunits; i++)
        load[p.units[i].owner] += p.units[i].bytes;
    for (int r = 0; r < 4; r++)
        max = load[r] > max ? load[r] : max;
    /* LPT keeps the largest load within one unit of the fair share. */
    uint64_t biggest = 0;
    for (size_t i = 0; i < p.nunits; i++)
        biggest = p.units[i].bytes > biggest ? p.units[i].bytes : biggest;
    assert_true(max <= p.total_bytes / 4 + biggest);
    mc__plan_free(&p);
}

static void test_plan_is_deterministic(void **state)
{
    (void)state;
    for (int np = 1; np <= 7; np++) {
        mc__plan a, b;
        assert_int_equal(mc__plan_build(dir, np, 0, &a, NULL), 0);
        assert_int_equal(mc__plan_build(dir, np, 0, &b, NULL), 0);
        assert_int_equal(a.nunits, b.nunits);
        assert_memory_equal(a.units, b.units, a.nunits * sizeof *a.units);
        mc__plan_free(&a);
        mc__plan_free(&b);
    }
}

static void test_plan_refuses_duplicate_rank(void **state)
{
    (void)state;
    char path[128];
    snprintf(path, sizeof path, "%s/rank-000009.mct", dir);
    mc_trace_header h;
    mc_trace_header_init(&h, 2, NFILES); /* claims rank 2 again */
    mc_trace_writer *w = NULL;
    assert_int_equal(mc_trace_writer_open(path, &h, NULL, &w, NULL), 0);
    assert_int_equal(mc_trace_writer_close(w, NULL), 0);
    mc__plan p;
    mc_errinfo err;
    mc_errinfo_clear(&err);
    assert_int_equal(mc__plan_build(dir, 2, 0, &p, &err), MC_EDUPRANK);
    unlink(path);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_plan_units_cover_every_block_once),
        cmocka_unit_test(test_plan_splits_files_above_a_fair_share),
        cmocka_unit_test(test_plan_is_deterministic),
        cmocka_unit_test(test_plan_refuses_duplicate_rank),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
