/* accum.c - streaming reduction of one unit of work: per-(op, dir)
 * histograms, per-rank totals, the send matrix and per-communicator
 * histograms, with memory bounded by the number of distinct keys. */
#include "reduce_internal.h"
#include "memlimit.h" /* --max-memory accounting */

#include <fcntl.h>  /* open */
#include <stdio.h>  /* snprintf */
#include <stdlib.h> /* calloc, realloc, free */
#include <string.h> /* memset, memcpy */
#include <unistd.h> /* pread, close */

#include <xxhash.h> /* XXH64: block checksums when the stored one is unreadable */

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
    size_t last; /* slot of the last peer: neighbours repeat */
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
    m->last = 0;
    return 0;
}

static int peermap_add(peermap *m, int32_t peer, uint64_t bytes)
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
    m->s[j].msgs++;
    m->s[j].bytes += bytes;
    m->last = j;
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

/* Per-block raw checksum: XXH64 (seed 0) of the 48-byte little-endian
 * records, which is the trace format's raw payload checksum. */
static uint64_t compute_checksum(const mc_record *recs, size_t n)
{
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
    return XXH64(recs, n * sizeof *recs, 0);
#else
    XXH64_state_t *st = XXH64_createState();
    XXH64_reset(st, 0);
    unsigned char b[MC_RECORD_SIZE];
    for (size_t i = 0; i < n; i++) {
        mc_record_encode(&recs[i], b);
        XXH64_update(st, b, sizeof b);
    }
    const uint64_t h = XXH64_digest(st);
    XXH64_freeState(st);
    return h;
#endif
}

/* Offset of the payload checksum in a block header (docs/trace-format.md,
 * "Block"). The reader has just verified the payload against it, so taking
 * the stored value costs one 8-byte pread per block where recomputing it
 * would hash every record a second time (a third of the single-rank time
 * in a profile). */
#define BLOCK_RAW_SUM_OFFSET 24u

