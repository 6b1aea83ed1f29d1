/* trace.h - trace format (2.0, reads 1.x): records, file header, block
 * writer and reader.
 *
 * The byte layout is specified in docs/trace-format.md; that document is the
 * reference and the constants below follow it. */
#ifndef MSGCENSUS_TRACE_H
#define MSGCENSUS_TRACE_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* fixed-width integers */

#include "common.h"
#include "error.h"
#include "ops.h" /* MC_OP_MAX_CODE, MC_DIR_RECV */

/* ---- format constants (docs/trace-format.md) ---------------------------- */

#define MC_TRACE_MAGIC "MCTRACE\x1a" /* 8 bytes at offset 0 */
#define MC_TRACE_MAGIC_LEN 8
#define MC_TRACE_VERSION_MAJOR 2 /* written by default */
#define MC_TRACE_VERSION_MINOR                                                 \
    0 /* a reader accepts any minor of its majors                              \
       */
#define MC_TRACE_OLDEST_MAJOR                                                  \
    1 /* read: majors OLDEST..MAJOR, others rejected */
#define MC_TRACE_ENDIAN_MARK 0x01020304u
#define MC_TRACE_HEADER_SIZE 128u  /* file header, 1.0 and 2.0 */
#define MC_TRACE_HOST_LEN 64u      /* host name field, NUL padded */
#define MC_BLOCK_MAGIC 0x4b42434du /* "MCBK" little-endian */
#define MC_BLOCK_HEADER_SIZE 40u
#define MC_RECORD_SIZE 48u           /* record size of 1.0 and 2.0 */
#define MC_INDEX_MAGIC 0x5849434du   /* "MCIX" little-endian */
#define MC_TRAILER_MAGIC 0x444e434du /* "MCND" little-endian */
#define MC_TRAILER_SIZE 16u
#define MC_BLOCK_MAX_RECORDS (1u << 20)    /* reader's limit per block */
#define MC_BLOCK_DEFAULT_RECORDS 16384u    /* 768 KiB raw per block */
#define MC_BLOCK_MAX_RAW_BYTES (64u << 20) /* reader's limit on raw_len */
#define MC_TRACE_MAX_HEADER_SIZE 65536u    /* reader's limit on header_size */
#define MC_FOOTER_ENTRY_SIZE 16u           /* one footer index entry */

#define MC_PEER_NONE (-1) /* no peer (collectives, or unknown) */
#define MC_TAG_NONE (-1)  /* no tag (collectives, one-sided) */

/* Record flags (mc_record.flags). */
#define MC_RF_POSTED_SIZE 0x01u /* receive: posted size, actual not known */
#define MC_RF_IN_PLACE 0x02u    /* collective called with MPI_IN_PLACE */
#define MC_RF_PER_PEER 0x04u    /* one of several per-peer records of a call */
#define MC_RF_KNOWN_MASK 0x07u  /* reader rejects other bits (1.0, 2.0) */

typedef enum mc_codec { MC_CODEC_NONE = 0, MC_CODEC_ZSTD = 1 } mc_codec;

/* ---- records ------------------------------------------------------------ */

/* One MPI call (or one direction of one call). On little-endian hosts this
 * struct has exactly the on-disk layout of a 1.0/2.0 record (48 bytes, no
 * padding), which lets the decoder copy records without per-field work. */
typedef struct mc_record {
    uint64_t bytes;      /* payload bytes (count x MPI_Type_size) */
    uint64_t t_start_ns; /* call entry, ns since the trace's epoch */
    uint64_t t_end_ns;   /* call exit; never earlier than t_start_ns */
    uint32_t comm_id;    /* communicator id, same on every member rank */
    uint32_t comm_size;  /* size of that communicator */
    int32_t peer;        /* world rank of the peer, or MC_PEER_NONE */
    int32_t tag;         /* message tag, or MC_TAG_NONE */
    uint16_t op;         /* mc_op code */
    uint8_t dir;         /* mc_dir: NONE, SEND or RECV */
    uint8_t flags;       /* MC_RF_* bits */
    uint32_t reserved;   /* zero in 1.0 and 2.0 */
} mc_record;

