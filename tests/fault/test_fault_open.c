/* test_fault_open.c - opening campaign entries that are not trace files: FIFOs,
 * directories, dangling links. */
#include <setjmp.h> /* cmocka needs it */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <errno.h>    /* ENOENT */
#include <stdio.h>    /* snprintf */
#include <stdlib.h>   /* mkdtemp */
#include <string.h>   /* strstr */
#include <sys/stat.h> /* mkfifo, mkdir */
#include <unistd.h>   /* alarm, symlink, unlink, rmdir */

#include <msgcensus/trace.h>

static char dir[64];

static int setup(void **state)
{
    (void)state;
    snprintf(dir, sizeof dir, "/tmp/mc-fault-open-XXXXXX");
    return mkdtemp(dir) ? 0 : -1;
}

static int teardown(void **state)
{
    (void)state;
    return rmdir(dir);
}

/* A FIFO has no writer here: a blocking open would never return. The
 * alarm turns a hang into a failed test instead of a stuck suite. */
static void test_trace_open_refuses_fifo_without_blocking(void **state)
{
    (void)state;
    char path[128];
    snprintf(path, sizeof path, "%s/rank-000002.mct", dir);
    assert_int_equal(mkfifo(path, 0644), 0);
    alarm(20);
    mc_trace_reader *r = NULL;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    const int rc = mc_trace_open(path, &r, &e);
    alarm(0);
    unlink(path);
    assert_int_equal(rc, MC_EOPEN);
    assert_null(r);
    assert_string_equal(e.path, path);
    assert_non_null(strstr(e.detail, "not a regular file"));
}

static void test_trace_verify_refuses_fifo_without_blocking(void **state)
{
    (void)state;
    char path[128];
    snprintf(path, sizeof path, "%s/rank-000003.mct", dir);
    assert_int_equal(mkfifo(path, 0644), 0);
    alarm(20);
    mc_trace_check c;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    const int rc = mc_trace_verify(path, &c, &e);
    alarm(0);
    unlink(path);
    assert_int_equal(rc, MC_EOPEN);
    assert_int_equal(c.header_ok, 0);
}

static void test_trace_open_refuses_directory(void **state)
{
    (void)state;
    char path[128];
    snprintf(path, sizeof path, "%s/rank-000004.mct", dir);
    assert_int_equal(mkdir(path, 0755), 0);
    mc_trace_reader *r = NULL;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    const int rc = mc_trace_open(path, &r, &e);
    rmdir(path);
    assert_int_equal(rc, MC_EOPEN);
    assert_null(r);
    assert_non_null(strstr(e.detail, "not a regular file"));
}

static void test_trace_open_reports_dangling_link_errno(void **state)
{
    (void)state;
    char path[128];
    snprintf(path, sizeof path, "%s/rank-000005.mct", dir);
    assert_int_equal(symlink("no-such-volume/rank-000005.mct", path), 0);
    mc_trace_reader *r = NULL;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    const int rc = mc_trace_open(path, &r, &e);
    unlink(path);
    assert_int_equal(rc, MC_EOPEN);
    assert_null(r);
    assert_int_equal(e.sys_errno, ENOENT); /* POSIX open(): no such file */
    assert_string_equal(e.path, path);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_trace_open_refuses_fifo_without_blocking),
        cmocka_unit_test(test_trace_verify_refuses_fifo_without_blocking),
        cmocka_unit_test(test_trace_open_refuses_directory),
        cmocka_unit_test(test_trace_open_reports_dangling_link_errno),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
