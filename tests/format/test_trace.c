/* test_trace.c - unit tests of the trace format (2.0, and 1.x read and
 * written on request): byte layout, round trips, damage detection,
 * truncation, range reads. */
#include <setjmp.h> /* cmocka needs jmp_buf */
#include <stdarg.h> /* cmocka needs va_list */
#include <stddef.h> /* cmocka needs size_t */
#include <cmocka.h>

#include <errno.h>  /* ENOENT */
#include <stdio.h>  /* snprintf, FILE */
#include <stdlib.h> /* malloc, free, mkdtemp */
#include <string.h> /* memcmp, memset, strstr */
#include <unistd.h> /* truncate */

#include <msgcensus/ops.h>
#include <msgcensus/trace.h>
#include <xxhash.h> /* XXH32, XXH64, XXH3 (for the outside-reference check) */

#include "trace_internal.h" /* mc__put32 etc., to craft damaged files */

static char tmpdir[256];

static int group_setup(void **state)
{
    (void)state;
    snprintf(tmpdir, sizeof tmpdir, "/tmp/mc-test-trace-XXXXXX");
    return mkdtemp(tmpdir) ? 0 : -1;
}

static int group_teardown(void **state)
{
    (void)state;
    char cmd[512];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", tmpdir);
    return system(cmd) == 0 ? 0 : -1;
}

static const char *tpath(const char *name)
{
    static char buf[4][512];
    static int k;
    k = (k + 1) % 4;
    snprintf(buf[k], sizeof buf[k], "%s/%s", tmpdir, name);
    return buf[k];
}

/* Deterministic records with every field varied. */
static void make_records(mc_record *r, size_t n, uint64_t seed)
{
    static const unsigned ops[] = {MC_OP_Isend,     MC_OP_Irecv,
                                   MC_OP_Allreduce, MC_OP_Put,
                                   MC_OP_Alltoallv, MC_OP_Send};
    static const unsigned dirs[] = {MC_DIR_SEND, MC_DIR_RECV, MC_DIR_NONE,
                                    MC_DIR_SEND, MC_DIR_NONE, MC_DIR_SEND};
    uint64_t x = seed * 0x9e3779b97f4a7c15ull + 1;
    for (size_t i = 0; i < n; i++) {
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        const size_t k = (size_t)(x % 6);
        r[i].bytes = x >> 20;
        r[i].t_start_ns = 1000 * i + (x & 0xff);
        r[i].t_end_ns = r[i].t_start_ns + ((x >> 8) & 0xffff);
        r[i].comm_id = (uint32_t)(x >> 40) & 7;
        r[i].comm_size = 1 + (uint32_t)(x >> 44) % 4096;
        r[i].peer = dirs[k] == MC_DIR_NONE ? MC_PEER_NONE : (int32_t)(x % 4096);
        r[i].tag = dirs[k] == MC_DIR_NONE ? MC_TAG_NONE : (int32_t)(x >> 50);
        r[i].op = (uint16_t)ops[k];
        r[i].dir = (uint8_t)dirs[k];
        r[i].flags = (uint8_t)((x >> 30) & MC_RF_KNOWN_MASK);
        r[i].reserved = 0;
    }
}

static void test_header(mc_trace_header *h)
{
    mc_trace_header_init(h, 3, 8);
    h->created_unix_ns = 0x18d2c3b4a5968778ll;
    h->epoch_unix_ns = 0x18d2c3b4a5000000ull;
    snprintf(h->host, sizeof h->host, "node017");
}

/* A writer on @path with the test header and @block_records per block. */
static mc_trace_writer *open_writer(const char *path, mc_codec codec,
                                    uint32_t block_records, int footer)
{
    mc_trace_header h;
    test_header(&h);
    mc_writer_opts o;
    mc_writer_opts_init(&o);
    o.codec = codec;
    o.block_records = block_records;
    o.write_footer = footer;
    mc_trace_writer *w = NULL;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_writer_open(path, &h, &o, &w, &e), 0);
    return w;
}

/* Write @n records from make_records(seed 1) into @path. */
static void write_trace(const char *path, size_t n, mc_codec codec,
                        uint32_t block_records, int footer)
{
    mc_trace_writer *w = open_writer(path, codec, block_records, footer);
    mc_errinfo e;
    mc_errinfo_clear(&e);
    mc_record *r = malloc((n ? n : 1) * sizeof *r);
    make_records(r, n, 1);
    /* In uneven pieces, so block boundaries fall inside a call. */
    size_t done = 0, step = 1;
    while (done < n) {
        const size_t k = step < n - done ? step : n - done;
        assert_int_equal(mc_trace_write(w, r + done, k, &e), 0);
        done += k;
        step = step * 3 + 1;
    }
    assert_int_equal(mc_trace_writer_records(w), n);
    free(r);
    assert_int_equal(mc_trace_writer_close(w, &e), 0);
}

/* Open @path and build its block index; the reader stays open in *r. */
static const mc_block_info *index_of(const char *path, mc_trace_reader **r,
                                     size_t *nb, int *from_footer,
                                     int *complete, mc_errinfo *e)
{
    const mc_block_info *b = NULL;
    assert_int_equal(mc_trace_open(path, r, e), 0);
    assert_int_equal(mc_trace_index(*r, &b, nb, from_footer, complete, e), 0);
    return b;
}

/* Read all records of @path in order into a new array; *n gets the count. */
static mc_record *read_all(const char *path, size_t *n, int *last_rc)
{
    mc_trace_reader *r = NULL;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_open(path, &r, &e), 0);
    size_t cap = 1024, len = 0;
    mc_record *all = malloc(cap * sizeof *all);
    int rc;
    const mc_record *recs;
    size_t k;
    while ((rc = mc_trace_next_block(r, &recs, &k, &e)) == 1) {
        while (len + k > cap) {
            cap *= 2;
            all = realloc(all, cap * sizeof *all);
        }
        memcpy(all + len, recs, k * sizeof *recs);
        len += k;
    }
    *last_rc = rc;
    mc_trace_close(r);
    *n = len;
    return all;
}

