/* test_ckpt_file.c - the checkpoint file of one unit: round trip, atomic
 * save, and rejection of damaged, truncated and stale files. */
#include <setjmp.h> /* cmocka needs it */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <dirent.h>   /* opendir, readdir */
#include <stdio.h>    /* fopen, snprintf */
#include <stdlib.h>   /* mkdtemp, malloc */
#include <string.h>   /* memcmp, strcmp */
#include <sys/stat.h> /* stat */
#include <unistd.h>   /* unlink, rmdir, truncate */

#include <xxhash.h> /* XXH64: Debian libxxhash, the reference for the trailer */

#include "checkpoint.h"

typedef struct fixture {
    char dir[64];
    char path[4200];
    mc__ckpt_key key;
    mc__acc acc;
    mc__unit_result res;
} fixture;

static const uint64_t SIZES[] = {0, 8, 64, 4096, 1u << 20, UINT64_MAX};
static const uint64_t COUNTS[] = {3, 1, 7, 2, 5, 1};
#define NSIZES (sizeof SIZES / sizeof SIZES[0])

/* A unit as mc__unit_reduce leaves it: two (op, dir) histograms, one per
 * communicator, one totals row, two matrix entries, three block sums. */
static int setup(void **state)
{
    fixture *f = calloc(1, sizeof *f);
    assert_non_null(f);
    snprintf(f->dir, sizeof f->dir, "/tmp/mc-ckpt-test-XXXXXX");
    assert_non_null(mkdtemp(f->dir));
    f->key = (mc__ckpt_key){"rank-000003.mct",
                            123456,
                            1700000000123456789,
                            4,
                            9,
                            65536,
                            4096,
                            3,
                            8,
                            MC__CKPT_F_PER_COMM};
    mc__acc_init(&f->acc);
    assert_int_equal(mc_hist_create(&f->acc.op[1 * MC__NDIRS + 1]), 0);
    assert_int_equal(
        mc_hist_add_sorted(f->acc.op[1 * MC__NDIRS + 1], SIZES, COUNTS, NSIZES),
        0);
    assert_int_equal(mc_hist_create(&f->acc.op[5 * MC__NDIRS]), 0);
    assert_int_equal(mc_hist_add(f->acc.op[5 * MC__NDIRS], 64, 11), 0);
    mc_hist *c = mc__histmap_get(&f->acc.comm, 77);
    assert_non_null(c);
    assert_int_equal(mc_hist_add(c, 8, 2), 0);
    f->acc.rows = calloc(1, sizeof *f->acc.rows);
    f->acc.edges = calloc(2, sizeof *f->acc.edges);
    assert_non_null(f->acc.rows);
    assert_non_null(f->acc.edges);
    f->acc.nrows = f->acc.caprows = 1;
    f->acc.rows[0].rank = 3;
    for (int j = 0; j < 8; j++)
        f->acc.rows[0].v[j] = 100u + (uint64_t)j;
    f->acc.nedges = f->acc.capedges = 2;
    f->acc.edges[0] = (mc__edge){3, 2, 10, 640};
    f->acc.edges[1] = (mc__edge){3, 4, 12, 1u << 30};
    f->res = (mc__unit_result){7,     19,           3, 1, 16, 0,
                               65536, MC_ECHECKSUM, 5, 0, 3,  NULL};
    f->res.sums = malloc(3 * sizeof *f->res.sums);
    assert_non_null(f->res.sums);
    f->res.sums[0] = 0x0123456789abcdefull;
    f->res.sums[1] = 0;
    f->res.sums[2] = UINT64_MAX;
    char name[64];
    mc__ckpt_file_name(&f->key, name, sizeof name);
    snprintf(f->path, sizeof f->path, "%s/%s", f->dir, name);
    *state = f;
    return 0;
}

