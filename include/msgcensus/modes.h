/* modes.h - modal structure of a size histogram: top sizes, log2 peaks and
 * a Gaussian mixture on log2(size). */
#ifndef MSGCENSUS_MODES_H
#define MSGCENSUS_MODES_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* uint64_t */

#include "common.h"
#include "hist.h"

/* ---- top-k exact sizes -------------------------------------------------- */

typedef struct mc_topsize {
    uint64_t size;
    uint64_t count;
    double msg_share;  /* count / total messages */
    double byte_share; /* size*count / total bytes (0 if no bytes) */
} mc_topsize;

/*! mc_topk() : the @k most frequent sizes, by count descending, ties by size
 *  ascending. @return the number written (min(k, K)). */
MC_API size_t mc_topk(const mc_hview *v, size_t k, mc_topsize *out);

/* ---- peaks on log2-spaced bins ------------------------------------------ */

typedef struct mc_peak {
    uint64_t lo, hi;    /* bin edges: sizes in [lo, hi) (size 0 has its own bin;
                           the topmost bin has hi = UINT64_MAX and includes it) */
    uint64_t peak_size; /* most frequent exact size inside the peak's bin */
    uint64_t count;     /* messages in the peak's basin (see docs) */
    double msg_share;
    double byte_share;
    double prominence; /* as a fraction of all messages */
} mc_peak;

/*! mc_peaks() :
 *  Local maxima of the message counts on bins of width 1/@bins_per_octave in
 *  log2(size) whose prominence is at least @min_prominence (fraction of all
 *  messages), strongest first (ties: smaller sizes first). Bin i >= 0 holds
 *  [ceil(2^(i/b)), ceil(2^((i+1)/b))); bins holding no integer are dropped.
 *  Prominence is topographic with sea level 0 beyond both ends; each
 *  reported peak's count is its basin: neighbouring reported peaks split
 *  the bins between them at the lowest bin (docs/statistics.md).
 *  @bins_per_octave is 1..64. @return the number of peaks written (<= cap;
 *  0 for an empty view) or a negative code (MC_ENOMEM, MC_EINVAL). */
MC_API int mc_peaks(const mc_hview *v, unsigned bins_per_octave,
                    double min_prominence, mc_peak *out, size_t cap);

/* ---- Gaussian mixture on log2(size) ------------------------------------- */

#define MC_GMM_MAX 8

typedef struct mc_gmm {
    int ncomp;                   /* chosen by BIC, 1..MC_GMM_MAX; 0 if no fit */
    double weight[MC_GMM_MAX];   /* sum to 1 */
    double mu[MC_GMM_MAX];       /* mean of log2(size) */
    double sigma[MC_GMM_MAX];    /* standard deviation of log2(size) */
    double center[MC_GMM_MAX];   /* 2^mu, as a size in bytes */
    double loglik;               /* log-likelihood of the chosen fit */
    double bic;                  /* its BIC */
    double bic_by_k[MC_GMM_MAX]; /* BIC for k = 1..max tried (NAN-free: 0 if
                                    not tried) */
    uint64_t excluded_zero;      /* zero-size messages left out of the fit */
    int iterations;              /* EM iterations of the chosen fit */
} mc_gmm;

/*! mc_gmm_fit() :
 *  Fit mixtures with 1..@max_comp components (<= MC_GMM_MAX) to log2(size) of
 *  the positive sizes of @v, weighted by count, by EM; keep the one with the
 *  lowest BIC. Deterministic for a given @seed. Components are sorted by mu.
 *  @max_comp is clamped to 1..min(MC_GMM_MAX, distinct positive sizes);
 *  sigma is floored at 0.05 octaves; a component that EM empties is left
 *  out of the result (ncomp then is below the k whose BIC won). With more
 *  than 65536 distinct positive sizes, sizes within the same 1/1024 octave
 *  are merged at their weighted mean log2 before EM (bounding the cost;
 *  loglik and BIC are then those of the merged points).
 *  @return 0, MC_ENODATA (no positive sizes) or MC_ENOMEM. */
MC_API int mc_gmm_fit(const mc_hview *v, int max_comp, uint64_t seed,
                      mc_gmm *out);

#endif /* MSGCENSUS_MODES_H */
