/* trace_read.c - the streaming block reader of the trace format (1.x and
 * 2.x): footer index or block walk, checksums, zstd, range reads. */
#include "trace_internal.h"

#include <errno.h>    /* errno, EINTR */
#include <fcntl.h>    /* open, posix_fadvise */
#include <stdint.h>   /* uintptr_t */
#include <stdio.h>    /* snprintf */
#include <stdlib.h>   /* malloc, realloc, free */
#include <string.h>   /* memcpy, memmove */
#include <sys/stat.h> /* fstat */
#include <unistd.h>   /* pread, close */

#include <xxhash.h> /* XXH32, XXH64 */
#include <zstd.h>   /* ZSTD_DCtx, ZSTD_decompressDCtx */

/* Bytes read per read() call while streaming: several default blocks. */
#define READ_WINDOW (4u << 20)

enum { FOOTER_UNKNOWN = 0, FOOTER_VALID = 1, FOOTER_INVALID = 2 };

struct mc_trace_reader {
    int fd;
    char *path;
    mc_trace_header hdr;
    uint32_t header_size;
    uint64_t file_size;

    /* Read window: file bytes [win_off, win_off + win_len). */
    unsigned char *win;
    size_t win_cap, win_len;
    uint64_t win_off;

    unsigned char *raw; /* decompressed payload (zstd) */
    size_t raw_cap;
    mc_record *recs; /* converted records (big-endian host, or a record
                      * size above 48, or an unaligned payload) */
    size_t recs_cap;
    ZSTD_DCtx *dctx;

    /* Streaming position: the next block to read. */
    uint64_t next_off, next_index;
    uint64_t cur_off, cur_index; /* block returned last */
    uint64_t cur_sum;            /* its verified payload checksum */

    /* Footer index, read once. */
    int footer_state;
    mc_block_info *footer;
    size_t nfooter;
    uint64_t footer_total;
    uint64_t footer_offset;
    mc_errinfo footer_err; /* why the footer is not used (state INVALID) */

    /* Walked index, built once. */
    int walked, walk_complete;
    mc_block_info *walk;
    size_t nwalk;
    mc_errinfo walk_err;
};

/* pread exactly @len bytes at @off (the caller checked the file is long
 * enough); a short read means the file shrank under us. */
static int read_at(mc_trace_reader *r, unsigned char *dst, size_t len,
                   uint64_t off, int64_t block, mc_errinfo *err)
{
    size_t got = 0;
    while (got < len) {
        const ssize_t k =
            pread(r->fd, dst + got, len - got, (off_t)(off + got));
        if (k < 0) {
            if (errno == EINTR)
                continue;
            if (err)
                err->sys_errno = errno;
            return mc_errinfo_set(err, MC_EIO, r->path, block,
                                  (int64_t)(off + got), "read failed");
        }
        if (k == 0)
            return mc_errinfo_set(err, MC_ETRUNC, r->path, block,
                                  (int64_t)(off + got),
                                  "file ended while reading (it shrank?)");
        got += (size_t)k;
    }
    return 0;
}

/* Make file bytes [off, off + len) available in the window and return a
 * pointer to them in *p. The caller has checked off + len <= file_size, so
 * the size of a refill is bounded by the file. Reads go in large sequential
 * chunks; the part of the window still needed is kept. */
static int window_get(mc_trace_reader *r, uint64_t off, size_t len,
                      const unsigned char **p, int64_t block, mc_errinfo *err)
{
    if (off >= r->win_off && off + len <= r->win_off + r->win_len) {
        *p = r->win + (off - r->win_off);
        return 0;
    }
    size_t keep = 0;
    if (off >= r->win_off && off < r->win_off + r->win_len)
        keep = (size_t)(r->win_off + r->win_len - off);
    const uint64_t rest = r->file_size - off;
    size_t want = len > READ_WINDOW ? len : READ_WINDOW;
    if (want > rest)
        want = (size_t)rest;
    if (want > r->win_cap) {
        unsigned char *n = malloc(want);
        if (!n)
            return mc_errinfo_set(err, MC_ENOMEM, r->path, block, (int64_t)off,
                                  "read buffer of %zu bytes", want);
        if (keep)
            memcpy(n, r->win + (off - r->win_off), keep);
        free(r->win);
        r->win = n;
        r->win_cap = want;
    } else if (keep) {
        memmove(r->win, r->win + (off - r->win_off), keep);
    }
    r->win_off = off;
    r->win_len = keep;
    const int rc =
        read_at(r, r->win + keep, want - keep, off + keep, block, err);
    if (rc) {
        r->win_len = 0;
        return rc;
    }
    r->win_len = want;
    *p = r->win;
    return 0;
}

