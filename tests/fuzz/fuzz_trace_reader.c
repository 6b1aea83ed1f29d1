/* fuzz_trace_reader.c - fuzz harness: arbitrary bytes as a trace file through
 * open, index, block iteration, seeks and the whole-file check.
 *
 * Built twice: fuzz_trace_reader takes the bytes as they are, so it probes
 * the checks in front of the checksums; fuzz_trace_fixup (FUZZ_FIXUP=1)
 * first recomputes every checksum a writer would have written, so that
 * mutations reach the block decoder, the zstd path and the records. */
#include "fuzz_common.h"

#ifndef FUZZ_FIXUP
#define FUZZ_FIXUP 0
#endif

#include <fcntl.h>  /* open */
#include <stdio.h>  /* snprintf */
#include <stdlib.h> /* getenv, mkstemp, malloc, free */
#include <string.h> /* memset, strnlen */
#include <unistd.h> /* pwrite, ftruncate, unlink */

#include <msgcensus/ops.h>   /* mc_op_valid */
#include <msgcensus/trace.h> /* the reader */

#if FUZZ_FIXUP
#include <xxhash.h> /* XXH32, XXH64 */
#include <zstd.h>   /* ZSTD_decompress */

#include "trace_internal.h" /* mc__get32, mc__put32, mc__put64 */
#endif

/* The input lives in one unlinked file in /dev/shm (or $TMPDIR), reached
 * as /proc/self/fd/N: the reader opens a path like any trace, nothing is
 * left behind when the process dies, and no disk I/O is involved. */
static int input_fd = -1;
static char input_path[64];

static void input_setup(void)
{
    char tmpl[4096];
    snprintf(tmpl, sizeof tmpl, "/dev/shm/mc-fuzz-XXXXXX");
    int fd = mkstemp(tmpl);
    if (fd < 0) {
        const char *t = getenv("TMPDIR");
        snprintf(tmpl, sizeof tmpl, "%s/mc-fuzz-XXXXXX", t ? t : "/tmp");
        fd = mkstemp(tmpl);
    }
    FUZZ_CHECK(fd >= 0);
    unlink(tmpl);
    input_fd = fd;
    snprintf(input_path, sizeof input_path, "/proc/self/fd/%d", fd);
}

static void input_put(const uint8_t *data, size_t size)
{
    FUZZ_CHECK(ftruncate(input_fd, 0) == 0);
    size_t done = 0;
    while (done < size) {
        const ssize_t k =
            pwrite(input_fd, data + done, size - done, (off_t)done);
        FUZZ_CHECK(k > 0);
        done += (size_t)k;
    }
}

/* Keeps the record loop from being optimised away. */
static volatile uint64_t sink;

/* Touch and check every record of a block; returns how many failed
 * mc_record_check. */
static size_t check_records(const mc_record *recs, size_t n)
{
    size_t bad = 0;
    uint64_t acc = 0;
    for (size_t i = 0; i < n; i++) {
        mc_errinfo e;
        mc_errinfo_clear(&e);
        const int rc = mc_record_check(&recs[i], &e);
        if (rc) {
            fuzz_check_errinfo(&e, rc, -1);
            FUZZ_CHECK(rc == MC_ERECORD);
            bad++;
        } else {
            /* What trace.h promises of a record that passes. */
            FUZZ_CHECK(mc_op_valid(recs[i].op));
            FUZZ_CHECK(recs[i].t_end_ns >= recs[i].t_start_ns);
            FUZZ_CHECK(recs[i].reserved == 0);
        }
        acc += recs[i].bytes ^ recs[i].t_start_ns ^ recs[i].comm_id;
    }
    sink = acc;
    return bad;
}

/* What a full pass of the reader saw. */
typedef struct pass {
    int opened;
    int clean;        /* iteration reached the end without an error */
    uint64_t blocks;  /* blocks returned */
    uint64_t records; /* records in them */
    uint64_t bad_records;
} pass;

