/* build.c - on reducer rank 0, turn the merged histograms and tables into
 * the summary model: populations with their statistics, sources, ranks and
 * the matrix (rules in docs/summary-format.md). */
#include "reduce_internal.h"

#include <stdio.h>  /* snprintf */
#include <stdlib.h> /* calloc, free */
#include <string.h> /* strdup, memcpy */

#include <xxhash.h> /* XXH64: per-file checksum over block checksums */

#include <msgcensus/modes.h>
#include <msgcensus/stats.h>

/* Population classes of one (op, dir) key. */
enum { IN_ALL = 1, IN_P2P = 2, IN_P2P_RECV = 4, IN_COLL = 8, IN_ONESIDED = 16 };

static unsigned classes_of(unsigned op, unsigned dir)
{
    switch (mc_op_category_of(op)) {
    case MC_CAT_P2P:
        return dir == MC_DIR_RECV ? IN_P2P_RECV : (IN_P2P | IN_ALL);
    case MC_CAT_COLL:
    case MC_CAT_NEIGHBOR:
        return IN_COLL | IN_ALL;
    case MC_CAT_ONESIDED:
        return IN_ONESIDED | IN_ALL;
    default:
        return 0;
    }
}

/* "op/MPI_Isend" when the record direction is the operation's own one,
 * else "op/MPI_Sendrecv/send" (always for operations that carry both). */
static void op_pop_name(unsigned op, unsigned dir, char *out, size_t cap)
{
    static const char *const dname[] = {"none", "send", "recv"};
    const mc_dir own = mc_op_dir_of(op);
    if ((unsigned)own == dir)
        snprintf(out, cap, "op/%s", mc_op_name(op));
    else
        snprintf(out, cap, "op/%s/%s", mc_op_name(op), dname[dir % 3]);
}

/* Statistics and modal structure of @h into @p (named @name). */
static int fill_pop(mc_summary_pop *p, const char *name, mc_hist *h)
{
    p->name = strdup(name);
    if (!p->name)
        return MC_ENOMEM;
    mc_hview v;
    int rc = mc_hist_sorted(h, &v);
    if (rc)
        return rc;
    return mc_summary_pop_set_hist(p, &v);
}

static int cmp_u32(const void *a, const void *b)
{
    const uint32_t x = *(const uint32_t *)a, y = *(const uint32_t *)b;
    return (x > y) - (x < y);
}

static int build_pops(mc_summary *s, mc__acc *acc, int per_comm)
{
    size_t nops = 0;
    for (size_t k = 0; k < MC__NOPKEYS; k++)
        nops += acc->op[k] != NULL;
    const size_t ncomm = per_comm ? acc->comm.n : 0;
    s->pops = calloc(5 + nops + ncomm, sizeof *s->pops);
    if (!s->pops)
        return MC_ENOMEM;
    static const struct {
        const char *name;
        unsigned cls;
    } groups[] = {{"all", IN_ALL},
                  {"p2p", IN_P2P},
                  {"p2p_recv", IN_P2P_RECV},
                  {"coll", IN_COLL},
                  {"onesided", IN_ONESIDED}};
    int rc = 0;
    for (size_t g = 0; g < 5 && !rc; g++) {
        mc_hist *h = NULL;
        if (mc_hist_create(&h) != 0)
            return MC_ENOMEM;
        for (size_t k = 0; k < MC__NOPKEYS && !rc; k++)
            if (acc->op[k] && (classes_of((unsigned)(k / MC__NDIRS),
                                          (unsigned)(k % MC__NDIRS)) &
                               groups[g].cls))
                rc = mc_hist_merge(h, acc->op[k]);
        rc = rc ? rc : fill_pop(&s->pops[s->npops++], groups[g].name, h);
        mc_hist_free(h);
    }
    for (size_t k = 0; k < MC__NOPKEYS && !rc; k++) {
        if (!acc->op[k])
            continue;
        char name[96];
        op_pop_name((unsigned)(k / MC__NDIRS), (unsigned)(k % MC__NDIRS), name,
                    sizeof name);
        rc = fill_pop(&s->pops[s->npops++], name, acc->op[k]);
    }
    if (rc || !ncomm)
        return rc;
    uint32_t *ids = malloc(ncomm * sizeof *ids);
    if (!ids)
        return MC_ENOMEM;
    size_t m = 0;
    for (size_t i = 0; i < acc->comm.cap; i++)
        if (acc->comm.vals[i])
            ids[m++] = acc->comm.keys[i];
    qsort(ids, m, sizeof *ids, cmp_u32);
    for (size_t i = 0; i < m && !rc; i++) {
        char name[32];
        snprintf(name, sizeof name, "comm/%u", (unsigned)ids[i]);
        rc = fill_pop(&s->pops[s->npops++], name,
                      mc__histmap_get(&acc->comm, ids[i]));
    }
    free(ids);
    return rc;
}

