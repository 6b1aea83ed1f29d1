/* distance.c - Wasserstein-1 on log2(size) and the two-sample KS statistic,
 * exact from two sorted histograms in one merge pass. */
#include <msgcensus/distance.h>
#include <msgcensus/error.h>

#include <math.h>   /* log2, fabs */
#include <string.h> /* memset */

double mc_log2_axis(uint64_t size)
{
    return size == 0 ? MC_LOG2_ZERO : log2((double)size);
}

/* A view is usable when it is non-NULL, sorted strictly ascending and every
 * count is positive; its total must fit in u64. */
static int check_view(const mc_hview *v, uint64_t *total)
{
    uint64_t t = 0;
    if (!v || (v->k > 0 && (!v->sizes || !v->counts)))
        return MC_EINVAL;
    for (size_t i = 0; i < v->k; i++) {
        if (v->counts[i] == 0 || (i > 0 && v->sizes[i] <= v->sizes[i - 1]))
            return MC_EINVAL;
        if (t > UINT64_MAX - v->counts[i])
            return MC_ERANGE;
        t += v->counts[i];
    }
    *total = t;
    return 0;
}

int mc_distance_compute(const mc_hview *a, const mc_hview *b, mc_distance *out)
{
    uint64_t na = 0, nb = 0;
    if (!out)
        return MC_EINVAL;
    memset(out, 0, sizeof *out);
    int rc = check_view(a, &na);
    if (rc == 0)
        rc = check_view(b, &nb);
    if (rc != 0)
        return rc;
    if (na == 0 || nb == 0)
        return MC_ENODATA;

    /* Walk the union of sizes in ascending order. After consuming size s,
     * ca and cb are the cumulative counts at s, so F(s) = c / n. Between
     * s and the next size s' the difference |F_A - F_B| is constant; its
     * area over the log2 axis is that difference times x(s') - x(s). */
    size_t i = 0, j = 0;
    uint64_t ca = 0, cb = 0;
    const double dna = (double)na, dnb = (double)nb;
    double w1 = 0.0, ks = -1.0, prev_x = 0.0, prev_diff = 0.0;
    uint64_t ks_at = 0;
    int first = 1;
    while (i < a->k || j < b->k) {
        uint64_t s;
        if (j >= b->k || (i < a->k && a->sizes[i] < b->sizes[j]))
            s = a->sizes[i];
        else
            s = b->sizes[j];
        if (i < a->k && a->sizes[i] == s)
            ca += a->counts[i++];
        if (j < b->k && b->sizes[j] == s)
            cb += b->counts[j++];
        const double x = mc_log2_axis(s);
        if (!first)
            w1 += prev_diff * (x - prev_x);
        first = 0;
        /* Both fractions are exact quotients of integers below 2^64; the
         * subtraction in double loses at most an ulp of 1. */
        const double diff = fabs((double)ca / dna - (double)cb / dnb);
        if (diff > ks) {
            ks = diff;
            ks_at = s;
        }
        prev_x = x;
        prev_diff = diff;
    }
    out->w1_log2 = w1;
    out->ks = ks;
    out->ks_at = ks_at;
    return 0;
}