static unsigned char *slurp(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    assert_non_null(f);
    fseek(f, 0, SEEK_END);
    *len = (size_t)ftell(f);
    fseek(f, 0, SEEK_SET);
    unsigned char *b = malloc(*len ? *len : 1);
    assert_int_equal(fread(b, 1, *len, f), *len);
    fclose(f);
    return b;
}

static void spit(const char *path, const unsigned char *b, size_t len)
{
    FILE *f = fopen(path, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(b, 1, len, f), len);
    fclose(f);
}

/* ---- byte layout against the spec --------------------------------------
 * The expected byte sequences below are written out by hand from
 * docs/trace-format.md, which is the reference for the layout. Checksum
 * fields hold values computed by the xxhsum command (Debian package xxhash
 * 0.8.1, `xxhsum -H32`, `xxhsum -H64`, `xxhsum -H3`) over the same bytes.
 * The 1.0 header differs from the 2.0 one in byte 8 and its checksum. */

static const unsigned char spec_header_v1[128] = {
    'M',  'C',  'T',  'R',  'A',  'C',  'E',  0x1a, /* 0: magic */
    0x01, 0x00, 0x00, 0x00,                         /* 8: version 1.0 */
    0x04, 0x03, 0x02, 0x01,                         /* 12: endian marker */
    0x80, 0x00, 0x00, 0x00,                         /* 16: header_size 128 */
    0x00, 0x00, 0x00, 0x00,                         /* 20: flags */
    0x03, 0x00, 0x00, 0x00,                         /* 24: app_rank 3 */
    0x08, 0x00, 0x00, 0x00,                         /* 28: app_size 8 */
    0xe8, 0x03, 0,    0,    0,    0,    0,    0,    /* 32: clock_res_ps 1000 */
    0x78, 0x87, 0x96, 0xa5, 0xb4, 0xc3, 0xd2, 0x18, /* 40: created */
    0x00, 0x00, 0x00, 0xa5, 0xb4, 0xc3, 0xd2, 0x18, /* 48: epoch */
    'n',  'o',  'd',  'e',  '0',  '1',  '7',  0,    /* 56: host, NUL padded */
    0,    0,    0,    0,    0,    0,    0,    0,    0, 0, 0, 0, 0,
    0,    0,    0,    0,    0,    0,    0,    0,    0, 0, 0, 0, 0,
    0,    0,    0,    0,    0,    0,    0,    0,    0, 0, 0, 0, 0,
    0,    0,    0,    0,    0,    0,    0,    0,    0, 0, 0, 0, 0,
    0,    0,    0,    0,    0x00, 0x00, 0x00, 0x00, /* 120: reserved */
    0xe0, 0x78, 0x95, 0xe2, /* 124: XXH32 = 0xe29578e0 (xxhsum -H32) */
};

/* The 2.0 header: spec_header_v1 with version 2.0 at byte 8 and the
 * XXH32 of the changed bytes 0..123. */
static void spec_header_v2(unsigned char out[128])
{
    memcpy(out, spec_header_v1, 128);
    out[8] = 0x02; /* 8: version 2.0 */
    static const unsigned char sum[4] = {0x0f, 0x6d, 0xff, 0xfc};
    memcpy(out + 124, sum, 4); /* 124: XXH32 = 0xfcff6d0f (xxhsum -H32) */
}

/* Record A: every field distinct; record B: a collective. */
static const mc_record spec_rec_a = {0x0102030405060708ull,
                                     0x1112131415161718ull,
                                     0x2122232425262728ull,
                                     0x31323334u,
                                     0x41424344u,
                                     -1,
                                     0x51525354,
                                     MC_OP_Isend,
                                     MC_DIR_SEND,
                                     0x05,
                                     0};
static const mc_record spec_rec_b = {
    4096, 1000, 2500, 0, 8, 3, -1, MC_OP_Allreduce, MC_DIR_NONE, 0x02, 0};
static const unsigned char spec_records[96] = {
    0x08, 0x07, 0x06, 0x05, 0x04, 0x03, 0x02, 0x01, /* 0: bytes */
    0x18, 0x17, 0x16, 0x15, 0x14, 0x13, 0x12, 0x11, /* 8: t_start_ns */
    0x28, 0x27, 0x26, 0x25, 0x24, 0x23, 0x22, 0x21, /* 16: t_end_ns */
    0x34, 0x33, 0x32, 0x31,                         /* 24: comm_id */
    0x44, 0x43, 0x42, 0x41,                         /* 28: comm_size */
    0xff, 0xff, 0xff, 0xff,                         /* 32: peer -1 */
    0x54, 0x53, 0x52, 0x51,                         /* 36: tag */
    0x05, 0x00,                                     /* 40: op 5 (Isend) */
    0x01,                                           /* 42: dir send */
    0x05,                                           /* 43: flags */
    0x00, 0x00, 0x00, 0x00,                         /* 44: reserved */
    0x00, 0x10, 0,    0,    0,    0,    0,    0,    /* bytes 4096 */
    0xe8, 0x03, 0,    0,    0,    0,    0,    0,    /* t_start 1000 */
    0xc4, 0x09, 0,    0,    0,    0,    0,    0,    /* t_end 2500 */
    0,    0,    0,    0,                            /* comm_id 0 */
    0x08, 0,    0,    0,                            /* comm_size 8 */
    0x03, 0,    0,    0,                            /* peer 3 */
    0xff, 0xff, 0xff, 0xff,                         /* tag -1 */
    0x70, 0x00,                                     /* op 112 (Allreduce) */
    0x00, 0x02,                                     /* dir none, flags */
    0,    0,    0,    0,                            /* reserved */
};
static const unsigned char spec_block_header_v1[40] = {
    0x4d, 0x43, 0x42, 0x4b, /* 0: "MCBK" */
    0x00, 0x00, 0x00, 0x00, /* 4: seq 0 */
    0x02, 0x00, 0x00, 0x00, /* 8: nrecords 2 */
    0x60, 0x00, 0x00, 0x00, /* 12: raw_len 96 */
    0x60, 0x00, 0x00, 0x00, /* 16: stored_len 96 */
    0x00, 0x00,             /* 20: codec none, flags */
    0x30, 0x00,             /* 22: record_size 48 */
    0x97, 0xb5, 0xf6, 0x79,
    0x21, 0xe4, 0x52, 0xc5, /* 24: XXH64 0xc552e42179f6b597 (xxhsum -H64) */
    0x09, 0x8e, 0xa0, 0xe8, /* 32: XXH32 0xe8a08e09 (xxhsum -H32) */
    0x00, 0x00, 0x00, 0x00, /* 36: reserved */
};
static const unsigned char spec_block_header_v2[40] = {
    0x4d, 0x43, 0x42, 0x4b, /* 0: "MCBK" */
    0x00, 0x00, 0x00, 0x00, /* 4: seq 0 */
    0x02, 0x00, 0x00, 0x00, /* 8: nrecords 2 */
    0x60, 0x00, 0x00, 0x00, /* 12: raw_len 96 */
    0x60, 0x00, 0x00, 0x00, /* 16: stored_len 96 */
    0x00, 0x00,             /* 20: codec none, flags */
    0x30, 0x00,             /* 22: record_size 48 */
    0xd9, 0x26, 0x10, 0x43,
    0xb1, 0x4f, 0x52, 0x3e, /* 24: XXH3 0x3e524fb1431026d9 (xxhsum -H3) */
    0x90, 0xa3, 0xa6, 0xb9, /* 32: XXH32 0xb9a6a390 (xxhsum -H32) */
    0x00, 0x00, 0x00, 0x00, /* 36: reserved */
};