static void read_all(const uint8_t *data, size_t size, pass *out)
{
    const int64_t limit = (int64_t)size;
    mc_trace_reader *r = NULL;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    int rc = mc_trace_open(input_path, &r, &e);
    if (rc) {
        fuzz_check_errinfo(&e, rc, limit);
        FUZZ_CHECK(r == NULL);
        return;
    }
    out->opened = 1;
    FUZZ_CHECK(mc_trace_file_size(r) == size);
    const mc_trace_header *h = mc_trace_get_header(r);
    FUZZ_CHECK(h->version_major >= MC_TRACE_OLDEST_MAJOR &&
               h->version_major <= MC_TRACE_VERSION_MAJOR);
    FUZZ_CHECK(strnlen(h->host, sizeof h->host) < sizeof h->host);

    const mc_block_info *blocks = NULL;
    size_t nblocks = 0;
    int from_footer = -1, complete = -1;
    mc_errinfo_clear(&e);
    rc = mc_trace_index(r, &blocks, &nblocks, &from_footer, &complete, &e);
    if (rc) {
        fuzz_check_errinfo(&e, rc, limit);
        nblocks = 0;
    } else {
        FUZZ_CHECK(from_footer == 0 || from_footer == 1);
        FUZZ_CHECK(complete == 0 || complete == 1);
        if (!complete)
            fuzz_check_errinfo(&e, e.code, limit);
        /* Every listed block lies inside the file, in order. */
        uint64_t prev_end = 0;
        for (size_t i = 0; i < nblocks; i++) {
            FUZZ_CHECK(blocks[i].offset >= prev_end);
            prev_end =
                blocks[i].offset + MC_BLOCK_HEADER_SIZE + blocks[i].stored_len;
            FUZZ_CHECK(prev_end <= size);
            FUZZ_CHECK(blocks[i].nrecords <= MC_BLOCK_MAX_RECORDS);
        }
    }
    const int walked_complete = !rc && complete && !from_footer;

    /* Front to back, as the reducer reads. A block is at least a header,
     * so a file of @size bytes cannot yield more than size / 40 blocks. */
    for (uint64_t it = 0;; it++) {
        FUZZ_CHECK(it <= size / MC_BLOCK_HEADER_SIZE + 1);
        const mc_record *recs = NULL;
        size_t n = 0;
        mc_errinfo_clear(&e);
        rc = mc_trace_next_block(r, &recs, &n, &e);
        if (rc == 0) {
            out->clean = 1;
            break;
        }
        if (rc < 0) {
            fuzz_check_errinfo(&e, rc, limit);
            FUZZ_CHECK(e.block == (int64_t)out->blocks);
            break;
        }
        FUZZ_CHECK(rc == 1);
        FUZZ_CHECK(n <= MC_BLOCK_MAX_RECORDS);
        FUZZ_CHECK(n == 0 || recs != NULL);
        uint64_t bi = 0, boff = 0;
        mc_trace_current_block(r, &bi, &boff);
        FUZZ_CHECK(bi == out->blocks);
        FUZZ_CHECK(boff < size);
        if (walked_complete) {
            /* The walk read the same block headers. */
            FUZZ_CHECK(bi < nblocks);
            FUZZ_CHECK(blocks[bi].offset == boff);
            FUZZ_CHECK(blocks[bi].nrecords == n);
        }
        out->bad_records += check_records(recs, n);
        out->blocks++;
        out->records += n;
    }
    if (walked_complete && out->clean)
        FUZZ_CHECK(out->blocks == nblocks);

    /* Random access to every listed block, last first, as a partition
     * plan would do it. */
    for (size_t k = nblocks; k-- > 0;) {
        mc_errinfo_clear(&e);
        rc = mc_trace_seek_block(r, &blocks[k], k, &e);
        FUZZ_CHECK(rc == 0);
        const mc_record *recs = NULL;
        size_t n = 0;
        rc = mc_trace_next_block(r, &recs, &n, &e);
        if (rc < 0) {
            fuzz_check_errinfo(&e, rc, limit);
            continue;
        }
        if (rc == 0)
            continue;
        uint64_t bi = 0, boff = 0;
        mc_trace_current_block(r, &bi, &boff);
        FUZZ_CHECK(bi == k && boff == blocks[k].offset);
        if (!from_footer)
            FUZZ_CHECK(n == blocks[k].nrecords);
        check_records(recs, n);
    }

    /* A seek to an offset the input chooses (its last 8 bytes, folded
     * into the file and a little past it): either refused, or the next
     * read fails cleanly, ends, or returns a block. */
    if (size >= 8) {
        uint64_t want = 0;
        for (size_t i = size - 8; i < size; i++)
            want = (want << 8) | data[i];
        const mc_block_info b = {want % (size + 64), 0, 0, 0};
        mc_errinfo_clear(&e);
        rc = mc_trace_seek_block(r, &b, 0, &e);
        if (rc) {
            fuzz_check_errinfo(&e, rc, -1);
            FUZZ_CHECK(rc == MC_ERANGE);
        } else {
            const mc_record *recs = NULL;
            size_t n = 0;
            rc = mc_trace_next_block(r, &recs, &n, &e);
            if (rc < 0)
                fuzz_check_errinfo(&e, rc, limit);
            else if (rc == 1)
                check_records(recs, n);
        }
    }
    mc_trace_close(r);
}

