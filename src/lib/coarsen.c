/* coarsen.c - exact log2/k binning of size histograms and count rounding. */
#include <msgcensus/coarsen.h>
#include <msgcensus/error.h>

#include <math.h>   /* log2, exp2, floor */
#include <string.h> /* memcpy, memset */

#include "alloc.h" /* mc__malloc, mc__calloc, mc__free */

struct mc_coarse {
    mc_coarse_info info;
    mc_coarse_bin *bins;
    size_t nbins;
    uint64_t *sizes; /* the view: representative sizes of kept bins */
    uint64_t *counts;
    size_t nview;
};

/* s^k has at most 64 * 16 = 1024 bits: 32 limbs of 32 bits, plus room for
 * the carry of the last multiplication. */
#define NLIMBS 36

/* r[off..] += a[0..n) * m for a 32-bit m. Each step fits u64:
 * (2^32-1)^2 + 2 (2^32-1) = 2^64 - 1. */
static void muladd(uint32_t *r, const uint32_t *a, size_t n, uint32_t m,
                   size_t off)
{
    uint64_t carry = 0;
    size_t i;
    for (i = 0; i < n; i++) {
        const uint64_t t = (uint64_t)a[i] * m + r[i + off] + carry;
        r[i + off] = (uint32_t)t;
        carry = t >> 32;
    }
    for (i += off; carry; i++) {
        const uint64_t t = (uint64_t)r[i] + carry;
        r[i] = (uint32_t)t;
        carry = t >> 32;
    }
}

/* floor(log2(s^k)) for s >= 1, exactly, by multiplying out s^k. */
static int exact_bin(uint64_t s, unsigned k)
{
    uint32_t a[NLIMBS] = {1}, r[NLIMBS];
    size_t n = 1;
    const uint32_t lo = (uint32_t)s, hi = (uint32_t)(s >> 32);
    for (unsigned step = 0; step < k; step++) {
        memset(r, 0, sizeof r);
        muladd(r, a, n, lo, 0); /* a * s = a * lo + (a * hi) << 32 */
        muladd(r, a, n, hi, 1);
        n += 2;
        while (n > 1 && r[n - 1] == 0)
            n--;
        memcpy(a, r, n * sizeof a[0]);
    }
    int bits = 0;
    for (uint32_t top = a[n - 1]; top; top >>= 1)
        bits++;
    return (int)(32 * (n - 1)) + bits - 1;
}

int mc_log2_bin(uint64_t size, unsigned k)
{
    if (k < 1 || k > MC_COARSEN_MAX_K)
        return MC_BIN_ZERO - 1;
    if (size == 0)
        return MC_BIN_ZERO;
    /* The logarithm in double is within about 1e-13 of the truth here; only
     * a value that close to an integer needs the exact product. */
    const double f = (double)k * log2((double)size);
    const double fl = floor(f);
    if (f - fl > 1e-9 && f - fl < 1.0 - 1e-9)
        return (int)fl;
    return exact_bin(size, k);
}

/* Smallest size s >= 1 with bin(s) >= @bin; UINT64_MAX with *none = 1 when
 * even UINT64_MAX lies in a lower bin. */
static uint64_t first_at_or_above(int bin, unsigned k, int *none)
{
    *none = 0;
    if (bin <= 0)
        return 1;
    if (mc_log2_bin(UINT64_MAX, k) < bin) {
        *none = 1;
        return UINT64_MAX;
    }
    uint64_t lo = 1, hi = UINT64_MAX; /* bin(lo) < bin <= bin(hi) */
    while (hi - lo > 1) {
        const uint64_t mid = lo + (hi - lo) / 2;
        if (mc_log2_bin(mid, k) >= bin)
            hi = mid;
        else
            lo = mid;
    }
    return hi;
}

int mc_log2_bin_range(int bin, unsigned k, uint64_t *lo, uint64_t *hi)
{
    if (k < 1 || k > MC_COARSEN_MAX_K || bin < MC_BIN_ZERO)
        return MC_EINVAL;
    if (bin == MC_BIN_ZERO) {
        if (lo)
            *lo = 0;
        if (hi)
            *hi = 0;
        return 0;
    }
    int none = 0, none_next = 0;
    const uint64_t first = first_at_or_above(bin, k, &none);
    if (none)
        return MC_EINVAL;
    const uint64_t next = first_at_or_above(bin + 1, k, &none_next);
    const uint64_t last = none_next ? UINT64_MAX : next - 1;
    if (mc_log2_bin(first, k) != bin)
        return MC_ENODATA;
    if (lo)
        *lo = first;
    if (hi)
        *hi = last;
    return 0;
}

