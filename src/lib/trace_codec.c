/* trace_codec.c - encode and decode the file header, block headers and records
 * of the trace format (1.x and 2.x). */
#include "trace_internal.h"

#include <stddef.h> /* offsetof */
#include <string.h> /* memcpy, memset, strnlen */

#include <msgcensus/ops.h> /* mc_op_valid, MC_DIR_* */
#include <xxhash.h>        /* XXH32, XXH64, XXH3_64bits */
#if defined(__x86_64__) && defined(__has_include)
#if __has_include(<xxh_x86dispatch.h>)
/* libxxhash picks SSE2, AVX2 or AVX-512 for XXH3 at run time; the value is
 * the same whichever it picks. */
#include <xxh_x86dispatch.h>
#endif
#endif
#include <zstd.h> /* ZSTD_compressBound */

/* The record struct must match the 48-byte on-disk record exactly, so that
 * little-endian hosts can copy whole blocks of records. */
_Static_assert(sizeof(mc_record) == MC_RECORD_SIZE, "mc_record is 48 bytes");
_Static_assert(offsetof(mc_record, bytes) == 0, "bytes at 0");
_Static_assert(offsetof(mc_record, t_start_ns) == 8, "t_start_ns at 8");
_Static_assert(offsetof(mc_record, t_end_ns) == 16, "t_end_ns at 16");
_Static_assert(offsetof(mc_record, comm_id) == 24, "comm_id at 24");
_Static_assert(offsetof(mc_record, comm_size) == 28, "comm_size at 28");
_Static_assert(offsetof(mc_record, peer) == 32, "peer at 32");
_Static_assert(offsetof(mc_record, tag) == 36, "tag at 36");
_Static_assert(offsetof(mc_record, op) == 40, "op at 40");
_Static_assert(offsetof(mc_record, dir) == 42, "dir at 42");
_Static_assert(offsetof(mc_record, flags) == 43, "flags at 43");
_Static_assert(offsetof(mc_record, reserved) == 44, "reserved at 44");

void mc_trace_header_init(mc_trace_header *hdr, int32_t rank, int32_t size)
{
    memset(hdr, 0, sizeof *hdr);
    hdr->version_major = MC_TRACE_VERSION_MAJOR;
    hdr->version_minor = MC_TRACE_VERSION_MINOR;
    hdr->app_rank = rank;
    hdr->app_size = size;
    hdr->clock_res_ps = 1000;
}

void mc_trace_header_encode(const mc_trace_header *hdr,
                            unsigned char out[MC_TRACE_HEADER_SIZE])
{
    memset(out, 0, MC_TRACE_HEADER_SIZE);
    memcpy(out, MC_TRACE_MAGIC, MC_TRACE_MAGIC_LEN);
    /* A writer writes a version it implements: 1.0 when asked for major 1,
     * else the current one. Both lay the header out as below. */
    mc__put16(out + 8, hdr->version_major == 1 ? 1 : MC_TRACE_VERSION_MAJOR);
    mc__put16(out + 10, hdr->version_major == 1 ? 0 : MC_TRACE_VERSION_MINOR);
    mc__put32(out + 12, MC_TRACE_ENDIAN_MARK);
    mc__put32(out + 16, MC_TRACE_HEADER_SIZE);
    mc__put32(out + 20, hdr->flags);
    mc__put32(out + 24, (uint32_t)hdr->app_rank);
    mc__put32(out + 28, (uint32_t)hdr->app_size);
    mc__put64(out + 32, hdr->clock_res_ps);
    mc__put64(out + 40, (uint64_t)hdr->created_unix_ns);
    mc__put64(out + 48, hdr->epoch_unix_ns);
    memcpy(out + 56, hdr->host, strnlen(hdr->host, MC_TRACE_HOST_LEN));
    mc__put32(out + 120, 0);
    mc__put32(out + 124, XXH32(out, 124, 0));
}

