/* modes.c - top sizes and prominent log2 peaks of a histogram. */
#include <msgcensus/error.h>
#include <msgcensus/modes.h>

#include <math.h>   /* exp2l, ceill */
#include <string.h> /* memset */

#include "alloc.h"
#include "stats_internal.h"

/* ---- top-k ----------------------------------------------------------------
 */

/* Report order: more messages first, then the smaller size. */
static int before(const mc_topsize *a, const mc_topsize *b)
{
    return a->count > b->count || (a->count == b->count && a->size < b->size);
}

static void swap_top(mc_topsize *a, mc_topsize *b)
{
    const mc_topsize t = *a;
    *a = *b;
    *b = t;
}

/* Min-heap on report order: the root is the entry reported last. */
static void sift_down(mc_topsize *heap, size_t n, size_t i)
{
    for (;;) {
        size_t worst = i;
        const size_t l = 2 * i + 1, r = l + 1;
        if (l < n && before(&heap[worst], &heap[l]))
            worst = l;
        if (r < n && before(&heap[worst], &heap[r]))
            worst = r;
        if (worst == i)
            return;
        swap_top(&heap[i], &heap[worst]);
        i = worst;
    }
}

size_t mc_topk(const mc_hview *v, size_t k, mc_topsize *out)
{
    if (k > v->k)
        k = v->k;
    if (k == 0)
        return 0;
    /* Keep the best k in a heap whose root is the weakest kept entry:
     * O(K log k) for the usual small k. */
    size_t n = 0;
    for (size_t i = 0; i < v->k; i++) {
        const mc_topsize e = {v->sizes[i], v->counts[i], 0.0, 0.0};
        if (n < k) {
            out[n++] = e;
            for (size_t j = n - 1; j > 0 && before(&out[(j - 1) / 2], &out[j]);
                 j = (j - 1) / 2)
                swap_top(&out[j], &out[(j - 1) / 2]);
        } else if (before(&e, &out[0])) {
            out[0] = e;
            sift_down(out, n, 0);
        }
    }
    /* Heap sort: repeatedly move the weakest to the back. */
    for (size_t m = n; m > 1; m--) {
        swap_top(&out[0], &out[m - 1]);
        sift_down(out, m - 1, 0);
    }
    int ok;
    const long double msgs = (long double)mc__view_total(v, &ok);
    const long double bytes = (long double)mc__view_bytes(v);
    for (size_t i = 0; i < n; i++) {
        const long double c = (long double)out[i].count;
        out[i].msg_share = (double)(c / msgs);
        out[i].byte_share =
            bytes > 0 ? (double)(c * (long double)out[i].size / bytes) : 0.0;
    }
    return n;
}

/* ---- peaks ----------------------------------------------------------------
 */

#define MAX_BINS_PER_OCTAVE 64u

typedef struct bin {
    uint64_t lo, hi; /* [lo, hi); the last bin also holds UINT64_MAX */
    uint64_t count;
    long double bytes;
    uint64_t top_size, top_count; /* most frequent exact size in the bin */
} bin;

typedef struct found {
    size_t pos;         /* bin index of the peak */
    size_t first, last; /* its plateau */
    uint64_t prom;
    uint64_t count;
    long double bytes;
} found;

/* Lower edge of positive bin @i: ceil(2^(i/b)), saturating at UINT64_MAX
 * when 2^(i/b) >= 2^64. Whole octaves are exact powers of two. */
static uint64_t edge(size_t i, unsigned b)
{
    if (i >= 64u * (size_t)b)
        return UINT64_MAX;
    if (i % b == 0)
        return UINT64_C(1) << (i / b);
    return (uint64_t)ceill(exp2l((long double)i / (long double)b));
}

/* The bins from the smallest to the largest size; size 0 has a bin of its
 * own. Bins holding no integer (possible below 2^(1/b) spacing of 1) are
 * left out, so that they cannot pose as valleys. @return the bin count or
 * 0 on allocation failure. */
static size_t make_bins(const mc_hview *v, unsigned b, bin **out)
{
    const int has_zero = v->sizes[0] == 0;
    const uint64_t first = has_zero ? 1 : v->sizes[0];
    const uint64_t maxs = v->sizes[v->k - 1];
    const size_t nb_max = 64u * (size_t)b + 2;
    bin *bins = mc__calloc(nb_max, sizeof *bins);
    if (!bins)
        return 0;
    size_t nb = 0;
    if (has_zero) {
        bins[nb].lo = 0;
        bins[nb].hi = 1;
        nb++;
    }
    if (maxs > 0) {
        for (size_t i = 0; i < 64u * (size_t)b; i++) {
            const uint64_t lo = edge(i, b), hi = edge(i + 1, b);
            if (lo == hi)
                continue;
            const int last = hi == UINT64_MAX;
            if (!last && hi <= first)
                continue; /* below the smallest positive size */
            bins[nb].lo = lo;
            bins[nb].hi = hi;
            nb++;
            if (last || maxs < hi)
                break;
        }
    }
    size_t j = 0;
    for (size_t i = 0; i < v->k; i++) {
        const uint64_t s = v->sizes[i];
        while (j + 1 < nb && s >= bins[j].hi)
            j++;
        bin *bn = &bins[j];
        bn->count += v->counts[i];
        bn->bytes += (long double)v->counts[i] * (long double)s;
        if (v->counts[i] > bn->top_count) {
            bn->top_count = v->counts[i];
            bn->top_size = s;
        }
    }
    *out = bins;
    return nb;
}

