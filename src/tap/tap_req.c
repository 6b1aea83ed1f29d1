/* tap_req.c - table of the requests and messages whose record is emitted later
 * (chained hash over a slot pool). */
#include "tap.h"

#include <stdlib.h> /* realloc, free */

size_t mc__tap_req_count;

static mc__tap_req *pool; /* slots; indices stay valid across growth */
static int32_t pool_cap;
static int32_t free_head = -1; /* chain of free slots through .next */
static int32_t *buckets;       /* heads of the hash chains */
static uint32_t nbuckets;      /* power of two */

static uint32_t bucket_of(uintptr_t key)
{
    uint64_t x = (uint64_t)key;
    x ^= x >> 33;
    x *= 0xff51afd7ed558ccdull; /* murmur3 finaliser constant (common practice)
                                 */
    x ^= x >> 33;
    return (uint32_t)x & (nbuckets - 1u);
}

static int grow_buckets(void)
{
    const uint32_t nb = nbuckets ? nbuckets * 2u : 256u;
    int32_t *b = malloc((size_t)nb * sizeof *b);
    if (!b)
        return -1;
    for (uint32_t i = 0; i < nb; i++)
        b[i] = -1;
    free(buckets);
    buckets = b;
    nbuckets = nb;
    /* Rehash every slot in use. */
    for (int32_t s = 0; s < pool_cap; s++) {
        if (pool[s].kind == 0)
            continue;
        const uint32_t h = bucket_of(pool[s].key);
        pool[s].next = buckets[h];
        buckets[h] = s;
    }
    return 0;
}

static int grow_pool(void)
{
    const int32_t nc = pool_cap ? pool_cap * 2 : 256;
    mc__tap_req *p = realloc(pool, (size_t)nc * sizeof *p);
    if (!p)
        return -1;
    pool = p;
    for (int32_t s = nc - 1; s >= pool_cap; s--) {
        pool[s].kind = 0;
        pool[s].gen = 0;
        pool[s].next = free_head;
        free_head = s;
    }
    pool_cap = nc;
    return 0;
}

int32_t mc__tap_req_add_locked(uintptr_t key, int kind, const mc_record *rec,
                               MPI_Datatype dt, mc__tap_comm *comm)
{
    if (free_head < 0 && grow_pool() != 0) {
        mc__tap_fail("out of memory for the request table");
        return -1;
    }
    if ((mc__tap_req_count + 1) > (size_t)nbuckets * 2u &&
        grow_buckets() != 0) {
        mc__tap_fail("out of memory for the request table");
        return -1;
    }
    const int32_t s = free_head;
    mc__tap_req *e = &pool[s];
    free_head = e->next;
    e->key = key;
    e->kind = (uint8_t)kind;
    e->active = 0;
    e->pad = 0;
    e->gen++;
    e->rec = *rec;
    e->dt = dt;
    e->comm = comm;
    mc__tap_comm_ref(comm);
    const uint32_t h = bucket_of(key);
    e->next = buckets[h];
    buckets[h] = s;
    mc__tap_req_count++;
    return s;
}

int32_t mc__tap_req_find_locked(uintptr_t key)
{
    if (mc__tap_req_count == 0)
        return -1;
    for (int32_t s = buckets[bucket_of(key)]; s >= 0; s = pool[s].next)
        if (pool[s].key == key)
            return s;
    return -1;
}

mc__tap_req *mc__tap_req_at(int32_t slot) { return &pool[slot]; }

void mc__tap_req_remove_locked(int32_t slot)
{
    mc__tap_req *e = &pool[slot];
    int32_t *link = &buckets[bucket_of(e->key)];
    while (*link >= 0 && *link != slot)
        link = &pool[*link].next;
    if (*link == slot)
        *link = e->next;
    mc__tap_comm_unref(e->comm);
    e->comm = NULL;
    e->kind = 0;
    e->next = free_head;
    free_head = slot;
    mc__tap_req_count--;
}

void mc__tap_req_teardown(void)
{
    for (int32_t s = 0; s < pool_cap; s++)
        if (pool[s].kind != 0)
            mc__tap_comm_unref(pool[s].comm);
    free(pool);
    free(buckets);
    pool = NULL;
    buckets = NULL;
    pool_cap = 0;
    nbuckets = 0;
    free_head = -1;
    mc__tap_req_count = 0;
}
