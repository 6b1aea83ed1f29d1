/* test_csv.c - unit tests of the CSV text form: exact round trip, comment
 * block, and errors with line and column. */
#include <setjmp.h> /* cmocka needs jmp_buf */
#include <stdarg.h> /* cmocka needs va_list */
#include <stddef.h> /* cmocka needs size_t */
#include <cmocka.h>

#include <stdint.h> /* INT32_MIN, UINT64_MAX */
#include <stdio.h>  /* fmemopen, open_memstream */
#include <stdlib.h> /* free */
#include <string.h> /* strlen, strstr */

#include <msgcensus/csv.h>
#include <msgcensus/ops.h>

/* Open a reader on an in-memory text; the FILE goes into *f. */
static int open_text(const char *text, FILE **f, mc_csv_reader **r,
                     mc_errinfo *e)
{
    *f = fmemopen((void *)(uintptr_t)text, strlen(text), "r");
    assert_non_null(*f);
    mc_errinfo_clear(e);
    return mc_csv_reader_open(*f, "in.csv", r, e);
}

#define HDR MC_CSV_HEADER_ROW "\n"

/* Expect the first record line of @body (after the header row) to fail
 * at @line, @column with @phrase in the detail. */
static void expect_error(const char *text, long long line, long long column,
                         const char *phrase)
{
    FILE *f;
    mc_csv_reader *r = NULL;
    mc_errinfo e;
    int rc = open_text(text, &f, &r, &e);
    if (rc == 0) {
        mc_record rec;
        while ((rc = mc_csv_read(r, &rec, &e)) == 1)
            ;
    }
    assert_int_equal(rc, MC_ECSV);
    assert_string_equal(e.path, "in.csv");
    assert_int_equal(e.line, line);
    assert_int_equal(e.column, column);
    if (!strstr(e.detail, phrase))
        fail_msg("detail '%s' lacks '%s'", e.detail, phrase);
    mc_csv_reader_free(r);
    fclose(f);
}

static void test_csv_roundtrip_is_exact(void **state)
{
    (void)state;
    const mc_record recs[] = {
        {UINT64_MAX, 0, UINT64_MAX, UINT32_MAX, UINT32_MAX, INT32_MAX,
         INT32_MIN, MC_OP_Isend, MC_DIR_SEND, 0x07, 0},
        {0, 5, 5, 0, 1, MC_PEER_NONE, MC_TAG_NONE, MC_OP_Barrier, MC_DIR_NONE,
         0, 0},
        {4096, 1000, 2500, 3, 64, 17, 99, MC_OP_Irecv, MC_DIR_RECV,
         MC_RF_POSTED_SIZE, 0},
        {8, 12, 13, 1, 2, 0, -1, MC_OP_Neighbor_alltoallw, MC_DIR_NONE,
         MC_RF_PER_PEER, 0},
    };
    const size_t n = sizeof recs / sizeof recs[0];
    mc_trace_header h;
    mc_trace_header_init(&h, 41, 128);
    snprintf(h.host, sizeof h.host, "cn 17%%x,y");
    h.created_unix_ns = -5;
    h.epoch_unix_ns = 1764633600123456789ull;
    h.clock_res_ps = 250;

    char *text = NULL;
    size_t tlen = 0;
    FILE *out = open_memstream(&text, &tlen);
    assert_non_null(out);
    assert_int_equal(mc_csv_write_preamble(out, &h), 0);
    for (size_t i = 0; i < n; i++) {
        char line[512];
        const int k = mc_csv_format_record(&recs[i], line, sizeof line, NULL);
        assert_true(k > 0 && (size_t)k < sizeof line);
        fputs(line, out);
    }
    fclose(out);

    FILE *f;
    mc_csv_reader *r;
    mc_errinfo e;
    assert_int_equal(open_text(text, &f, &r, &e), 0);
    const mc_csv_meta *m = mc_csv_reader_meta(r);
    assert_int_equal(m->present, 0x3f);
    assert_int_equal(m->header.app_rank, 41);
    assert_int_equal(m->header.app_size, 128);
    assert_string_equal(m->header.host, "cn 17%x,y");
    assert_true(m->header.created_unix_ns == -5);
    assert_true(m->header.epoch_unix_ns == 1764633600123456789ull);
    assert_int_equal(m->header.clock_res_ps, 250);
    for (size_t i = 0; i < n; i++) {
        mc_record got;
        assert_int_equal(mc_csv_read(r, &got, &e), 1);
        assert_memory_equal(&got, &recs[i], sizeof got);
    }
    mc_record got;
    assert_int_equal(mc_csv_read(r, &got, &e), 0);
    mc_csv_reader_free(r);
    fclose(f);
    free(text);
}

static void test_csv_line_format_is_documented_form(void **state)
{
    (void)state;
    const mc_record rec = {4096, 1000,        2500,        3, 64, 17,
                           -1,   MC_OP_Isend, MC_DIR_SEND, 1, 0};
    char line[256];
    mc_csv_format_record(&rec, line, sizeof line, NULL);
    assert_string_equal(line, "MPI_Isend,send,17,4096,3,64,-1,1000,2500,1\n");
}