#if FUZZ_FIXUP
/* Largest zstd payload the fixup decompresses to compute its checksum. */
#define FIXUP_MAX_RAW (4u << 20)

/* Rewrite, in place, the checksums of the file header, of each block
 * header and payload along the block walk, of the footer and of the
 * trailer, as the writer computes them (docs/trace-format.md). */
static void fixup_checksums(unsigned char *p, size_t size)
{
    static unsigned char *raw;
    if (!raw)
        raw = malloc(FIXUP_MAX_RAW);
    if (size >= MC_TRACE_HEADER_SIZE)
        mc__put32(p + 124, XXH32(p, 124, 0));
    /* The payload checksum of the file's major (XXH64 in 1.x, XXH3 in
     * 2.x); 0 for a major no reader accepts. */
    const unsigned major = size >= 10 ? mc__get16(p + 8) : 0;
    uint64_t off = MC_TRACE_HEADER_SIZE;
    if (size >= 20) {
        const uint32_t hs = mc__get32(p + 16);
        if (hs >= MC_TRACE_HEADER_SIZE && hs <= MC_TRACE_MAX_HEADER_SIZE)
            off = hs;
    }
    while (off + MC_BLOCK_HEADER_SIZE <= size) {
        unsigned char *b = p + off;
        if (mc__get32(b) == MC_INDEX_MAGIC) {
            const uint64_t fsize = mc__footer_size(mc__get32(b + 4));
            if (off + fsize <= size)
                mc__put64(b + fsize - 8, XXH64(b, (size_t)fsize - 8, 0));
            break;
        }
        const uint32_t raw_len = mc__get32(b + 12);
        const uint32_t stored = mc__get32(b + 16);
        if (off + MC_BLOCK_HEADER_SIZE + stored > size)
            break;
        const unsigned char *payload = b + MC_BLOCK_HEADER_SIZE;
        if (b[20] == MC_CODEC_NONE && raw_len <= stored) {
            mc__put64(b + 24,
                      mc_trace_payload_checksum(major, payload, raw_len));
        } else if (b[20] == MC_CODEC_ZSTD && raw && raw_len <= FIXUP_MAX_RAW) {
            const size_t k = ZSTD_decompress(raw, raw_len, payload, stored);
            if (!ZSTD_isError(k) && k == raw_len)
                mc__put64(b + 24,
                          mc_trace_payload_checksum(major, raw, raw_len));
        }
        mc__put32(b + 32, XXH32(b, 32, 0));
        off += MC_BLOCK_HEADER_SIZE + (uint64_t)stored;
    }
    if (size >= MC_TRAILER_SIZE) {
        unsigned char *t = p + size - MC_TRAILER_SIZE;
        if (mc__get32(t + 8) == MC_TRAILER_MAGIC)
            mc__put32(t + 12, XXH32(t, 12, 0));
    }
}
#endif

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (input_fd < 0)
        input_setup();
#if FUZZ_FIXUP
    unsigned char *fixed = malloc(size ? size : 1);
    FUZZ_CHECK(fixed != NULL);
    memcpy(fixed, data, size);
    fixup_checksums(fixed, size);
    data = fixed;
#endif
    input_put(data, size);

    pass p;
    memset(&p, 0, sizeof p);
    read_all(data, size, &p);

    /* The whole-file check must agree with what the reader delivered: a
     * file it passes reads cleanly to the end with valid records only, and
     * the counts match. */
    mc_trace_check chk;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    const int rc = mc_trace_verify(input_path, &chk, &e);
    if (rc) {
        fuzz_check_errinfo(&e, rc, (int64_t)size);
    } else {
        FUZZ_CHECK(p.opened && p.clean);
        FUZZ_CHECK(p.bad_records == 0);
        FUZZ_CHECK(chk.header_ok);
        FUZZ_CHECK(chk.file_bytes == size);
        FUZZ_CHECK(chk.blocks == p.blocks);
        FUZZ_CHECK(chk.records == p.records);
    }
#if FUZZ_FIXUP
    free(fixed);
#endif
    return 0;
}
