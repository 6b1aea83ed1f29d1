/* accum.c - streaming reduction of one unit of work: per-(op, dir)
 * histograms, per-rank totals, the send matrix and per-communicator
 * histograms, with memory bounded by the number of distinct keys. */
#include "reduce_internal.h"
#include "combiner.h" /* the record loop */
#include "memlimit.h" /* --max-memory accounting */

#include <stdio.h>  /* snprintf */
#include <stdlib.h> /* calloc, realloc, free */
#include <string.h> /* memset, memcpy */

/* ---- histogram map (communicator ids) ------------------------------------ */

static size_t hash_u32(uint32_t k)
{
    uint64_t x = k * 0x9E3779B97F4A7C15ull;
    return (size_t)(x >> 32);
}

static int histmap_grow(mc__histmap *m)
{
    const size_t ncap = m->cap ? 2 * m->cap : 16;
    uint32_t *keys = calloc(ncap, sizeof *keys);
    mc_hist **vals = calloc(ncap, sizeof *vals);
    if (!keys || !vals) {
        free(keys);
        free(vals);
        return MC_ENOMEM;
    }
    for (size_t i = 0; i < m->cap; i++) {
        if (!m->vals[i])
            continue;
        size_t j = hash_u32(m->keys[i]) & (ncap - 1);
        while (vals[j])
            j = (j + 1) & (ncap - 1);
        keys[j] = m->keys[i];
        vals[j] = m->vals[i];
    }
    free(m->keys);
    free(m->vals);
    m->keys = keys;
    m->vals = vals;
    m->cap = ncap;
    return 0;
}

mc_hist *mc__histmap_get(mc__histmap *m, uint32_t id)
{
    if ((m->n + 1) * 2 > m->cap && histmap_grow(m) != 0)
        return NULL;
    size_t j = hash_u32(id) & (m->cap - 1);
    while (m->vals[j]) {
        if (m->keys[j] == id)
            return m->vals[j];
        j = (j + 1) & (m->cap - 1);
    }
    if (mc_hist_create(&m->vals[j]) != 0) {
        m->vals[j] = NULL;
        return NULL;
    }
    m->keys[j] = id;
    m->n++;
    return m->vals[j];
}

static void histmap_free(mc__histmap *m)
{
    for (size_t i = 0; i < m->cap; i++)
        mc_hist_free(m->vals[i]);
    free(m->keys);
    free(m->vals);
    memset(m, 0, sizeof *m);
}

/* ---- accumulator ------------------------------------------------------------
 */

void mc__acc_init(mc__acc *a) { memset(a, 0, sizeof *a); }

void mc__acc_free(mc__acc *a)
{
    if (!a)
        return;
    for (size_t k = 0; k < MC__NOPKEYS; k++)
        mc_hist_free(a->op[k]);
    histmap_free(&a->comm);
    free(a->rows);
    free(a->edges);
    memset(a, 0, sizeof *a);
}

static int push_row(mc__acc *a, const mc__row *r)
{
    if (a->nrows == a->caprows) {
        const size_t ncap = a->caprows ? 2 * a->caprows : 16;
        mc__row *nv = realloc(a->rows, ncap * sizeof *nv);
        if (!nv)
            return MC_ENOMEM;
        a->rows = nv;
        a->caprows = ncap;
    }
    a->rows[a->nrows++] = *r;
    return 0;
}

static int push_edges(mc__acc *a, const mc__edge *e, size_t n)
{
    if (a->nedges + n > a->capedges) {
        size_t ncap = a->capedges ? a->capedges : 64;
        while (ncap < a->nedges + n)
            ncap *= 2;
        mc__edge *nv = realloc(a->edges, ncap * sizeof *nv);
        if (!nv)
            return MC_ENOMEM;
        a->edges = nv;
        a->capedges = ncap;
    }
    memcpy(a->edges + a->nedges, e, n * sizeof *e);
    a->nedges += n;
    return 0;
}