int mc_trace_header_decode(const unsigned char *in, size_t len,
                           mc_trace_header *hdr, mc_errinfo *err)
{
    if (!in || !hdr)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1, "no buffer");
    const size_t mlen = len < MC_TRACE_MAGIC_LEN ? len : MC_TRACE_MAGIC_LEN;
    if (memcmp(in, MC_TRACE_MAGIC, mlen) != 0)
        return mc_errinfo_set(err, MC_EMAGIC, NULL, -1, 0,
                              "the first 8 bytes are not \"MCTRACE\\x1a\"");
    if (len < 16)
        return mc_errinfo_set(err, MC_ETRUNC, NULL, -1, (int64_t)len,
                              "file header cut short after %zu of %u bytes",
                              len, MC_TRACE_HEADER_SIZE);
    const uint32_t mark = mc__get32(in + 12);
    if (mark != MC_TRACE_ENDIAN_MARK)
        return mc_errinfo_set(err, MC_EENDIAN, NULL, -1, 12,
                              "byte order marker 0x%08x, expected 0x%08x", mark,
                              MC_TRACE_ENDIAN_MARK);
    /* The version comes before the checksum: another major may lay out
     * the rest of the header differently. */
    const unsigned major = mc__get16(in + 8), minor = mc__get16(in + 10);
    if (major < MC_TRACE_OLDEST_MAJOR || major > MC_TRACE_VERSION_MAJOR)
        return mc_errinfo_set(err, MC_EVERSION, NULL, -1, 8,
                              "file is version %u.%u, this reader reads %d.x "
                              "to %d.x",
                              major, minor, MC_TRACE_OLDEST_MAJOR,
                              MC_TRACE_VERSION_MAJOR);
    if (len < MC_TRACE_HEADER_SIZE)
        return mc_errinfo_set(err, MC_ETRUNC, NULL, -1, (int64_t)len,
                              "file header cut short after %zu of %u bytes",
                              len, MC_TRACE_HEADER_SIZE);
    const uint32_t stored = mc__get32(in + 124), computed = XXH32(in, 124, 0);
    if (stored != computed)
        return mc_errinfo_set(err, MC_EHEADER, NULL, -1, 124,
                              "header checksum stored 0x%08x, computed 0x%08x",
                              stored, computed);
    const uint32_t hsize = mc__get32(in + 16);
    if (hsize < MC_TRACE_HEADER_SIZE || hsize > MC_TRACE_MAX_HEADER_SIZE)
        return mc_errinfo_set(err, MC_EHEADER, NULL, -1, 16,
                              "header size %u outside %u..%u", hsize,
                              MC_TRACE_HEADER_SIZE, MC_TRACE_MAX_HEADER_SIZE);
    memset(hdr, 0, sizeof *hdr);
    hdr->version_major = (uint16_t)major;
    hdr->version_minor = (uint16_t)minor;
    hdr->flags = mc__get32(in + 20);
    hdr->app_rank = (int32_t)mc__get32(in + 24);
    hdr->app_size = (int32_t)mc__get32(in + 28);
    hdr->clock_res_ps = mc__get64(in + 32);
    hdr->created_unix_ns = (int64_t)mc__get64(in + 40);
    hdr->epoch_unix_ns = mc__get64(in + 48);
    memcpy(hdr->host, in + 56, MC_TRACE_HOST_LEN);
    hdr->host[MC_TRACE_HOST_LEN] = '\0';
    return 0;
}

void mc_record_encode(const mc_record *rec, unsigned char out[MC_RECORD_SIZE])
{
    mc__put64(out + 0, rec->bytes);
    mc__put64(out + 8, rec->t_start_ns);
    mc__put64(out + 16, rec->t_end_ns);
    mc__put32(out + 24, rec->comm_id);
    mc__put32(out + 28, rec->comm_size);
    mc__put32(out + 32, (uint32_t)rec->peer);
    mc__put32(out + 36, (uint32_t)rec->tag);
    mc__put16(out + 40, rec->op);
    out[42] = rec->dir;
    out[43] = rec->flags;
    mc__put32(out + 44, rec->reserved);
}

void mc_record_decode(const unsigned char in[MC_RECORD_SIZE], mc_record *rec)
{
    rec->bytes = mc__get64(in + 0);
    rec->t_start_ns = mc__get64(in + 8);
    rec->t_end_ns = mc__get64(in + 16);
    rec->comm_id = mc__get32(in + 24);
    rec->comm_size = mc__get32(in + 28);
    rec->peer = (int32_t)mc__get32(in + 32);
    rec->tag = (int32_t)mc__get32(in + 36);
    rec->op = mc__get16(in + 40);
    rec->dir = in[42];
    rec->flags = in[43];
    rec->reserved = mc__get32(in + 44);
}

/* Valid op codes as a table built at compile time from the same operation
 * table that mc_op_valid() uses: the check runs once per record on the
 * reducer's hot path, and a lookup is cheaper than a call. */
static const unsigned char op_known[MC_OP_MAX_CODE + 1] = {
#define MC_OP_KNOWN(code, name, cat, mode, dir) [code] = 1,
    MC_OPS_MAP(MC_OP_KNOWN)
#undef MC_OP_KNOWN
};

const unsigned char *mc_op_known_table(void) { return op_known; }

uint64_t mc_trace_payload_checksum(unsigned major, const void *raw, size_t len)
{
    switch (major) {
    case 1:
        return XXH64(raw, len, 0);
    case 2:
        return XXH3_64bits(raw, len);
    default:
        return 0;
    }
}