static void test_csv_accepts_blank_lines_crlf_and_free_comments(void **state)
{
    (void)state;
    FILE *f;
    mc_csv_reader *r;
    mc_errinfo e;
    assert_int_equal(open_text("# a free comment, with = sign later\r\n\r\n"
                               "# app_rank=2\r\n" HDR
                               "MPI_Send,send,1,8,0,4,7,1,2,0\r\n\r\n",
                               &f, &r, &e),
                     0);
    assert_int_equal(mc_csv_reader_meta(r)->present, MC_CSV_HAVE_RANK);
    mc_record rec;
    assert_int_equal(mc_csv_read(r, &rec, &e), 1);
    assert_int_equal(rec.op, MC_OP_Send);
    assert_int_equal(rec.tag, 7);
    assert_int_equal(mc_csv_read(r, &rec, &e), 0);
    mc_csv_reader_free(r);
    fclose(f);
}

static void test_csv_bad_unsigned_names_line_and_column(void **state)
{
    (void)state;
    expect_error("# app_rank=0\n" HDR "MPI_Send,send,1,8,0,4,7,1,2,0\n"
                 "MPI_Send,send,1,12x,0,4,7,1,2,0\n",
                 4, 17, "expected unsigned integer in column bytes");
}

static void test_csv_negative_bytes_is_rejected(void **state)
{
    (void)state;
    expect_error(HDR "MPI_Send,send,1,-8,0,4,7,1,2,0\n", 2, 17,
                 "expected unsigned integer in column bytes");
}

static void test_csv_out_of_range_is_rejected(void **state)
{
    (void)state;
    expect_error(HDR "MPI_Send,send,1,8,4294967296,4,7,1,2,0\n", 2, 19,
                 "out of range in column comm_id");
    expect_error(HDR "MPI_Send,send,2147483648,8,0,4,7,1,2,0\n", 2, 15,
                 "out of range in column peer");
}

static void test_csv_unknown_op_is_rejected(void **state)
{
    (void)state;
    expect_error(HDR "MPI_Sned,send,1,8,0,4,7,1,2,0\n", 2, 1,
                 "unknown operation 'MPI_Sned'");
}

static void test_csv_bad_dir_is_rejected(void **state)
{
    (void)state;
    expect_error(HDR "MPI_Send,out,1,8,0,4,7,1,2,0\n", 2, 10,
                 "expected none, send or recv in column dir");
}

static void test_csv_field_count_is_checked(void **state)
{
    (void)state;
    expect_error(HDR "MPI_Send,send,1,8,0,4,7\n", 2, 24,
                 "expected 10 fields, found 7 (missing column t_start_ns)");
    expect_error(HDR "MPI_Send,send,1,8,0,4,7,1,2,0,9\n", 2, 31,
                 "more than 10 fields");
}

static void test_csv_comment_after_header_is_rejected(void **state)
{
    (void)state;
    expect_error(HDR "MPI_Send,send,1,8,0,4,7,1,2,0\n# app_rank=3\n", 3, 1,
                 "only before the header row");
}

static void test_csv_wrong_header_row_is_rejected(void **state)
{
    (void)state;
    expect_error("# x\nop,dir,peer,size,comm_id\n", 2, 13,
                 "expected the header row");
    expect_error("# only comments\n", 1, 0, "no header row");
}

static void test_csv_time_order_and_flags_are_checked(void **state)
{
    (void)state;
    expect_error(HDR "MPI_Send,send,1,8,0,4,7,10,9,0\n", 2, 28,
                 "t_end_ns is earlier than t_start_ns");
    expect_error(HDR "MPI_Send,send,1,8,0,4,7,1,2,16\n", 2, 29,
                 "unknown flag bits 0x10");
}

static void test_csv_bad_header_value_is_rejected(void **state)
{
    (void)state;
    expect_error("# app_size=eight\n" HDR, 1, 12,
                 "expected an integer for app_size");
}

static void test_csv_overlong_line_is_rejected(void **state)
{
    (void)state;
    static char text[MC_CSV_MAX_LINE + 200];
    const size_t h = strlen(HDR);
    memcpy(text, HDR, h);
    memset(text + h, '7', MC_CSV_MAX_LINE + 10);
    text[h + MC_CSV_MAX_LINE + 10] = '\0';
    expect_error(text, 2, MC_CSV_MAX_LINE + 1, "line longer than");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_csv_roundtrip_is_exact),
        cmocka_unit_test(test_csv_line_format_is_documented_form),
        cmocka_unit_test(test_csv_accepts_blank_lines_crlf_and_free_comments),
        cmocka_unit_test(test_csv_bad_unsigned_names_line_and_column),
        cmocka_unit_test(test_csv_negative_bytes_is_rejected),
        cmocka_unit_test(test_csv_out_of_range_is_rejected),
        cmocka_unit_test(test_csv_unknown_op_is_rejected),
        cmocka_unit_test(test_csv_bad_dir_is_rejected),
        cmocka_unit_test(test_csv_field_count_is_checked),
        cmocka_unit_test(test_csv_comment_after_header_is_rejected),
        cmocka_unit_test(test_csv_wrong_header_row_is_rejected),
        cmocka_unit_test(test_csv_time_order_and_flags_are_checked),
        cmocka_unit_test(test_csv_bad_header_value_is_rejected),
        cmocka_unit_test(test_csv_overlong_line_is_rejected),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