/* ---- file header -------------------------------------------------------- */

typedef struct mc_trace_header {
    uint16_t version_major;
    uint16_t version_minor;
    uint32_t flags;          /* zero in 1.0 and 2.0 */
    int32_t app_rank;        /* world rank of the traced process */
    int32_t app_size;        /* world size of the traced job */
    uint64_t clock_res_ps;   /* clock resolution in picoseconds */
    int64_t created_unix_ns; /* creation time, ns since 1970-01-01 UTC */
    uint64_t epoch_unix_ns;  /* t=0 of the record times, ns since 1970 */
    char host[MC_TRACE_HOST_LEN + 1]; /* NUL-terminated host name */
} mc_trace_header;

/*! mc_trace_header_init() : a header of the current version for @rank of @size,
 * host and times left empty/zero, clock resolution 1000 ps. */
MC_API void mc_trace_header_init(mc_trace_header *hdr, int32_t rank,
                                 int32_t size);

/*! mc_trace_header_encode() / mc_trace_header_decode() :
 *  Convert between the struct and the 128 on-disk bytes (with checksum).
 *  decode checks magic, endianness marker, major version, checksum.
 *  @return 0, or MC_EMAGIC / MC_EENDIAN / MC_EVERSION / MC_EHEADER. */
MC_API void mc_trace_header_encode(const mc_trace_header *hdr,
                                   unsigned char out[MC_TRACE_HEADER_SIZE]);
MC_API int mc_trace_header_decode(const unsigned char *in, size_t len,
                                  mc_trace_header *hdr, mc_errinfo *err);

/*! mc_record_encode() / mc_record_decode() : one record to and from its 48
 *  little-endian bytes (portable; used on big-endian hosts and in tests). */
MC_API void mc_record_encode(const mc_record *rec,
                             unsigned char out[MC_RECORD_SIZE]);
MC_API void mc_record_decode(const unsigned char in[MC_RECORD_SIZE],
                             mc_record *rec);

/*! mc_record_check() : semantic check of one decoded record: known op code,
 *  known direction and flags, t_end_ns >= t_start_ns, reserved zero.
 *  @return 0 or MC_ERECORD with the reason in err->detail. */
MC_API int mc_record_check(const mc_record *rec, mc_errinfo *err);

/*! mc_op_known_table() : MC_OP_MAX_CODE + 1 flags, 1 for each op code of
 *  the operation table (MC_OPS_MAP). */
MC_API const unsigned char *mc_op_known_table(void);

/*! mc_record_valid() : the test of mc_record_check() without the reason,
 *  inline for loops over many records. @known is mc_op_known_table().
 *  @return 1 when @rec is valid. */
static inline int mc_record_valid(const mc_record *rec,
                                  const unsigned char *known)
{
    return !((rec->op > MC_OP_MAX_CODE || !known[rec->op]) |
             (rec->dir > MC_DIR_RECV) |
             ((rec->flags & ~MC_RF_KNOWN_MASK) != 0) |
             (rec->t_end_ns < rec->t_start_ns) | (rec->reserved != 0));
}

/*! mc_trace_payload_checksum() : the payload checksum of format major
 *  @major over the raw (uncompressed) records: XXH64 (seed 0) in 1.x,
 *  XXH3_64bits (seed 0, default secret) in 2.x. 0 for any other major. */
MC_API uint64_t mc_trace_payload_checksum(unsigned major, const void *raw,
                                          size_t len);

/* ---- writer ------------------------------------------------------------- */

typedef struct mc_writer_opts {
    uint32_t block_records; /* records per block; 0 = default */
    mc_codec codec;         /* MC_CODEC_NONE or MC_CODEC_ZSTD */
    int zstd_level;         /* 0 = zstd's default */
    int write_footer;       /* 1 (default via mc_writer_opts_init) = index */
    int fsync_on_close;     /* 1 = fsync before close returns */
    unsigned format_major;  /* 0 = MC_TRACE_VERSION_MAJOR; 1 writes 1.0 */
} mc_writer_opts;

