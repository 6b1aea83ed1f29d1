/* hist.c - exact sparse size histogram with streaming insert. */
#include <msgcensus/error.h>
#include <msgcensus/hist.h>

#include <string.h> /* memset, memcpy */

#include "alloc.h"

/* Fibonacci hashing (Knuth, TAOCP vol. 3, 6.4): multiply by 2^64/phi and
 * keep the top bits. Sizes are often multiples of 8 or powers of two; the
 * top bits of the product depend on every bit of the key, so such keys
 * spread well. */
#define GOLDEN UINT64_C(0x9E3779B97F4A7C15)
#define MIN_BITS 6u /* 64 slots, 1 KiB */

/* Key 0 marks an empty slot; the size 0 lives in zero_count instead. */
typedef struct slot {
    uint64_t key;
    uint64_t count;
} slot;

struct mc_hist {
    slot *tab;
    size_t cap;     /* power of two */
    unsigned bits;  /* cap == 1 << bits */
    size_t used;    /* occupied slots (non-zero sizes) */
    size_t grow_at; /* grow before used exceeds this (load 3/4) */
    uint64_t zero_count;
    uint64_t total; /* sum of all counts; bounds every count */
    /* One-entry cache of the last size seen: repeats are the common case.
     * last_count always points at a live counter (zero_count at worst). */
    uint64_t last_key;
    uint64_t *last_count;
    /* Cached sorted view, rebuilt after a change. */
    uint64_t *vsizes, *vcounts;
    size_t vcap, vk;
    int vvalid;
};

static size_t home(uint64_t key, unsigned bits)
{
    return (size_t)((key * GOLDEN) >> (64u - bits));
}

/* Index of @key in @tab, or of the empty slot where it belongs. */
static size_t probe(const slot *tab, size_t mask, unsigned bits, uint64_t key)
{
    size_t j = home(key, bits);
    while (tab[j].key != key && tab[j].key != 0)
        j = (j + 1) & mask;
    return j;
}

static void changed(mc_hist *h) { h->vvalid = 0; }

/* Rebuild into a table of 2^@bits slots. On allocation failure the old
 * table stays in place untouched (MC_ENOMEM). */
static int rehash(mc_hist *h, unsigned bits)
{
    if (bits >= sizeof(size_t) * 8 - 5)
        return MC_ENOMEM;
    const size_t cap = (size_t)1 << bits;
    slot *tab = mc__calloc(cap, sizeof *tab);
    if (!tab)
        return MC_ENOMEM;
    for (size_t i = 0; i < h->cap; i++) {
        const slot s = h->tab[i];
        if (s.key != 0)
            tab[probe(tab, cap - 1, bits, s.key)] = s;
    }
    mc__free(h->tab);
    h->tab = tab;
    h->cap = cap;
    h->bits = bits;
    h->grow_at = cap / 4 * 3;
    h->last_key = 0;
    h->last_count = &h->zero_count;
    return 0;
}

/* Make room so that @extra more keys fit without growing. */
static int reserve(mc_hist *h, size_t extra)
{
    if (h->used + extra <= h->grow_at)
        return 0;
    unsigned bits = h->bits;
    while (((size_t)1 << bits) / 4 * 3 < h->used + extra) {
        bits++;
        if (bits >= sizeof(size_t) * 8 - 5)
            return MC_ENOMEM;
    }
    return rehash(h, bits);
}

int mc_hist_create(mc_hist **out)
{
    *out = NULL;
    mc_hist *h = mc__calloc(1, sizeof *h);
    if (!h)
        return MC_ENOMEM;
    h->cap = (size_t)1 << MIN_BITS;
    h->bits = MIN_BITS;
    h->grow_at = h->cap / 4 * 3;
    h->tab = mc__calloc(h->cap, sizeof *h->tab);
    if (!h->tab) {
        mc__free(h);
        return MC_ENOMEM;
    }
    h->last_count = &h->zero_count;
    *out = h;
    return 0;
}

void mc_hist_free(mc_hist *h)
{
    if (!h)
        return;
    mc__free(h->tab);
    mc__free(h->vsizes);
    mc__free(h->vcounts);
    mc__free(h);
}