int mc_trace_open(const char *path, mc_trace_reader **out, mc_errinfo *err)
{
    if (!path || !out)
        return mc_errinfo_set(err, MC_EINVAL, path, -1, -1,
                              "path and output are required");
    *out = NULL;
    mc_trace_reader *r = calloc(1, sizeof *r);
    if (!r)
        return mc_errinfo_set(err, MC_ENOMEM, path, -1, -1, NULL);
    r->fd = -1;
    int rc;
    r->path = mc__strdup(path);
    if (!r->path) {
        rc = mc_errinfo_set(err, MC_ENOMEM, path, -1, -1, NULL);
        goto fail;
    }
    /* O_NONBLOCK: opening a FIFO for reading would otherwise wait for a
     * writer forever; the S_ISREG check below then refuses it. Reads of
     * regular files are not affected by the flag. */
    r->fd = open(path, O_RDONLY | O_CLOEXEC | O_NONBLOCK);
    if (r->fd < 0) {
        if (err)
            err->sys_errno = errno;
        rc = mc_errinfo_set(err, MC_EOPEN, path, -1, -1, NULL);
        goto fail;
    }
    struct stat st;
    if (fstat(r->fd, &st) != 0) {
        if (err)
            err->sys_errno = errno;
        rc = mc_errinfo_set(err, MC_EIO, path, -1, -1, "fstat failed");
        goto fail;
    }
    if (!S_ISREG(st.st_mode)) {
        rc = mc_errinfo_set(err, MC_EOPEN, path, -1, -1, "not a regular file");
        goto fail;
    }
    r->file_size = (uint64_t)st.st_size;
    /* The reducer reads each file front to back once: tell the kernel to
     * read ahead aggressively. Advice only; failure is harmless. */
    (void)posix_fadvise(r->fd, 0, 0, POSIX_FADV_SEQUENTIAL);

    if (r->file_size == 0) {
        rc = mc_errinfo_set(err, MC_ETRUNC, path, -1, 0,
                            "empty file, no trace header");
        goto fail;
    }
    unsigned char h[MC_TRACE_HEADER_SIZE];
    const size_t hlen = r->file_size < MC_TRACE_HEADER_SIZE
                            ? (size_t)r->file_size
                            : MC_TRACE_HEADER_SIZE;
    rc = read_at(r, h, hlen, 0, -1, err);
    if (rc)
        goto fail;
    rc = mc_trace_header_decode(h, hlen, &r->hdr, err);
    if (rc) {
        if (err)
            snprintf(err->path, sizeof err->path, "%s", path);
        goto fail;
    }
    r->header_size = mc__get32(h + 16);
    if (r->file_size < r->header_size) {
        rc = mc_errinfo_set(err, MC_ETRUNC, path, -1, (int64_t)r->file_size,
                            "file of %llu bytes ends inside its %u-byte "
                            "header",
                            (unsigned long long)r->file_size, r->header_size);
        goto fail;
    }
    r->next_off = r->cur_off = r->header_size;
    *out = r;
    return 0;
fail:
    mc_trace_close(r);
    return rc;
}

void mc_trace_close(mc_trace_reader *r)
{
    if (!r)
        return;
    if (r->fd >= 0)
        close(r->fd);
    ZSTD_freeDCtx(r->dctx);
    free(r->win);
    free(r->raw);
    free(r->recs);
    free(r->footer);
    free(r->walk);
    free(r->path);
    free(r);
}