int mc__acc_merge(mc__acc *dst, const mc__acc *src)
{
    int rc = 0;
    for (size_t k = 0; k < MC__NOPKEYS && !rc; k++) {
        if (!src->op[k])
            continue;
        if (!dst->op[k] && mc_hist_create(&dst->op[k]) != 0)
            return MC_ENOMEM;
        rc = mc_hist_merge(dst->op[k], src->op[k]);
    }
    for (size_t i = 0; i < src->comm.cap && !rc; i++) {
        if (!src->comm.vals[i])
            continue;
        mc_hist *h = mc__histmap_get(&dst->comm, src->comm.keys[i]);
        rc = h ? mc_hist_merge(h, src->comm.vals[i]) : MC_ENOMEM;
    }
    for (size_t i = 0; i < src->nrows && !rc; i++)
        rc = push_row(dst, &src->rows[i]);
    if (!rc && src->nedges)
        rc = push_edges(dst, src->edges, src->nedges);
    return rc;
}

/* ---- peer map of one unit (send matrix row of its application rank) ----- */

typedef struct peer_slot {
    int32_t peer; /* -1 = empty */
    uint64_t msgs, bytes;
} peer_slot;

typedef struct peermap {
    size_t cap, n;
    peer_slot *s;
} peermap;

static int peermap_grow(peermap *m)
{
    const size_t ncap = m->cap ? 2 * m->cap : 64;
    peer_slot *s = malloc(ncap * sizeof *s);
    if (!s)
        return MC_ENOMEM;
    for (size_t i = 0; i < ncap; i++)
        s[i].peer = -1;
    for (size_t i = 0; i < m->cap; i++) {
        if (m->s[i].peer < 0)
            continue;
        size_t j = hash_u32((uint32_t)m->s[i].peer) & (ncap - 1);
        while (s[j].peer >= 0)
            j = (j + 1) & (ncap - 1);
        s[j] = m->s[i];
    }
    free(m->s);
    m->s = s;
    m->cap = ncap;
    return 0;
}

static int peermap_add(peermap *m, int32_t peer, uint64_t msgs, uint64_t bytes)
{
    if ((m->n + 1) * 2 > m->cap && peermap_grow(m) != 0)
        return MC_ENOMEM;
    size_t j = hash_u32((uint32_t)peer) & (m->cap - 1);
    while (m->s[j].peer >= 0 && m->s[j].peer != peer)
        j = (j + 1) & (m->cap - 1);
    if (m->s[j].peer < 0) {
        m->s[j].peer = peer;
        m->s[j].msgs = 0;
        m->s[j].bytes = 0;
        m->n++;
    }
    m->s[j].msgs += msgs;
    m->s[j].bytes += bytes;
    return 0;
}

/* ---- one unit
 * ---------------------------------------------------------------- */

/* Category of each op code, looked up once per unit. */
static void fill_categories(uint8_t cat[MC_OP_MAX_CODE + 1])
{
    for (unsigned c = 0; c <= MC_OP_MAX_CODE; c++)
        cat[c] = (uint8_t)mc_op_category_of(c);
}

static int push_sum(mc__unit_result *res, size_t *cap, uint64_t sum)
{
    if (res->nsums == *cap) {
        const size_t ncap = *cap ? 2 * *cap : 64;
        uint64_t *nv = realloc(res->sums, ncap * sizeof *nv);
        if (!nv)
            return MC_ENOMEM;
        res->sums = nv;
        *cap = ncap;
    }
    res->sums[res->nsums++] = sum;
    return 0;
}

/* ---- unit-local combiner (combiner.h) ---------------------------------- */
_Static_assert(MC__NDIRS == MC__COMB_NDIRS, "op keys as in combiner.h");

/* Unit-local state; freed at the end of mc__unit_reduce. */
typedef struct unit_ctx {
    mc__comb_slot comb[MC__COMB_SLOTS]; /* kp = MC__COMB_NO_KEY at first */
    uint16_t keys[MC__REC_KEYS_LEN];    /* op key + 1 by (op, dir) */
    mc__acc ua;
    peermap peers;
    mc__row row;
    uint8_t cat[MC_OP_MAX_CODE + 1];
    int per_comm;
    uint32_t last_comm;
    mc_hist *last_comm_hist;
    const char *what; /* the table a failed miss names */
} unit_ctx;

/* Move one pending triple into the histogram, the totals row and the
 * matrix. @what names the table that failed. */