static int teardown(void **state)
{
    fixture *f = *state;
    DIR *d = opendir(f->dir);
    const struct dirent *de;
    char p[4200];
    while (d && (de = readdir(d)) != NULL) {
        if (de->d_name[0] == '.' &&
            (!de->d_name[1] || (de->d_name[1] == '.' && !de->d_name[2])))
            continue;
        snprintf(p, sizeof p, "%s/%s", f->dir, de->d_name);
        unlink(p);
    }
    if (d)
        closedir(d);
    rmdir(f->dir);
    mc__acc_free(&f->acc);
    mc__unit_result_free(&f->res);
    free(f);
    return 0;
}

static size_t dir_entries(const char *dir)
{
    DIR *d = opendir(dir);
    size_t n = 0;
    const struct dirent *de;
    while (d && (de = readdir(d)) != NULL)
        n += strcmp(de->d_name, ".") != 0 && strcmp(de->d_name, "..") != 0;
    if (d)
        closedir(d);
    return n;
}

static unsigned char *slurp(const char *path, size_t *len)
{
    FILE *fp = fopen(path, "rb");
    assert_non_null(fp);
    fseek(fp, 0, SEEK_END);
    const long n = ftell(fp);
    fseek(fp, 0, SEEK_SET);
    unsigned char *b = malloc((size_t)n);
    assert_non_null(b);
    assert_int_equal(fread(b, 1, (size_t)n, fp), (size_t)n);
    fclose(fp);
    *len = (size_t)n;
    return b;
}

static void spit(const char *path, const unsigned char *b, size_t len)
{
    FILE *fp = fopen(path, "wb");
    assert_non_null(fp);
    assert_int_equal(fwrite(b, 1, len, fp), len);
    fclose(fp);
}

static void assert_same_hist(const mc_hist *a, const mc_hist *b)
{
    assert_non_null(a);
    assert_non_null(b);
    const size_t k = mc_hist_distinct(a);
    assert_int_equal(mc_hist_distinct(b), k);
    uint64_t *s1 = malloc((k + 1) * 8), *c1 = malloc((k + 1) * 8);
    uint64_t *s2 = malloc((k + 1) * 8), *c2 = malloc((k + 1) * 8);
    assert_true(s1 && c1 && s2 && c2);
    mc_hist_export(a, s1, c1);
    mc_hist_export(b, s2, c2);
    assert_memory_equal(s1, s2, k * 8);
    assert_memory_equal(c1, c2, k * 8);
    free(s1);
    free(c1);
    free(s2);
    free(c2);
}

static void test_file_name_is_keyed_by_the_unit_definition(void **state)
{
    fixture *f = *state;
    char a[64], b[64];
    mc__ckpt_file_name(&f->key, a, sizeof a);
    assert_int_equal(strlen(a), strlen("mcck-") + 16 + strlen(".ckpt"));
    assert_int_equal(strncmp(a, "mcck-", 5), 0);
    /* The fingerprint fields that are not the definition do not move the
     * name (a changed file is found and reported as stale)... */
    mc__ckpt_key k = f->key;
    k.file_size++;
    k.mtime_ns++;
    k.flags = 0;
    mc__ckpt_file_name(&k, b, sizeof b);
    assert_string_equal(a, b);
    /* ...the block range does. */
    k.first_block++;
    mc__ckpt_file_name(&k, b, sizeof b);
    assert_string_not_equal(a, b);
}

