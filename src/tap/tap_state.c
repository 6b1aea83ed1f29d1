/* tap_state.c - the tap's life cycle: settings, trace file, record sink,
 * MPI_Init/Finalize. */
#include "tap.h"

#include <errno.h>    /* errno, EEXIST */
#include <limits.h>   /* PATH_MAX */
#include <pthread.h>  /* pthread_mutex_t */
#include <stdarg.h>   /* va_list */
#include <stdio.h>    /* fprintf, snprintf, vsnprintf */
#include <stdlib.h>   /* getenv, strtoull, realloc, atexit */
#include <string.h>   /* strlen, strerror */
#include <sys/stat.h> /* mkdir */
#include <unistd.h>   /* gethostname */

#include <msgcensus/error.h> /* mc_errinfo, mc_errinfo_format */

int mc__tap_on;
int mc__tap_mt;
int mc__tap_world_rank;
uint64_t mc__tap_t0;
MC_TAP_TLS int mc__tap_depth;

static pthread_mutex_t tap_mutex = PTHREAD_MUTEX_INITIALIZER;
static mc_trace_writer *writer;
static int failed_once; /* the one stderr line has been printed */
static int finished;    /* the trace is closed */
static int paused;      /* MPI_Pcontrol(0) */
static int exit_hook;   /* atexit handler installed */
static int init_seen;   /* MPI_Init(_thread) passed through the tap */
static char trace_path[PATH_MAX];

static MC_TAP_TLS void *scratch[MC_TAP_SCRATCH_N];
static MC_TAP_TLS size_t scratch_cap[MC_TAP_SCRATCH_N];

void mc__tap_lock(void)
{
    if (mc__tap_mt)
        pthread_mutex_lock(&tap_mutex);
}

void mc__tap_unlock(void)
{
    if (mc__tap_mt)
        pthread_mutex_unlock(&tap_mutex);
}

void mc__tap_fail(const char *fmt, ...)
{
    mc__tap_on = 0;
    if (failed_once)
        return;
    failed_once = 1;
    char msg[1200];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    fprintf(stderr, "msgcensus-tap: rank %d: %s; recording stopped\n",
            mc__tap_world_rank, msg);
}

static void fail_err(const mc_errinfo *err)
{
    char line[1400];
    mc_errinfo_format(err, line, sizeof line);
    mc__tap_fail("%s", line);
}

void mc__tap_emit_locked(const mc_record *rec)
{
    if (!mc__tap_on || paused || !writer)
        return;
    mc_errinfo err;
    if (mc_trace_write(writer, rec, 1, &err) != 0) {
        fail_err(&err);
        mc_trace_writer_abandon(writer);
        writer = NULL;
    }
}

void *mc__tap_scratch(int slot, size_t bytes)
{
    if (bytes <= scratch_cap[slot])
        return scratch[slot];
    size_t cap = scratch_cap[slot] ? scratch_cap[slot] : 1024;
    while (cap < bytes)
        cap *= 2;
    void *p = realloc(scratch[slot], cap);
    if (!p)
        return NULL;
    scratch[slot] = p;
    scratch_cap[slot] = cap;
    return p;
}

/* ---- settings ----------------------------------------------------------- */

static int env_flag(const char *name)
{
    const char *v = getenv(name);
    return v && v[0] == '1' && v[1] == '\0';
}

/* mkdir -p: every rank may race to create the same directories. */
static int make_dirs(const char *dir)
{
    char buf[PATH_MAX];
    const size_t n = strlen(dir);
    if (n == 0 || n >= sizeof buf)
        return -1;
    memcpy(buf, dir, n + 1);
    for (size_t i = 1; i <= n; i++) {
        if (buf[i] != '/' && buf[i] != '\0')
            continue;
        const char c = buf[i];
        buf[i] = '\0';
        if (mkdir(buf, 0777) != 0 && errno != EEXIST)
            return -1;
        buf[i] = c;
    }
    return 0;
}

static uint64_t realtime_ns(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_REALTIME, &ts);
    return (uint64_t)ts.tv_sec * 1000000000u + (uint64_t)ts.tv_nsec;
}

static void close_trace(void)
{
    if (!writer)
        return;
    mc_errinfo err;
    mc_trace_writer *w = writer;
    writer = NULL;
    if (mc_trace_writer_close(w, &err) != 0)
        fail_err(&err);
}

/* A program that returns from main without MPI_Finalize still gets its
 * trace closed; a crash leaves the blocks written so far. */
static void at_exit(void)
{
    mc__tap_lock();
    mc__tap_on = 0;
    close_trace();
    finished = 1;
    mc__tap_unlock();
}