/* The status text of one source (docs/summary-format.md, "sources"). */
static char *source_status(const mc__file *f, uint64_t skipped_blocks,
                           uint64_t invalid, int64_t code, int64_t block,
                           int tail_lost)
{
    char buf[256];
    if (f->state == MC__FILE_SKIPPED) {
        snprintf(buf, sizeof buf, "skipped: %s", mc_strerror(f->skip_code));
    } else if (!skipped_blocks && !invalid && !tail_lost) {
        snprintf(buf, sizeof buf, "ok");
    } else {
        int n = snprintf(buf, sizeof buf,
                         "skipped: %llu block(s), %llu invalid "
                         "record(s); first at block %lld (%s)",
                         (unsigned long long)skipped_blocks,
                         (unsigned long long)invalid, (long long)block,
                         mc_strerror((int)code));
        if (tail_lost && n > 0 && (size_t)n < sizeof buf)
            snprintf(buf + n, sizeof buf - (size_t)n,
                     "; blocks after it unreadable");
    }
    return strdup(buf);
}

static int build_sources(mc_summary *s, const mc__plan *plan,
                         const mc__unit_result *res, size_t nres)
{
    s->sources = calloc(plan->nfiles ? plan->nfiles : 1, sizeof *s->sources);
    if (!s->sources)
        return MC_ENOMEM;
    /* Results are sorted by unit, units by (file, first block): the units of
     * one file are consecutive and in block order. */
    size_t ri = 0;
    for (size_t fi = 0; fi < plan->nfiles; fi++) {
        const mc__file *f = &plan->files[fi];
        mc_summary_source *o = &s->sources[s->nsources++];
        o->path = strdup(f->name);
        o->app_rank = f->app_rank;
        o->bytes = f->size;
        XXH64_state_t *st = XXH64_createState();
        if (!st || !o->path)
            return MC_ENOMEM;
        XXH64_reset(st, 0);
        uint64_t invalid = 0;
        int64_t code = 0, block = -1;
        int tail = 0;
        for (; ri < nres && plan->units[res[ri].unit].file == fi; ri++) {
            const mc__unit_result *r = &res[ri];
            o->records += r->records;
            o->blocks += r->blocks;
            o->skipped_blocks += r->skipped_blocks;
            o->skipped_records += r->skipped_records + r->invalid;
            invalid += r->invalid;
            if (r->damage_code && !code) {
                code = r->damage_code;
                block = r->damage_block;
            }
            tail |= r->tail_lost != 0;
            for (size_t j = 0; j < r->nsums; j++) {
                unsigned char le[8];
                for (int b = 0; b < 8; b++)
                    le[b] = (unsigned char)(r->sums[j] >> (8 * b));
                XXH64_update(st, le, sizeof le);
            }
            s->meta.bytes_read += r->bytes;
        }
        o->checksum = XXH64_digest(st);
        XXH64_freeState(st);
        o->status =
            source_status(f, o->skipped_blocks, invalid, code, block, tail);
        if (!o->status)
            return MC_ENOMEM;
        s->meta.records_read += o->records;
        s->meta.records_rejected += o->skipped_records;
    }
    return 0;
}

