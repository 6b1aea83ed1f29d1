/* trace_write.c - the block writer of the trace format (2.0, or 1.0 on
 * request): bounded buffers, optional zstd, footer index. */
#include "trace_internal.h"
#include "fdio.h" /* mc__write_all */

#include <errno.h>  /* errno */
#include <fcntl.h>  /* open, O_* */
#include <stdlib.h> /* malloc, realloc, free */
#include <string.h> /* memcpy */
#include <unistd.h> /* close, fsync */

#include <xxhash.h> /* XXH32, XXH64 (footer) */
#include <zstd.h>   /* ZSTD_CCtx, ZSTD_compress2 */

struct mc_trace_writer {
    int fd;
    char *path;
    mc_writer_opts opts;
    /* Raw block: MC_BLOCK_HEADER_SIZE bytes of room for the block header,
     * then up to block_records records, so an uncompressed block goes out
     * with one write(). */
    unsigned char *raw;
    size_t nbuf;           /* records in the raw buffer */
    unsigned char *packed; /* header room + zstd frame (zstd only) */
    size_t packed_cap;     /* payload capacity of packed */
    ZSTD_CCtx *cctx;
    uint64_t offset;      /* file offset of the next block */
    uint64_t records;     /* records accepted */
    mc_block_info *index; /* one entry per written block */
    size_t nblocks, index_cap;
    int failed; /* an error made the writer unusable */
};

void mc_writer_opts_init(mc_writer_opts *opts)
{
    opts->block_records = MC_BLOCK_DEFAULT_RECORDS;
    opts->codec = MC_CODEC_NONE;
    opts->zstd_level = 0;
    opts->write_footer = 1;
    opts->fsync_on_close = 0;
    opts->format_major = MC_TRACE_VERSION_MAJOR;
}

/* Write all of @len bytes at the writer's offset. */
static int write_all(mc_trace_writer *w, const unsigned char *p, size_t len,
                     int64_t block, mc_errinfo *err)
{
    const uint64_t at = w->offset;
    size_t done = 0;
    const int e = mc__write_all(w->fd, p, len, &done);
    w->offset += (uint64_t)done;
    if (!e)
        return 0;
    if (err)
        err->sys_errno = e;
    w->failed = 1;
    return mc_errinfo_set(err, MC_EIO, w->path, block, (int64_t)at,
                          "write failed");
}

static void writer_free(mc_trace_writer *w)
{
    if (!w)
        return;
    if (w->fd >= 0)
        close(w->fd);
    ZSTD_freeCCtx(w->cctx);
    free(w->raw);
    free(w->packed);
    free(w->index);
    free(w->path);
    free(w);
}

