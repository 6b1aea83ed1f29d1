/* fuzz_common.h - what the fuzz harnesses share: the libFuzzer entry point,
 * invariant checks and checks of a returned error context. */
#ifndef MSGCENSUS_FUZZ_COMMON_H
#define MSGCENSUS_FUZZ_COMMON_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* uint8_t */
#include <stdio.h>  /* fprintf */
#include <stdlib.h> /* abort */
#include <string.h> /* strnlen, strcmp */

#include <msgcensus/error.h>

/* The entry point libFuzzer calls (and replay_main.c in normal builds). */
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* A broken invariant is a finding: say which one and abort, so that
 * libFuzzer saves the input (and a normal build's replay fails). */
#define FUZZ_CHECK(cond)                                                       \
    do {                                                                       \
        if (!(cond)) {                                                         \
            fprintf(stderr, "%s:%d: invariant failed: %s\n", __FILE__,         \
                    __LINE__, #cond);                                          \
            abort();                                                           \
        }                                                                      \
    } while (0)

/* An error the library returned must be described by a well-formed
 * context: the same known code, NUL-terminated strings, block and offset
 * either unknown (-1) or plausible (an offset inside a file of @limit
 * bytes, when @limit >= 0), and a message that formats to the length it
 * announces. */
static inline void fuzz_check_errinfo(const mc_errinfo *e, int rc,
                                      int64_t limit)
{
    FUZZ_CHECK(rc < 0);
    FUZZ_CHECK(e->code == rc);
    FUZZ_CHECK(strcmp(mc_errname(rc), "MC_E?") != 0);
    FUZZ_CHECK(strnlen(e->path, sizeof e->path) < sizeof e->path);
    FUZZ_CHECK(strnlen(e->detail, sizeof e->detail) < sizeof e->detail);
    FUZZ_CHECK(e->block >= -1);
    FUZZ_CHECK(e->offset >= -1);
    if (limit >= 0)
        FUZZ_CHECK(e->offset <= limit);
    char full[2048], small[16];
    const int n = mc_errinfo_format(e, full, sizeof full);
    FUZZ_CHECK(n > 0 && (size_t)n < sizeof full);
    FUZZ_CHECK(strlen(full) == (size_t)n);
    FUZZ_CHECK(mc_errinfo_format(e, small, sizeof small) == n);
    FUZZ_CHECK(strlen(small) == sizeof small - 1);
}

#endif /* MSGCENSUS_FUZZ_COMMON_H */
