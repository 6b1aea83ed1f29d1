/* stats.c - statistics of a sorted size histogram, all O(K). */
#include <msgcensus/error.h>
#include <msgcensus/stats.h>

#include <math.h>   /* sqrtl, log2l, exp2l, floorl, isfinite */
#include <string.h> /* memset */

#include "stats_internal.h"

const double mc_quantile_levels[MC_NQUANTILES] = {0.01, 0.05, 0.25, 0.50,
                                                  0.75, 0.95, 0.99};

void mc__ksum_add(mc__ksum *k, long double x)
{
    const long double t = k->s + x;
    if (fabsl(k->s) >= fabsl(x))
        k->c += (k->s - t) + x;
    else
        k->c += (x - t) + k->s;
    k->s = t;
}

long double mc__ksum_value(const mc__ksum *k) { return k->s + k->c; }

uint64_t mc__view_total(const mc_hview *v, int *ok)
{
    uint64_t n = 0;
    *ok = 1;
    for (size_t i = 0; i < v->k; i++) {
        if (UINT64_MAX - n < v->counts[i]) {
            *ok = 0;
            return UINT64_MAX;
        }
        n += v->counts[i];
    }
    return n;
}

int mc__view_count(const mc_hview *v, uint64_t *n)
{
    int ok;
    *n = mc__view_total(v, &ok);
    if (*n == 0)
        return MC_ENODATA;
    return ok ? 0 : MC_ERANGE;
}

mc__u128 mc__view_bytes(const mc_hview *v)
{
    mc__u128 b = 0;
    for (size_t i = 0; i < v->k; i++)
        b += (mc__u128)v->sizes[i] * v->counts[i];
    return b;
}

/* A forward cursor over the expanded sample x[0..n): x[idx] in amortised
 * O(1) for ascending idx, restarting from the front for a smaller one. */
typedef struct cursor {
    const mc_hview *v;
    size_t i;
    uint64_t before; /* messages in entries [0, i) */
} cursor;

static uint64_t at(cursor *c, uint64_t idx)
{
    if (idx < c->before) {
        c->i = 0;
        c->before = 0;
    }
    while (idx - c->before >= c->v->counts[c->i]) {
        c->before += c->v->counts[c->i];
        c->i++;
    }
    return c->v->sizes[c->i];
}

/* (a + b) / 2 without overflow, as long double. */
static long double midpoint(uint64_t a, uint64_t b)
{
    return (long double)a + (long double)(b - a) / 2.0L;
}

/* Median of x[first .. first+len), len >= 1: the middle value, or the mean
 * of the two middle values for an even length. */
static long double median_range(cursor *c, uint64_t first, uint64_t len)
{
    const uint64_t lo = first + (len - 1) / 2;
    const uint64_t a = at(c, lo);
    if (len % 2)
        return (long double)a;
    return midpoint(a, at(c, lo + 1));
}

/* Hyndman & Fan (1996) definition 7: h = (n-1) p, x[floor h] + frac(h) *
 * (x[floor h + 1] - x[floor h]) on the 0-based sorted sample. */
static long double quantile7(cursor *c, uint64_t n, double p)
{
    const long double h = (long double)(n - 1) * (long double)p;
    const long double fl = floorl(h);
    const uint64_t j = (uint64_t)fl;
    if (j >= n - 1)
        return (long double)at(c, n - 1);
    const uint64_t a = at(c, j);
    const long double frac = h - fl;
    if (frac == 0.0L)
        return (long double)a;
    const uint64_t b = at(c, j + 1);
    return (long double)a + frac * (long double)(b - a);
}

static int level_ok(double p) { return p >= 0.0 && p <= 1.0; }

/* Smallest size whose cumulative bytes reach @p of @total (> 0), starting
 * the walk at entry *i with *cum bytes before it (levels ascend). */
static uint64_t byte_level(const mc_hview *v, mc__u128 total, double p,
                           size_t *i, mc__u128 *cum)
{
    const long double target = (long double)p * (long double)total;
    for (;;) {
        const mc__u128 next = *cum + (mc__u128)v->sizes[*i] * v->counts[*i];
        if ((long double)next >= target || *i + 1 == v->k)
            return v->sizes[*i];
        *cum = next;
        (*i)++;
    }
}

int mc_quantile(const mc_hview *v, double p, double *out)
{
    *out = 0.0;
    if (!level_ok(p))
        return MC_EINVAL;
    uint64_t n;
    const int rc = mc__view_count(v, &n);
    if (rc != 0)
        return rc;
    cursor c = {v, 0, 0};
    *out = (double)quantile7(&c, n, p);
    return 0;
}

int mc_byte_quantile(const mc_hview *v, double p, uint64_t *out)
{
    *out = 0;
    if (!level_ok(p))
        return MC_EINVAL;
    const mc__u128 total = mc__view_bytes(v);
    if (total == 0)
        return MC_ENODATA;
    size_t i = 0;
    mc__u128 cum = 0;
    *out = byte_level(v, total, p, &i, &cum);
    return 0;
}

