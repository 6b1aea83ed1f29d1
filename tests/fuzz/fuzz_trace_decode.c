/* fuzz_trace_decode.c - fuzz harness: the file header, block header and record
 * decoders on arbitrary bytes, with encode round trips. */
#include "fuzz_common.h"

#include <string.h> /* memcmp, memset, strcmp */

#include <msgcensus/ops.h>   /* mc_op_valid, MC_DIR_* */
#include <msgcensus/trace.h> /* the public decoders */

#include "trace_internal.h" /* mc__block_header_decode (library internal) */

/* The file header decoder on the whole input. */
static void fuzz_file_header(const uint8_t *data, size_t size)
{
    mc_trace_header h;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    const int rc = mc_trace_header_decode(data, size, &h, &e);
    if (rc) {
        fuzz_check_errinfo(&e, rc, (int64_t)size);
        FUZZ_CHECK(rc == MC_EMAGIC || rc == MC_ETRUNC || rc == MC_EENDIAN ||
                   rc == MC_EVERSION || rc == MC_EHEADER);
        return;
    }
    FUZZ_CHECK(size >= MC_TRACE_HEADER_SIZE);
    FUZZ_CHECK(h.version_major >= MC_TRACE_OLDEST_MAJOR &&
               h.version_major <= MC_TRACE_VERSION_MAJOR);
    FUZZ_CHECK(strnlen(h.host, sizeof h.host) < sizeof h.host);
    /* Encoding what was decoded gives a header that decodes to the same
     * fields (the writer always writes its own minor version and a
     * 128-byte header, so those two are not compared). */
    unsigned char again[MC_TRACE_HEADER_SIZE];
    mc_trace_header_encode(&h, again);
    mc_trace_header h2;
    mc_errinfo_clear(&e);
    FUZZ_CHECK(mc_trace_header_decode(again, sizeof again, &h2, &e) == 0);
    FUZZ_CHECK(h2.flags == h.flags && h2.app_rank == h.app_rank &&
               h2.app_size == h.app_size && h2.clock_res_ps == h.clock_res_ps &&
               h2.created_unix_ns == h.created_unix_ns &&
               h2.epoch_unix_ns == h.epoch_unix_ns);
    FUZZ_CHECK(strcmp(h2.host, h.host) == 0);
}

/* The block header decoder on the first 40 bytes. */
static void fuzz_block_header(const uint8_t *data, size_t size)
{
    if (size < MC_BLOCK_HEADER_SIZE)
        return;
    mc__block_header bh;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    const int rc = mc__block_header_decode(data, &bh, "fuzz", 3, 4096, &e);
    if (rc) {
        fuzz_check_errinfo(&e, rc, -1);
        FUZZ_CHECK(rc == MC_EBLOCK);
        FUZZ_CHECK(e.block == 3 && e.offset == 4096);
        return;
    }
    /* The limits docs/trace-format.md sets for a block header. */
    FUZZ_CHECK(bh.codec == MC_CODEC_NONE || bh.codec == MC_CODEC_ZSTD);
    FUZZ_CHECK(bh.record_size >= MC_RECORD_SIZE);
    FUZZ_CHECK(bh.nrecords <= MC_BLOCK_MAX_RECORDS);
    FUZZ_CHECK((uint64_t)bh.nrecords * bh.record_size == bh.raw_len);
    FUZZ_CHECK(bh.raw_len <= MC_BLOCK_MAX_RAW_BYTES);
    if (bh.codec == MC_CODEC_NONE)
        FUZZ_CHECK(bh.stored_len == bh.raw_len);
    /* The checksum covers bytes 0..31 and is stored at 32..35; encoding
     * the decoded header reproduces those 36 bytes. */
    unsigned char again[MC_BLOCK_HEADER_SIZE];
    mc__block_header_encode(&bh, again);
    FUZZ_CHECK(memcmp(again, data, 36) == 0);
}

/* The record decoder and checker on every 48-byte slice. */
static void fuzz_records(const uint8_t *data, size_t size)
{
    for (size_t off = 0; off + MC_RECORD_SIZE <= size; off += MC_RECORD_SIZE) {
        mc_record rec;
        mc_record_decode(data + off, &rec);
        unsigned char again[MC_RECORD_SIZE];
        mc_record_encode(&rec, again);
        FUZZ_CHECK(memcmp(again, data + off, MC_RECORD_SIZE) == 0);
        mc_errinfo e;
        mc_errinfo_clear(&e);
        const int rc = mc_record_check(&rec, &e);
        /* The rules of trace.h, written out independently. */
        const int valid = mc_op_valid(rec.op) &&
                          (rec.dir == MC_DIR_NONE || rec.dir == MC_DIR_SEND ||
                           rec.dir == MC_DIR_RECV) &&
                          (rec.flags & ~MC_RF_KNOWN_MASK) == 0 &&
                          rec.t_end_ns >= rec.t_start_ns && rec.reserved == 0;
        if (rc) {
            fuzz_check_errinfo(&e, rc, -1);
            FUZZ_CHECK(rc == MC_ERECORD);
            FUZZ_CHECK(e.detail[0] != '\0');
        }
        FUZZ_CHECK(valid == (rc == 0));
        if (valid)
            FUZZ_CHECK(mc_op_name(rec.op) != NULL);
    }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    fuzz_file_header(data, size);
    fuzz_block_header(data, size);
    fuzz_records(data, size);
    return 0;
}
