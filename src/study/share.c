/* share.c - a copy of a summary fit to hand outside the team: identifying
 * fields removed, histograms coarsened, statistics recomputed and labelled
 * approximate, and a note in the file saying exactly what was done. */
#include "study.h"

#include <stdlib.h> /* calloc, malloc, free */
#include <string.h> /* strdup, strncmp, memcpy */

#include <msgcensus/coarsen.h> /* mc_coarsen */
#include <msgcensus/common.h>  /* mc_version */
#include <msgcensus/modes.h>   /* mc_topk, mc_peaks, mc_gmm_fit */
#include <msgcensus/stats.h>   /* mc_stats_compute, mc_fitness_compute */

void mc_share_opts_init(mc_share_opts *o)
{
    memset(o, 0, sizeof *o);
    o->per_octave = 1;
}

int mc_share_is_comm_pop(const char *name)
{
    return name && strncmp(name, "comm/", 5) == 0;
}

static char *dup_or_empty(const char *s) { return strdup(s ? s : ""); }

/* Every field of a shared copy is its own allocation from the C allocator,
 * as in a summary built by the reducer, so the summary's own free fits. */
void mc_study_share_free(mc_summary *s) { mc_summary_free(s); }

/* Coarsen @in into @p (named already) and recompute everything from it.
 * Sets *empty when rounding left no message. */
static int share_pop(const mc_summary_pop *in, const mc_share_opts *o,
                     mc_summary_pop *p, mc_coarse_info *info, int *empty)
{
    mc_coarse *c = NULL;
    *empty = 0;
    memset(info, 0, sizeof *info);
    int rc = mc_coarsen(&in->hist, o->per_octave, o->round_to, &c);
    if (rc != 0)
        return rc;
    mc_coarse_get_info(c, info);
    mc_hview v;
    mc_coarse_view(c, &v);
    /* Rounding can empty a population; it then gets zero statistics. */
    *empty = v.k == 0 && in->hist.k > 0;
    /* The reducer's analysis, so a shared copy carries the same tables. */
    rc = mc_summary_pop_set_hist(p, &v);
    mc_coarse_free(c);
    return rc;
}

