/* merge.c - bring every reducer rank's results to rank 0: a binomial tree
 * for the histograms, gathers for the per-rank rows, the matrix and the
 * per-unit results, and agreement on the first error. */
#include "reduce_internal.h"

#include <limits.h> /* INT_MAX */
#include <stdlib.h> /* malloc, qsort */
#include <string.h> /* memcpy */

#define TAG_HIST 4711
/* Largest piece of one message, in u64 elements (counts are int). */
#define PIECE (1u << 26)

int mc__agree(MPI_Comm comm, int rc, mc_errinfo *err)
{
    int me = 0, np = 1;
    MPI_Comm_rank(comm, &me);
    MPI_Comm_size(comm, &np);
    const int mine = rc < 0 ? me : np;
    int root = np;
    MPI_Allreduce(&mine, &root, 1, MPI_INT, MPI_MIN, comm);
    if (root == np)
        return 0;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    if (me == root) {
        if (err && err->code == rc)
            e = *err;
        else
            e.code = rc;
    }
    MPI_Bcast(&e, (int)sizeof e, MPI_BYTE, root, comm);
    if (err)
        *err = e;
    return e.code ? e.code : MC_EMPI;
}

/* ---- histogram wire form ------------------------------------------------ */

/* [n] then per histogram [kind, key, k, sizes[k], counts[k]];
 * kind 0 = (op, dir) key, 1 = communicator id. */
static int pack_hists(mc__acc *a, uint64_t **out, size_t *len)
{
    size_t n = 1;
    for (size_t k = 0; k < MC__NOPKEYS; k++)
        if (a->op[k])
            n += 3 + 2 * mc_hist_distinct(a->op[k]);
    for (size_t i = 0; i < a->comm.cap; i++)
        if (a->comm.vals[i])
            n += 3 + 2 * mc_hist_distinct(a->comm.vals[i]);
    uint64_t *b = malloc(n * sizeof *b);
    if (!b)
        return MC_ENOMEM;
    size_t at = 1, cnt = 0;
    for (size_t k = 0; k < MC__NOPKEYS; k++) {
        if (!a->op[k])
            continue;
        const size_t kk = mc_hist_distinct(a->op[k]);
        b[at] = 0;
        b[at + 1] = k;
        b[at + 2] = kk;
        mc_hist_export(a->op[k], b + at + 3, b + at + 3 + kk);
        at += 3 + 2 * kk;
        cnt++;
    }
    for (size_t i = 0; i < a->comm.cap; i++) {
        if (!a->comm.vals[i])
            continue;
        const size_t kk = mc_hist_distinct(a->comm.vals[i]);
        b[at] = 1;
        b[at + 1] = a->comm.keys[i];
        b[at + 2] = kk;
        mc_hist_export(a->comm.vals[i], b + at + 3, b + at + 3 + kk);
        at += 3 + 2 * kk;
        cnt++;
    }
    b[0] = cnt;
    *out = b;
    *len = n;
    return 0;
}

static int unpack_hists(mc__acc *a, const uint64_t *b, size_t len)
{
    if (len < 1)
        return MC_EMPI;
    size_t at = 1;
    for (uint64_t i = 0; i < b[0]; i++) {
        if (at + 3 > len)
            return MC_EMPI;
        const uint64_t kind = b[at], key = b[at + 1], k = b[at + 2];
        if (k > (len - at - 3) / 2)
            return MC_EMPI;
        mc_hist *h = NULL;
        if (kind == 0 && key < MC__NOPKEYS) {
            if (!a->op[key] && mc_hist_create(&a->op[key]) != 0)
                return MC_ENOMEM;
            h = a->op[key];
        } else if (kind == 1 && key <= UINT32_MAX) {
            h = mc__histmap_get(&a->comm, (uint32_t)key);
            if (!h)
                return MC_ENOMEM;
        } else {
            return MC_EMPI;
        }
        const int rc =
            mc_hist_add_sorted(h, b + at + 3, b + at + 3 + k, (size_t)k);
        if (rc)
            return rc;
        at += 3 + 2 * (size_t)k;
    }
    return 0;
}