int mc_record_check(const mc_record *rec, mc_errinfo *err)
{
    /* One combined test for the common case of a valid record; the
     * reasons are worked out only when it fails. */
    if (mc_record_valid(rec, op_known))
        return 0;
    if (!mc_op_valid(rec->op))
        return mc_errinfo_set(err, MC_ERECORD, NULL, -1, -1,
                              "unknown operation code %u", (unsigned)rec->op);
    if (rec->dir != MC_DIR_NONE && rec->dir != MC_DIR_SEND &&
        rec->dir != MC_DIR_RECV)
        return mc_errinfo_set(err, MC_ERECORD, NULL, -1, -1,
                              "direction %u is not none (0), send (1) or "
                              "recv (2)",
                              (unsigned)rec->dir);
    if (rec->flags & ~MC_RF_KNOWN_MASK)
        return mc_errinfo_set(err, MC_ERECORD, NULL, -1, -1,
                              "unknown flag bits 0x%02x (known 0x%02x)",
                              (unsigned)(rec->flags & ~MC_RF_KNOWN_MASK),
                              MC_RF_KNOWN_MASK);
    if (rec->t_end_ns < rec->t_start_ns)
        return mc_errinfo_set(err, MC_ERECORD, NULL, -1, -1,
                              "t_end_ns %llu is earlier than t_start_ns %llu",
                              (unsigned long long)rec->t_end_ns,
                              (unsigned long long)rec->t_start_ns);
    if (rec->reserved != 0)
        return mc_errinfo_set(err, MC_ERECORD, NULL, -1, -1,
                              "reserved field is 0x%08x, must be 0",
                              rec->reserved);
    return 0;
}

void mc__block_header_encode(const mc__block_header *bh,
                             unsigned char out[MC_BLOCK_HEADER_SIZE])
{
    mc__put32(out + 0, MC_BLOCK_MAGIC);
    mc__put32(out + 4, bh->seq);
    mc__put32(out + 8, bh->nrecords);
    mc__put32(out + 12, bh->raw_len);
    mc__put32(out + 16, bh->stored_len);
    out[20] = bh->codec;
    out[21] = bh->flags;
    mc__put16(out + 22, bh->record_size);
    mc__put64(out + 24, bh->raw_sum);
    mc__put32(out + 32, XXH32(out, 32, 0));
    mc__put32(out + 36, 0);
}

int mc__block_header_decode(const unsigned char in[MC_BLOCK_HEADER_SIZE],
                            mc__block_header *bh, const char *path,
                            int64_t block, int64_t offset, mc_errinfo *err)
{
    bh->magic = mc__get32(in + 0);
    bh->seq = mc__get32(in + 4);
    bh->nrecords = mc__get32(in + 8);
    bh->raw_len = mc__get32(in + 12);
    bh->stored_len = mc__get32(in + 16);
    bh->codec = in[20];
    bh->flags = in[21];
    bh->record_size = mc__get16(in + 22);
    bh->raw_sum = mc__get64(in + 24);
    bh->hdr_xxh32 = mc__get32(in + 32);
    bh->reserved = mc__get32(in + 36);
    if (bh->magic != MC_BLOCK_MAGIC)
        return mc_errinfo_set(err, MC_EBLOCK, path, block, offset,
                              "block magic 0x%08x, expected 0x%08x (\"MCBK\")",
                              bh->magic, MC_BLOCK_MAGIC);
    const uint32_t computed = XXH32(in, 32, 0);
    if (computed != bh->hdr_xxh32)
        return mc_errinfo_set(err, MC_EBLOCK, path, block, offset,
                              "block header checksum stored 0x%08x, computed "
                              "0x%08x",
                              bh->hdr_xxh32, computed);
    if (bh->codec != MC_CODEC_NONE && bh->codec != MC_CODEC_ZSTD)
        return mc_errinfo_set(err, MC_EBLOCK, path, block, offset,
                              "unknown codec %u", (unsigned)bh->codec);
    if (bh->record_size < MC_RECORD_SIZE)
        return mc_errinfo_set(err, MC_EBLOCK, path, block, offset,
                              "record size %u is below %u", bh->record_size,
                              MC_RECORD_SIZE);
    if (bh->nrecords > MC_BLOCK_MAX_RECORDS)
        return mc_errinfo_set(err, MC_EBLOCK, path, block, offset,
                              "%u records in a block, limit %u", bh->nrecords,
                              MC_BLOCK_MAX_RECORDS);
    if ((uint64_t)bh->nrecords * bh->record_size != bh->raw_len)
        return mc_errinfo_set(err, MC_EBLOCK, path, block, offset,
                              "raw length %u is not %u records x %u bytes",
                              bh->raw_len, bh->nrecords, bh->record_size);
    if (bh->raw_len > MC_BLOCK_MAX_RAW_BYTES)
        return mc_errinfo_set(err, MC_EBLOCK, path, block, offset,
                              "raw length %u above the limit %u", bh->raw_len,
                              MC_BLOCK_MAX_RAW_BYTES);
    if (bh->codec == MC_CODEC_NONE && bh->stored_len != bh->raw_len)
        return mc_errinfo_set(err, MC_EBLOCK, path, block, offset,
                              "uncompressed block stores %u bytes for a raw "
                              "length of %u",
                              bh->stored_len, bh->raw_len);
    if (bh->codec == MC_CODEC_ZSTD &&
        bh->stored_len > ZSTD_compressBound(bh->raw_len))
        return mc_errinfo_set(err, MC_EBLOCK, path, block, offset,
                              "stored length %u above the zstd bound %zu",
                              bh->stored_len, ZSTD_compressBound(bh->raw_len));
    return 0;
}
