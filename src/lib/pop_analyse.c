/* pop_analyse.c - the standard analysis of one population's histogram:
 * statistics, MAD fitness, top sizes, log2 peaks and the mixture fit. */
#include <msgcensus/summary.h>

#include <stdlib.h> /* calloc, malloc, free */
#include <string.h> /* memcpy, memset */

int mc_summary_pop_analyse(mc_summary_pop *p)
{
    if (!p)
        return MC_EINVAL;
    const mc_hview own = p->hist;
    int rc = mc_stats_compute(&own, &p->stats);
    if (rc == MC_ENODATA)
        return 0; /* empty population: zero statistics, no modes */
    if (rc)
        return rc;
    rc = mc_fitness_compute(&own, &p->stats, &p->fitness);
    if (rc)
        return rc;
    p->top = calloc(MC_SUMMARY_TOP_SIZES, sizeof *p->top);
    p->peaks = calloc(MC_SUMMARY_PEAK_CAP, sizeof *p->peaks);
    if (!p->top || !p->peaks)
        return MC_ENOMEM;
    p->ntop = mc_topk(&own, MC_SUMMARY_TOP_SIZES, p->top);
    const int np =
        mc_peaks(&own, MC_SUMMARY_PEAK_BINS_PER_OCTAVE,
                 MC_SUMMARY_PEAK_MIN_PROMINENCE, p->peaks, MC_SUMMARY_PEAK_CAP);
    if (np < 0)
        return np;
    p->npeaks = (size_t)np;
    rc =
        mc_gmm_fit(&own, MC_SUMMARY_GMM_MAX_COMP, MC_SUMMARY_GMM_SEED, &p->gmm);
    if (rc == MC_ENODATA) {
        memset(&p->gmm, 0, sizeof p->gmm);
        p->gmm.excluded_zero = p->stats.zero_count;
        rc = 0;
    }
    return rc;
}

int mc_summary_pop_set_hist(mc_summary_pop *p, const mc_hview *v)
{
    if (!p || !v)
        return MC_EINVAL;
    uint64_t *sizes = malloc((v->k ? v->k : 1) * sizeof *sizes);
    uint64_t *counts = malloc((v->k ? v->k : 1) * sizeof *counts);
    if (!sizes || !counts) {
        free(sizes);
        free(counts);
        return MC_ENOMEM;
    }
    if (v->k) {
        memcpy(sizes, v->sizes, v->k * sizeof *sizes);
        memcpy(counts, v->counts, v->k * sizeof *counts);
    }
    p->hist.sizes = sizes;
    p->hist.counts = counts;
    p->hist.k = v->k;
    return mc_summary_pop_analyse(p);
}
