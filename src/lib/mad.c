/* mad.c - exact MAD about any center and the fitness of centers. */
#include <msgcensus/error.h>
#include <msgcensus/stats.h>

#include <math.h>   /* isfinite */
#include <string.h> /* memset */

#include "stats_internal.h"

/* First entry with size > c (binary search on the ascending sizes). */
static size_t first_above(const mc_hview *v, long double c)
{
    size_t lo = 0, hi = v->k;
    while (lo < hi) {
        const size_t mid = lo + (hi - lo) / 2;
        if ((long double)v->sizes[mid] > c)
            hi = mid;
        else
            lo = mid + 1;
    }
    return lo;
}

/* The deviations |x - c| in ascending order are a merge of two ascending
 * runs: entries at or below c walking down, entries above c walking up.
 * Walk both outward from c, always taking the nearer entry, until the
 * middle message(s) of the n deviations are reached. */
int mc_mad(const mc_hview *v, double c, double *out)
{
    *out = 0.0;
    if (!isfinite(c))
        return MC_EINVAL;
    uint64_t n;
    const int rc = mc__view_count(v, &n);
    if (rc != 0)
        return rc;
    const long double cl = (long double)c;
    /* 0-based ranks of the middle deviations; equal when n is odd. */
    const uint64_t want1 = (n - 1) / 2, want2 = n / 2;
    size_t up = first_above(v, cl);
    size_t down = up; /* entries [0, down) remain below, walking down */
    uint64_t seen = 0;
    long double d1 = 0.0L, d2 = 0.0L;
    int have1 = 0;
    for (;;) {
        long double d;
        uint64_t cnt;
        const long double dd =
            down > 0 ? cl - (long double)v->sizes[down - 1] : 0.0L;
        const long double du =
            up < v->k ? (long double)v->sizes[up] - cl : 0.0L;
        if (down > 0 && (up >= v->k || dd <= du)) {
            d = dd;
            cnt = v->counts[--down];
        } else {
            d = du;
            cnt = v->counts[up++];
        }
        if (!have1 && want1 - seen < cnt) {
            d1 = d;
            have1 = 1;
        }
        if (want2 - seen < cnt) {
            d2 = d;
            break;
        }
        seen += cnt;
    }
    *out = (double)((d1 + d2) / 2.0L);
    return 0;
}

const char *mc_center_name(mc_center c)
{
    static const char *const names[MC_NCENTERS] = {
        "mean",      "median",    "mode",   "harmonic",
        "geometric", "quadratic", "trimean"};
    return (unsigned)c < MC_NCENTERS ? names[c] : "?";
}

int mc_fitness_compute(const mc_hview *v, const mc_stats *s, mc_fitness *out)
{
    memset(out, 0, sizeof *out);
    if (v->k == 0 || s->count == 0)
        return MC_ENODATA;
    const double value[MC_NCENTERS] = {
        s->mean,      s->median,    (double)s->mode, s->harmonic,
        s->geometric, s->quadratic, s->trimean};
    for (int i = 0; i < MC_NCENTERS; i++) {
        mc_center_fit *f = &out->fit[i];
        f->value = value[i];
        f->defined = !((i == MC_CENTER_HARMONIC || i == MC_CENTER_GEOMETRIC) &&
                       s->positive_count == 0);
        if (!f->defined) {
            f->value = 0.0;
            continue;
        }
        const int rc = mc_mad(v, f->value, &f->mad);
        if (rc != 0) {
            memset(out, 0, sizeof *out);
            return rc;
        }
        if (f->value != 0.0)
            f->rel_mad = f->mad / f->value;
        else
            f->rel_mad = f->mad == 0.0 ? 0.0 : -1.0;
    }
    /* Competition ranking: 1 + the number of strictly better centers. */
    int best = MC_CENTER_MEAN;
    for (int i = 0; i < MC_NCENTERS; i++) {
        if (!out->fit[i].defined)
            continue;
        int rank = 1;
        for (int j = 0; j < MC_NCENTERS; j++)
            if (out->fit[j].defined && out->fit[j].mad < out->fit[i].mad)
                rank++;
        out->fit[i].rank = rank;
        if (out->fit[i].mad < out->fit[best].mad)
            best = i;
    }
    out->best = (mc_center)best;
    const double a = out->fit[MC_CENTER_MEAN].mad, b = out->fit[best].mad;
    if (b > 0.0)
        out->mad_ratio_mean = a / b;
    else
        out->mad_ratio_mean = a == 0.0 ? 1.0 : -1.0;
    return 0;
}