int mc_study_share(const mc_summary *in, const mc_share_opts *o,
                   mc_summary **out, mc_errinfo *err)
{
    if (!out)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1, "no output");
    *out = NULL;
    if (!in || !o || o->per_octave < 1 || o->per_octave > MC_COARSEN_MAX_K)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1,
                              "bins per octave must be 1..%d",
                              MC_COARSEN_MAX_K);
    mc_summary *s = calloc(1, sizeof *s);
    if (!s)
        return mc_errinfo_set(err, MC_ENOMEM, NULL, -1, -1, NULL);
    int rc = 0;
    const mc_summary_meta *im = &in->meta;
    mc_summary_meta *m = &s->meta;
    m->format_name = dup_or_empty(im->format_name);
    m->tool_version = dup_or_empty(im->tool_version);
    m->created = dup_or_empty(im->created);
    m->campaign_path = dup_or_empty("");
    m->host = dup_or_empty("");
    m->run_label = dup_or_empty(o->label ? o->label : im->run_label);
    m->version_major = im->version_major;
    m->version_minor = im->version_minor;
    m->app_ranks = im->app_ranks;
    m->reducer_ranks = im->reducer_ranks;
    m->files = im->files;
    m->records_read = im->records_read;
    m->records_rejected = im->records_rejected;
    m->bytes_read = im->bytes_read;
    m->elapsed_s = im->elapsed_s;
    m->approximate = 1;
    if (!m->format_name || !m->tool_version || !m->created ||
        !m->campaign_path || !m->host || !m->run_label)
        rc = MC_ENOMEM;

    /* Sources: kept only on request, and then without paths or checksums
     * (a checksum can tie the copy to files elsewhere). */
    if (rc == 0 && o->keep_sources && in->nsources > 0) {
        s->sources = calloc(in->nsources, sizeof *s->sources);
        if (!s->sources)
            rc = MC_ENOMEM;
        for (size_t i = 0; rc == 0 && i < in->nsources; i++) {
            mc_summary_source *d = &s->sources[i];
            *d = in->sources[i];
            d->checksum = 0;
            d->path = dup_or_empty("");
            d->status = dup_or_empty(in->sources[i].status);
            s->nsources = i + 1;
            if (!d->path || !d->status)
                rc = MC_ENOMEM;
        }
    }

    /* Populations, coarsened. */
    size_t dropped_comm = 0, emptied = 0, bins_dropped = 0;
    uint64_t msgs_dropped = 0;
    if (rc == 0 && in->npops > 0) {
        s->pops = calloc(in->npops, sizeof *s->pops);
        if (!s->pops)
            rc = MC_ENOMEM;
    }
    for (size_t i = 0; rc == 0 && i < in->npops; i++) {
        const mc_summary_pop *ip = &in->pops[i];
        if (!o->keep_comms && mc_share_is_comm_pop(ip->name)) {
            dropped_comm++;
            continue;
        }
        mc_summary_pop *p = &s->pops[s->npops++];
        p->name = dup_or_empty(ip->name);
        if (!p->name) {
            rc = MC_ENOMEM;
            break;
        }
        mc_coarse_info info;
        int empty = 0;
        rc = share_pop(ip, o, p, &info, &empty);
        if (rc != 0) {
            mc_errinfo_set(err, rc, NULL, -1, -1, "population %s", ip->name);
            break;
        }
        bins_dropped += info.bins_dropped;
        msgs_dropped += info.msgs_dropped;
        if (empty) {
            /* Rounding removed every message: drop the population rather
             * than keep a name with nothing behind it. */
            emptied++;
            free(p->name);
            free((void *)(uintptr_t)p->hist.sizes);
            free((void *)(uintptr_t)p->hist.counts);
            memset(p, 0, sizeof *p);
            s->npops--;
        }
    }

    if (rc == 0 && o->keep_ranks && in->nranks > 0) {
        s->ranks = malloc(in->nranks * sizeof *s->ranks);
        if (!s->ranks)
            rc = MC_ENOMEM;
        else {
            memcpy(s->ranks, in->ranks, in->nranks * sizeof *s->ranks);
            s->nranks = in->nranks;
        }
    }
    if (rc == 0 && o->keep_matrix && in->nedges > 0) {
        s->edges = malloc(in->nedges * sizeof *s->edges);
        if (!s->edges)
            rc = MC_ENOMEM;
        else {
            memcpy(s->edges, in->edges, in->nedges * sizeof *s->edges);
            s->nedges = in->nedges;
        }
    }

    /* Dropped tables are left out of the file, not written empty. */
    if (!o->keep_sources)
        s->omitted |= MC_OMIT_SOURCES;
    if (!o->keep_ranks)
        s->omitted |= MC_OMIT_RANKS;
    if (!o->keep_matrix)
        s->omitted |= MC_OMIT_MATRIX;

    /* The note: what was removed, how histograms were coarsened. */
    if (rc == 0) {
        mc_sbuf b;
        mc_sbuf_init(&b);
        mc_sbuf_printf(&b,
                       "shared copy made by msgcensus %s. Removed: campaign "
                       "path, host name",
                       mc_version());
        if (o->keep_sources)
            mc_sbuf_printf(&b, ", source paths and checksums");
        else
            mc_sbuf_printf(&b, ", per-file source table");
        if (!o->keep_ranks)
            mc_sbuf_printf(&b, ", per-rank table");
        if (!o->keep_matrix)
            mc_sbuf_printf(&b, ", rank-to-rank matrix");
        if (!o->keep_comms)
            mc_sbuf_printf(&b, ", %zu per-communicator population%s",
                           dropped_comm, dropped_comm == 1 ? "" : "s");
        if (o->label)
            mc_sbuf_printf(&b, "; run label replaced");
        if (o->per_octave == 1)
            mc_sbuf_printf(&b, ". Histograms coarsened to log2 bins");
        else
            mc_sbuf_printf(&b, ". Histograms coarsened to log2/%u bins",
                           o->per_octave);
        mc_sbuf_printf(&b,
                       " (size 0 kept apart; every message of a bin counted "
                       "at the bin's geometric midpoint)");
        if (o->round_to >= 2)
            mc_sbuf_printf(&b,
                           "; counts rounded to the nearest multiple of %llu "
                           "(%zu bins with %llu messages rounded to zero and "
                           "dropped, %zu populations emptied)",
                           (unsigned long long)o->round_to, bins_dropped,
                           (unsigned long long)msgs_dropped, emptied);
        if (o->keep_ranks || o->keep_matrix)
            mc_sbuf_printf(&b, "; kept exact: %s%s%s",
                           o->keep_ranks ? "per-rank table" : "",
                           o->keep_ranks && o->keep_matrix ? ", " : "",
                           o->keep_matrix ? "rank-to-rank matrix" : "");
        mc_sbuf_printf(&b, ". Statistics, top sizes, peaks and mixtures were "
                           "recomputed from the coarsened histograms and are "
                           "approximate.");
        if (b.oom) {
            mc_sbuf_free(&b);
            rc = MC_ENOMEM;
        } else {
            m->shared_note = b.data; /* the buffer's text is heap memory */
        }
    }
    if (rc != 0) {
        mc_study_share_free(s);
        if (!err || err->code == 0)
            mc_errinfo_set(err, rc, NULL, -1, -1, NULL);
        return rc;
    }
    *out = s;
    return 0;
}