/* Topographic prominence on the bin counts with sea level 0 beyond both
 * ends: the peak height minus the higher of the two lowest points met when
 * walking left and right until a strictly higher bin (or the end). */
static uint64_t prominence(const bin *bins, size_t nb, size_t first,
                           size_t last)
{
    const uint64_t h = bins[first].count;
    uint64_t lmin = h, rmin = h;
    size_t i = first;
    for (;;) {
        if (i == 0) {
            lmin = 0; /* the sea beyond the first bin */
            break;
        }
        i--;
        if (bins[i].count > h)
            break;
        if (bins[i].count < lmin)
            lmin = bins[i].count;
    }
    for (i = last + 1;; i++) {
        if (i >= nb) {
            rmin = 0;
            break;
        }
        if (bins[i].count > h)
            break;
        if (bins[i].count < rmin)
            rmin = bins[i].count;
    }
    return h - (lmin > rmin ? lmin : rmin);
}

/* Stronger peaks first, then the smaller size. */
static int stronger(const found *a, const found *b)
{
    return a->prom > b->prom || (a->prom == b->prom && a->pos < b->pos);
}

int mc_peaks(const mc_hview *v, unsigned bins_per_octave, double min_prominence,
             mc_peak *out, size_t cap)
{
    if (bins_per_octave == 0 || bins_per_octave > MAX_BINS_PER_OCTAVE ||
        !(min_prominence >= 0.0) || (cap > 0 && !out))
        return MC_EINVAL;
    if (v->k == 0)
        return 0;
    bin *bins = NULL;
    const size_t nb = make_bins(v, bins_per_octave, &bins);
    if (nb == 0)
        return MC_ENOMEM;
    found *pk = mc__malloc((nb / 2 + 1) * sizeof *pk);
    if (!pk) {
        mc__free(bins);
        return MC_ENOMEM;
    }
    int ok;
    const uint64_t n = mc__view_total(v, &ok);
    const long double threshold = (long double)min_prominence * (long double)n;
    /* Local maxima: maximal runs of equal positive counts whose neighbours
     * (or the sea beyond the ends) are lower. */
    size_t np = 0;
    for (size_t i = 0; i < nb;) {
        size_t j = i;
        while (j + 1 < nb && bins[j + 1].count == bins[i].count)
            j++;
        const uint64_t h = bins[i].count;
        const int left_lower = i == 0 || bins[i - 1].count < h;
        const int right_lower = j + 1 == nb || bins[j + 1].count < h;
        if (h > 0 && left_lower && right_lower) {
            const uint64_t prom = prominence(bins, nb, i, j);
            if ((long double)prom >= threshold && prom > 0) {
                found f = {(i + j) / 2, i, j, prom, 0, 0.0L};
                pk[np++] = f;
            }
        }
        i = j + 1;
    }
    /* Basins: neighbouring reported peaks split the bins between them at
     * the lowest bin (the leftmost if tied), which goes to the left peak. */
    size_t from = 0;
    for (size_t p = 0; p < np; p++) {
        size_t to = nb - 1;
        if (p + 1 < np) {
            to = pk[p].last;
            for (size_t i = pk[p].last; i <= pk[p + 1].first; i++)
                if (bins[i].count < bins[to].count)
                    to = i;
        }
        for (size_t i = from; i <= to; i++) {
            pk[p].count += bins[i].count;
            pk[p].bytes += bins[i].bytes;
        }
        from = to + 1;
    }
    /* Strongest first (insertion sort: peaks are few). */
    for (size_t i = 1; i < np; i++) {
        const found f = pk[i];
        size_t j = i;
        for (; j > 0 && stronger(&f, &pk[j - 1]); j--)
            pk[j] = pk[j - 1];
        pk[j] = f;
    }
    const long double bytes = (long double)mc__view_bytes(v);
    const size_t nout = np < cap ? np : cap;
    for (size_t i = 0; i < nout; i++) {
        const bin *bn = &bins[pk[i].pos];
        mc_peak *o = &out[i];
        o->lo = bn->lo;
        o->hi = bn->hi;
        o->peak_size = bn->top_size;
        o->count = pk[i].count;
        o->msg_share = (double)((long double)pk[i].count / (long double)n);
        o->byte_share = bytes > 0 ? (double)(pk[i].bytes / bytes) : 0.0;
        o->prominence = (double)((long double)pk[i].prom / (long double)n);
    }
    mc__free(pk);
    mc__free(bins);
    return (int)nout;
}