static void test_save_load_round_trip_keeps_every_field(void **state)
{
    fixture *f = *state;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc__ckpt_save(f->dir, &f->key, &f->acc, &f->res, &e), 0);
    mc__acc got;
    mc__acc_init(&got);
    mc__unit_result r;
    memset(&r, 0, sizeof r);
    r.unit = 42;
    assert_int_equal(mc__ckpt_load(f->dir, &f->key, &got, &r, &e), 0);
    assert_int_equal(r.unit, 42); /* the index in the caller's plan */
    assert_int_equal(r.records, f->res.records);
    assert_int_equal(r.blocks, f->res.blocks);
    assert_int_equal(r.skipped_blocks, f->res.skipped_blocks);
    assert_int_equal(r.skipped_records, f->res.skipped_records);
    assert_int_equal(r.invalid, f->res.invalid);
    assert_int_equal(r.bytes, f->res.bytes);
    assert_int_equal(r.damage_code, f->res.damage_code);
    assert_int_equal(r.damage_block, f->res.damage_block);
    assert_int_equal(r.tail_lost, f->res.tail_lost);
    assert_int_equal(r.nsums, 3);
    assert_memory_equal(r.sums, f->res.sums, 3 * 8);
    for (size_t k = 0; k < MC__NOPKEYS; k++) {
        assert_int_equal(got.op[k] != NULL, f->acc.op[k] != NULL);
        if (got.op[k])
            assert_same_hist(got.op[k], f->acc.op[k]);
    }
    assert_int_equal(got.comm.n, 1);
    assert_same_hist(mc__histmap_get(&got.comm, 77),
                     mc__histmap_get(&f->acc.comm, 77));
    assert_int_equal(got.nrows, 1);
    assert_int_equal(got.rows[0].rank, 3);
    assert_memory_equal(got.rows[0].v, f->acc.rows[0].v, sizeof got.rows[0].v);
    assert_int_equal(got.nedges, 2);
    for (size_t i = 0; i < 2; i++) {
        assert_int_equal(got.edges[i].src, f->acc.edges[i].src);
        assert_int_equal(got.edges[i].dst, f->acc.edges[i].dst);
        assert_int_equal(got.edges[i].msgs, f->acc.edges[i].msgs);
        assert_int_equal(got.edges[i].bytes, f->acc.edges[i].bytes);
    }
    mc__acc_free(&got);
    mc__unit_result_free(&r);
}

/* The trailer is XXH64 (seed 0) of every byte before it, little-endian:
 * checked with Debian's libxxhash directly. */
static void test_trailer_is_xxh64_of_the_file(void **state)
{
    fixture *f = *state;
    assert_int_equal(mc__ckpt_save(f->dir, &f->key, &f->acc, &f->res, NULL), 0);
    size_t len = 0;
    unsigned char *b = slurp(f->path, &len);
    /* The size the layout of docs/summary-format.md gives this unit:
     * header 80 + name 15; result 9 x 8 + 8 + 3 sums x 8; histograms 8 +
     * (16 + 6 x 16) + (16 + 16) + (16 + 16); rows 8 + 72; matrix 8 +
     * 2 x 24; trailer 8. */
    assert_int_equal(len, 95 + 104 + 8 + 112 + 32 + 32 + 80 + 56 + 8);
    assert_memory_equal(b, "MCCKUNIT", 8);
    uint64_t stored = 0;
    for (int i = 7; i >= 0; i--)
        stored = (stored << 8) | b[len - 8 + (size_t)i];
    assert_int_equal(stored, XXH64(b, len - 8, 0));
    free(b);
}

static void test_save_leaves_only_the_final_file(void **state)
{
    fixture *f = *state;
    assert_int_equal(mc__ckpt_save(f->dir, &f->key, &f->acc, &f->res, NULL), 0);
    assert_int_equal(mc__ckpt_save(f->dir, &f->key, &f->acc, &f->res, NULL), 0);
    assert_int_equal(dir_entries(f->dir), 1);
    struct stat sb;
    assert_int_equal(stat(f->path, &sb), 0);
}

static void test_save_into_missing_directory_fails_cleanly(void **state)
{
    fixture *f = *state;
    char dir[128];
    snprintf(dir, sizeof dir, "%s/absent", f->dir);
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc__ckpt_save(dir, &f->key, &f->acc, &f->res, &e),
                     MC_EOPEN);
    assert_int_equal(e.code, MC_EOPEN);
    assert_non_null(strstr(e.path, "absent/mcck-"));
    assert_int_equal(dir_entries(f->dir), 0);
}

/* Load the file as it is now: it must fail, with the code in the error
 * info, and hand out nothing. */
