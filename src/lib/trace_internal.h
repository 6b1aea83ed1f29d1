/* trace_internal.h - little-endian byte helpers and block/footer layouts shared
 * by the trace codec, writer and reader. */
#ifndef MSGCENSUS_TRACE_INTERNAL_H
#define MSGCENSUS_TRACE_INTERNAL_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* fixed-width integers */
#include <stdlib.h> /* malloc */
#include <string.h> /* memcpy, strlen */

#include <msgcensus/trace.h>

/* Host byte order, decided at compile time. The record fast path (memcpy of
 * whole records) is taken only on little-endian hosts. The test suite builds
 * the format code once more with MC_HOST_LE=0 to run the portable path on
 * little-endian machines too. */
#if defined(MC_HOST_LE)
/* set by the build */
#elif defined(__BYTE_ORDER__) && defined(__ORDER_LITTLE_ENDIAN__) &&           \
    __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
#define MC_HOST_LE 1
#else
#define MC_HOST_LE 0
#endif

static inline uint16_t mc__get16(const unsigned char *p)
{
    return (uint16_t)(p[0] | (p[1] << 8));
}
static inline uint32_t mc__get32(const unsigned char *p)
{
    return (uint32_t)p[0] | ((uint32_t)p[1] << 8) | ((uint32_t)p[2] << 16) |
           ((uint32_t)p[3] << 24);
}
static inline uint64_t mc__get64(const unsigned char *p)
{
    return (uint64_t)mc__get32(p) | ((uint64_t)mc__get32(p + 4) << 32);
}
static inline void mc__put16(unsigned char *p, uint16_t v)
{
    p[0] = (unsigned char)v;
    p[1] = (unsigned char)(v >> 8);
}
static inline void mc__put32(unsigned char *p, uint32_t v)
{
    p[0] = (unsigned char)v;
    p[1] = (unsigned char)(v >> 8);
    p[2] = (unsigned char)(v >> 16);
    p[3] = (unsigned char)(v >> 24);
}
static inline void mc__put64(unsigned char *p, uint64_t v)
{
    mc__put32(p, (uint32_t)v);
    mc__put32(p + 4, (uint32_t)(v >> 32));
}

/* A malloc'ed copy of @s (the reader and writer keep their file name for
 * error messages); NULL when out of memory. */
static inline char *mc__strdup(const char *s)
{
    const size_t n = strlen(s) + 1;
    char *d = malloc(n);
    if (d)
        memcpy(d, s, n);
    return d;
}

/* A decoded block header (docs/trace-format.md, "Block"). */
typedef struct mc__block_header {
    uint32_t magic;
    uint32_t seq;
    uint32_t nrecords;
    uint32_t raw_len;
    uint32_t stored_len;
    uint8_t codec;
    uint8_t flags;
    uint16_t record_size;
    uint64_t raw_sum; /* payload checksum: XXH64 (1.x) or XXH3 (2.x) */
    uint32_t hdr_xxh32;
    uint32_t reserved;
} mc__block_header;

/* Encode @bh into 40 bytes; the header checksum is computed here. */
void mc__block_header_encode(const mc__block_header *bh,
                             unsigned char out[MC_BLOCK_HEADER_SIZE]);

/* Decode and check 40 bytes: magic, header checksum, codec, record size,
 * raw_len == nrecords * record_size, limits on nrecords, raw_len and
 * stored_len. On failure fills @err (with @path, @block, @offset) and
 * returns MC_EBLOCK. */
int mc__block_header_decode(const unsigned char in[MC_BLOCK_HEADER_SIZE],
                            mc__block_header *bh, const char *path,
                            int64_t block, int64_t offset, mc_errinfo *err);

/* Size of the footer (MCIX .. its checksum) for @nblocks blocks. */
static inline uint64_t mc__footer_size(uint64_t nblocks)
{
    return 8u + nblocks * MC_FOOTER_ENTRY_SIZE + 16u;
}

/* The reader's view of the footer, used by the whole-file check. */
int mc__trace_footer_index(mc_trace_reader *r, const mc_block_info **blocks,
                           size_t *nblocks, uint64_t *total_records,
                           mc_errinfo *err);
uint32_t mc__trace_header_size(const mc_trace_reader *r);
int mc__trace_walk_index(mc_trace_reader *r, const mc_block_info **blocks,
                         size_t *nblocks, int *complete, mc_errinfo *err);

#endif /* MSGCENSUS_TRACE_INTERNAL_H */