static void test_header_bytes_match_spec(void **state)
{
    (void)state;
    mc_trace_header h;
    test_header(&h);
    unsigned char out[MC_TRACE_HEADER_SIZE], v2[128];
    spec_header_v2(v2);
    mc_trace_header_encode(&h, out);
    assert_memory_equal(out, v2, sizeof v2);
    h.version_major = 1; /* asked for 1.0: the 1.0 bytes */
    mc_trace_header_encode(&h, out);
    assert_memory_equal(out, spec_header_v1, sizeof spec_header_v1);
    for (int v = 1; v <= 2; v++) {
        mc_trace_header d;
        assert_int_equal(
            mc_trace_header_decode(v == 1 ? spec_header_v1 : v2, 128, &d, NULL),
            0);
        assert_int_equal(d.version_major, v);
        assert_int_equal(d.version_minor, 0);
        assert_int_equal(d.app_rank, 3);
        assert_int_equal(d.app_size, 8);
        assert_int_equal(d.clock_res_ps, 1000);
        test_header(&h);
        assert_true(d.created_unix_ns == h.created_unix_ns);
        assert_true(d.epoch_unix_ns == h.epoch_unix_ns);
        assert_string_equal(d.host, "node017");
    }
}

static void test_record_bytes_match_spec(void **state)
{
    (void)state;
    unsigned char out[MC_RECORD_SIZE];
    mc_record_encode(&spec_rec_a, out);
    assert_memory_equal(out, spec_records, MC_RECORD_SIZE);
    mc_record_encode(&spec_rec_b, out);
    assert_memory_equal(out, spec_records + 48, MC_RECORD_SIZE);
    mc_record d;
    mc_record_decode(spec_records, &d);
    assert_memory_equal(&d, &spec_rec_a, sizeof d);
    /* On little-endian hosts the struct is the on-disk record. */
    if (MC_HOST_LE)
        assert_memory_equal(&spec_rec_a, spec_records, MC_RECORD_SIZE);
}

/* The writer's bytes for two records, in format @major (0 = default). */
static unsigned char *spec_file(const char *name, unsigned major, size_t *len)
{
    const char *p = tpath(name);
    mc_trace_header h;
    test_header(&h);
    mc_writer_opts o;
    mc_writer_opts_init(&o);
    o.write_footer = 0;
    o.format_major = major;
    mc_trace_writer *w = NULL;
    assert_int_equal(mc_trace_writer_open(p, &h, &o, &w, NULL), 0);
    const mc_record two[2] = {spec_rec_a, spec_rec_b};
    assert_int_equal(mc_trace_write(w, two, 2, NULL), 0);
    assert_int_equal(mc_trace_writer_close(w, NULL), 0);
    return slurp(p, len);
}

static void test_block_bytes_match_spec(void **state)
{
    (void)state;
    unsigned char v2[128];
    spec_header_v2(v2);
    size_t len;
    unsigned char *b = spec_file("spec.mct", 0, &len);
    assert_int_equal(len, 128 + 40 + 96);
    assert_memory_equal(b, v2, 128);
    assert_memory_equal(b + 128, spec_block_header_v2, 40);
    assert_memory_equal(b + 168, spec_records, 96);
    free(b);
    /* Asked for format 1: the 1.0 bytes, XXH64 payload checksum. */
    b = spec_file("spec-v1.mct", 1, &len);
    assert_int_equal(len, 128 + 40 + 96);
    assert_memory_equal(b, spec_header_v1, 128);
    assert_memory_equal(b + 128, spec_block_header_v1, 40);
    assert_memory_equal(b + 168, spec_records, 96);
    free(b);
}

/* Both majors read back to the same records; a payload checksum of the
 * other major's algorithm is a mismatch; the reader reports the stored
 * (verified) checksum of each block. */