void mc_hist_clear(mc_hist *h)
{
    memset(h->tab, 0, h->cap * sizeof *h->tab);
    h->used = 0;
    h->zero_count = 0;
    h->total = 0;
    h->last_key = 0;
    h->last_count = &h->zero_count;
    changed(h);
}

/* Counter of @key, inserting it when absent; NULL when the table would have
 * to grow and cannot. */
static uint64_t *counter(mc_hist *h, uint64_t key)
{
    if (key == 0)
        return &h->zero_count;
    size_t j = probe(h->tab, h->cap - 1, h->bits, key);
    if (h->tab[j].key == 0) {
        if (h->used + 1 > h->grow_at) {
            if (rehash(h, h->bits + 1) != 0)
                return NULL;
            j = probe(h->tab, h->cap - 1, h->bits, key);
        }
        h->tab[j].key = key;
        h->used++;
    }
    return &h->tab[j].count;
}

int mc_hist_add(mc_hist *h, uint64_t size, uint64_t n)
{
    if (n == 0)
        return 0;
    if (UINT64_MAX - h->total < n)
        return MC_ERANGE; /* every count is <= total, so none overflows */
    uint64_t *c = counter(h, size);
    if (!c)
        return MC_ENOMEM;
    *c += n;
    h->total += n;
    changed(h);
    return 0;
}

int mc_hist_add_sizes(mc_hist *h, const uint64_t *sizes, size_t n, size_t *done)
{
    int rc = 0;
    size_t lim = n;
    if (UINT64_MAX - h->total < (uint64_t)n) {
        lim = (size_t)(UINT64_MAX - h->total);
        rc = MC_ERANGE;
    }
    if (lim > 0)
        changed(h);
    slot *tab = h->tab;
    size_t mask = h->cap - 1;
    unsigned bits = h->bits;
    uint64_t last = h->last_key;
    uint64_t *lastc = h->last_count;
    /* Repeats of the last size are counted in a register and flushed when
     * the size changes: a run costs one compare per message. */
    uint64_t run = 0;
    size_t i;
    for (i = 0; i < lim; i++) {
        const uint64_t s = sizes[i];
        if (s == last) {
            run++;
            continue;
        }
        *lastc += run;
        run = 1;
        last = s;
        if (s == 0) {
            lastc = &h->zero_count;
            continue;
        }
        size_t j = home(s, bits);
        uint64_t k;
        while ((k = tab[j].key) != s && k != 0)
            j = (j + 1) & mask;
        if (k == 0) {
            if (h->used + 1 > h->grow_at) {
                if (rehash(h, bits + 1) != 0) {
                    run = 0;
                    rc = MC_ENOMEM;
                    last = h->last_key;
                    lastc = h->last_count;
                    break;
                }
                tab = h->tab;
                mask = h->cap - 1;
                bits = h->bits;
                j = probe(tab, mask, bits, s);
            }
            tab[j].key = s;
            h->used++;
        }
        lastc = &tab[j].count;
    }
    *lastc += run;
    h->total += i;
    h->last_key = last;
    h->last_count = lastc;
    if (done)
        *done = i;
    return rc;
}

/* Keys of @keys[0..k) (non-zero, distinct) not yet in @h. */
static size_t count_missing_keys(const mc_hist *h, const uint64_t *keys,
                                 const uint64_t *counts, size_t k)
{
    size_t missing = 0;
    for (size_t i = 0; i < k; i++) {
        if (keys[i] == 0 || counts[i] == 0)
            continue;
        const size_t j = probe(h->tab, h->cap - 1, h->bits, keys[i]);
        missing += h->tab[j].key == 0;
    }
    return missing;
}

/* Insert with room already reserved: cannot fail. */
static void add_reserved(mc_hist *h, uint64_t key, uint64_t n)
{
    if (key == 0) {
        h->zero_count += n;
        return;
    }
    const size_t j = probe(h->tab, h->cap - 1, h->bits, key);
    if (h->tab[j].key == 0) {
        h->tab[j].key = key;
        h->used++;
    }
    h->tab[j].count += n;
}