/* Send @len u64 (UINT64_MAX = "failed, nothing follows") in pieces. */
static void send_u64(MPI_Comm comm, int to, const uint64_t *b, uint64_t len)
{
    MPI_Send(&len, 1, MPI_UINT64_T, to, TAG_HIST, comm);
    if (len == UINT64_MAX)
        return;
    for (uint64_t at = 0; at < len; at += PIECE) {
        const uint64_t m = len - at < PIECE ? len - at : PIECE;
        MPI_Send(b + at, (int)m, MPI_UINT64_T, to, TAG_HIST, comm);
    }
}

/* Receive what send_u64 sent; *b = NULL with rc when the sender failed. */
static int recv_u64(MPI_Comm comm, int from, uint64_t **b, size_t *len)
{
    uint64_t n = 0;
    MPI_Recv(&n, 1, MPI_UINT64_T, from, TAG_HIST, comm, MPI_STATUS_IGNORE);
    *b = NULL;
    *len = 0;
    if (n == UINT64_MAX)
        return MC_EMPI;
    uint64_t *buf = malloc((size_t)(n ? n : 1) * sizeof *buf);
    /* Without memory for the whole, receive piece by piece into a scratch
     * piece so the sender is not left blocked; if even that fails, the
     * truncated receive is an MPI error, fatal under MPI's default handler. */
    uint64_t sink[1];
    for (uint64_t at = 0; at < n; at += PIECE) {
        const uint64_t m = n - at < PIECE ? n - at : PIECE;
        if (buf) {
            MPI_Recv(buf + at, (int)m, MPI_UINT64_T, from, TAG_HIST, comm,
                     MPI_STATUS_IGNORE);
        } else {
            uint64_t *tmp = malloc((size_t)m * sizeof *tmp);
            MPI_Recv(tmp ? tmp : sink, tmp ? (int)m : 0, MPI_UINT64_T, from,
                     TAG_HIST, comm, MPI_STATUS_IGNORE);
            free(tmp);
        }
    }
    if (!buf)
        return MC_ENOMEM;
    *b = buf;
    *len = (size_t)n;
    return 0;
}

int mc__merge_hists(MPI_Comm comm, mc__acc *acc)
{
    int me = 0, np = 1;
    MPI_Comm_rank(comm, &me);
    MPI_Comm_size(comm, &np);
    int rc = 0;
    for (int mask = 1; mask < np; mask <<= 1) {
        if (me & mask) {
            uint64_t *b = NULL;
            size_t len = 0;
            if (!rc)
                rc = pack_hists(acc, &b, &len);
            send_u64(comm, me - mask, b, rc ? UINT64_MAX : len);
            free(b);
            break;
        }
        if (me + mask < np) {
            uint64_t *b = NULL;
            size_t len = 0;
            const int r = recv_u64(comm, me + mask, &b, &len);
            if (!rc)
                rc = r ? r : unpack_hists(acc, b, len);
            free(b);
        }
    }
    return rc;
}

/* ---- tables ----------------------------------------------------------------
 */

#define ROW_WORDS 9u
#define EDGE_WORDS 4u
#define RES_WORDS 11u

static int cmp_row(const void *a, const void *b)
{
    const mc__row *x = a, *y = b;
    return (x->rank > y->rank) - (x->rank < y->rank);
}

static int cmp_edge(const void *a, const void *b)
{
    const mc__edge *x = a, *y = b;
    if (x->src != y->src)
        return x->src < y->src ? -1 : 1;
    return (x->dst > y->dst) - (x->dst < y->dst);
}

static int cmp_res(const void *a, const void *b)
{
    const mc__unit_result *x = a, *y = b;
    return (x->unit > y->unit) - (x->unit < y->unit);
}

/* Sort rows and edges and sum the entries with equal keys: the pieces of a
 * split file arrive from several ranks. u64 sums are exact, so the result
 * does not depend on the order of arrival. */
