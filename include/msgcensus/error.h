/* error.h - error codes and error context shared by every msgcensus call. */
#ifndef MSGCENSUS_ERROR_H
#define MSGCENSUS_ERROR_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* int64_t, uint64_t */

#include "common.h"

/* One table, expanded into the enum, mc_errname() and mc_strerror().
 * Codes are negative; 0 is success. Never renumber: codes appear in
 * checkpoint files and machine-readable output. */
#define MC_ERRNO_MAP(X)                                                        \
    X(EINVAL, -1, "invalid argument")                                          \
    X(ENOMEM, -2, "out of memory")                                             \
    X(EIO, -3, "I/O error")                                                    \
    X(EOPEN, -4, "cannot open file")                                           \
    X(EMAGIC, -5, "not a msgcensus trace (bad magic)")                         \
    X(EVERSION, -6, "unsupported format version")                              \
    X(EENDIAN, -7, "unsupported byte order marker")                            \
    X(EHEADER, -8, "file header damaged")                                      \
    X(ETRUNC, -9, "file truncated")                                            \
    X(EBLOCK, -10, "block header damaged")                                     \
    X(ECHECKSUM, -11, "block checksum mismatch")                               \
    X(ECODEC, -12, "block cannot be decoded")                                  \
    X(ERECORD, -13, "invalid record")                                          \
    X(EFOOTER, -14, "footer damaged")                                          \
    X(ECSV, -15, "CSV parse error")                                            \
    X(ERANGE, -16, "value out of range")                                       \
    X(ENODATA, -17, "no data")                                                 \
    X(EHDF5, -18, "HDF5 error")                                                \
    X(EMPI, -19, "MPI error")                                                  \
    X(EEXIST, -20, "output exists")                                            \
    X(ELIMIT, -21, "resource limit exceeded")                                  \
    X(EDUPRANK, -22, "two files claim the same application rank")              \
    X(ECAMPAIGN, -23, "inconsistent campaign")                                 \
    X(ESTALE, -24, "checkpoint does not match the campaign")                   \
    X(ESUMMARY, -25, "not a msgcensus summary or unsupported layout")

typedef enum mc_errcode {
    MC_OK = 0,
#define MC_ERR_ENUM(name, value, text) MC_##name = (value),
    MC_ERRNO_MAP(MC_ERR_ENUM)
#undef MC_ERR_ENUM
} mc_errcode;

/* Where an error happened. Every field is optional; the library fills what it
 * knows. Callers pass a zeroed struct or NULL (then only the code is
 * returned). */
typedef struct mc_errinfo {
    int code;         /* the MC_E* code, same as the return value */
    int sys_errno;    /* errno of a failed system call, 0 if none */
    char path[1024];  /* file the error is about, "" if none */
    int64_t block;    /* block index in the file, -1 if none */
    int64_t offset;   /* byte offset in the file, -1 if none */
    int64_t line;     /* 1-based line for text input, 0 if none */
    int64_t column;   /* 1-based column for text input, 0 if none */
    char detail[256]; /* one short phrase adding to the code's text */
} mc_errinfo;

/*! mc_errname() : @return "MC_ECHECKSUM" style name, "MC_OK", or "MC_E?" */
MC_API const char *mc_errname(int code);

/*! mc_strerror() : @return a short lower-case description; never NULL. */
MC_API const char *mc_strerror(int code);

/*! mc_errinfo_clear() : reset @info to "no error" (block/offset = -1). */
MC_API void mc_errinfo_clear(mc_errinfo *info);

/*! mc_errinfo_format() :
 *  Formats @info as one line without a trailing newline, for example
 *  "run/rank-17.mct: block 3 at offset 1048576: block checksum mismatch
 *  (stored 0x1234, computed 0x5678)". Writes at most @cap bytes, always
 *  NUL-terminated when cap > 0.
 *  @return the number of characters that the full line needs (like snprintf).
 */
MC_API int mc_errinfo_format(const mc_errinfo *info, char *buf, size_t cap);

/*! mc_errinfo_set() :
 *  Record an error in @info (may be NULL) and return @code, so callers can
 *  write `return mc_errinfo_set(err, MC_ETRUNC, path, blk, off, "...")`.
 *  @detail is a printf format; pass NULL for none. */
MC_API int mc_errinfo_set(mc_errinfo *info, int code, const char *path,
                          int64_t block, int64_t offset, const char *detail,
                          ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 6, 7)))
#endif
    ;

#endif /* MSGCENSUS_ERROR_H */