int mc_hist_merge(mc_hist *dst, const mc_hist *src)
{
    if (src->total == 0)
        return 0;
    if (UINT64_MAX - dst->total < src->total)
        return MC_ERANGE;
    if (dst == src) {
        for (size_t i = 0; i < dst->cap; i++)
            dst->tab[i].count *= 2;
        dst->zero_count *= 2;
        dst->total *= 2;
        changed(dst);
        return 0;
    }
    if (dst->used + src->used > dst->grow_at) {
        /* Grow to exactly what the union needs, before changing anything,
         * so that a failed allocation leaves dst as it was. */
        size_t missing = 0;
        for (size_t i = 0; i < src->cap; i++) {
            const uint64_t key = src->tab[i].key;
            if (key != 0) {
                const size_t j = probe(dst->tab, dst->cap - 1, dst->bits, key);
                missing += dst->tab[j].key == 0;
            }
        }
        const int rc = reserve(dst, missing);
        if (rc != 0)
            return rc;
    }
    for (size_t i = 0; i < src->cap; i++)
        if (src->tab[i].key != 0)
            add_reserved(dst, src->tab[i].key, src->tab[i].count);
    dst->zero_count += src->zero_count;
    dst->total += src->total;
    changed(dst);
    return 0;
}

int mc_hist_add_sorted(mc_hist *h, const uint64_t *sizes,
                       const uint64_t *counts, size_t k)
{
    uint64_t sum = 0;
    for (size_t i = 0; i < k; i++) {
        if (i > 0 && sizes[i] <= sizes[i - 1])
            return MC_EINVAL;
        if (UINT64_MAX - sum < counts[i])
            return MC_ERANGE;
        sum += counts[i];
    }
    if (sum == 0)
        return 0;
    if (UINT64_MAX - h->total < sum)
        return MC_ERANGE;
    if (h->used + k > h->grow_at) {
        const int rc = reserve(h, count_missing_keys(h, sizes, counts, k));
        if (rc != 0)
            return rc;
    }
    for (size_t i = 0; i < k; i++)
        if (counts[i] != 0)
            add_reserved(h, sizes[i], counts[i]);
    h->total += sum;
    changed(h);
    return 0;
}

size_t mc_hist_distinct(const mc_hist *h)
{
    return h->used + (h->zero_count != 0);
}

uint64_t mc_hist_total(const mc_hist *h) { return h->total; }

size_t mc_hist_memory(const mc_hist *h)
{
    return sizeof *h + h->cap * sizeof *h->tab + 2 * h->vcap * sizeof(uint64_t);
}

/* ---- sorting (key, value) pairs by key ------------------------------------
 */

static void insertion_pairs(uint64_t *key, uint64_t *val, size_t n)
{
    for (size_t i = 1; i < n; i++) {
        const uint64_t k = key[i], v = val[i];
        size_t j = i;
        for (; j > 0 && key[j - 1] > k; j--) {
            key[j] = key[j - 1];
            val[j] = val[j - 1];
        }
        key[j] = k;
        val[j] = v;
    }
}

static void swap_pair(uint64_t *key, uint64_t *val, size_t a, size_t b)
{
    const uint64_t k = key[a], v = val[a];
    key[a] = key[b];
    val[a] = val[b];
    key[b] = k;
    val[b] = v;
}

/* In-place quicksort (median of three, smaller side first so the stack
 * stays O(log n)); the fallback when no scratch memory is available. */
static void quick_pairs(uint64_t *key, uint64_t *val, size_t n)
{
    while (n > 32) {
        const size_t m = n / 2;
        if (key[m] < key[0])
            swap_pair(key, val, m, 0);
        if (key[n - 1] < key[0])
            swap_pair(key, val, n - 1, 0);
        if (key[n - 1] < key[m])
            swap_pair(key, val, n - 1, m);
        const uint64_t pivot = key[m];
        size_t i = 0, j = n - 1;
        for (;;) {
            while (key[i] < pivot)
                i++;
            while (key[j] > pivot)
                j--;
            if (i >= j)
                break;
            swap_pair(key, val, i, j);
            i++;
            j--;
        }
        const size_t left = j + 1; /* [0, j] and [j+1, n) */
        if (left < n - left) {
            quick_pairs(key, val, left);
            key += left;
            val += left;
            n -= left;
        } else {
            quick_pairs(key + left, val + left, n - left);
            n = left;
        }
    }
    insertion_pairs(key, val, n);
}