uint64_t mc_log2_bin_rep(int bin, unsigned k)
{
    uint64_t lo, hi;
    if (bin == MC_BIN_ZERO || mc_log2_bin_range(bin, k, &lo, &hi) != 0)
        return 0;
    const double m = floor(exp2(((double)bin + 0.5) / (double)k) + 0.5);
    uint64_t r = m >= 18446744073709551615.0 ? UINT64_MAX : (uint64_t)m;
    if (r < lo)
        r = lo;
    if (r > hi)
        r = hi;
    return r;
}

/* Round @c to the nearest multiple of @n (halves up). @return 0 or
 * MC_ERANGE when the result does not fit u64. */
static int round_count(uint64_t c, uint64_t n, uint64_t *out)
{
    uint64_t q = c / n;
    const uint64_t r = c % n;
    if (r >= n - r)
        q++;
    if (q > UINT64_MAX / n)
        return MC_ERANGE;
    *out = q * n;
    return 0;
}

void mc_coarse_free(mc_coarse *c)
{
    if (!c)
        return;
    mc__free(c->bins);
    mc__free(c->sizes);
    mc__free(c->counts);
    mc__free(c);
}

int mc_coarsen(const mc_hview *in, unsigned k, uint64_t round_to,
               mc_coarse **out)
{
    if (!out)
        return MC_EINVAL;
    *out = NULL;
    if (!in || k < 1 || k > MC_COARSEN_MAX_K ||
        (in->k > 0 && (!in->sizes || !in->counts)))
        return MC_EINVAL;
    for (size_t i = 0; i < in->k; i++)
        if (in->counts[i] == 0 || (i > 0 && in->sizes[i] <= in->sizes[i - 1]))
            return MC_EINVAL;

    mc_coarse *c = mc__calloc(1, sizeof *c);
    if (!c)
        return MC_ENOMEM;
    const size_t cap = in->k ? in->k : 1;
    c->bins = mc__calloc(cap, sizeof c->bins[0]);
    c->sizes = mc__calloc(cap, sizeof c->sizes[0]);
    c->counts = mc__calloc(cap, sizeof c->counts[0]);
    if (!c->bins || !c->sizes || !c->counts) {
        mc_coarse_free(c);
        return MC_ENOMEM;
    }
    c->info.k = k;
    c->info.round_to = round_to >= 2 ? round_to : 0;
    c->info.distinct_in = in->k;

    /* Sizes ascend, so bins do too: one pass groups neighbours. */
    int rc = 0;
    for (size_t i = 0; i < in->k; i++) {
        const int b = mc_log2_bin(in->sizes[i], k);
        if (c->info.msgs_in > UINT64_MAX - in->counts[i]) {
            rc = MC_ERANGE;
            break;
        }
        c->info.msgs_in += in->counts[i];
        if (c->nbins == 0 || c->bins[c->nbins - 1].bin != b) {
            mc_coarse_bin *nb = &c->bins[c->nbins++];
            nb->bin = b;
            if (mc_log2_bin_range(b, k, &nb->lo, &nb->hi) != 0) {
                rc = MC_EINVAL; /* cannot happen for a size inside the bin */
                break;
            }
            nb->rep = mc_log2_bin_rep(b, k);
        }
        c->bins[c->nbins - 1].exact_count += in->counts[i];
    }
    for (size_t i = 0; rc == 0 && i < c->nbins; i++) {
        mc_coarse_bin *b = &c->bins[i];
        b->count = b->exact_count;
        if (c->info.round_to)
            rc = round_count(b->exact_count, c->info.round_to, &b->count);
        if (rc != 0)
            break;
        if (b->count == 0) {
            c->info.bins_dropped++;
            c->info.msgs_dropped += b->exact_count;
            continue;
        }
        if (c->info.msgs_out > UINT64_MAX - b->count) {
            rc = MC_ERANGE;
            break;
        }
        c->info.msgs_out += b->count;
        c->sizes[c->nview] = b->rep;
        c->counts[c->nview] = b->count;
        c->nview++;
    }
    if (rc != 0) {
        mc_coarse_free(c);
        return rc;
    }
    c->info.bins = c->nbins;
    *out = c;
    return 0;
}

void mc_coarse_view(const mc_coarse *c, mc_hview *view)
{
    view->sizes = c->sizes;
    view->counts = c->counts;
    view->k = c->nview;
}

const mc_coarse_bin *mc_coarse_bins(const mc_coarse *c, size_t *n)
{
    *n = c->nbins;
    return c->bins;
}

void mc_coarse_get_info(const mc_coarse *c, mc_coarse_info *info)
{
    *info = c->info;
}