static int comb_flush_slot(unit_ctx *c, mc__comb_slot *s, const char **what)
{
    if (!s->n)
        return 0;
    const unsigned k = (unsigned)(s->kp & 0xffffffffu);
    const int32_t peer = (int32_t)(uint32_t)(s->kp >> 32);
    const uint64_t n = s->n, bytes = n * s->size;
    s->n = 0;
    int rc = mc_hist_add(c->ua.op[k], s->size, n);
    if (rc) {
        *what = "histogram";
        return rc;
    }
    uint64_t *row = c->row.v;
    const unsigned cat = c->cat[k / MC__NDIRS];
    if (cat == MC_CAT_P2P) {
        if (k % MC__NDIRS == MC_DIR_RECV) {
            row[2] += n;
            row[3] += bytes;
        } else {
            row[0] += n;
            row[1] += bytes;
            if (peer >= 0 && (rc = peermap_add(&c->peers, peer, n, bytes))) {
                *what = "matrix";
                return rc;
            }
        }
    } else if (cat == MC_CAT_ONESIDED) {
        row[6] += n;
        row[7] += bytes;
    } else {
        row[4] += n;
        row[5] += bytes;
    }
    return 0;
}

static int comb_flush(unit_ctx *c, const char **what)
{
    for (size_t i = 0; i < MC__COMB_SLOTS; i++) {
        const int rc = comb_flush_slot(c, &c->comb[i], what);
        if (rc)
            return rc;
    }
    return 0;
}

/* mc__comb_miss_fn: the slot @s holds another triple (or none): flush it
 * and take it for this one, creating the op key's histogram on first use.
 * c->what names the table that failed. */
static int comb_miss(void *ctx, mc__comb_slot *s, uint64_t size, uint64_t kp)
{
    unit_ctx *c = ctx;
    int rc = comb_flush_slot(c, s, &c->what);
    if (rc)
        return rc;
    mc_hist **h = &c->ua.op[kp & 0xffffffffu];
    if (!*h && (rc = mc_hist_create(h)) != 0) {
        c->what = "histogram";
        return rc;
    }
    s->size = size;
    s->kp = kp;
    s->n = 1;
    return 0;
}

/* Per-peer records of a collective repeat, peer by peer, bytes the call's
 * own record already counts (docs/trace-format.md, byte conventions): they
 * are read and checked but enter no population, total or matrix. */
static inline int counted(const mc_record *r)
{
    return !(r->flags & MC_RF_PER_PEER);
}

/* Per-communicator histograms of recs[i0..i1): every counted record but
 * point-to-point receives (each message once, on the send side). */
static int reduce_comms(unit_ctx *c, const mc_record *recs, size_t i0,
                        size_t i1)
{
    for (size_t i = i0; i < i1; i++) {
        const mc_record *r = &recs[i];
        if (!counted(r) ||
            (c->cat[r->op] == MC_CAT_P2P && r->dir == MC_DIR_RECV))
            continue;
        if (!c->last_comm_hist || c->last_comm != r->comm_id) {
            c->last_comm_hist = mc__histmap_get(&c->ua.comm, r->comm_id);
            c->last_comm = r->comm_id;
        }
        const int rc = c->last_comm_hist
                           ? mc_hist_add(c->last_comm_hist, r->bytes, 1)
                           : MC_ENOMEM;
        if (rc)
            return rc;
    }
    return 0;
}

/* Reduce recs[i0..n) up to the first invalid record: *stop is its index,
 * or n when every record is valid. The check is made in the counting loop
 * (combiner.h) rather than in a pass of its own: one pass over the block
 * instead of two. */
static int reduce_valid(unit_ctx *c, const mc_record *recs, size_t i0, size_t n,
                        size_t *stop, const char **what)
{
    c->what = "histogram";
    int rc = mc__comb_count(c->comb, c->keys, recs, i0, n, stop, comb_miss, c);
    if (rc)
        *what = c->what;
    else if (c->per_comm && (rc = reduce_comms(c, recs, i0, *stop)) != 0)
        *what = "communicator histogram";
    return rc;
}

/* Reduce the records of one decoded block. Invalid records are counted as
 * rejected (skip_damaged) or end the unit with MC_ERECORD. */