/* LSD radix sort on bytes, skipping bytes that are equal in every key.
 * Sorts @key/@val using the scratch @tk/@tv (n each). @return 1 when the
 * result ended in the scratch arrays, 0 when in place. */
static int radix_pairs(uint64_t *key, uint64_t *val, uint64_t *tk, uint64_t *tv,
                       size_t n)
{
    size_t hist[8][256];
    memset(hist, 0, sizeof hist);
    for (size_t i = 0; i < n; i++)
        for (unsigned b = 0; b < 8; b++)
            hist[b][(key[i] >> (8 * b)) & 0xff]++;
    int in_tmp = 0;
    for (unsigned b = 0; b < 8; b++) {
        const size_t first = (key[0] >> (8 * b)) & 0xff;
        if (hist[b][first] == n)
            continue; /* this byte is the same everywhere */
        size_t pos[256];
        size_t acc = 0;
        for (unsigned d = 0; d < 256; d++) {
            pos[d] = acc;
            acc += hist[b][d];
        }
        uint64_t *sk = in_tmp ? tk : key, *sv = in_tmp ? tv : val;
        uint64_t *dk = in_tmp ? key : tk, *dv = in_tmp ? val : tv;
        for (size_t i = 0; i < n; i++) {
            const size_t p = pos[(sk[i] >> (8 * b)) & 0xff]++;
            dk[p] = sk[i];
            dv[p] = sv[i];
        }
        in_tmp = !in_tmp;
    }
    return in_tmp;
}

/* Gather the entries unsorted into @sizes/@counts; @return K. */
static size_t gather(const mc_hist *h, uint64_t *sizes, uint64_t *counts)
{
    size_t k = 0;
    if (h->zero_count) {
        sizes[k] = 0;
        counts[k++] = h->zero_count;
    }
    for (size_t i = 0; i < h->cap; i++) {
        if (h->tab[i].key != 0) {
            sizes[k] = h->tab[i].key;
            counts[k++] = h->tab[i].count;
        }
    }
    return k;
}

/* Sort K pairs in place, with scratch memory when it can be had. */
static void sort_pairs(uint64_t *sizes, uint64_t *counts, size_t k)
{
    if (k <= 64) {
        insertion_pairs(sizes, counts, k);
        return;
    }
    uint64_t *tk = mc__malloc(k * sizeof *tk);
    uint64_t *tv = tk ? mc__malloc(k * sizeof *tv) : NULL;
    if (!tv) {
        mc__free(tk);
        quick_pairs(sizes, counts, k);
        return;
    }
    if (radix_pairs(sizes, counts, tk, tv, k)) {
        memcpy(sizes, tk, k * sizeof *tk);
        memcpy(counts, tv, k * sizeof *tv);
    }
    mc__free(tk);
    mc__free(tv);
}

void mc_hist_export(const mc_hist *h, uint64_t *sizes, uint64_t *counts)
{
    if (h->vvalid) {
        if (h->vk == 0)
            return;
        memcpy(sizes, h->vsizes, h->vk * sizeof *sizes);
        memcpy(counts, h->vcounts, h->vk * sizeof *counts);
        return;
    }
    sort_pairs(sizes, counts, gather(h, sizes, counts));
}

int mc_hist_sorted(mc_hist *h, mc_hview *view)
{
    if (!h->vvalid) {
        const size_t k = mc_hist_distinct(h);
        if (k > h->vcap) {
            uint64_t *s = mc__malloc(k * sizeof *s);
            uint64_t *c = s ? mc__malloc(k * sizeof *c) : NULL;
            if (!c) {
                mc__free(s);
                return MC_ENOMEM;
            }
            mc__free(h->vsizes);
            mc__free(h->vcounts);
            h->vsizes = s;
            h->vcounts = c;
            h->vcap = k;
        }
        h->vk = gather(h, h->vsizes, h->vcounts);
        sort_pairs(h->vsizes, h->vcounts, h->vk);
        h->vvalid = 1;
    }
    view->sizes = h->vsizes;
    view->counts = h->vcounts;
    view->k = h->vk;
    return 0;
}