static void test_both_majors_read_and_checksums_differ(void **state)
{
    (void)state;
    const mc_record two[2] = {spec_rec_a, spec_rec_b};
    for (unsigned major = 1; major <= 2; major++) {
        size_t len;
        unsigned char *b = spec_file("maj.mct", major, &len);
        const uint64_t stored = mc__get64(b + 128 + 24);
        assert_true(stored ==
                    mc_trace_payload_checksum(major, spec_records, 96));
        mc_trace_reader *r = NULL;
        assert_int_equal(mc_trace_open(tpath("maj.mct"), &r, NULL), 0);
        assert_int_equal(mc_trace_get_header(r)->version_major, major);
        const mc_record *recs;
        size_t n;
        assert_int_equal(mc_trace_next_block(r, &recs, &n, NULL), 1);
        assert_int_equal(n, 2);
        assert_memory_equal(recs, two, sizeof two);
        assert_true(mc_trace_current_checksum(r) == stored);
        mc_trace_close(r);
        /* The other algorithm's value, with a consistent block header. */
        mc__put64(b + 128 + 24,
                  mc_trace_payload_checksum(3 - major, spec_records, 96));
        mc__put32(b + 128 + 32, XXH32(b + 128, 32, 0));
        spit(tpath("maj.mct"), b, len);
        free(b);
        assert_int_equal(mc_trace_open(tpath("maj.mct"), &r, NULL), 0);
        mc_errinfo e;
        mc_errinfo_clear(&e);
        assert_int_equal(mc_trace_next_block(r, &recs, &n, &e), MC_ECHECKSUM);
        assert_int_equal(e.block, 0);
        assert_int_equal(e.offset, 128);
        mc_trace_close(r);
    }
    /* A writer refuses a format it does not write. */
    mc_trace_header h;
    test_header(&h);
    mc_writer_opts o;
    mc_writer_opts_init(&o);
    o.format_major = 3;
    mc_trace_writer *w = NULL;
    assert_int_equal(mc_trace_writer_open(tpath("v3.mct"), &h, &o, &w, NULL),
                     MC_EINVAL);
    assert_null(w);
}

static void test_footer_bytes_match_spec(void **state)
{
    (void)state;
    const char *p = tpath("specfoot.mct");
    mc_trace_writer *w = open_writer(p, MC_CODEC_NONE, 0, 1);
    const mc_record two[2] = {spec_rec_a, spec_rec_b};
    assert_int_equal(mc_trace_write(w, two, 2, NULL), 0);
    assert_int_equal(mc_trace_writer_close(w, NULL), 0);
    size_t len;
    unsigned char *b = slurp(p, &len);
    /* Footer at 264: MCIX, 1 block, {128, 2, 96}, total 2, XXH64; trailer. */
    assert_int_equal(len, 264 + 8 + 16 + 16 + 16);
    static const unsigned char foot[32] = {
        0x4d, 0x43, 0x49, 0x58, 0x01, 0, 0, 0, /* "MCIX", nblocks 1 */
        0x80, 0,    0,    0,    0,    0, 0, 0, /* offset 128 */
        0x02, 0,    0,    0,    0x60, 0, 0, 0, /* nrecords 2, stored 96 */
        0x02, 0,    0,    0,    0,    0, 0, 0, /* total_records 2 */
    };
    assert_memory_equal(b + 264, foot, sizeof foot);
    /* Checksums over the spec's byte ranges, with libxxhash. */
    assert_true(mc__get64(b + 264 + 32) == XXH64(b + 264, 32, 0));
    static const unsigned char trail[12] = {0x08, 0x01, 0,    0,    0,    0,
                                            0,    0,    0x4d, 0x43, 0x4e, 0x44};
    assert_memory_equal(b + 304, trail, sizeof trail);
    assert_true(mc__get32(b + 316) == XXH32(b + 304, 12, 0));
    free(b);
}

/* The hash functions against outside references. */
static void test_xxhash_matches_reference_values(void **state)
{
    (void)state;
    /* `printf msgcensus | xxhsum -H32` and `-H64` (xxhsum 0.8.1, Debian). */
    assert_true(XXH32("msgcensus", 9, 0) == 0x6f39ecbcu);
    assert_true(XXH64("msgcensus", 9, 0) == 0x1056f072bc36af7full);
    /* Empty input, seed 0: the published xxHash test vectors 0x02CC5D05,
     * 0xEF46DB3751D8E999 and (XXH3_64bits) 0x2D06800538D394C2, quoted from
     * memory and confirmed with xxhsum -H32 / -H64 / -H3. */
    assert_true(XXH32("", 0, 0) == 0x02cc5d05u);
    assert_true(XXH64("", 0, 0) == 0xef46db3751d8e999ull);
    assert_true(XXH3_64bits("", 0) == 0x2d06800538d394c2ull);
    /* `printf msgcensus | xxhsum -H3`; the payload checksums of both
     * majors are these library functions. */
    assert_true(XXH3_64bits("msgcensus", 9) == 0xa9a97d840eb38059ull);
    assert_true(mc_trace_payload_checksum(2, "msgcensus", 9) ==
                0xa9a97d840eb38059ull);
    assert_true(mc_trace_payload_checksum(1, "msgcensus", 9) ==
                0x1056f072bc36af7full);
    assert_true(mc_trace_payload_checksum(3, "msgcensus", 9) == 0);
}

/* The reader's memory is its buffers: at least one raw block once a zstd
 * block is decoded, and bounded by the file (window) plus two blocks, the
 * zstd context and the index, not by the number of blocks read. */
static void test_reader_memory_is_bounded_by_a_block(void **state)
{
    (void)state;
    const char *p = tpath("mem.mct");
    write_trace(p, 20000, MC_CODEC_ZSTD, 1000, 1);
    mc_trace_reader *r = NULL;
    assert_int_equal(mc_trace_open(p, &r, NULL), 0);
    const size_t at_open = mc_trace_reader_memory(r);
    assert_true(at_open > 0);
    const mc_record *recs;
    size_t n, most = 0;
    while (mc_trace_next_block(r, &recs, &n, NULL) == 1) {
        const size_t m = mc_trace_reader_memory(r);
        most = m > most ? m : most;
    }
    assert_true(most >= at_open + 1000 * MC_RECORD_SIZE);
    assert_true(most <= mc_trace_file_size(r) + 2 * 1000 * MC_RECORD_SIZE +
                            (1u << 20) + 20 * sizeof(mc_block_info));
    mc_trace_close(r);
    assert_int_equal(mc_trace_reader_memory(NULL), 0);
}