const mc_trace_header *mc_trace_get_header(const mc_trace_reader *r)
{
    return &r->hdr;
}

uint64_t mc_trace_file_size(const mc_trace_reader *r) { return r->file_size; }

uint32_t mc__trace_header_size(const mc_trace_reader *r)
{
    return r->header_size;
}

/* ---- footer ------------------------------------------------------------- */

#define FOOTER_FAIL(...)                                                       \
    do {                                                                       \
        rc = mc_errinfo_set(err, MC_EFOOTER, r->path, -1, __VA_ARGS__);        \
        goto done;                                                             \
    } while (0)

/* Read and check the trailer and footer. Returns 0 with the footer in
 * r->footer (state VALID), or MC_EFOOTER (state INVALID, reason in @err),
 * or MC_ENOMEM / MC_EIO. */
static int read_footer(mc_trace_reader *r, mc_errinfo *err)
{
    int rc = 0;
    unsigned char *f = NULL;
    mc_block_info *list = NULL;
    r->footer_state = FOOTER_INVALID;
    const uint64_t min_end =
        (uint64_t)r->header_size + mc__footer_size(0) + MC_TRAILER_SIZE;
    if (r->file_size < min_end)
        FOOTER_FAIL(-1, "file too short for a footer");
    unsigned char t[MC_TRAILER_SIZE];
    const uint64_t toff = r->file_size - MC_TRAILER_SIZE;
    rc = read_at(r, t, sizeof t, toff, -1, err);
    if (rc)
        goto done;
    if (mc__get32(t + 8) != MC_TRAILER_MAGIC)
        FOOTER_FAIL((int64_t)toff, "no trailer at the end of the file");
    if (mc__get32(t + 12) != XXH32(t, 12, 0))
        FOOTER_FAIL((int64_t)toff, "trailer checksum mismatch");
    const uint64_t foff = mc__get64(t);
    if (foff < r->header_size || foff > toff - mc__footer_size(0))
        FOOTER_FAIL((int64_t)toff, "footer offset %llu outside the file",
                    (unsigned long long)foff);
    const uint64_t fsize = toff - foff; /* bounded by the file size */
    if ((fsize - mc__footer_size(0)) % MC_FOOTER_ENTRY_SIZE)
        FOOTER_FAIL((int64_t)foff,
                    "footer length %llu is not a whole number "
                    "of entries",
                    (unsigned long long)fsize);
    /* Check the block count against the space before allocating: each
     * entry stands for a block of at least a 40-byte header. */
    unsigned char head[8];
    rc = read_at(r, head, sizeof head, foff, -1, err);
    if (rc)
        goto done;
    if (mc__get32(head) != MC_INDEX_MAGIC)
        FOOTER_FAIL((int64_t)foff,
                    "footer magic 0x%08x, expected 0x%08x "
                    "(\"MCIX\")",
                    mc__get32(head), MC_INDEX_MAGIC);
    if ((uint64_t)mc__get32(head + 4) * MC_BLOCK_HEADER_SIZE >
            foff - r->header_size ||
        fsize > SIZE_MAX / 2)
        FOOTER_FAIL((int64_t)foff,
                    "footer lists %u blocks, more than fit "
                    "before it",
                    mc__get32(head + 4));
    f = malloc((size_t)fsize);
    if (!f) {
        rc = mc_errinfo_set(err, MC_ENOMEM, r->path, -1, (int64_t)foff,
                            "footer");
        goto done;
    }
    rc = read_at(r, f, (size_t)fsize, foff, -1, err);
    if (rc)
        goto done;
    const uint64_t nb = mc__get32(f + 4);
    if (mc__footer_size(nb) != fsize)
        FOOTER_FAIL((int64_t)foff,
                    "footer lists %llu blocks but has room for "
                    "%llu",
                    (unsigned long long)nb,
                    (unsigned long long)((fsize - mc__footer_size(0)) /
                                         MC_FOOTER_ENTRY_SIZE));
    const uint64_t sum_stored = mc__get64(f + fsize - 8);
    const uint64_t sum_computed = XXH64(f, (size_t)fsize - 8, 0);
    if (sum_stored != sum_computed)
        FOOTER_FAIL((int64_t)foff,
                    "footer checksum stored 0x%016llx, computed "
                    "0x%016llx",
                    (unsigned long long)sum_stored,
                    (unsigned long long)sum_computed);
    list = malloc((nb ? (size_t)nb : 1) * sizeof *list);
    if (!list) {
        rc = mc_errinfo_set(err, MC_ENOMEM, r->path, -1, (int64_t)foff,
                            "footer");
        goto done;
    }
    /* Blocks are contiguous from header_size to the footer: each entry must
     * start where the previous block ended. */
    uint64_t expect = r->header_size, total = 0;
    for (uint64_t i = 0; i < nb; i++) {
        const unsigned char *e = f + 8 + i * MC_FOOTER_ENTRY_SIZE;
        mc_block_info b = {mc__get64(e), mc__get32(e + 8), mc__get32(e + 12),
                           (uint32_t)i};
        if (b.offset != expect)
            FOOTER_FAIL((int64_t)foff,
                        "entry %llu says offset %llu, the "
                        "previous block ends at %llu",
                        (unsigned long long)i, (unsigned long long)b.offset,
                        (unsigned long long)expect);
        if (b.nrecords > MC_BLOCK_MAX_RECORDS)
            FOOTER_FAIL((int64_t)foff, "entry %llu: %u records, limit %u",
                        (unsigned long long)i, b.nrecords,
                        MC_BLOCK_MAX_RECORDS);
        expect += MC_BLOCK_HEADER_SIZE + (uint64_t)b.stored_len;
        if (expect > foff)
            FOOTER_FAIL((int64_t)foff, "entry %llu runs past the footer",
                        (unsigned long long)i);
        total += b.nrecords;
        list[i] = b;
    }
    if (expect != foff)
        FOOTER_FAIL((int64_t)foff,
                    "the blocks end at %llu, the footer starts "
                    "at %llu",
                    (unsigned long long)expect, (unsigned long long)foff);
    r->footer_total = mc__get64(f + 8 + nb * MC_FOOTER_ENTRY_SIZE);
    if (r->footer_total != total)
        FOOTER_FAIL((int64_t)foff,
                    "footer total %llu records, its entries "
                    "sum to %llu",
                    (unsigned long long)r->footer_total,
                    (unsigned long long)total);
    r->footer = list;
    list = NULL;
    r->nfooter = (size_t)nb;
    r->footer_offset = foff;
    r->footer_state = FOOTER_VALID;
done:
    free(f);
    free(list);
    return rc;
}