int mc_trace_writer_open(const char *path, const mc_trace_header *hdr,
                         const mc_writer_opts *opts, mc_trace_writer **out,
                         mc_errinfo *err)
{
    if (!path || !hdr || !out)
        return mc_errinfo_set(err, MC_EINVAL, path, -1, -1,
                              "path, header and output are required");
    *out = NULL;
    mc_writer_opts o;
    mc_writer_opts_init(&o);
    if (opts)
        o = *opts;
    if (o.block_records == 0)
        o.block_records = MC_BLOCK_DEFAULT_RECORDS;
    if (o.block_records > MC_BLOCK_MAX_RECORDS)
        return mc_errinfo_set(err, MC_ERANGE, path, -1, -1,
                              "%u records per block, limit %u", o.block_records,
                              MC_BLOCK_MAX_RECORDS);
    if (o.format_major == 0)
        o.format_major = MC_TRACE_VERSION_MAJOR;
    if (o.format_major < MC_TRACE_OLDEST_MAJOR ||
        o.format_major > MC_TRACE_VERSION_MAJOR)
        return mc_errinfo_set(err, MC_EINVAL, path, -1, -1,
                              "cannot write trace format %u (writes %d to %d)",
                              o.format_major, MC_TRACE_OLDEST_MAJOR,
                              MC_TRACE_VERSION_MAJOR);
    if (o.codec != MC_CODEC_NONE && o.codec != MC_CODEC_ZSTD)
        return mc_errinfo_set(err, MC_EINVAL, path, -1, -1, "unknown codec %d",
                              (int)o.codec);

    mc_trace_writer *w = calloc(1, sizeof *w);
    if (!w)
        return mc_errinfo_set(err, MC_ENOMEM, path, -1, -1, NULL);
    w->fd = -1;
    w->opts = o;
    const size_t raw_len = (size_t)o.block_records * MC_RECORD_SIZE;
    int rc = MC_ENOMEM;
    w->path = mc__strdup(path);
    w->raw = malloc(MC_BLOCK_HEADER_SIZE + raw_len);
    if (!w->path || !w->raw)
        goto fail;
    if (o.codec == MC_CODEC_ZSTD) {
        w->packed_cap = ZSTD_compressBound(raw_len);
        w->packed = malloc(MC_BLOCK_HEADER_SIZE + w->packed_cap);
        w->cctx = ZSTD_createCCtx();
        if (!w->packed || !w->cctx)
            goto fail;
        if (ZSTD_isError(ZSTD_CCtx_setParameter(
                w->cctx, ZSTD_c_compressionLevel, o.zstd_level)) ||
            ZSTD_isError(
                ZSTD_CCtx_setParameter(w->cctx, ZSTD_c_checksumFlag, 0))) {
            rc = mc_errinfo_set(err, MC_EINVAL, path, -1, -1,
                                "zstd level %d rejected", o.zstd_level);
            goto fail_set;
        }
    }
    w->fd = open(path, O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
    if (w->fd < 0) {
        if (err)
            err->sys_errno = errno;
        rc = mc_errinfo_set(err, MC_EOPEN, path, -1, -1, "cannot create");
        goto fail_set;
    }
    unsigned char hbytes[MC_TRACE_HEADER_SIZE];
    mc_trace_header h = *hdr;
    h.version_major = (uint16_t)o.format_major;
    mc_trace_header_encode(&h, hbytes);
    rc = write_all(w, hbytes, sizeof hbytes, -1, err);
    if (rc)
        goto fail_set;
    *out = w;
    return 0;
fail:
    mc_errinfo_set(err, rc, path, -1, -1, NULL);
fail_set:
    writer_free(w);
    return rc;
}

/* Append one entry to the footer index; on failure the old index stays. */
static int index_add(mc_trace_writer *w, const mc_block_info *b,
                     mc_errinfo *err)
{
    if (w->nblocks == w->index_cap) {
        const size_t cap = w->index_cap ? 2 * w->index_cap : 64;
        mc_block_info *n = realloc(w->index, cap * sizeof *n);
        if (!n) {
            w->failed = 1;
            return mc_errinfo_set(err, MC_ENOMEM, w->path, (int64_t)w->nblocks,
                                  -1, "footer index");
        }
        w->index = n;
        w->index_cap = cap;
    }
    w->index[w->nblocks++] = *b;
    return 0;
}

/* Write the records in the raw buffer as one block. */
static int write_block(mc_trace_writer *w, mc_errinfo *err)
{
    if (w->nbuf == 0)
        return 0;
    mc__block_header bh;
    memset(&bh, 0, sizeof bh);
    const size_t raw_len = w->nbuf * MC_RECORD_SIZE;
    const unsigned char *payload = w->raw + MC_BLOCK_HEADER_SIZE;
    bh.seq = (uint32_t)w->nblocks;
    bh.nrecords = (uint32_t)w->nbuf;
    bh.raw_len = (uint32_t)raw_len;
    bh.record_size = MC_RECORD_SIZE;
    bh.raw_sum =
        mc_trace_payload_checksum(w->opts.format_major, payload, raw_len);
    unsigned char *out = w->raw;
    if (w->opts.codec == MC_CODEC_ZSTD) {
        const size_t k =
            ZSTD_compress2(w->cctx, w->packed + MC_BLOCK_HEADER_SIZE,
                           w->packed_cap, payload, raw_len);
        if (ZSTD_isError(k)) {
            w->failed = 1;
            return mc_errinfo_set(err, MC_ECODEC, w->path, (int64_t)w->nblocks,
                                  (int64_t)w->offset, "zstd: %s",
                                  ZSTD_getErrorName(k));
        }
        bh.codec = MC_CODEC_ZSTD;
        bh.stored_len = (uint32_t)k;
        out = w->packed;
    } else {
        bh.codec = MC_CODEC_NONE;
        bh.stored_len = (uint32_t)raw_len;
    }
    mc__block_header_encode(&bh, out);
    const mc_block_info info = {w->offset, bh.nrecords, bh.stored_len, bh.seq};
    int rc = write_all(w, out, MC_BLOCK_HEADER_SIZE + bh.stored_len,
                       (int64_t)w->nblocks, err);
    if (rc)
        return rc;
    rc = index_add(w, &info, err);
    if (rc)
        return rc;
    w->nbuf = 0;
    return 0;
}

int mc_trace_write(mc_trace_writer *w, const mc_record *recs, size_t n,
                   mc_errinfo *err)
{
    if (!w || (n && !recs))
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1, "no writer");
    if (w->failed)
        return mc_errinfo_set(err, MC_EIO, w->path, -1, -1,
                              "writer failed earlier");
    while (n > 0) {
        size_t k = w->opts.block_records - w->nbuf;
        if (k > n)
            k = n;
        unsigned char *dst =
            w->raw + MC_BLOCK_HEADER_SIZE + w->nbuf * MC_RECORD_SIZE;
#if MC_HOST_LE
        memcpy(dst, recs, k * MC_RECORD_SIZE);
#else
        for (size_t i = 0; i < k; i++)
            mc_record_encode(&recs[i], dst + i * MC_RECORD_SIZE);
#endif
        w->nbuf += k;
        w->records += k;
        recs += k;
        n -= k;
        if (w->nbuf == w->opts.block_records) {
            const int rc = write_block(w, err);
            if (rc)
                return rc;
        }
    }
    return 0;
}