int mc_fraction_at_or_below(const mc_hview *v, uint64_t threshold,
                            double *msg_frac, double *byte_frac)
{
    *msg_frac = 0.0;
    *byte_frac = 0.0;
    if (v->k == 0)
        return MC_ENODATA;
    long double n = 0, nb = 0, b = 0, bb = 0;
    for (size_t i = 0; i < v->k; i++) {
        const long double c = (long double)v->counts[i];
        const long double by = c * (long double)v->sizes[i];
        n += c;
        b += by;
        if (v->sizes[i] <= threshold) {
            nb += c;
            bb += by;
        }
    }
    *msg_frac = (double)(nb / n);
    *byte_frac = b > 0 ? (double)(bb / b) : 0.0;
    return 0;
}

size_t mc_modes_all(const mc_hview *v, uint64_t *out, size_t cap)
{
    uint64_t best = 0;
    for (size_t i = 0; i < v->k; i++)
        if (v->counts[i] > best)
            best = v->counts[i];
    size_t ties = 0;
    for (size_t i = 0; i < v->k; i++) {
        if (v->counts[i] == best) {
            if (ties < cap)
                out[ties] = v->sizes[i];
            ties++;
        }
    }
    return ties;
}

int mc_stats_compute(const mc_hview *v, mc_stats *out)
{
    memset(out, 0, sizeof *out);
    uint64_t n;
    const int crc = mc__view_count(v, &n);
    if (crc != 0)
        return crc;
    mc_stats s;
    memset(&s, 0, sizeof s);
    s.count = n;
    s.distinct = v->k;
    s.min = v->sizes[0];
    s.max = v->sizes[v->k - 1];
    s.zero_count = v->sizes[0] == 0 ? v->counts[0] : 0;
    s.positive_count = n - s.zero_count;

    /* One ascending pass for the sums: the order is fixed by the view, so
     * results do not depend on how the histogram was built. */
    const mc__u128 bytes = mc__view_bytes(v);
    mc__ksum sq = {0, 0}, inv = {0, 0}, lg = {0, 0};
    for (size_t i = 0; i < v->k; i++) {
        const long double x = (long double)v->sizes[i];
        const long double c = (long double)v->counts[i];
        mc__ksum_add(&sq, c * x * x);
        if (v->sizes[i] > 0) {
            mc__ksum_add(&inv, c / x);
            mc__ksum_add(&lg, c * log2l(x));
        }
        if (v->counts[i] > s.mode_count) {
            s.mode_count = v->counts[i];
            s.mode = v->sizes[i];
            s.mode_ties = 1;
        } else if (v->counts[i] == s.mode_count) {
            s.mode_ties++;
        }
    }
    const long double nl = (long double)n;
    const long double mean = (long double)bytes / nl;
    s.mean = (double)mean;
    s.quadratic = (double)sqrtl(mc__ksum_value(&sq) / nl);
    if (s.positive_count > 0) {
        const long double np = (long double)s.positive_count;
        s.harmonic = (double)(np / mc__ksum_value(&inv));
        s.geometric = (double)exp2l(mc__ksum_value(&lg) / np);
    }
    /* Second pass about the mean: no cancellation of E[x^2] - E[x]^2. */
    mc__ksum dev = {0, 0};
    for (size_t i = 0; i < v->k; i++) {
        const long double d = (long double)v->sizes[i] - mean;
        mc__ksum_add(&dev, (long double)v->counts[i] * d * d);
    }
    s.stddev = (double)sqrtl(mc__ksum_value(&dev) / nl);

    cursor c = {v, 0, 0};
    for (int q = 0; q < MC_NQUANTILES; q++)
        s.quantiles[q] = (double)quantile7(&c, n, mc_quantile_levels[q]);
    const long double med = median_range(&c, 0, n);
    s.median = (double)med;
    /* Tukey's hinges: medians of the lower and upper halves, each holding
     * ceil(n/2) values (the median belongs to both when n is odd). */
    const uint64_t half = n / 2 + n % 2;
    const long double h1 = median_range(&c, 0, half);
    const long double h3 = median_range(&c, n - half, half);
    s.hinge_lo = (double)h1;
    s.hinge_hi = (double)h3;
    s.trimean = (double)((h1 + 2.0L * med + h3) / 4.0L);

    int rc = 0;
    if (bytes > UINT64_MAX) {
        s.total_bytes = UINT64_MAX;
        rc = MC_ERANGE;
    } else {
        s.total_bytes = (uint64_t)bytes;
    }
    if (bytes > 0) {
        size_t i = 0;
        mc__u128 cum = 0;
        for (int q = 0; q < MC_NQUANTILES; q++)
            s.byte_quantiles[q] =
                (double)byte_level(v, bytes, mc_quantile_levels[q], &i, &cum);
        i = 0;
        cum = 0;
        s.byte_median = (double)byte_level(v, bytes, 0.5, &i, &cum);
    }
    *out = s;
    return rc;
}