int mc__trace_footer_index(mc_trace_reader *r, const mc_block_info **blocks,
                           size_t *nblocks, uint64_t *total_records,
                           mc_errinfo *err)
{
    if (r->footer_state == FOOTER_UNKNOWN) {
        mc_errinfo_clear(&r->footer_err);
        const int rc = read_footer(r, &r->footer_err);
        if (rc && rc != MC_EFOOTER) {
            r->footer_state = FOOTER_UNKNOWN; /* I/O or memory: try again */
            if (err)
                *err = r->footer_err;
            return rc;
        }
    }
    if (r->footer_state != FOOTER_VALID) {
        if (err)
            *err = r->footer_err;
        return MC_EFOOTER;
    }
    *blocks = r->footer;
    *nblocks = r->nfooter;
    if (total_records)
        *total_records = r->footer_total;
    return 0;
}

/* ---- walk --------------------------------------------------------------- */

int mc__trace_walk_index(mc_trace_reader *r, const mc_block_info **blocks,
                         size_t *nblocks, int *complete, mc_errinfo *err)
{
    if (!r->walked) {
        mc_errinfo_clear(&r->walk_err);
        size_t cap = 0, n = 0;
        mc_block_info *list = NULL;
        uint64_t off = r->header_size;
        int ok = 0;
        for (;;) {
            const uint64_t rest = r->file_size - off;
            const int64_t bi = (int64_t)n;
            if (rest == 0) {
                ok = 1;
                break;
            }
            unsigned char h[MC_BLOCK_HEADER_SIZE];
            const size_t hl = rest < sizeof h ? (size_t)rest : sizeof h;
            int rc = read_at(r, h, hl, off, bi, &r->walk_err);
            if (rc == MC_EIO) {
                free(list);
                if (err)
                    *err = r->walk_err;
                return rc;
            }
            if (rc)
                break;
            if (hl >= 4 && mc__get32(h) == MC_INDEX_MAGIC) {
                ok = 1; /* the footer follows the last block */
                break;
            }
            if (hl < sizeof h) {
                mc_errinfo_set(&r->walk_err, MC_ETRUNC, r->path, bi,
                               (int64_t)off,
                               "block header cut short: %zu of "
                               "%u bytes",
                               hl, MC_BLOCK_HEADER_SIZE);
                break;
            }
            mc__block_header bh;
            if (mc__block_header_decode(h, &bh, r->path, bi, (int64_t)off,
                                        &r->walk_err))
                break;
            if (bh.seq != (uint64_t)n) {
                mc_errinfo_set(&r->walk_err, MC_EBLOCK, r->path, bi,
                               (int64_t)off,
                               "sequence number %u, expected "
                               "%zu",
                               bh.seq, n);
                break;
            }
            if (rest - MC_BLOCK_HEADER_SIZE < bh.stored_len) {
                mc_errinfo_set(
                    &r->walk_err, MC_ETRUNC, r->path, bi, (int64_t)off,
                    "block payload cut short: %llu "
                    "of %u bytes",
                    (unsigned long long)(rest - MC_BLOCK_HEADER_SIZE),
                    bh.stored_len);
                break;
            }
            if (n == cap) {
                const size_t ncap = cap ? 2 * cap : 64;
                mc_block_info *nl = realloc(list, ncap * sizeof *nl);
                if (!nl) {
                    free(list);
                    return mc_errinfo_set(err, MC_ENOMEM, r->path, bi,
                                          (int64_t)off, "block list");
                }
                list = nl;
                cap = ncap;
            }
            list[n++] =
                (mc_block_info){off, bh.nrecords, bh.stored_len, bh.seq};
            off += MC_BLOCK_HEADER_SIZE + (uint64_t)bh.stored_len;
        }
        r->walk = list;
        r->nwalk = n;
        r->walk_complete = ok;
        r->walked = 1;
    }
    *blocks = r->walk;
    *nblocks = r->nwalk;
    *complete = r->walk_complete;
    if (!r->walk_complete && err)
        *err = r->walk_err;
    return 0;
}