/* ---- round trips -------------------------------------------------------- */

static void roundtrip(mc_codec codec, const char *name)
{
    const char *p = tpath(name);
    const size_t n = 10000;
    write_trace(p, n, codec, 1000, 1);
    mc_record *want = malloc(n * sizeof *want);
    make_records(want, n, 1);
    size_t got_n;
    int rc;
    mc_record *got = read_all(p, &got_n, &rc);
    assert_int_equal(rc, 0);
    assert_int_equal(got_n, n);
    for (size_t i = 0; i < n; i++) {
        assert_true(got[i].bytes == want[i].bytes);
        assert_true(got[i].t_start_ns == want[i].t_start_ns);
        assert_true(got[i].t_end_ns == want[i].t_end_ns);
        assert_int_equal(got[i].comm_id, want[i].comm_id);
        assert_int_equal(got[i].comm_size, want[i].comm_size);
        assert_int_equal(got[i].peer, want[i].peer);
        assert_int_equal(got[i].tag, want[i].tag);
        assert_int_equal(got[i].op, want[i].op);
        assert_int_equal(got[i].dir, want[i].dir);
        assert_int_equal(got[i].flags, want[i].flags);
        assert_int_equal(got[i].reserved, 0);
        assert_int_equal(mc_record_check(&got[i], NULL), 0);
    }
    mc_trace_reader *r;
    assert_int_equal(mc_trace_open(p, &r, NULL), 0);
    const mc_trace_header *h = mc_trace_get_header(r);
    assert_int_equal(h->app_rank, 3);
    assert_int_equal(h->app_size, 8);
    assert_string_equal(h->host, "node017");
    const mc_block_info *b;
    size_t nb;
    int ff, complete;
    assert_int_equal(mc_trace_index(r, &b, &nb, &ff, &complete, NULL), 0);
    assert_int_equal(nb, 10);
    assert_int_equal(ff, 1);
    assert_int_equal(complete, 1);
    mc_trace_close(r);
    mc_trace_check c;
    assert_int_equal(mc_trace_verify(p, &c, NULL), 0);
    assert_int_equal(c.records, n);
    assert_int_equal(c.blocks, 10);
    assert_int_equal(c.has_footer, 1);
    free(want);
    free(got);
}

static void test_roundtrip_every_field_uncompressed(void **state)
{
    (void)state;
    roundtrip(MC_CODEC_NONE, "rt-none.mct");
}

static void test_roundtrip_every_field_zstd(void **state)
{
    (void)state;
    roundtrip(MC_CODEC_ZSTD, "rt-zstd.mct");
}

static void test_empty_trace_has_no_blocks(void **state)
{
    (void)state;
    const char *p = tpath("noblocks.mct");
    write_trace(p, 0, MC_CODEC_NONE, 100, 1);
    size_t n;
    int rc;
    free(read_all(p, &n, &rc));
    assert_int_equal(rc, 0);
    assert_int_equal(n, 0);
    assert_int_equal(mc_trace_verify(p, NULL, NULL), 0);
}

/* ---- damage ------------------------------------------------------------- */

static void test_block_checksum_detects_flipped_bit(void **state)
{
    (void)state;
    const char *p = tpath("flip.mct");
    write_trace(p, 500, MC_CODEC_NONE, 100, 1);
    size_t len;
    unsigned char *b = slurp(p, &len);
    /* Block 2 starts at 128 + 2 * (40 + 4800); flip a bit in its payload. */
    const size_t off2 = 128 + 2 * (40 + 4800);
    b[off2 + 40 + 1234] ^= 0x10;
    spit(p, b, len);
    free(b);
    mc_trace_reader *r;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_open(p, &r, &e), 0);
    const mc_record *recs;
    size_t n;
    assert_int_equal(mc_trace_next_block(r, &recs, &n, &e), 1);
    assert_int_equal(mc_trace_next_block(r, &recs, &n, &e), 1);
    assert_int_equal(mc_trace_next_block(r, &recs, &n, &e), MC_ECHECKSUM);
    assert_int_equal(e.block, 2);
    assert_int_equal(e.offset, (int64_t)off2);
    char line[1024];
    mc_errinfo_format(&e, line, sizeof line);
    assert_non_null(strstr(line, "block 2 at offset 9808"));
    assert_non_null(strstr(line, "checksum"));
    mc_trace_close(r);
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_verify(p, NULL, &e), MC_ECHECKSUM);
    assert_int_equal(e.block, 2);
}

static void test_block_header_bit_flip_is_found(void **state)
{
    (void)state;
    const char *p = tpath("hflip.mct");
    write_trace(p, 300, MC_CODEC_NONE, 100, 1);
    size_t len;
    unsigned char *b = slurp(p, &len);
    b[128 + 40 + 4800 + 9] ^= 0x01; /* nrecords of block 1 */
    spit(p, b, len);
    free(b);
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_verify(p, NULL, &e), MC_EBLOCK);
    assert_int_equal(e.block, 1);
    assert_int_equal(e.offset, 128 + 40 + 4800);
    assert_non_null(strstr(e.detail, "block header checksum"));
}

static void test_truncated_mid_header_is_reported(void **state)
{
    (void)state;
    const char *p = tpath("cut-header.mct");
    write_trace(p, 10, MC_CODEC_NONE, 100, 1);
    assert_int_equal(truncate(p, 60), 0);
    mc_trace_reader *r = NULL;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_open(p, &r, &e), MC_ETRUNC);
    assert_null(r);
    assert_non_null(strstr(e.detail, "60 of 128"));
    assert_string_equal(e.path, p);
}

