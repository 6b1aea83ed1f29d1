/* gmm.c - Gaussian mixture on log2(size) by weighted EM and BIC. */
#include <msgcensus/error.h>
#include <msgcensus/modes.h>

#include <math.h>   /* log, exp, sqrt, exp2, log2, fabs, floor */
#include <string.h> /* memset */

#include "alloc.h"

/* log2 sizes are discrete (adjacent sizes near 2^j are 1/(2^j ln 2)
 * octaves apart, and a component may sit on a single size), so the
 * likelihood is unbounded without a floor on sigma. */
#define SIGMA_FLOOR 0.05
#define EM_TOL 1e-9 /* relative change of the log-likelihood */
#define EM_MAX_ITER 300
/* Above this many distinct positive sizes, points closer than 1/CELLS
 * octave are merged (at their weighted mean) before EM: 1/1024 octave is
 * 1/51 of the sigma floor, and it bounds the cost at 65 x 1024 points. */
#define EXACT_MAX 65536
#define CELLS 1024.0
#define HALF_LOG_2PI 0.91893853320467274178

typedef struct points {
    const double *x; /* log2(size), ascending */
    const double *w; /* counts */
    size_t k;
    double n; /* total weight */
} points;

typedef struct fit {
    int k;
    double weight[MC_GMM_MAX], mu[MC_GMM_MAX], sigma[MC_GMM_MAX];
    double loglik;
    int iterations;
} fit;

/* splitmix64, for the seeded tie-breaks of the initial means. */
static uint64_t next_rand(uint64_t *s)
{
    uint64_t z = (*s += UINT64_C(0x9E3779B97F4A7C15));
    z = (z ^ (z >> 30)) * UINT64_C(0xBF58476D1CE4E5B9);
    z = (z ^ (z >> 27)) * UINT64_C(0x94D049BB133111EB);
    return z ^ (z >> 31);
}

/* Deterministic start: means at the weighted quantiles (j + 1/2)/k of the
 * points; a mean equal to the previous one moves to a distinct point drawn
 * with the seed. Equal weights, sigma = overall sd / k (floored). */
static void init_fit(const points *p, int k, uint64_t seed, double sd, fit *f)
{
    memset(f, 0, sizeof *f);
    f->k = k;
    size_t idx[MC_GMM_MAX];
    size_t i = 0;
    double cum = 0.0;
    for (int j = 0; j < k; j++) {
        const double target = ((double)j + 0.5) / (double)k * p->n;
        while (i + 1 < p->k && cum + p->w[i] < target) {
            cum += p->w[i];
            i++;
        }
        idx[j] = i;
    }
    uint64_t st = seed;
    for (int j = 1; j < k; j++) {
        int dup = 1;
        for (int tries = 0; dup && tries < 64; tries++) {
            dup = 0;
            for (int m = 0; m < j; m++)
                dup |= idx[m] == idx[j];
            if (dup)
                idx[j] = (size_t)(next_rand(&st) % p->k);
        }
    }
    for (int j = 0; j < k; j++) {
        f->mu[j] = p->x[idx[j]];
        f->weight[j] = 1.0 / k;
        f->sigma[j] = fmax(sd / k, SIGMA_FLOOR);
    }
}

/* One E step plus M step; @return the log-likelihood of the parameters on
 * entry. */
static double em_step(const points *p, fit *f)
{
    const int k = f->k;
    double lw[MC_GMM_MAX], ls[MC_GMM_MAX], inv[MC_GMM_MAX];
    for (int j = 0; j < k; j++) {
        lw[j] = f->weight[j] > 0 ? log(f->weight[j]) : -INFINITY;
        ls[j] = log(f->sigma[j]) + HALF_LOG_2PI;
        inv[j] = 1.0 / f->sigma[j];
    }
    double nj[MC_GMM_MAX] = {0}, s1[MC_GMM_MAX] = {0}, s2[MC_GMM_MAX] = {0};
    double loglik = 0.0;
    for (size_t i = 0; i < p->k; i++) {
        const double x = p->x[i];
        double l[MC_GMM_MAX], top = -INFINITY;
        for (int j = 0; j < k; j++) {
            const double z = (x - f->mu[j]) * inv[j];
            l[j] = lw[j] - ls[j] - 0.5 * z * z;
            if (l[j] > top)
                top = l[j];
        }
        double sum = 0.0;
        for (int j = 0; j < k; j++) {
            l[j] = exp(l[j] - top);
            sum += l[j];
        }
        loglik += p->w[i] * (top + log(sum));
        const double scale = p->w[i] / sum;
        for (int j = 0; j < k; j++) {
            const double r = l[j] * scale; /* count * responsibility */
            const double d = x - f->mu[j]; /* about the old mean: stable */
            nj[j] += r;
            s1[j] += r * d;
            s2[j] += r * d * d;
        }
    }
    for (int j = 0; j < k; j++) {
        if (nj[j] <= 1e-12 * p->n) {
            f->weight[j] = 0.0; /* an emptied component stays out */
            continue;
        }
        const double m = s1[j] / nj[j];
        const double var = s2[j] / nj[j] - m * m;
        f->weight[j] = nj[j] / p->n;
        f->mu[j] += m;
        f->sigma[j] = fmax(sqrt(var > 0 ? var : 0), SIGMA_FLOOR);
    }
    return loglik;
}

