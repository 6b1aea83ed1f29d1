/* bench_decode.c - decode throughput of the trace reader (uncompressed and
 * zstd) against a plain read() loop over the same file. */
#include <fcntl.h>  /* open */
#include <stdint.h> /* uint64_t */
#include <stdio.h>  /* printf */
#include <stdlib.h> /* strtoull, malloc */
#include <string.h> /* strcmp */
#include <time.h>   /* clock_gettime */
#include <unistd.h> /* read, close, unlink */

#include <msgcensus/ops.h>
#include <msgcensus/trace.h>

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Records of an invented 3-D halo-exchange solver: six neighbour sends and
 * receives of three face sizes, then an allreduce, with jittered times. */
static void fill(mc_record *r, size_t n, uint64_t first)
{
    uint64_t t = first * 1000;
    for (size_t i = 0; i < n; i++) {
        const uint64_t k = (first + i) % 13;
        memset(&r[i], 0, sizeof r[i]);
        t += 700 + ((first + i) * 2654435761u) % 600;
        r[i].t_start_ns = t;
        r[i].t_end_ns = t + 20 + (t % 97);
        r[i].comm_id = 0;
        r[i].comm_size = 512;
        if (k == 12) {
            r[i].op = MC_OP_Allreduce;
            r[i].dir = MC_DIR_NONE;
            r[i].bytes = 8;
            r[i].peer = MC_PEER_NONE;
            r[i].tag = MC_TAG_NONE;
        } else {
            r[i].op = (uint16_t)(k % 2 ? MC_OP_Irecv : MC_OP_Isend);
            r[i].dir = (uint8_t)(k % 2 ? MC_DIR_RECV : MC_DIR_SEND);
            r[i].bytes = 8ull * 64 * 64 * (1 + k / 4);
            r[i].peer = (int32_t)((17 + k) % 512);
            r[i].tag = (int32_t)(k / 2);
        }
    }
}

static int write_file(const char *path, uint64_t n, mc_codec codec)
{
    mc_trace_header h;
    mc_trace_header_init(&h, 17, 512);
    mc_writer_opts o;
    mc_writer_opts_init(&o);
    o.codec = codec;
    mc_trace_writer *w;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    if (mc_trace_writer_open(path, &h, &o, &w, &e))
        return -1;
    static mc_record buf[8192];
    for (uint64_t done = 0; done < n;) {
        const size_t k = n - done < 8192 ? (size_t)(n - done) : 8192;
        fill(buf, k, done);
        if (mc_trace_write(w, buf, k, &e))
            return -1;
        done += k;
    }
    return mc_trace_writer_close(w, &e);
}

/* Plain read() of the whole file in 4 MiB pieces: the floor of any reader. */
static double time_read(const char *path, uint64_t *bytes)
{
    static unsigned char buf[4 << 20];
    const double t0 = now();
    const int fd = open(path, O_RDONLY);
    ssize_t k;
    uint64_t total = 0;
    while ((k = read(fd, buf, sizeof buf)) > 0)
        total += (uint64_t)k;
    close(fd);
    *bytes = total;
    return now() - t0;
}

/* Open, read every block (checksums, zstd), and touch every record. */
static double time_decode(const char *path, uint64_t *nrec, uint64_t *sum,
                          int check)
{
    const double t0 = now();
    mc_trace_reader *r;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    if (mc_trace_open(path, &r, &e))
        return -1;
    const mc_record *recs;
    size_t n;
    uint64_t cnt = 0, s = 0;
    int rc;
    while ((rc = mc_trace_next_block(r, &recs, &n, &e)) == 1) {
        for (size_t i = 0; i < n; i++) {
            s += recs[i].bytes;
            if (check && mc_record_check(&recs[i], NULL))
                return -1;
        }
        cnt += n;
    }
    mc_trace_close(r);
    if (rc < 0)
        return -1;
    *nrec = cnt;
    *sum = s;
    return now() - t0;
}

int main(int argc, char **argv)
{
    uint64_t n = 4u << 20; /* records: 192 MiB raw */
    const char *dir = "/tmp";
    int reps = 5;
    for (int i = 1; i + 1 < argc; i += 2) {
        if (!strcmp(argv[i], "--records"))
            n = strtoull(argv[i + 1], NULL, 10);
        else if (!strcmp(argv[i], "--dir"))
            dir = argv[i + 1];
        else if (!strcmp(argv[i], "--reps"))
            reps = atoi(argv[i + 1]);
    }
    char p_none[512], p_zstd[512];
    snprintf(p_none, sizeof p_none, "%s/bench-decode-none.mct", dir);
    snprintf(p_zstd, sizeof p_zstd, "%s/bench-decode-zstd.mct", dir);
    if (write_file(p_none, n, MC_CODEC_NONE) ||
        write_file(p_zstd, n, MC_CODEC_ZSTD)) {
        fprintf(stderr, "bench_decode: cannot write the test files in %s\n",
                dir);
        return 1;
    }
    printf("bench_decode: %llu records (%.1f MiB raw), best of %d runs, files "
           "in the page cache\n",
           (unsigned long long)n, (double)n * MC_RECORD_SIZE / 1048576.0, reps);
    printf("%-28s %10s %12s %12s %10s\n", "case", "file MiB", "Mrecords/s",
           "raw GB/s", "file GB/s");
    const char *paths[2] = {p_none, p_zstd};
    const char *names[2] = {"uncompressed", "zstd"};
    for (int f = 0; f < 2; f++) {
        uint64_t fbytes = 0, nrec = 0, sum = 0;
        time_read(paths[f], &fbytes); /* warm the page cache */
        double best_read = 1e30, best_dec = 1e30, best_chk = 1e30;
        for (int k = 0; k < reps; k++) {
            const double a = time_read(paths[f], &fbytes);
            const double b = time_decode(paths[f], &nrec, &sum, 0);
            const double c = time_decode(paths[f], &nrec, &sum, 1);
            if (b < 0 || c < 0) {
                fprintf(stderr, "bench_decode: decode of %s failed\n",
                        paths[f]);
                return 1;
            }
            best_read = a < best_read ? a : best_read;
            best_dec = b < best_dec ? b : best_dec;
            best_chk = c < best_chk ? c : best_chk;
        }
        const double raw = (double)nrec * MC_RECORD_SIZE,
                     mib = (double)fbytes / 1048576.0;
        char label[64];
        snprintf(label, sizeof label, "%s: read() only", names[f]);
        printf("%-28s %10.1f %12s %12s %10.2f\n", label, mib, "-", "-",
               (double)fbytes / best_read / 1e9);
        snprintf(label, sizeof label, "%s: decode", names[f]);
        printf("%-28s %10.1f %12.1f %12.2f %10.2f\n", label, mib,
               (double)nrec / best_dec / 1e6, raw / best_dec / 1e9,
               (double)fbytes / best_dec / 1e9);
        snprintf(label, sizeof label, "%s: decode+check", names[f]);
        printf("%-28s %10.1f %12.1f %12.2f %10.2f\n", label, mib,
               (double)nrec / best_chk / 1e6, raw / best_chk / 1e9,
               (double)fbytes / best_chk / 1e9);
        if (sum == 0)
            printf("(empty)\n");
    }
    unlink(p_none);
    unlink(p_zstd);
    return 0;
}