static int reduce_block(unit_ctx *c, const mc_record *recs, size_t n,
                        int skip_damaged, uint64_t *invalid, const char *path,
                        uint64_t block_index, uint64_t block_off,
                        mc_errinfo *err)
{
    size_t i = 0;
    for (;;) {
        size_t end = n;
        const char *what = "histogram";
        const int rc = reduce_valid(c, recs, i, n, &end, &what);
        if (rc)
            return mc_errinfo_set(err, rc, path, (int64_t)block_index,
                                  (int64_t)block_off, "%s", what);
        if (end == n)
            return 0;
        if (!skip_damaged) {
            mc_errinfo e;
            mc_record_check(&recs[end], &e);
            return mc_errinfo_set(err, MC_ERECORD, path, (int64_t)block_index,
                                  (int64_t)block_off,
                                  "record %zu of the block: %s", end, e.detail);
        }
        (*invalid)++;
        i = end + 1;
    }
}

/* --max-memory: what this rank holds with the unit being read, looked at
 * every MC__MEM_CHECK_RECORDS records: the accumulators, the unit's own
 * state (combiner, peer map) and the reader's buffers. */
static int unit_memory_check(const mc__progress *p, const unit_ctx *c,
                             const mc_trace_reader *r, const char *path,
                             mc_errinfo *err)
{
    mc__memuse u = {0, 0, 0, 0, 0};
    if (p->mem_base)
        u = *p->mem_base;
    mc__memuse_add_acc(&u, &c->ua);
    u.bytes += sizeof *c + mc_trace_reader_memory(r);
    u.bytes += (uint64_t)c->peers.cap * sizeof *c->peers.s;
    u.edges += c->peers.n;
    return mc__memuse_check(p->mem_limit, u.bytes, &u, "reading", path, err);
}

/* After a damaged block: find the next block through the index. @return 1
 * when positioned at the next block, 0 when nothing more can be read. */
static int resync(mc_trace_reader *r, uint64_t bad, mc__unit_result *res,
                  mc_errinfo *err)
{
    const mc_block_info *b = NULL;
    size_t nb = 0;
    int complete = 0;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    if (mc_trace_index(r, &b, &nb, NULL, &complete, &e) != 0) {
        res->tail_lost = 1;
        return 0;
    }
    if (bad < nb) {
        res->skipped_records += b[bad].nrecords;
    } else {
        /* The damaged block is not in the index (its payload is cut short,
         * so the walk stopped there): its header, if intact, still says how
         * many records were lost with it. */
        uint64_t idx = 0, off = 0;
        mc_block_info bi;
        mc_trace_current_block(r, &idx, &off);
        if (idx == bad && mc_trace_block_header_at(r, off, idx, &bi, &e) == 0)
            res->skipped_records += bi.nrecords;
    }
    if (bad + 1 < nb) {
        if (mc_trace_seek_block(r, &b[bad + 1], bad + 1, err) != 0) {
            res->tail_lost = 1;
            return 0;
        }
        return 1;
    }
    if (!complete)
        res->tail_lost = 1;
    return 0;
}