static uint64_t block_checksum(int fd, uint64_t block_off,
                               const mc_record *recs, size_t n)
{
    unsigned char b[8];
    if (fd >= 0 &&
        pread(fd, b, sizeof b, (off_t)(block_off + BLOCK_RAW_SUM_OFFSET)) ==
            (ssize_t)sizeof b) {
        uint64_t v = 0;
        for (int i = 7; i >= 0; i--)
            v = (v << 8) | b[i];
        return v;
    }
    return compute_checksum(recs, n);
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

/* Unit-local state; freed at the end of mc__unit_reduce. */
typedef struct unit_ctx {
    mc__acc ua;
    peermap peers;
    mc__row row;
    uint8_t cat[MC_OP_MAX_CODE + 1];
    int per_comm;
    uint32_t last_comm;
    mc_hist *last_comm_hist;
} unit_ctx;

/* Reduce the records of one decoded block. Invalid records are counted as
 * rejected (skip_damaged) or end the unit with MC_ERECORD. One
 * mc_hist_add() per record: bench_reduce_hist measured it faster than a
 * per-block counting sort feeding mc_hist_add_sizes() (docs/performance.md). */
static int reduce_block(unit_ctx *c, const mc_record *recs, size_t n,
                        int skip_damaged, uint64_t *invalid, const char *path,
                        uint64_t block_index, uint64_t block_off,
                        mc_errinfo *err)
{
    int rc = 0;
    /* The totals row lives in registers for the block, written back once. */
    uint64_t row[8];
    memcpy(row, c->row.v, sizeof row);
    unsigned last_key = UINT32_MAX;
    mc_hist *h = NULL;
    for (size_t i = 0; i < n; i++) {
        const mc_record *r = &recs[i];
        mc_errinfo e;
        if (mc_record_check(r, &e) != 0) {
            if (!skip_damaged) {
                rc = mc_errinfo_set(err, MC_ERECORD, path, (int64_t)block_index,
                                    (int64_t)block_off,
                                    "record %zu of the block: %s", i, e.detail);
                break;
            }
            (*invalid)++;
            continue;
        }
        /* Per-peer records of a collective repeat, peer by peer, bytes the
         * call's own record already counts (docs/trace-format.md, byte
         * conventions): they are read and checked but enter no population,
         * total or matrix. */
        if (r->flags & MC_RF_PER_PEER)
            continue;
        const unsigned k = (unsigned)r->op * MC__NDIRS + r->dir;
        if (k != last_key) {
            if (!c->ua.op[k] && mc_hist_create(&c->ua.op[k]) != 0) {
                rc = mc_errinfo_set(err, MC_ENOMEM, path, (int64_t)block_index,
                                    (int64_t)block_off, "histogram");
                break;
            }
            h = c->ua.op[k];
            last_key = k;
        }
        const int hrc = mc_hist_add(h, r->bytes, 1);
        if (hrc != 0) {
            rc = mc_errinfo_set(err, hrc, path, (int64_t)block_index,
                                (int64_t)block_off, "histogram");
            break;
        }
        const unsigned cat = c->cat[r->op];
        int in_all = 1;
        if (cat == MC_CAT_P2P) {
            if (r->dir == MC_DIR_RECV) {
                row[2]++;
                row[3] += r->bytes;
                in_all = 0;
            } else {
                row[0]++;
                row[1] += r->bytes;
                peer_slot *last =
                    c->peers.cap ? &c->peers.s[c->peers.last] : NULL;
                if (r->peer >= 0 && last && last->peer == r->peer) {
                    last->msgs++;
                    last->bytes += r->bytes;
                } else if (r->peer >= 0 &&
                           peermap_add(&c->peers, r->peer, r->bytes) != 0) {
                    rc = mc_errinfo_set(err, MC_ENOMEM, path,
                                        (int64_t)block_index,
                                        (int64_t)block_off, "matrix");
                    break;
                }
            }
        } else if (cat == MC_CAT_ONESIDED) {
            row[6]++;
            row[7] += r->bytes;
        } else {
            row[4]++;
            row[5] += r->bytes;
        }
        if (c->per_comm && in_all) {
            if (!c->last_comm_hist || c->last_comm != r->comm_id) {
                c->last_comm_hist = mc__histmap_get(&c->ua.comm, r->comm_id);
                c->last_comm = r->comm_id;
            }
            if (!c->last_comm_hist ||
                mc_hist_add(c->last_comm_hist, r->bytes, 1) != 0) {
                rc = mc_errinfo_set(err, MC_ENOMEM, path, (int64_t)block_index,
                                    (int64_t)block_off,
                                    "communicator histogram");
                break;
            }
        }
    }
    memcpy(c->row.v, row, sizeof row);
    return rc;
}

/* --max-memory: what this rank holds with the unit being read, looked at
 * every MC__MEM_CHECK_RECORDS records. */
static int unit_memory_check(const mc__progress *p, const unit_ctx *c,
                             const char *path, mc_errinfo *err)
{
    mc__memuse u = {0, 0, 0, 0, 0};
    if (p->mem_base)
        u = *p->mem_base;
    mc__memuse_add_acc(&u, &c->ua);
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
    c->row.rank = f->app_rank;
    fill_categories(c->cat);

    size_t sumcap = 0;
    uint64_t published = 0;
    const uint64_t start_off = u->first_block ? u->start.offset : 0;
    mc_trace_reader *r = NULL;
    const int sumfd = open(path, O_RDONLY);
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
            rc = unit_memory_check(prog, c, path, err);
        }
        if (rc)
            goto out;
        if (res->invalid != before && !res->damage_code) {
            res->damage_code = MC_ERECORD;
            res->damage_block = (int64_t)bidx;
        }
        res->records += n - (res->invalid - before);
        res->blocks++;
        if ((rc = push_sum(res, &sumcap,
                           block_checksum(sumfd, boff, recs, n))) != 0) {
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
    if (sumfd >= 0)
        close(sumfd);
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