/* Everything after a successful PMPI_Init*: open the trace, set up ids. */
static void tap_start(int provided)
{
    if (env_flag("MSGCENSUS_TAP_OFF") || finished)
        return;
    struct timespec t0;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    mc__tap_t0 = (uint64_t)t0.tv_sec * 1000000000u + (uint64_t)t0.tv_nsec;
    const uint64_t epoch = realtime_ns();
    mc__tap_mt = provided == MPI_THREAD_MULTIPLE;

    int rank = 0, size = 1;
    PMPI_Comm_rank(MPI_COMM_WORLD, &rank);
    PMPI_Comm_size(MPI_COMM_WORLD, &size);
    mc__tap_world_rank = rank;

    mc_writer_opts opts;
    mc_writer_opts_init(&opts);
    if (env_flag("MSGCENSUS_TAP_ZSTD"))
        opts.codec = MC_CODEC_ZSTD;
    const char *br = getenv("MSGCENSUS_TAP_BLOCK_RECORDS");
    if (br && *br) {
        char *end = NULL;
        errno = 0;
        const unsigned long long v = strtoull(br, &end, 10);
        if (errno || *end || v < 1 || v > MC_BLOCK_MAX_RECORDS) {
            mc__tap_fail("MSGCENSUS_TAP_BLOCK_RECORDS=%s: want 1..%u", br,
                         MC_BLOCK_MAX_RECORDS);
            return;
        }
        opts.block_records = (uint32_t)v;
    }
    const char *dir = getenv("MSGCENSUS_TAP_DIR");
    if (!dir || !*dir)
        dir = "msgcensus-trace";
    if (make_dirs(dir) != 0) {
        mc__tap_fail("cannot create directory %s: %s", dir, strerror(errno));
        return;
    }
    const int n =
        snprintf(trace_path, sizeof trace_path, "%s/rank-%06d.mct", dir, rank);
    if (n < 0 || (size_t)n >= sizeof trace_path) {
        mc__tap_fail("output directory name too long");
        return;
    }

    mc_trace_header hdr;
    mc_trace_header_init(&hdr, rank, size);
    struct timespec res;
    if (clock_getres(CLOCK_MONOTONIC, &res) == 0)
        hdr.clock_res_ps =
            ((uint64_t)res.tv_sec * 1000000000u + (uint64_t)res.tv_nsec) *
            1000u;
    hdr.created_unix_ns = (int64_t)epoch;
    hdr.epoch_unix_ns = epoch;
    if (gethostname(hdr.host, MC_TRACE_HOST_LEN) != 0)
        hdr.host[0] = '\0';
    hdr.host[MC_TRACE_HOST_LEN] = '\0';

    mc_errinfo err;
    if (mc_trace_writer_open(trace_path, &hdr, &opts, &writer, &err) != 0) {
        writer = NULL;
        fail_err(&err);
        return;
    }
    if (mc__tap_comm_setup() != 0) {
        mc_trace_writer_abandon(writer);
        writer = NULL;
        mc__tap_fail("cannot set up communicator attributes");
        return;
    }
    if (!exit_hook && atexit(at_exit) == 0)
        exit_hook = 1;
    mc__tap_on = 1;
}

/* A program that initialised MPI past the tap (the mpi_f08 Fortran module
 * does: its bindings call PMPI_Init directly) would end without a trace
 * and without a word. At unload, say so once. The tap's destructor runs
 * before libmpi's (the tap depends on it), and MPI_Initialized and
 * MPI_Finalized may be called at any time, also after MPI_Finalize
 * (MPI-4.0 11.2.1, from memory). */
#if defined(__GNUC__)
__attribute__((destructor)) static void tap_unseen_init(void)
{
    if (init_seen || env_flag("MSGCENSUS_TAP_OFF"))
        return;
    int ini = 0, fin = 0;
    if (PMPI_Initialized(&ini) != MPI_SUCCESS ||
        PMPI_Finalized(&fin) != MPI_SUCCESS || !(ini || fin))
        return;
    fprintf(stderr, "msgcensus-tap: this process started MPI without passing "
                    "through the tap (as the mpi_f08 Fortran module does); "
                    "nothing was recorded\n");
}
#endif

/* ---- wrappers ----------------------------------------------------------- */

int MPI_Init(int *argc, char ***argv)
{
    init_seen = 1;
    mc__tap_depth = 1;
    const int rc = PMPI_Init(argc, argv);
    int provided = MPI_THREAD_SINGLE;
    if (rc == MPI_SUCCESS) {
        PMPI_Query_thread(&provided);
        tap_start(provided);
    }
    mc__tap_depth = 0;
    return rc;
}

int MPI_Init_thread(int *argc, char ***argv, int required, int *provided)
{
    init_seen = 1;
    mc__tap_depth = 1;
    const int rc = PMPI_Init_thread(argc, argv, required, provided);
    if (rc == MPI_SUCCESS)
        tap_start(*provided);
    mc__tap_depth = 0;
    return rc;
}

int MPI_Finalize(void)
{
    mc__tap_depth = 1;
    mc__tap_lock();
    mc__tap_on = 0;
    close_trace();
    finished = 1;
    mc__tap_unlock();
    mc__tap_req_teardown();
    mc__tap_comm_teardown();
    const int rc = PMPI_Finalize();
    mc__tap_depth = 0;
    return rc;
}

/* MPI_Pcontrol (the standard's profiling control): level 0 pauses
 * recording, any other level resumes it. */
int MPI_Pcontrol(const int level, ...)
{
    mc__tap_lock();
    paused = level == 0;
    mc__tap_unlock();
    return MPI_SUCCESS;
}