static void test_truncated_mid_block_keeps_complete_blocks(void **state)
{
    (void)state;
    const char *p = tpath("cut-block.mct");
    write_trace(p, 500, MC_CODEC_ZSTD, 100, 1);
    mc_trace_reader *r;
    size_t nb;
    int ff, complete;
    const mc_block_info *b = index_of(p, &r, &nb, &ff, &complete, NULL);
    assert_int_equal(nb, 5);
    const uint64_t cut = b[3].offset + 40 + b[3].stored_len / 2;
    mc_trace_close(r);
    assert_int_equal(truncate(p, (off_t)cut), 0);

    mc_errinfo e;
    mc_errinfo_clear(&e);
    b = index_of(p, &r, &nb, &ff, &complete, &e);
    assert_int_equal(ff, 0);
    assert_int_equal(complete, 0);
    assert_int_equal(nb, 3);
    assert_int_equal(e.code, MC_ETRUNC);
    assert_int_equal(e.block, 3);
    mc_trace_close(r);
    size_t n;
    int rc;
    free(read_all(p, &n, &rc));
    assert_int_equal(n, 300);
    assert_int_equal(rc, MC_ETRUNC);
}

static void test_missing_footer_reads_all_complete_blocks(void **state)
{
    (void)state;
    const char *p = tpath("crash.mct");
    mc_trace_writer *w = open_writer(p, MC_CODEC_NONE, 100, 1);
    mc_record r[550];
    make_records(r, 550, 1);
    assert_int_equal(mc_trace_write(w, r, 550, NULL), 0);
    mc_trace_writer_abandon(w); /* 5 blocks out, 50 records lost */
    size_t n;
    int rc;
    mc_record *got = read_all(p, &n, &rc);
    assert_int_equal(rc, 0);
    assert_int_equal(n, 500);
    assert_memory_equal(got, r, 500 * sizeof *r);
    free(got);
    mc_trace_reader *rd;
    size_t nb;
    int ff, complete;
    const mc_block_info *b = index_of(p, &rd, &nb, &ff, &complete, NULL);
    assert_int_equal(ff, 0);
    assert_int_equal(complete, 1);
    assert_int_equal(nb, 5);
    assert_int_equal(b[4].nrecords, 100);
    mc_trace_close(rd);
    mc_trace_check c;
    assert_int_equal(mc_trace_verify(p, &c, NULL), 0);
    assert_int_equal(c.has_footer, 0);
    assert_int_equal(c.records, 500);
}

static void test_bad_magic_is_rejected(void **state)
{
    (void)state;
    const char *p = tpath("magic.mct");
    write_trace(p, 10, MC_CODEC_NONE, 100, 1);
    size_t len;
    unsigned char *b = slurp(p, &len);
    b[3] = 'X';
    spit(p, b, len);
    free(b);
    mc_trace_reader *r;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_open(p, &r, &e), MC_EMAGIC);
    assert_string_equal(e.path, p);
}

static void test_unknown_major_version_names_both_versions(void **state)
{
    (void)state;
    const char *p = tpath("v3.mct");
    write_trace(p, 10, MC_CODEC_NONE, 100, 1);
    size_t len;
    unsigned char *b = slurp(p, &len);
    mc__put16(b + 8, 3);
    mc__put16(b + 10, 3);
    spit(p, b, len);
    free(b);
    mc_trace_reader *r;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_open(p, &r, &e), MC_EVERSION);
    assert_string_equal(e.detail,
                        "file is version 3.3, this reader reads 1.x to 2.x");
    /* Major 0 is no version either. */
    b = slurp(p, &len);
    mc__put16(b + 8, 0);
    spit(p, b, len);
    free(b);
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_open(p, &r, &e), MC_EVERSION);
}

static void
test_later_minor_with_longer_header_and_records_is_read(void **state)
{
    (void)state;
    /* Hand-made 1.1 and 2.1 files: 160-byte header, one block of 2 records
     * of 56 bytes (the 48-byte record followed by 8 bytes a x.0 reader
     * ignores), with the payload checksum of each major. */
    for (unsigned major = 1; major <= 2; major++) {
        unsigned char f[160 + 40 + 112];
        memset(f, 0xee, sizeof f);
        mc_trace_header h;
        test_header(&h);
        h.version_major = (uint16_t)major;
        mc_trace_header_encode(&h, f);
        mc__put16(f + 10, 1);
        mc__put32(f + 16, 160);
        mc__put32(f + 124, XXH32(f, 124, 0));
        unsigned char *pl = f + 200;
        memcpy(pl, spec_records, 48);
        memcpy(pl + 56, spec_records + 48, 48);
        const uint64_t sum =
            major == 1 ? XXH64(pl, 112, 0) : XXH3_64bits(pl, 112);
        mc__block_header bh = {
            MC_BLOCK_MAGIC, 0, 2, 112, 112, 0, 0, 56, sum, 0, 0};
        mc__block_header_encode(&bh, f + 160);
        const char *p = tpath("v11.mct");
        spit(p, f, sizeof f);
        size_t n;
        int rc;
        mc_record *got = read_all(p, &n, &rc);
        assert_int_equal(rc, 0);
        assert_int_equal(n, 2);
        assert_memory_equal(&got[0], &spec_rec_a, sizeof got[0]);
        assert_memory_equal(&got[1], &spec_rec_b, sizeof got[1]);
        free(got);
    }
}

static void test_short_file_with_magic_prefix_is_truncated(void **state)
{
    (void)state;
    const char *p = tpath("short.mct");
    spit(p, (const unsigned char *)"MCTRA", 5);
    mc_trace_reader *r;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_open(p, &r, &e), MC_ETRUNC);
    spit(p, (const unsigned char *)"MCXRA", 5);
    assert_int_equal(mc_trace_open(p, &r, &e), MC_EMAGIC);
}