/* EM until the log-likelihood changes by less than EM_TOL relative, or
 * EM_MAX_ITER steps. */
static void run_em(const points *p, fit *f)
{
    double prev = em_step(p, f);
    int it = 1;
    while (it < EM_MAX_ITER) {
        const double cur = em_step(p, f);
        it++;
        const int done = fabs(cur - prev) <= EM_TOL * fabs(cur);
        prev = cur;
        if (done)
            break;
    }
    /* The last step moved the parameters: report their own likelihood. */
    fit probe = *f;
    f->loglik = em_step(p, &probe);
    f->iterations = it;
}

int mc_gmm_fit(const mc_hview *v, int max_comp, uint64_t seed, mc_gmm *out)
{
    memset(out, 0, sizeof *out);
    size_t first = 0;
    if (v->k > 0 && v->sizes[0] == 0) {
        out->excluded_zero = v->counts[0];
        first = 1;
    }
    const size_t k = v->k - first;
    if (v->k == 0 || k == 0)
        return MC_ENODATA;
    if (max_comp < 1)
        max_comp = 1;
    if (max_comp > MC_GMM_MAX)
        max_comp = MC_GMM_MAX;

    double *x = mc__malloc(k * sizeof *x);
    double *w = x ? mc__malloc(k * sizeof *w) : NULL;
    if (!w) {
        mc__free(x);
        return MC_ENOMEM;
    }
    points p = {x, w, 0, 0.0};
    double sx = 0.0;
    for (size_t i = 0; i < k; i++) {
        const double xi = log2((double)v->sizes[first + i]);
        const double wi = (double)v->counts[first + i];
        p.n += wi;
        sx += wi * xi;
        if (k > EXACT_MAX && p.k > 0 &&
            floor(xi * CELLS) == floor(x[p.k - 1] * CELLS)) {
            /* same cell: x[] holds the weighted mean so far */
            const double wt = w[p.k - 1] + wi;
            x[p.k - 1] += (xi - x[p.k - 1]) * (wi / wt);
            w[p.k - 1] = wt;
            continue;
        }
        x[p.k] = xi;
        w[p.k] = wi;
        p.k++;
    }
    const double mean = sx / p.n;
    double sdev = 0.0;
    for (size_t i = 0; i < k; i++) {
        const double d = log2((double)v->sizes[first + i]) - mean;
        sdev += (double)v->counts[first + i] * d * d;
    }
    const double sd = sqrt(sdev / p.n);
    if ((size_t)max_comp > p.k)
        max_comp = (int)p.k;

    fit best;
    memset(&best, 0, sizeof best);
    double best_bic = 0.0;
    for (int c = 1; c <= max_comp; c++) {
        fit f;
        init_fit(&p, c, seed, sd, &f);
        run_em(&p, &f);
        const double bic = (3.0 * c - 1.0) * log(p.n) - 2.0 * f.loglik;
        out->bic_by_k[c - 1] = bic;
        if (c == 1 || bic < best_bic) {
            best = f;
            best_bic = bic;
        }
    }
    mc__free(x);
    mc__free(w);

    /* Report components by ascending mu (ties: larger weight first). */
    int order[MC_GMM_MAX];
    for (int j = 0; j < best.k; j++) {
        int at = j;
        while (at > 0 && (best.mu[order[at - 1]] > best.mu[j] ||
                          (best.mu[order[at - 1]] == best.mu[j] &&
                           best.weight[order[at - 1]] < best.weight[j]))) {
            order[at] = order[at - 1];
            at--;
        }
        order[at] = j;
    }
    int nc = 0;
    for (int j = 0; j < best.k; j++) {
        const int o = order[j];
        if (best.weight[o] <= 0.0)
            continue; /* emptied during EM: not part of the mixture */
        out->weight[nc] = best.weight[o];
        out->mu[nc] = best.mu[o];
        out->sigma[nc] = best.sigma[o];
        out->center[nc] = exp2(best.mu[o]);
        nc++;
    }
    out->ncomp = nc;
    out->loglik = best.loglik;
    out->bic = best_bic;
    out->iterations = best.iterations;
    return 0;
}
