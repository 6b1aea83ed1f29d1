/* alloc.c - allocation wrappers with a fail-after-N hook for tests. */
#include "alloc.h"

#include <stdatomic.h> /* atomic_long */
#include <stdlib.h>    /* malloc, calloc, free */

/* Remaining successful allocations; negative means unlimited. */
static atomic_long budget = -1;

/* Spend one unit of the budget; 0 when this allocation must fail. */
static int allowed(void)
{
    long b = atomic_load_explicit(&budget, memory_order_relaxed);
    while (b >= 0) {
        if (b == 0)
            return 0;
        if (atomic_compare_exchange_weak_explicit(
                &budget, &b, b - 1, memory_order_relaxed, memory_order_relaxed))
            return 1;
    }
    return 1;
}

void *mc__malloc(size_t n) { return allowed() ? malloc(n) : NULL; }

void *mc__calloc(size_t count, size_t size)
{
    return allowed() ? calloc(count, size) : NULL;
}

void mc__free(void *p) { free(p); }

void mc__alloc_fail_after(long n)
{
    atomic_store_explicit(&budget, n < 0 ? -1 : n, memory_order_relaxed);
}