int mc_trace_index(mc_trace_reader *r, const mc_block_info **blocks,
                   size_t *nblocks, int *from_footer, int *complete,
                   mc_errinfo *err)
{
    if (!r || !blocks || !nblocks || !complete)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1, "missing argument");
    mc_errinfo ferr;
    mc_errinfo_clear(&ferr);
    const int rc = mc__trace_footer_index(r, blocks, nblocks, NULL, &ferr);
    if (rc == 0) {
        if (from_footer)
            *from_footer = 1;
        *complete = 1;
        return 0;
    }
    if (rc != MC_EFOOTER) {
        if (err)
            *err = ferr;
        return rc;
    }
    if (from_footer)
        *from_footer = 0;
    return mc__trace_walk_index(r, blocks, nblocks, complete, err);
}

/* ---- blocks ------------------------------------------------------------- */

int mc_trace_seek_block(mc_trace_reader *r, const mc_block_info *b,
                        uint64_t block_index, mc_errinfo *err)
{
    if (!r || !b)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1, "missing argument");
    if (b->offset < r->header_size || b->offset > r->file_size)
        return mc_errinfo_set(err, MC_ERANGE, r->path, (int64_t)block_index,
                              (int64_t)b->offset,
                              "block offset outside the "
                              "file's blocks");
    r->next_off = r->cur_off = b->offset;
    r->next_index = r->cur_index = block_index;
    return 0;
}