typedef struct mc_trace_writer mc_trace_writer;

/*! mc_writer_opts_init() : defaults: 16384 records per block, no codec,
 *  footer on, no fsync. */
MC_API void mc_writer_opts_init(mc_writer_opts *opts);

/*! mc_trace_writer_open() :
 *  Create (truncate) @path and write @hdr. @opts may be NULL (defaults).
 *  Memory in use is bounded by one block (raw + compressed buffer).
 *  @return 0 and *out, or a negative MC_E* code with @err filled. */
MC_API int mc_trace_writer_open(const char *path, const mc_trace_header *hdr,
                                const mc_writer_opts *opts,
                                mc_trace_writer **out, mc_errinfo *err);

/*! mc_trace_write() : append @n records; a full block is written out.
 *  Records are written as given (not checked; see mc_record_check()).
 *  @return 0 or a negative MC_E* code (the writer is then unusable). */
MC_API int mc_trace_write(mc_trace_writer *w, const mc_record *recs, size_t n,
                          mc_errinfo *err);

/*! mc_trace_writer_flush() : write the partial block now (if any). */
MC_API int mc_trace_writer_flush(mc_trace_writer *w, mc_errinfo *err);

/*! mc_trace_writer_close() : flush, write the footer (if enabled), close and
 *  free. @w may be NULL. Always frees @w, even on error. */
MC_API int mc_trace_writer_close(mc_trace_writer *w, mc_errinfo *err);

/*! mc_trace_writer_abandon() : close the file without flushing the partial
 *  block or writing a footer (what a crash leaves), and free @w. NULL ok. */
MC_API void mc_trace_writer_abandon(mc_trace_writer *w);

/*! mc_trace_writer_records() : records accepted so far. */
MC_API uint64_t mc_trace_writer_records(const mc_trace_writer *w);

/* ---- reader ------------------------------------------------------------- */

/* Where one block lies in a file. */
typedef struct mc_block_info {
    uint64_t offset;     /* byte offset of the block header */
    uint32_t nrecords;   /* records in the block */
    uint32_t stored_len; /* payload bytes after the header */
    uint32_t seq;        /* block sequence number written by the writer */
} mc_block_info;

typedef struct mc_trace_reader mc_trace_reader;

/*! mc_trace_open() : open @path and decode its header. Any bytes are
 *  accepted as input: sizes read from the file are checked against the
 *  limits above and the file size before anything is allocated.
 *  @return 0 and *out, or MC_EOPEN / MC_EMAGIC / MC_EVERSION / MC_EHEADER /
 *  MC_ETRUNC / MC_EENDIAN with @err naming the file and offset. */
MC_API int mc_trace_open(const char *path, mc_trace_reader **out,
                         mc_errinfo *err);

/*! mc_trace_close() : close and free; NULL is accepted. */
MC_API void mc_trace_close(mc_trace_reader *r);

/*! mc_trace_get_header() : the decoded header; valid until close. */
MC_API const mc_trace_header *mc_trace_get_header(const mc_trace_reader *r);

/*! mc_trace_file_size() : size of the file in bytes when it was opened. */
MC_API uint64_t mc_trace_file_size(const mc_trace_reader *r);

/*! mc_trace_reader_memory() : bytes the reader holds now: itself, its read
 *  window, the decompressed and converted block buffers, the zstd context
 *  and the block index. Bounded by the largest block, not by the file. */
MC_API size_t mc_trace_reader_memory(const mc_trace_reader *r);

/*! mc_trace_index() :
 *  The list of blocks. Uses the footer index when it is present and valid
 *  (*from_footer = 1), otherwise walks the block headers from the start
 *  (*from_footer = 0; @from_footer may be NULL). A walk stops at the first
 *  damaged block header or at a truncated block, returning the intact blocks
 *  before it and the error in @err with *complete = 0. The array is owned by
 *  the reader and valid until close.
 *  A damaged footer is not an error here: the walk replaces it (use
 *  mc_trace_verify() to report it).
 *  @return 0 (complete or not, see *complete), or a negative code when not
 *  even the list could be built (I/O error, out of memory). */