static void test_writer_reports_uncreatable_path(void **state)
{
    (void)state;
    mc_trace_header h;
    test_header(&h);
    mc_trace_writer *w = (mc_trace_writer *)&h; /* must be reset to NULL */
    mc_errinfo e;
    mc_errinfo_clear(&e);
    const char *p = tpath("no-such-dir/x.mct");
    assert_int_equal(mc_trace_writer_open(p, &h, NULL, &w, &e), MC_EOPEN);
    assert_null(w);
    assert_string_equal(e.path, p);
    assert_int_equal(e.sys_errno, ENOENT);
    /* The free functions accept NULL. */
    assert_int_equal(mc_trace_writer_close(NULL, NULL), 0);
    mc_trace_writer_abandon(NULL);
    mc_trace_close(NULL);
}

static void test_empty_file_is_rejected(void **state)
{
    (void)state;
    const char *p = tpath("empty.mct");
    spit(p, (const unsigned char *)"", 0);
    mc_trace_reader *r;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_open(p, &r, &e), MC_ETRUNC);
    assert_non_null(strstr(e.detail, "empty file"));
}

static void test_corrupt_zstd_frame_is_reported(void **state)
{
    (void)state;
    const char *p = tpath("zbad.mct");
    write_trace(p, 300, MC_CODEC_ZSTD, 100, 1);
    size_t len;
    unsigned char *b = slurp(p, &len);
    const size_t off1 = 128 + 40 + mc__get32(b + 128 + 16);
    b[off1 + 40] ^= 0xff; /* the zstd frame magic of block 1 */
    spit(p, b, len);
    free(b);
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_verify(p, NULL, &e), MC_ECODEC);
    assert_int_equal(e.block, 1);
    assert_int_equal(e.offset, (int64_t)off1);
}

static void test_corrupt_zstd_content_is_reported(void **state)
{
    (void)state;
    const char *p = tpath("zbad2.mct");
    write_trace(p, 300, MC_CODEC_ZSTD, 100, 1);
    size_t len;
    unsigned char *b = slurp(p, &len);
    const uint32_t sl = mc__get32(b + 128 + 16);
    b[128 + 40 + sl / 2] ^= 0x55; /* inside the compressed data */
    spit(p, b, len);
    free(b);
    mc_errinfo e;
    mc_errinfo_clear(&e);
    const int rc = mc_trace_verify(p, NULL, &e);
    /* Either zstd notices or the XXH64 of the decoded bytes does. */
    assert_true(rc == MC_ECODEC || rc == MC_ECHECKSUM);
    assert_int_equal(e.block, 0);
}

static void test_damaged_footer_falls_back_to_walk(void **state)
{
    (void)state;
    const char *p = tpath("foot.mct");
    write_trace(p, 500, MC_CODEC_NONE, 100, 1);
    size_t len;
    unsigned char *b = slurp(p, &len);
    const uint64_t foff = mc__get64(b + len - 16);
    b[foff + 8 + 16 + 8] ^= 0x01; /* nrecords of entry 1 */
    spit(p, b, len);
    free(b);
    mc_trace_reader *r;
    size_t nb;
    int ff, complete;
    const mc_block_info *bl = index_of(p, &r, &nb, &ff, &complete, NULL);
    assert_int_equal(ff, 0);
    assert_int_equal(complete, 1);
    assert_int_equal(nb, 5);
    assert_int_equal(bl[1].nrecords, 100);
    mc_trace_close(r);
    size_t n;
    int rc;
    free(read_all(p, &n, &rc));
    assert_int_equal(rc, 0);
    assert_int_equal(n, 500);
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_verify(p, NULL, &e), MC_EFOOTER);
    assert_non_null(strstr(e.detail, "footer checksum"));
}

static void test_footer_disagreeing_with_blocks_is_found(void **state)
{
    (void)state;
    /* A footer with valid checksums whose entry lies about a record count
     * (consistent total): only the walk comparison can find it. */
    const char *p = tpath("foot2.mct");
    write_trace(p, 500, MC_CODEC_NONE, 100, 1);
    size_t len;
    unsigned char *b = slurp(p, &len);
    const uint64_t foff = mc__get64(b + len - 16);
    unsigned char *e1 = b + foff + 8 + 16, *e2 = e1 + 16;
    mc__put32(e1 + 8, 99);
    mc__put32(e2 + 8, 101);
    const size_t flen = 8 + 5 * 16 + 8;
    mc__put64(b + foff + flen, XXH64(b + foff, flen, 0));
    spit(p, b, len);
    free(b);
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_verify(p, NULL, &e), MC_EFOOTER);
    assert_int_equal(e.block, 1);
    assert_non_null(strstr(e.detail, "differs from the block header"));
}

static void test_hostile_record_count_is_rejected(void **state)
{
    (void)state;
    unsigned char f[128 + 40];
    mc_trace_header h;
    test_header(&h);
    mc_trace_header_encode(&h, f);
    mc__block_header bh = {MC_BLOCK_MAGIC,
                           0,
                           0xffffffffu,
                           0xfffffff0u,
                           0xfffffff0u,
                           0,
                           0,
                           48,
                           0,
                           0,
                           0};
    mc__block_header_encode(&bh, f + 128);
    const char *p = tpath("hostile.mct");
    spit(p, f, sizeof f);
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_verify(p, NULL, &e), MC_EBLOCK);
    assert_non_null(strstr(e.detail, "limit"));
    /* A plausible count whose payload lies beyond the end of the file. */
    bh.nrecords = 1000;
    bh.raw_len = bh.stored_len = 48000;
    mc__block_header_encode(&bh, f + 128);
    spit(p, f, sizeof f);
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_verify(p, NULL, &e), MC_ETRUNC);
    assert_non_null(strstr(e.detail, "payload cut short"));
}

/* ---- range reads -------------------------------------------------------- */