/* Grow *buf to hold @need bytes; @need is bounded by the block limits. */
static int ensure(void **buf, size_t *cap, size_t need)
{
    if (need <= *cap)
        return 0;
    void *n = malloc(need);
    if (!n)
        return MC_ENOMEM;
    free(*buf);
    *buf = n;
    *cap = need;
    return 0;
}

int mc_trace_next_block(mc_trace_reader *r, const mc_record **recs,
                        size_t *nrecs, mc_errinfo *err)
{
    if (!r || !recs || !nrecs)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1, "missing argument");
    const uint64_t off = r->next_off;
    const int64_t bi = (int64_t)r->next_index;
    r->cur_off = off;
    r->cur_index = r->next_index;
    r->cur_sum = 0;
    *recs = NULL;
    *nrecs = 0;
    if (off >= r->file_size ||
        (r->footer_state == FOOTER_VALID && off == r->footer_offset))
        return 0;
    const uint64_t rest = r->file_size - off;
    const unsigned char *p;
    const size_t hl =
        rest < MC_BLOCK_HEADER_SIZE ? (size_t)rest : MC_BLOCK_HEADER_SIZE;
    int rc = window_get(r, off, hl, &p, bi, err);
    if (rc)
        return rc;
    if (hl >= 4 && mc__get32(p) == MC_INDEX_MAGIC)
        return 0;
    if (hl < MC_BLOCK_HEADER_SIZE)
        return mc_errinfo_set(err, MC_ETRUNC, r->path, bi, (int64_t)off,
                              "block header cut short: %zu of %u bytes", hl,
                              MC_BLOCK_HEADER_SIZE);
    mc__block_header bh;
    rc = mc__block_header_decode(p, &bh, r->path, bi, (int64_t)off, err);
    if (rc)
        return rc;
    if (bh.seq != (uint64_t)bi)
        return mc_errinfo_set(err, MC_EBLOCK, r->path, bi, (int64_t)off,
                              "sequence number %u, expected %lld", bh.seq,
                              (long long)bi);
    if (rest - MC_BLOCK_HEADER_SIZE < bh.stored_len)
        return mc_errinfo_set(err, MC_ETRUNC, r->path, bi, (int64_t)off,
                              "block payload cut short: %llu of %u bytes",
                              (unsigned long long)(rest - MC_BLOCK_HEADER_SIZE),
                              bh.stored_len);
    /* One window read covers the header and the whole payload. */
    rc = window_get(r, off, MC_BLOCK_HEADER_SIZE + (size_t)bh.stored_len, &p,
                    bi, err);
    if (rc)
        return rc;
    const unsigned char *payload = p + MC_BLOCK_HEADER_SIZE;
    const unsigned char *raw = payload;
    if (bh.codec == MC_CODEC_ZSTD) {
        const unsigned long long fcs =
            ZSTD_getFrameContentSize(payload, bh.stored_len);
        if (fcs == ZSTD_CONTENTSIZE_ERROR)
            return mc_errinfo_set(err, MC_ECODEC, r->path, bi, (int64_t)off,
                                  "payload is not a zstd frame");
        if (fcs != ZSTD_CONTENTSIZE_UNKNOWN && fcs != bh.raw_len)
            return mc_errinfo_set(err, MC_ECODEC, r->path, bi, (int64_t)off,
                                  "zstd frame holds %llu bytes, block header "
                                  "says %u",
                                  fcs, bh.raw_len);
        const size_t flen =
            ZSTD_findFrameCompressedSize(payload, bh.stored_len);
        if (ZSTD_isError(flen) || flen != bh.stored_len)
            return mc_errinfo_set(err, MC_ECODEC, r->path, bi, (int64_t)off,
                                  "payload is not exactly one zstd frame");
        if (!r->dctx && !(r->dctx = ZSTD_createDCtx()))
            return mc_errinfo_set(err, MC_ENOMEM, r->path, bi, (int64_t)off,
                                  "zstd context");
        if (ensure((void **)&r->raw, &r->raw_cap, bh.raw_len ? bh.raw_len : 1))
            return mc_errinfo_set(err, MC_ENOMEM, r->path, bi, (int64_t)off,
                                  "block buffer");
        const size_t k = ZSTD_decompressDCtx(r->dctx, r->raw, bh.raw_len,
                                             payload, bh.stored_len);
        if (ZSTD_isError(k))
            return mc_errinfo_set(err, MC_ECODEC, r->path, bi, (int64_t)off,
                                  "zstd: %s", ZSTD_getErrorName(k));
        if (k != bh.raw_len)
            return mc_errinfo_set(err, MC_ECODEC, r->path, bi, (int64_t)off,
                                  "zstd frame decoded to %zu bytes, expected "
                                  "%u",
                                  k, bh.raw_len);
        raw = r->raw;
    }
    const uint64_t sum =
        mc_trace_payload_checksum(r->hdr.version_major, raw, bh.raw_len);
    if (sum != bh.raw_sum)
        return mc_errinfo_set(err, MC_ECHECKSUM, r->path, bi, (int64_t)off,
                              "stored 0x%016llx, computed 0x%016llx",
                              (unsigned long long)bh.raw_sum,
                              (unsigned long long)sum);
    r->cur_sum = sum;
    const size_t n = bh.nrecords;
