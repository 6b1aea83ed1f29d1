/* alloc.h - internal allocation wrappers with a failure hook for tests. */
#ifndef MSGCENSUS_ALLOC_H
#define MSGCENSUS_ALLOC_H

#include <stddef.h> /* size_t */

/* malloc/calloc/free as used by the library's own data structures. When the
 * test hook is armed they fail (return NULL) once its budget is spent. */
void *mc__malloc(size_t n);
void *mc__calloc(size_t count, size_t size);
void mc__free(void *p);

/*! mc__alloc_fail_after() : test hook. After @n more successful
 *  allocations every allocation fails; a negative @n disarms the hook
 *  (the default). Process-wide; for tests only. */
void mc__alloc_fail_after(long n);

#endif /* MSGCENSUS_ALLOC_H */