static void test_seek_block_reads_one_range(void **state)
{
    (void)state;
    const char *p = tpath("seek.mct");
    write_trace(p, 1000, MC_CODEC_ZSTD, 64, 1);
    mc_record *want = malloc(1000 * sizeof *want);
    make_records(want, 1000, 1);
    mc_trace_reader *r;
    size_t nb;
    int ff, complete;
    const mc_block_info *b = index_of(p, &r, &nb, &ff, &complete, NULL);
    assert_int_equal(nb, 16); /* 15 full blocks of 64 and one of 40 */
    /* Blocks 9, then 3..4, then the last, out of order. */
    const size_t order[] = {9, 3, 4, 15};
    for (size_t k = 0; k < 4; k++) {
        const size_t i = order[k];
        assert_int_equal(mc_trace_seek_block(r, &b[i], i, NULL), 0);
        const mc_record *recs;
        size_t n;
        assert_int_equal(mc_trace_next_block(r, &recs, &n, NULL), 1);
        assert_int_equal(n, b[i].nrecords);
        assert_memory_equal(recs, want + 64 * i, n * sizeof *recs);
        uint64_t ci, co;
        mc_trace_current_block(r, &ci, &co);
        assert_int_equal(ci, i);
        assert_int_equal(co, b[i].offset);
    }
    const mc_record *recs;
    size_t n;
    assert_int_equal(mc_trace_next_block(r, &recs, &n, NULL), 0);
    mc_trace_close(r);
    free(want);
}

/* ---- record checks ------------------------------------------------------ */

static void expect_bad(const mc_record *rec, const char *phrase)
{
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_record_check(rec, &e), MC_ERECORD);
    assert_non_null(strstr(e.detail, phrase));
    /* The inline test of the reducer's loop says the same. */
    assert_int_equal(mc_record_valid(rec, mc_op_known_table()), 0);
}

static void test_record_check_rejects_each_bad_field(void **state)
{
    (void)state;
    mc_record r = spec_rec_a;
    assert_int_equal(mc_record_check(&r, NULL), 0);
    assert_int_equal(mc_record_valid(&r, mc_op_known_table()), 1);
    r.op = 99;
    expect_bad(&r, "unknown operation code 99");
    r = spec_rec_a;
    r.dir = 3;
    expect_bad(&r, "direction 3");
    r = spec_rec_a;
    r.flags = 0x48;
    expect_bad(&r, "unknown flag bits 0x48");
    r = spec_rec_a;
    r.t_end_ns = r.t_start_ns - 1;
    expect_bad(&r, "earlier than t_start_ns");
    r = spec_rec_a;
    r.reserved = 7;
    expect_bad(&r, "reserved");
}

static void test_record_check_agrees_with_op_table(void **state)
{
    (void)state;
    /* mc_record_check() keeps its own lookup table of op codes: it must
     * accept exactly the codes mc_op_valid() accepts. */
    mc_record r = spec_rec_a;
    for (unsigned code = 0; code <= UINT16_MAX; code++) {
        r.op = (uint16_t)code;
        assert_int_equal(mc_record_check(&r, NULL) == 0, mc_op_valid(code));
        assert_int_equal(mc_record_valid(&r, mc_op_known_table()),
                         mc_op_valid(code));
    }
}

static void test_verify_names_the_bad_record(void **state)
{
    (void)state;
    const char *p = tpath("badrec.mct");
    mc_trace_writer *w = open_writer(p, MC_CODEC_NONE, 10, 1);
    mc_record r[25];
    make_records(r, 25, 1);
    r[17].op = 999;
    assert_int_equal(mc_trace_write(w, r, 25, NULL), 0);
    assert_int_equal(mc_trace_writer_close(w, NULL), 0);
    mc_errinfo e;
    mc_errinfo_clear(&e);
    assert_int_equal(mc_trace_verify(p, NULL, &e), MC_ERECORD);
    assert_int_equal(e.block, 1);
    assert_string_equal(e.detail,
                        "record 7 of the block: unknown operation code 999");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_header_bytes_match_spec),
        cmocka_unit_test(test_record_bytes_match_spec),
        cmocka_unit_test(test_block_bytes_match_spec),
        cmocka_unit_test(test_both_majors_read_and_checksums_differ),
        cmocka_unit_test(test_reader_memory_is_bounded_by_a_block),
        cmocka_unit_test(test_footer_bytes_match_spec),
        cmocka_unit_test(test_xxhash_matches_reference_values),
        cmocka_unit_test(test_roundtrip_every_field_uncompressed),
        cmocka_unit_test(test_roundtrip_every_field_zstd),
        cmocka_unit_test(test_empty_trace_has_no_blocks),
        cmocka_unit_test(test_block_checksum_detects_flipped_bit),
        cmocka_unit_test(test_block_header_bit_flip_is_found),
        cmocka_unit_test(test_truncated_mid_header_is_reported),
        cmocka_unit_test(test_truncated_mid_block_keeps_complete_blocks),
        cmocka_unit_test(test_missing_footer_reads_all_complete_blocks),
        cmocka_unit_test(test_bad_magic_is_rejected),
        cmocka_unit_test(test_unknown_major_version_names_both_versions),
        cmocka_unit_test(
            test_later_minor_with_longer_header_and_records_is_read),
        cmocka_unit_test(test_empty_file_is_rejected),
        cmocka_unit_test(test_short_file_with_magic_prefix_is_truncated),
        cmocka_unit_test(test_writer_reports_uncreatable_path),
        cmocka_unit_test(test_corrupt_zstd_frame_is_reported),
        cmocka_unit_test(test_corrupt_zstd_content_is_reported),
        cmocka_unit_test(test_damaged_footer_falls_back_to_walk),
        cmocka_unit_test(test_footer_disagreeing_with_blocks_is_found),
        cmocka_unit_test(test_hostile_record_count_is_rejected),
        cmocka_unit_test(test_seek_block_reads_one_range),
        cmocka_unit_test(test_record_check_rejects_each_bad_field),
        cmocka_unit_test(test_record_check_agrees_with_op_table),
        cmocka_unit_test(test_verify_names_the_bad_record),
    };
    return cmocka_run_group_tests(tests, group_setup, group_teardown);
}