static void combine(mc__acc *a)
{
    if (a->nrows > 1)
        qsort(a->rows, a->nrows, sizeof *a->rows, cmp_row);
    size_t m = 0;
    for (size_t i = 0; i < a->nrows; i++) {
        if (m && a->rows[m - 1].rank == a->rows[i].rank) {
            for (int j = 0; j < 8; j++)
                a->rows[m - 1].v[j] += a->rows[i].v[j];
        } else {
            a->rows[m++] = a->rows[i];
        }
    }
    a->nrows = m;
    if (a->nedges > 1)
        qsort(a->edges, a->nedges, sizeof *a->edges, cmp_edge);
    m = 0;
    for (size_t i = 0; i < a->nedges; i++) {
        if (m && a->edges[m - 1].src == a->edges[i].src &&
            a->edges[m - 1].dst == a->edges[i].dst) {
            a->edges[m - 1].msgs += a->edges[i].msgs;
            a->edges[m - 1].bytes += a->edges[i].bytes;
        } else {
            a->edges[m++] = a->edges[i];
        }
    }
    a->nedges = m;
}

int mc__gather_tables(MPI_Comm comm, mc__acc *acc, mc__unit_result **results,
                      size_t *nresults)
{
    int me = 0, np = 1;
    MPI_Comm_rank(comm, &me);
    MPI_Comm_size(comm, &np);
    /* Pack: [nrows, nedges, nres] rows edges results(+sums). */
    size_t n = 3 + acc->nrows * ROW_WORDS + acc->nedges * EDGE_WORDS;
    for (size_t i = 0; i < *nresults; i++)
        n += RES_WORDS + (*results)[i].nsums;
    uint64_t *b = malloc(n * sizeof *b);
    int rc = b ? 0 : MC_ENOMEM;
    if (b) {
        size_t at = 3;
        b[0] = acc->nrows;
        b[1] = acc->nedges;
        b[2] = *nresults;
        for (size_t i = 0; i < acc->nrows; i++) {
            b[at++] = (uint64_t)(uint32_t)acc->rows[i].rank;
            memcpy(b + at, acc->rows[i].v, 8 * sizeof(uint64_t));
            at += 8;
        }
        for (size_t i = 0; i < acc->nedges; i++) {
            b[at++] = (uint64_t)(uint32_t)acc->edges[i].src;
            b[at++] = (uint64_t)(uint32_t)acc->edges[i].dst;
            b[at++] = acc->edges[i].msgs;
            b[at++] = acc->edges[i].bytes;
        }
        for (size_t i = 0; i < *nresults; i++) {
            const mc__unit_result *r = &(*results)[i];
            const uint64_t w[RES_WORDS] = {r->unit,
                                           r->records,
                                           r->blocks,
                                           r->skipped_blocks,
                                           r->skipped_records,
                                           r->invalid,
                                           r->bytes,
                                           (uint64_t)r->damage_code,
                                           (uint64_t)r->damage_block,
                                           (uint64_t)r->tail_lost,
                                           r->nsums};
            memcpy(b + at, w, sizeof w);
            at += RES_WORDS;
            if (r->nsums)
                memcpy(b + at, r->sums, r->nsums * sizeof(uint64_t));
            at += r->nsums;
        }
    }
    uint64_t mylen = b && n <= (size_t)INT_MAX ? n : 0;
    if (b && n > (size_t)INT_MAX)
        rc = MC_ELIMIT;
    uint64_t *lens = me == 0 ? calloc((size_t)np, sizeof *lens) : NULL;
    MPI_Gather(&mylen, 1, MPI_UINT64_T, lens, 1, MPI_UINT64_T, 0, comm);
    int *cnt = NULL, *disp = NULL;
    uint64_t *all = NULL;
    uint64_t tot = 0;
    if (me == 0) {
        cnt = calloc((size_t)np, sizeof *cnt);
        disp = calloc((size_t)np, sizeof *disp);
        for (int i = 0; i < np && lens; i++)
            tot += lens[i];
        if (!lens || !cnt || !disp || tot > (uint64_t)INT_MAX)
            rc = rc ? rc : (tot > (uint64_t)INT_MAX ? MC_ELIMIT : MC_ENOMEM);
        else
            all = malloc((size_t)(tot ? tot : 1) * sizeof *all);
        if (!rc && !all)
            rc = MC_ENOMEM;
        for (int i = 0, at = 0; i < np && !rc; i++) {
            cnt[i] = (int)lens[i];
            disp[i] = at;
            at += cnt[i];
        }
        if (rc && cnt)
            memset(cnt, 0, (size_t)np * sizeof *cnt);
    }
    /* Every rank takes part even after a local failure; rank 0 then
     * receives nothing (all counts zero) and reports. */
    MPI_Gatherv(b, (int)mylen, MPI_UINT64_T, all, cnt, disp, MPI_UINT64_T, 0,
                comm);
    free(b);
    if (me != 0 || rc) {
        free(lens);
        free(cnt);
        free(disp);
        free(all);
        return rc;
    }
    /* Rank 0: rebuild everything from the gathered words. */
    mc__acc merged;
    mc__acc_init(&merged);
    size_t nres = 0;
    for (int i = 0; i < np; i++) {
        const uint64_t *q = all + disp[i];
        if (cnt[i] < 3)
            continue;
        nres += (size_t)q[2];
    }
    mc__unit_result *res = calloc(nres ? nres : 1, sizeof *res);
    size_t ri = 0;
    if (!res)
        rc = MC_ENOMEM;
    for (int i = 0; i < np && !rc; i++) {
        const uint64_t *q = all + disp[i];
        if (cnt[i] < 3)
            continue;
        const size_t nr = (size_t)q[0], ne = (size_t)q[1], nu = (size_t)q[2];
        size_t at = 3;
        for (size_t j = 0; j < nr && !rc; j++, at += ROW_WORDS) {
            if (merged.nrows == merged.caprows) {
                const size_t c = merged.caprows ? 2 * merged.caprows : 64;
                mc__row *nv = realloc(merged.rows, c * sizeof *nv);
                if (!nv) {
                    rc = MC_ENOMEM;
                    break;
                }
                merged.rows = nv;
                merged.caprows = c;
            }
            mc__row *rw = &merged.rows[merged.nrows++];
            rw->rank = (int32_t)(uint32_t)q[at];
            memcpy(rw->v, q + at + 1, 8 * sizeof(uint64_t));
        }
        if (!rc && ne) {
            mc__edge *nv =
                realloc(merged.edges, (merged.nedges + ne) * sizeof *nv);
            if (!nv)
                rc = MC_ENOMEM;
            else
                merged.edges = nv;
            for (size_t j = 0; j < ne && !rc; j++, at += EDGE_WORDS)
                merged.edges[merged.nedges++] = (mc__edge){
                    (int32_t)(uint32_t)q[at], (int32_t)(uint32_t)q[at + 1],
                    q[at + 2], q[at + 3]};
            merged.capedges = merged.nedges;
        }
        for (size_t j = 0; j < nu && !rc; j++) {
            mc__unit_result *r = &res[ri++];
            r->unit = q[at];
            r->records = q[at + 1];
            r->blocks = q[at + 2];
            r->skipped_blocks = q[at + 3];
            r->skipped_records = q[at + 4];
            r->invalid = q[at + 5];
            r->bytes = q[at + 6];
            r->damage_code = (int64_t)q[at + 7];
            r->damage_block = (int64_t)q[at + 8];
            r->tail_lost = (int64_t)q[at + 9];
            r->nsums = (size_t)q[at + 10];
            at += RES_WORDS;
            r->sums = malloc((r->nsums ? r->nsums : 1) * sizeof *r->sums);
            if (!r->sums) {
                rc = MC_ENOMEM;
                break;
            }
            if (r->nsums)
                memcpy(r->sums, q + at, r->nsums * sizeof(uint64_t));
            at += r->nsums;
        }
    }
    free(lens);
    free(cnt);
    free(disp);
    free(all);
    if (rc) {
        for (size_t i = 0; i < ri; i++)
            mc__unit_result_free(&res[i]);
        free(res);
        mc__acc_free(&merged);
        return rc;
    }
    qsort(res, nres, sizeof *res, cmp_res);
    combine(&merged);
    /* Hand the combined tables to the caller's accumulator. */
    free(acc->rows);
    free(acc->edges);
    acc->rows = merged.rows;
    acc->nrows = merged.nrows;
    acc->caprows = merged.caprows;
    acc->edges = merged.edges;
    acc->nedges = merged.nedges;
    acc->capedges = merged.capedges;
    merged.rows = NULL;
    merged.edges = NULL;
    mc__acc_free(&merged);
    for (size_t i = 0; i < *nresults; i++)
        mc__unit_result_free(&(*results)[i]);
    free(*results);
    *results = res;
    *nresults = nres;
    return 0;
}