#if MC_HOST_LE
    if (bh.record_size == MC_RECORD_SIZE &&
        (uintptr_t)raw % _Alignof(mc_record) == 0) {
        /* The fast path: the bytes are the records. */
        *recs = (const mc_record *)(const void *)raw;
        *nrecs = n;
        r->next_off = off + MC_BLOCK_HEADER_SIZE + bh.stored_len;
        r->next_index++;
        return 1;
    }
#endif
    if (ensure((void **)&r->recs, &r->recs_cap,
               (n ? n : 1) * sizeof(mc_record)))
        return mc_errinfo_set(err, MC_ENOMEM, r->path, bi, (int64_t)off,
                              "record buffer");
    for (size_t i = 0; i < n; i++) {
        /* A later minor may have longer records: its first 48 bytes are
         * the v1.0 record. */
#if MC_HOST_LE
        memcpy(&r->recs[i], raw + i * bh.record_size, MC_RECORD_SIZE);
#else
        mc_record_decode(raw + i * bh.record_size, &r->recs[i]);
#endif
    }
    *recs = r->recs;
    *nrecs = n;
    r->next_off = off + MC_BLOCK_HEADER_SIZE + bh.stored_len;
    r->next_index++;
    return 1;
}

void mc_trace_current_block(const mc_trace_reader *r, uint64_t *block_index,
                            uint64_t *offset)
{
    if (block_index)
        *block_index = r->cur_index;
    if (offset)
        *offset = r->cur_off;
}

size_t mc_trace_reader_memory(const mc_trace_reader *r)
{
    if (!r)
        return 0;
    return sizeof *r + r->win_cap + r->raw_cap + r->recs_cap +
           (r->dctx ? ZSTD_sizeof_DCtx(r->dctx) : 0) +
           (r->nfooter + r->nwalk) * sizeof(mc_block_info);
}

uint64_t mc_trace_current_checksum(const mc_trace_reader *r)
{
    return r->cur_sum;
}

int mc_trace_block_header_at(mc_trace_reader *r, uint64_t offset,
                             uint64_t block_index, mc_block_info *out,
                             mc_errinfo *err)
{
    if (!r || !out)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1, "missing argument");
    if (offset > r->file_size || r->file_size - offset < MC_BLOCK_HEADER_SIZE)
        return mc_errinfo_set(err, MC_ETRUNC, r->path, (int64_t)block_index,
                              (int64_t)offset, "block header cut short");
    unsigned char raw[MC_BLOCK_HEADER_SIZE];
    int rc = read_at(r, raw, sizeof raw, offset, (int64_t)block_index, err);
    if (rc)
        return rc;
    mc__block_header bh;
    rc = mc__block_header_decode(raw, &bh, r->path, (int64_t)block_index,
                                 (int64_t)offset, err);
    if (rc)
        return rc;
    out->offset = offset;
    out->nrecords = bh.nrecords;
    out->stored_len = bh.stored_len;
    out->seq = bh.seq;
    return 0;
}