int mc__unit_reduce(const mc__plan *plan, const mc__unit *u,
                    uint64_t unit_index, int per_comm, int skip_damaged,
                    mc__acc *acc, mc__unit_result *res, mc__progress *prog,
                    mc_errinfo *err)
{
    char path[4096];
    const mc__file *f = &plan->files[u->file];
    snprintf(path, sizeof path, "%s/%s", plan->dir, f->name);
    memset(res, 0, sizeof *res);
    res->unit = unit_index;
    res->bytes = u->bytes;

    unit_ctx *c = calloc(1, sizeof *c);
    if (!c)
        return mc_errinfo_set(err, MC_ENOMEM, path, -1, -1, "unit");
    mc__acc_init(&c->ua);
    c->per_comm = per_comm;
    mc__comb_init(c->comb);
    mc__rec_keys_init(c->keys);
    c->row.rank = f->app_rank;
    fill_categories(c->cat);

    size_t sumcap = 0;
    uint64_t published = 0;
    const uint64_t start_off = u->first_block ? u->start.offset : 0;
    mc_trace_reader *r = NULL;
    int rc = mc_trace_open(path, &r, err);
    if (rc)
        goto out;
    if (u->first_block &&
        (rc = mc_trace_seek_block(r, &u->start, u->first_block, err)) != 0)
        goto out;
    for (uint64_t done = 0; u->nblocks == MC__TO_END || done < u->nblocks;
         done++) {
        const mc_record *recs = NULL;
        size_t n = 0;
        mc_errinfo e;
        mc_errinfo_clear(&e);
        const int brc = mc_trace_next_block(r, &recs, &n, &e);
        if (brc == 0) {
            if (u->nblocks != MC__TO_END)
                rc = mc_errinfo_set(
                    err, MC_ETRUNC, path, (int64_t)(u->first_block + done), -1,
                    "file ended inside its planned block range");
            break;
        }
        if (brc < 0) {
            if (!skip_damaged) {
                if (err)
                    *err = e;
                rc = brc;
                goto out;
            }
            const uint64_t bad =
                e.block >= 0 ? (uint64_t)e.block : u->first_block + done;
            res->skipped_blocks++;
            if (!res->damage_code) {
                res->damage_code = brc;
                res->damage_block = (int64_t)bad;
            }
            if (!resync(r, bad, res, err))
                break;
            continue;
        }
        uint64_t bidx = 0, boff = 0;
        mc_trace_current_block(r, &bidx, &boff);
        const uint64_t before = res->invalid;
        rc = reduce_block(c, recs, n, skip_damaged, &res->invalid, path, bidx,
                          boff, err);
        if (!rc && prog->mem_limit &&
            (prog->mem_unchecked += n) >= MC__MEM_CHECK_RECORDS) {
            prog->mem_unchecked = 0;
            rc = unit_memory_check(prog, c, r, path, err);
        }
        if (rc)
            goto out;
        if (res->invalid != before && !res->damage_code) {
            res->damage_code = MC_ERECORD;
            res->damage_block = (int64_t)bidx;
        }
        res->records += n - (res->invalid - before);
        res->blocks++;
        /* The stored payload checksum, which the reader has just verified:
         * the file's checksum in the summary is computed from these. */
        if ((rc = push_sum(res, &sumcap, mc_trace_current_checksum(r))) != 0) {
            mc_errinfo_set(err, rc, path, (int64_t)bidx, (int64_t)boff,
                           "checksums");
            goto out;
        }
        if (boff > start_off && boff - start_off > published) {
            mc__progress_add(prog, boff - start_off - published, 0, 0);
            published = boff - start_off;
        }
        if (prog->stop) {
            rc = 1; /* another rank failed; its error is reported */
            goto out;
        }
    }
    if (!rc) {
        const char *what = "histogram";
        if ((rc = comb_flush(c, &what)) != 0)
            mc_errinfo_set(err, rc, path, -1, -1, "%s", what);
    }
    if (!rc) {
        /* Fold the unit's own state into the rank's accumulator. */
        if (c->peers.n) {
            mc__edge *e = malloc(c->peers.n * sizeof *e);
            size_t m = 0;
            if (!e) {
                rc = mc_errinfo_set(err, MC_ENOMEM, path, -1, -1, "matrix");
                goto out;
            }
            for (size_t i = 0; i < c->peers.cap; i++)
                if (c->peers.s[i].peer >= 0)
                    e[m++] =
                        (mc__edge){f->app_rank, c->peers.s[i].peer,
                                   c->peers.s[i].msgs, c->peers.s[i].bytes};
            rc = push_edges(&c->ua, e, m);
            free(e);
        }
        rc = rc ? rc : push_row(&c->ua, &c->row);
        rc = rc ? rc : mc__acc_merge(acc, &c->ua);
        if (rc)
            mc_errinfo_set(err, rc, path, -1, -1, "merging the unit");
        if (u->bytes > published)
            mc__progress_add(prog, u->bytes - published, 0, 0);
    }
out:
    mc_trace_close(r);
    mc__acc_free(&c->ua);
    free(c->peers.s);
    free(c);
    return rc;
}

void mc__unit_result_free(mc__unit_result *r)
{
    if (r) {
        free(r->sums);
        r->sums = NULL;
        r->nsums = 0;
    }
}