int mc_trace_writer_flush(mc_trace_writer *w, mc_errinfo *err)
{
    if (!w)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1, "no writer");
    if (w->failed)
        return mc_errinfo_set(err, MC_EIO, w->path, -1, -1,
                              "writer failed earlier");
    return write_block(w, err);
}

/* Footer: MCIX, nblocks, entries, total records, XXH64; then the trailer. */
static int write_footer(mc_trace_writer *w, mc_errinfo *err)
{
    const uint64_t fsize = mc__footer_size(w->nblocks);
    unsigned char *f = malloc((size_t)fsize + MC_TRAILER_SIZE);
    if (!f)
        return mc_errinfo_set(err, MC_ENOMEM, w->path, -1, -1, "footer");
    const uint64_t footer_offset = w->offset;
    mc__put32(f, MC_INDEX_MAGIC);
    mc__put32(f + 4, (uint32_t)w->nblocks);
    unsigned char *p = f + 8;
    for (size_t i = 0; i < w->nblocks; i++, p += MC_FOOTER_ENTRY_SIZE) {
        mc__put64(p, w->index[i].offset);
        mc__put32(p + 8, w->index[i].nrecords);
        mc__put32(p + 12, w->index[i].stored_len);
    }
    mc__put64(p, w->records);
    mc__put64(p + 8, XXH64(f, (size_t)(p + 8 - f), 0));
    unsigned char *t = f + fsize;
    mc__put64(t, footer_offset);
    mc__put32(t + 8, MC_TRAILER_MAGIC);
    mc__put32(t + 12, XXH32(t, 12, 0));
    const int rc = write_all(w, f, (size_t)fsize + MC_TRAILER_SIZE, -1, err);
    free(f);
    return rc;
}

int mc_trace_writer_close(mc_trace_writer *w, mc_errinfo *err)
{
    if (!w)
        return 0;
    int rc = w->failed ? mc_errinfo_set(err, MC_EIO, w->path, -1, -1,
                                        "writer failed earlier")
                       : write_block(w, err);
    if (!rc && w->opts.write_footer)
        rc = write_footer(w, err);
    if (!rc && w->opts.fsync_on_close && fsync(w->fd) != 0) {
        if (err)
            err->sys_errno = errno;
        rc = mc_errinfo_set(err, MC_EIO, w->path, -1, -1, "fsync failed");
    }
    const int fd = w->fd;
    w->fd = -1;
    if (close(fd) != 0 && !rc) {
        if (err)
            err->sys_errno = errno;
        rc = mc_errinfo_set(err, MC_EIO, w->path, -1, -1, "close failed");
    }
    writer_free(w);
    return rc;
}

void mc_trace_writer_abandon(mc_trace_writer *w) { writer_free(w); }

uint64_t mc_trace_writer_records(const mc_trace_writer *w)
{
    return w ? w->records : 0;
}