static void assert_load_rejects(const fixture *f)
{
    mc__acc got;
    mc__acc_init(&got);
    mc__unit_result r;
    memset(&r, 0, sizeof r);
    mc_errinfo e;
    mc_errinfo_clear(&e);
    const int rc = mc__ckpt_load(f->dir, &f->key, &got, &r, &e);
    assert_true(rc < 0);
    assert_int_equal(e.code, rc);
    assert_null(r.sums);
    for (size_t k = 0; k < MC__NOPKEYS; k++)
        assert_null(got.op[k]);
    assert_int_equal(got.comm.n, 0);
    assert_int_equal(got.nrows, 0);
    assert_int_equal(got.nedges, 0);
    mc__acc_free(&got);
}

static void test_load_rejects_every_flipped_byte(void **state)
{
    fixture *f = *state;
    assert_int_equal(mc__ckpt_save(f->dir, &f->key, &f->acc, &f->res, NULL), 0);
    size_t len = 0;
    unsigned char *good = slurp(f->path, &len);
    for (size_t at = 0; at < len; at++) {
        good[at] ^= 0x20;
        spit(f->path, good, len);
        good[at] ^= 0x20;
        assert_load_rejects(f);
    }
    free(good);
}

static void test_load_rejects_every_truncation(void **state)
{
    fixture *f = *state;
    assert_int_equal(mc__ckpt_save(f->dir, &f->key, &f->acc, &f->res, NULL), 0);
    size_t len = 0;
    unsigned char *good = slurp(f->path, &len);
    for (size_t n = 0; n < len; n++) {
        spit(f->path, good, n);
        assert_load_rejects(f);
    }
    free(good);
}

static void test_load_reports_a_changed_file_as_stale(void **state)
{
    fixture *f = *state;
    assert_int_equal(mc__ckpt_save(f->dir, &f->key, &f->acc, &f->res, NULL), 0);
    static const struct {
        int field;
        const char *detail;
    } cases[] = {{0, "modification time differs"},
                 {1, "file size differs"},
                 {2, "options (--per-comm, --skip-damaged) differs"},
                 {3, "block range differs"}};
    for (size_t c = 0; c < sizeof cases / sizeof cases[0]; c++) {
        mc__ckpt_key k = f->key;
        if (cases[c].field == 0)
            k.mtime_ns += 1;
        else if (cases[c].field == 1)
            k.file_size += 1;
        else if (cases[c].field == 2)
            k.flags = MC__CKPT_F_SKIP_DAMAGED;
        else
            k.bytes += 1; /* same name, other extent */
        mc__acc got;
        mc__acc_init(&got);
        mc__unit_result r;
        memset(&r, 0, sizeof r);
        mc_errinfo e;
        mc_errinfo_clear(&e);
        assert_int_equal(mc__ckpt_load(f->dir, &k, &got, &r, &e), MC_ESTALE);
        assert_string_equal(e.detail, cases[c].detail);
        mc__acc_free(&got);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test_setup_teardown(
            test_file_name_is_keyed_by_the_unit_definition, setup, teardown),
        cmocka_unit_test_setup_teardown(
            test_save_load_round_trip_keeps_every_field, setup, teardown),
        cmocka_unit_test_setup_teardown(test_trailer_is_xxh64_of_the_file,
                                        setup, teardown),
        cmocka_unit_test_setup_teardown(test_save_leaves_only_the_final_file,
                                        setup, teardown),
        cmocka_unit_test_setup_teardown(
            test_save_into_missing_directory_fails_cleanly, setup, teardown),
        cmocka_unit_test_setup_teardown(test_load_rejects_every_flipped_byte,
                                        setup, teardown),
        cmocka_unit_test_setup_teardown(test_load_rejects_every_truncation,
                                        setup, teardown),
        cmocka_unit_test_setup_teardown(
            test_load_reports_a_changed_file_as_stale, setup, teardown),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