static int build_ranks(mc_summary *s, const mc__plan *plan, const mc__acc *acc)
{
    /* One row per source with a known rank, totals from the merged rows. */
    s->ranks = calloc(plan->nfiles ? plan->nfiles : 1, sizeof *s->ranks);
    if (!s->ranks)
        return MC_ENOMEM;
    for (size_t i = 0; i < plan->nfiles; i++)
        if (plan->files[i].state == MC__FILE_OK)
            s->ranks[s->nranks++].rank = plan->files[i].app_rank;
    /* Sort by rank (files were sorted by name). */
    for (size_t i = 1; i < s->nranks; i++) {
        const mc_summary_rank t = s->ranks[i];
        size_t j = i;
        while (j > 0 && s->ranks[j - 1].rank > t.rank) {
            s->ranks[j] = s->ranks[j - 1];
            j--;
        }
        s->ranks[j] = t;
    }
    size_t j = 0;
    for (size_t i = 0; i < acc->nrows; i++) {
        const mc__row *r = &acc->rows[i];
        while (j < s->nranks && s->ranks[j].rank < r->rank)
            j++;
        if (j == s->nranks || s->ranks[j].rank != r->rank)
            continue;
        mc_summary_rank *o = &s->ranks[j];
        o->p2p_msgs = r->v[0];
        o->p2p_bytes = r->v[1];
        o->recv_msgs = r->v[2];
        o->recv_bytes = r->v[3];
        o->coll_msgs = r->v[4];
        o->coll_bytes = r->v[5];
        o->os_msgs = r->v[6];
        o->os_bytes = r->v[7];
    }
    s->edges = calloc(acc->nedges ? acc->nedges : 1, sizeof *s->edges);
    if (!s->edges)
        return MC_ENOMEM;
    for (size_t i = 0; i < acc->nedges; i++)
        s->edges[i] =
            (mc_summary_edge){acc->edges[i].src, acc->edges[i].dst,
                              acc->edges[i].msgs, acc->edges[i].bytes};
    s->nedges = acc->nedges;
    return 0;
}

int mc__build_summary(const mc__plan *plan, mc__acc *acc,
                      const mc__unit_result *res, size_t nres,
                      const mc__build_meta *bm, mc_summary **out)
{
    mc_summary *s = calloc(1, sizeof *s);
    if (!s)
        return MC_ENOMEM;
    mc_summary_meta *m = &s->meta;
    m->format_name = strdup(MC_SUMMARY_FORMAT_NAME);
    m->version_major = MC_SUMMARY_VERSION_MAJOR;
    m->version_minor = MC_SUMMARY_VERSION_MINOR;
    m->tool_version = strdup(bm->tool_version ? bm->tool_version : "");
    m->created = strdup(bm->created ? bm->created : "");
    m->campaign_path = strdup(bm->campaign ? bm->campaign : "");
    m->run_label = strdup(bm->label ? bm->label : "");
    m->host = strdup(bm->host ? bm->host : "");
    m->shared_note = strdup("");
    m->app_ranks = plan->app_size;
    m->reducer_ranks = bm->reducer_ranks;
    m->files = (int64_t)plan->nfiles;
    int rc = 0;
    if (!m->format_name || !m->tool_version || !m->created ||
        !m->campaign_path || !m->run_label || !m->host || !m->shared_note)
        rc = MC_ENOMEM;
    rc = rc ? rc : build_sources(s, plan, res, nres);
    rc = rc ? rc : build_pops(s, acc, bm->per_comm);
    rc = rc ? rc : build_ranks(s, plan, acc);
    if (rc) {
        mc_summary_free(s);
        return rc;
    }
    *out = s;
    return 0;
}