MC_API int mc_trace_index(mc_trace_reader *r, const mc_block_info **blocks,
                          size_t *nblocks, int *from_footer, int *complete,
                          mc_errinfo *err);

/*! mc_trace_seek_block() : position the reader at the block @b (from the
 *  index or from a partition plan); the next mc_trace_next_block() reads it.
 *  @block_index is the block's index in this file (its sequence number),
 *  which the reader checks against the block header.
 *  @return 0, or MC_ERANGE when b->offset lies outside the file. */
MC_API int mc_trace_seek_block(mc_trace_reader *r, const mc_block_info *b,
                               uint64_t block_index, mc_errinfo *err);

/*! mc_trace_next_block() :
 *  Read, verify (header check, payload checksum of the raw bytes), decode and
 * return the next block. *recs points into the reader's buffer, valid until the
 *  next call. Records are not semantically checked here; see
 *  mc_record_check().
 *  @return 1 when a block was returned, 0 at the clean end of the blocks
 *  (footer or end of file), or a negative code: MC_ETRUNC, MC_EBLOCK,
 *  MC_ECHECKSUM, MC_ECODEC, MC_EIO, with file, block index and offset in @err.
 *  After an error the reader can be repositioned with mc_trace_seek_block(). */
MC_API int mc_trace_next_block(mc_trace_reader *r, const mc_record **recs,
                               size_t *nrecs, mc_errinfo *err);

/*! mc_trace_current_block() : index and offset of the block returned last
 *  (or about to be read). */
MC_API void mc_trace_current_block(const mc_trace_reader *r,
                                   uint64_t *block_index, uint64_t *offset);

/*! mc_trace_current_checksum() : the payload checksum of the block
 *  returned last, as stored in its header and verified against the
 *  records (mc_trace_payload_checksum() of the file's major); 0 when the
 *  last mc_trace_next_block() returned no block. */
MC_API uint64_t mc_trace_current_checksum(const mc_trace_reader *r);

/* ---- whole-file check --------------------------------------------------- */

/* What mc_trace_verify() found in one file. */
typedef struct mc_trace_check {
    mc_trace_header header; /* valid when header_ok */
    int header_ok;          /* the file header decoded */
    int has_footer;         /* a valid footer and trailer were found */
    uint64_t file_bytes;    /* size of the file */
    uint64_t blocks;        /* blocks read and verified */
    uint64_t records;       /* records in those blocks */
    uint64_t raw_bytes;     /* records x 48: the 48-byte record bytes read */
} mc_trace_check;

/*! mc_trace_verify() :
 *  Check one trace completely: file header, every block header, sequence
 *  numbers, payload checksum, zstd frame, every record (mc_record_check),
 *  and, when a footer is present, that it agrees with a walk of the block
 *  headers (same offsets, record counts and lengths, same total). The walk
 *  is done even when the footer is valid, so a footer that hides damage is
 *  found too. Stops at the first problem.
 *  @out (may be NULL) receives what was read before the problem.
 *  @return 0 when the file is intact, else the first error's code, with
 *  file, block index, offset and reason in @err. */
MC_API int mc_trace_verify(const char *path, mc_trace_check *out,
                           mc_errinfo *err);

/*! mc_trace_block_header_at() :
 *  Decode and check only the 40-byte block header at @offset (magic, header
 *  checksum, limits), without reading the payload: what a reader can still
 *  learn of a block whose payload is cut short or damaged, e.g. how many
 *  records it held. @block_index is used in error messages only.
 *  @return 0 and *out, or MC_ETRUNC / MC_EBLOCK / MC_EIO with @err. */
MC_API int mc_trace_block_header_at(mc_trace_reader *r, uint64_t offset,
                                    uint64_t block_index, mc_block_info *out,
                                    mc_errinfo *err);

#endif /* MSGCENSUS_TRACE_H */
