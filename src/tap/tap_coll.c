/* tap_coll.c - collective wrappers (blocking, nonblocking, persistent) and
 * their byte conventions. */
#include "tap.h"

#if defined(OPEN_MPI) && OPEN_MPI
#include <mpi-ext.h> /* MPIX_*_init persistent collectives of Open MPI 4.1 */
#endif

/* Byte conventions: docs/trace-format.md, byte conventions. Each collective
 * call gives one call record (dir NONE, peer NONE); MPI_Alltoallv/w also give
 * one MC_RF_PER_PEER send record per peer with a nonzero block. */

void mc__tap_coll_record(unsigned op, MPI_Comm comm, uint64_t bytes,
                         unsigned flags, uint64_t t0, uint64_t t1)
{
    mc__tap_lock();
    const mc__tap_comm *ci = mc__tap_comm_get_locked(comm);
    if (ci) {
        mc_record r = mc__tap_record(op, MC_DIR_NONE, ci, t0, t1);
        r.bytes = bytes;
        r.flags = (uint8_t)flags;
        mc__tap_emit_locked(&r);
    }
    mc__tap_unlock();
}

void mc__tap_pcoll_register(unsigned op, MPI_Comm comm, uint64_t bytes,
                            unsigned flags, MPI_Request req)
{
    mc__tap_lock();
    const mc__tap_comm *ci = mc__tap_comm_get_locked(comm);
    if (ci) {
        mc_record r = mc__tap_record(op, MC_DIR_NONE, ci, 0, 0);
        r.bytes = bytes;
        r.flags = (uint8_t)flags;
        mc__tap_req_add_locked(MC_TAP_KEY(req), MC_TAP_REQ_PCOLL, &r,
                               MPI_DATATYPE_NULL, NULL);
    }
    mc__tap_unlock();
}

/* The caller's role: its rank, the number of peers blocks go to (the
 * remote group of an intercommunicator), and whether it is the root. */
typedef struct role {
    int rank;
    int n;
    int inter;
} role;

static role role_of(MPI_Comm c)
{
    role r = {0, 0, 0};
    PMPI_Comm_rank(c, &r.rank);
    PMPI_Comm_test_inter(c, &r.inter);
    if (r.inter)
        PMPI_Comm_remote_size(c, &r.n);
    else
        PMPI_Comm_size(c, &r.n);
    return r;
}

/* Root of a rooted collective? On an intercommunicator the root passes
 * MPI_ROOT; the other members of its group pass MPI_PROC_NULL. */
static int is_root(const role *r, int root)
{
    return r->inter ? root == MPI_ROOT : root == r->rank;
}

static uint64_t sum_counts(const int counts[], int n, MPI_Datatype dt, int skip)
{
    uint64_t b = 0;
    for (int i = 0; i < n; i++)
        if (i != skip)
            b += mc__tap_bytes(counts[i], dt);
    return b;
}

/* ---- per-operation sizes ------------------------------------------------ */

static uint64_t bytes_bcast(int count, MPI_Datatype dt, int root)
{
    if (root == MPI_PROC_NULL)
        return 0; /* intercommunicator: a bystander of the root's group */
    return mc__tap_bytes(count, dt);
}

/* Rooted collectives: a non-root's own block (@nonroot bytes); the root
 * moves one block per member, @block bytes each, or per-member @counts of
 * @type for the v-variants; with MPI_IN_PLACE at the root its own block
 * stays in place and is not counted. */
static uint64_t rooted(MPI_Comm c, int root, uint64_t nonroot, int in_place,
                       uint64_t block, const int *counts, MPI_Datatype type,
                       unsigned *fl)
{
    const role r = role_of(c);
    if (r.inter && root == MPI_PROC_NULL)
        return 0; /* a bystander in the root's group */
    if (!is_root(&r, root))
        return nonroot;
    if (in_place)
        *fl |= MC_RF_IN_PLACE;
    if (counts)
        return sum_counts(counts, r.n, type, in_place ? r.rank : -1);
    return (uint64_t)(in_place ? r.n - 1 : r.n) * block;
}

static uint64_t bytes_gather(const void *sbuf, int scount, MPI_Datatype stype,
                             int rcount, MPI_Datatype rtype, int root,
                             MPI_Comm c, unsigned *fl)
{
    /* rcount and rtype are significant at the root only */
    const role r = role_of(c);
    const int at_root = is_root(&r, root);
    return rooted(c, root, mc__tap_bytes(scount, stype), sbuf == MPI_IN_PLACE,
                  at_root ? mc__tap_bytes(rcount, rtype) : 0, NULL,
                  MPI_DATATYPE_NULL, fl);
}

static uint64_t bytes_gatherv(const void *sbuf, int scount, MPI_Datatype stype,
                              const int rcounts[], MPI_Datatype rtype, int root,
                              MPI_Comm c, unsigned *fl)
{
    return rooted(c, root, mc__tap_bytes(scount, stype), sbuf == MPI_IN_PLACE,
                  0, rcounts, rtype, fl);
}

static uint64_t bytes_scatter(int scount, MPI_Datatype stype, const void *rbuf,
                              int rcount, MPI_Datatype rtype, int root,
                              MPI_Comm c, unsigned *fl)
{
    const role r = role_of(c);
    const int at_root = is_root(&r, root);
    return rooted(c, root, at_root ? 0 : mc__tap_bytes(rcount, rtype),
                  rbuf == MPI_IN_PLACE,
                  at_root ? mc__tap_bytes(scount, stype) : 0, NULL,
                  MPI_DATATYPE_NULL, fl);
}

static uint64_t bytes_scatterv(const int scounts[], MPI_Datatype stype,
                               const void *rbuf, int rcount, MPI_Datatype rtype,
                               int root, MPI_Comm c, unsigned *fl)
{
    const role r = role_of(c);
    const int at_root = is_root(&r, root);
    return rooted(c, root, at_root ? 0 : mc__tap_bytes(rcount, rtype),
                  rbuf == MPI_IN_PLACE, 0, scounts, stype, fl);
}

static uint64_t bytes_allgather(const void *sbuf, int scount,
                                MPI_Datatype stype, int rcount,
                                MPI_Datatype rtype, unsigned *fl)
{
    if (sbuf == MPI_IN_PLACE) {
        *fl |= MC_RF_IN_PLACE;
        return mc__tap_bytes(rcount, rtype);
    }
    return mc__tap_bytes(scount, stype);
}

static uint64_t bytes_allgatherv(const void *sbuf, int scount,
                                 MPI_Datatype stype, const int rcounts[],
                                 MPI_Datatype rtype, MPI_Comm c, unsigned *fl)
{
    if (sbuf == MPI_IN_PLACE) {
        *fl |= MC_RF_IN_PLACE;
        int rank = 0;
        PMPI_Comm_rank(c, &rank);
        return mc__tap_bytes(rcounts[rank], rtype);
    }
    return mc__tap_bytes(scount, stype);
}

static uint64_t bytes_alltoall(const void *sbuf, int scount, MPI_Datatype stype,
                               int rcount, MPI_Datatype rtype, MPI_Comm c,
                               unsigned *fl)
{
    const role r = role_of(c);
    if (sbuf == MPI_IN_PLACE) {
        *fl |= MC_RF_IN_PLACE;
        return (uint64_t)(r.n - 1) * mc__tap_bytes(rcount, rtype);
    }
    return (uint64_t)r.n * mc__tap_bytes(scount, stype);
}

/* MPI_Alltoallv and MPI_Alltoallw: the total, and when @emit, one per-peer
 * send record for every peer with a nonzero block. With MPI_IN_PLACE the
 * blocks are described by the receive arguments and the own block stays. */
static uint64_t alltoallw_peers(unsigned op, MPI_Comm c, const void *sbuf,
                                const int scounts[], const MPI_Datatype *stypes,
                                MPI_Datatype stype, const int rcounts[],
                                const MPI_Datatype *rtypes, MPI_Datatype rtype,
                                unsigned *fl, int emit, uint64_t t0,
                                uint64_t t1)
{
    const role r = role_of(c);
    const int in_place = sbuf == MPI_IN_PLACE;
    if (in_place)
        *fl |= MC_RF_IN_PLACE;
    const int *counts = in_place ? rcounts : scounts;
    const MPI_Datatype *types = in_place ? rtypes : stypes;
    const MPI_Datatype one = in_place ? rtype : stype;
    uint64_t total = 0;
    mc__tap_lock();
    const mc__tap_comm *ci = emit ? mc__tap_comm_get_locked(c) : NULL;
    for (int i = 0; i < r.n; i++) {
        if (in_place && !r.inter && i == r.rank)
            continue;
        const uint64_t b = mc__tap_bytes(counts[i], types ? types[i] : one);
        total += b;
        if (ci && b > 0) {
            mc_record pr = mc__tap_record(op, MC_DIR_SEND, ci, t0, t1);
            pr.bytes = b;
            pr.peer = mc__tap_world_of(ci, i);
            pr.flags = (uint8_t)(*fl | MC_RF_PER_PEER);
            mc__tap_emit_locked(&pr);
        }
    }
    mc__tap_unlock();
    return total;
}

static uint64_t bytes_reduce_scatter(const int rcounts[], MPI_Datatype dt,
                                     MPI_Comm c)
{
    int n = 0;
    PMPI_Comm_size(c, &n);
    return sum_counts(rcounts, n, dt, -1);
}

static uint64_t bytes_reduce_scatter_block(int rcount, MPI_Datatype dt,
                                           MPI_Comm c)
{
    int n = 0;
    PMPI_Comm_size(c, &n);
    return (uint64_t)n * mc__tap_bytes(rcount, dt);
}

static uint64_t bytes_reduce(const void *sbuf, int count, MPI_Datatype dt,
                             int root, MPI_Comm c, unsigned *fl)
{
    int inter = 0;
    PMPI_Comm_test_inter(c, &inter);
    if (inter && root == MPI_PROC_NULL)
        return 0;
    if (sbuf == MPI_IN_PLACE)
        *fl |= MC_RF_IN_PLACE;
    return mc__tap_bytes(count, dt);
}

static uint64_t in_place_bytes(const void *sbuf, int count, MPI_Datatype dt,
                               unsigned *fl)
{
    if (sbuf == MPI_IN_PLACE)
        *fl |= MC_RF_IN_PLACE;
    return mc__tap_bytes(count, dt);
}

/* ---- wrapper patterns --------------------------------------------------- */

/* Blocking or nonblocking: one record at the call. @bytes may use fl. */
#define COLL_WRAP(op, call, comm, bytes)                                       \
    if (!mc__tap_enter())                                                      \
        return call;                                                           \
    const uint64_t t0 = mc__tap_now();                                         \
    const int rc = call;                                                       \
    const uint64_t t1 = mc__tap_now();                                         \
    if (rc == MPI_SUCCESS) {                                                   \
        unsigned fl = 0;                                                       \
        const uint64_t b = (bytes);                                            \
        mc__tap_coll_record(op, comm, b, fl, t0, t1);                          \
    }                                                                          \
    mc__tap_leave();                                                           \
    return rc

/* MPI_Alltoallv/w and their nonblocking forms: call record + per-peer. */
#define A2AW_WRAP(op, call, comm, sbuf, sc, sts, st, rc_, rts, rt)             \
    if (!mc__tap_enter())                                                      \
        return call;                                                           \
    const uint64_t t0 = mc__tap_now();                                         \
    const int rc = call;                                                       \
    const uint64_t t1 = mc__tap_now();                                         \
    if (rc == MPI_SUCCESS) {                                                   \
        unsigned fl = 0;                                                       \
        const uint64_t b = alltoallw_peers(op, comm, sbuf, sc, sts, st, rc_,   \
                                           rts, rt, &fl, 0, t0, t1);           \
        mc__tap_coll_record(op, comm, b, fl, t0, t1);                          \
        fl = 0;                                                                \
        alltoallw_peers(op, comm, sbuf, sc, sts, st, rc_, rts, rt, &fl, 1, t0, \
                        t1);                                                   \
    }                                                                          \
    mc__tap_leave();                                                           \
    return rc

/* Persistent: the record is kept with the request, emitted per start. */
#define PCOLL_WRAP(op, call, comm, bytes, req)                                 \
    if (!mc__tap_enter())                                                      \
        return call;                                                           \
    const int rc = call;                                                       \
    if (rc == MPI_SUCCESS) {                                                   \
        unsigned fl = 0;                                                       \
        const uint64_t b = (bytes);                                            \
        mc__tap_pcoll_register(op, comm, b, fl, *(req));                       \
    }                                                                          \
    mc__tap_leave();                                                           \
    return rc

/* ---- blocking ----------------------------------------------------------- */

int MPI_Barrier(MPI_Comm comm)
{
    COLL_WRAP(MC_OP_Barrier, PMPI_Barrier(comm), comm, 0);
}

int MPI_Bcast(void *buf, int count, MPI_Datatype dt, int root, MPI_Comm comm)
{
    COLL_WRAP(MC_OP_Bcast, PMPI_Bcast(buf, count, dt, root, comm), comm,
              bytes_bcast(count, dt, root));
}

int MPI_Gather(const void *sbuf, int scount, MPI_Datatype stype, void *rbuf,
               int rcount, MPI_Datatype rtype, int root, MPI_Comm comm)
{
    COLL_WRAP(
        MC_OP_Gather,
        PMPI_Gather(sbuf, scount, stype, rbuf, rcount, rtype, root, comm), comm,
        bytes_gather(sbuf, scount, stype, rcount, rtype, root, comm, &fl));
}

int MPI_Gatherv(const void *sbuf, int scount, MPI_Datatype stype, void *rbuf,
                const int rcounts[], const int displs[], MPI_Datatype rtype,
                int root, MPI_Comm comm)
{
    COLL_WRAP(
        MC_OP_Gatherv,
        PMPI_Gatherv(sbuf, scount, stype, rbuf, rcounts, displs, rtype, root,
                     comm),
        comm,
        bytes_gatherv(sbuf, scount, stype, rcounts, rtype, root, comm, &fl));
}

int MPI_Scatter(const void *sbuf, int scount, MPI_Datatype stype, void *rbuf,
                int rcount, MPI_Datatype rtype, int root, MPI_Comm comm)
{
    COLL_WRAP(
        MC_OP_Scatter,
        PMPI_Scatter(sbuf, scount, stype, rbuf, rcount, rtype, root, comm),
        comm,
        bytes_scatter(scount, stype, rbuf, rcount, rtype, root, comm, &fl));
}

int MPI_Scatterv(const void *sbuf, const int scounts[], const int displs[],
                 MPI_Datatype stype, void *rbuf, int rcount, MPI_Datatype rtype,
                 int root, MPI_Comm comm)
{
    COLL_WRAP(
        MC_OP_Scatterv,
        PMPI_Scatterv(sbuf, scounts, displs, stype, rbuf, rcount, rtype, root,
                      comm),
        comm,
        bytes_scatterv(scounts, stype, rbuf, rcount, rtype, root, comm, &fl));
}

int MPI_Allgather(const void *sbuf, int scount, MPI_Datatype stype, void *rbuf,
                  int rcount, MPI_Datatype rtype, MPI_Comm comm)
{
    COLL_WRAP(MC_OP_Allgather,
              PMPI_Allgather(sbuf, scount, stype, rbuf, rcount, rtype, comm),
              comm, bytes_allgather(sbuf, scount, stype, rcount, rtype, &fl));
}

int MPI_Allgatherv(const void *sbuf, int scount, MPI_Datatype stype, void *rbuf,
                   const int rcounts[], const int displs[], MPI_Datatype rtype,
                   MPI_Comm comm)
{
    COLL_WRAP(MC_OP_Allgatherv,
              PMPI_Allgatherv(sbuf, scount, stype, rbuf, rcounts, displs, rtype,
                              comm),
              comm,
              bytes_allgatherv(sbuf, scount, stype, rcounts, rtype, comm, &fl));
}

int MPI_Alltoall(const void *sbuf, int scount, MPI_Datatype stype, void *rbuf,
                 int rcount, MPI_Datatype rtype, MPI_Comm comm)
{
    COLL_WRAP(MC_OP_Alltoall,
              PMPI_Alltoall(sbuf, scount, stype, rbuf, rcount, rtype, comm),
              comm,
              bytes_alltoall(sbuf, scount, stype, rcount, rtype, comm, &fl));
}

int MPI_Alltoallv(const void *sbuf, const int scounts[], const int sdispls[],
                  MPI_Datatype stype, void *rbuf, const int rcounts[],
                  const int rdispls[], MPI_Datatype rtype, MPI_Comm comm)
{
    A2AW_WRAP(MC_OP_Alltoallv,
              PMPI_Alltoallv(sbuf, scounts, sdispls, stype, rbuf, rcounts,
                             rdispls, rtype, comm),
              comm, sbuf, scounts, NULL, stype, rcounts, NULL, rtype);
}

int MPI_Alltoallw(const void *sbuf, const int scounts[], const int sdispls[],
                  const MPI_Datatype stypes[], void *rbuf, const int rcounts[],
                  const int rdispls[], const MPI_Datatype rtypes[],
                  MPI_Comm comm)
{
    A2AW_WRAP(MC_OP_Alltoallw,
              PMPI_Alltoallw(sbuf, scounts, sdispls, stypes, rbuf, rcounts,
                             rdispls, rtypes, comm),
              comm, sbuf, scounts, stypes, MPI_DATATYPE_NULL, rcounts, rtypes,
              MPI_DATATYPE_NULL);
}

int MPI_Reduce(const void *sbuf, void *rbuf, int count, MPI_Datatype dt,
               MPI_Op op, int root, MPI_Comm comm)
{
    COLL_WRAP(MC_OP_Reduce, PMPI_Reduce(sbuf, rbuf, count, dt, op, root, comm),
              comm, bytes_reduce(sbuf, count, dt, root, comm, &fl));
}

int MPI_Allreduce(const void *sbuf, void *rbuf, int count, MPI_Datatype dt,
                  MPI_Op op, MPI_Comm comm)
{
    COLL_WRAP(MC_OP_Allreduce, PMPI_Allreduce(sbuf, rbuf, count, dt, op, comm),
              comm, in_place_bytes(sbuf, count, dt, &fl));
}

int MPI_Reduce_scatter(const void *sbuf, void *rbuf, const int rcounts[],
                       MPI_Datatype dt, MPI_Op op, MPI_Comm comm)
{
    COLL_WRAP(MC_OP_Reduce_scatter,
              PMPI_Reduce_scatter(sbuf, rbuf, rcounts, dt, op, comm), comm,
              (fl |= sbuf == MPI_IN_PLACE ? MC_RF_IN_PLACE : 0u,
               bytes_reduce_scatter(rcounts, dt, comm)));
}

int MPI_Reduce_scatter_block(const void *sbuf, void *rbuf, int rcount,
                             MPI_Datatype dt, MPI_Op op, MPI_Comm comm)
{
    COLL_WRAP(MC_OP_Reduce_scatter_block,
              PMPI_Reduce_scatter_block(sbuf, rbuf, rcount, dt, op, comm), comm,
              (fl |= sbuf == MPI_IN_PLACE ? MC_RF_IN_PLACE : 0u,
               bytes_reduce_scatter_block(rcount, dt, comm)));
}

int MPI_Scan(const void *sbuf, void *rbuf, int count, MPI_Datatype dt,
             MPI_Op op, MPI_Comm comm)
{
    COLL_WRAP(MC_OP_Scan, PMPI_Scan(sbuf, rbuf, count, dt, op, comm), comm,
              in_place_bytes(sbuf, count, dt, &fl));
}

int MPI_Exscan(const void *sbuf, void *rbuf, int count, MPI_Datatype dt,
               MPI_Op op, MPI_Comm comm)
{
    COLL_WRAP(MC_OP_Exscan, PMPI_Exscan(sbuf, rbuf, count, dt, op, comm), comm,
              in_place_bytes(sbuf, count, dt, &fl));
}

/* ---- nonblocking: recorded at initiation -------------------------------- */

int MPI_Ibarrier(MPI_Comm comm, MPI_Request *req)
{
    COLL_WRAP(MC_OP_Ibarrier, PMPI_Ibarrier(comm, req), comm, 0);
}

int MPI_Ibcast(void *buf, int count, MPI_Datatype dt, int root, MPI_Comm comm,
               MPI_Request *req)
{
    COLL_WRAP(MC_OP_Ibcast, PMPI_Ibcast(buf, count, dt, root, comm, req), comm,
              bytes_bcast(count, dt, root));
}

int MPI_Igather(const void *sbuf, int scount, MPI_Datatype stype, void *rbuf,
                int rcount, MPI_Datatype rtype, int root, MPI_Comm comm,
                MPI_Request *req)
{
    COLL_WRAP(
        MC_OP_Igather,
        PMPI_Igather(sbuf, scount, stype, rbuf, rcount, rtype, root, comm, req),
        comm,
        bytes_gather(sbuf, scount, stype, rcount, rtype, root, comm, &fl));
}

int MPI_Igatherv(const void *sbuf, int scount, MPI_Datatype stype, void *rbuf,
                 const int rcounts[], const int displs[], MPI_Datatype rtype,
                 int root, MPI_Comm comm, MPI_Request *req)
{
    COLL_WRAP(
        MC_OP_Igatherv,
        PMPI_Igatherv(sbuf, scount, stype, rbuf, rcounts, displs, rtype, root,
                      comm, req),
        comm,
        bytes_gatherv(sbuf, scount, stype, rcounts, rtype, root, comm, &fl));
}

int MPI_Iscatter(const void *sbuf, int scount, MPI_Datatype stype, void *rbuf,
                 int rcount, MPI_Datatype rtype, int root, MPI_Comm comm,
                 MPI_Request *req)
{
    COLL_WRAP(
        MC_OP_Iscatter,
        PMPI_Iscatter(sbuf, scount, stype, rbuf, rcount, rtype, root, comm,
                      req),
        comm,
        bytes_scatter(scount, stype, rbuf, rcount, rtype, root, comm, &fl));
}

int MPI_Iscatterv(const void *sbuf, const int scounts[], const int displs[],
                  MPI_Datatype stype, void *rbuf, int rcount,
                  MPI_Datatype rtype, int root, MPI_Comm comm, MPI_Request *req)
{
    COLL_WRAP(
        MC_OP_Iscatterv,
        PMPI_Iscatterv(sbuf, scounts, displs, stype, rbuf, rcount, rtype, root,
                       comm, req),
        comm,
        bytes_scatterv(scounts, stype, rbuf, rcount, rtype, root, comm, &fl));
}

int MPI_Iallgather(const void *sbuf, int scount, MPI_Datatype stype, void *rbuf,
                   int rcount, MPI_Datatype rtype, MPI_Comm comm,
                   MPI_Request *req)
{
    COLL_WRAP(
        MC_OP_Iallgather,
        PMPI_Iallgather(sbuf, scount, stype, rbuf, rcount, rtype, comm, req),
        comm, bytes_allgather(sbuf, scount, stype, rcount, rtype, &fl));
}

int MPI_Iallgatherv(const void *sbuf, int scount, MPI_Datatype stype,
                    void *rbuf, const int rcounts[], const int displs[],
                    MPI_Datatype rtype, MPI_Comm comm, MPI_Request *req)
{
    COLL_WRAP(MC_OP_Iallgatherv,
              PMPI_Iallgatherv(sbuf, scount, stype, rbuf, rcounts, displs,
                               rtype, comm, req),
              comm,
              bytes_allgatherv(sbuf, scount, stype, rcounts, rtype, comm, &fl));
}

int MPI_Ialltoall(const void *sbuf, int scount, MPI_Datatype stype, void *rbuf,
                  int rcount, MPI_Datatype rtype, MPI_Comm comm,
                  MPI_Request *req)
{
    COLL_WRAP(
        MC_OP_Ialltoall,
        PMPI_Ialltoall(sbuf, scount, stype, rbuf, rcount, rtype, comm, req),
        comm, bytes_alltoall(sbuf, scount, stype, rcount, rtype, comm, &fl));
}

int MPI_Ialltoallv(const void *sbuf, const int scounts[], const int sdispls[],
                   MPI_Datatype stype, void *rbuf, const int rcounts[],
                   const int rdispls[], MPI_Datatype rtype, MPI_Comm comm,
                   MPI_Request *req)
{
    A2AW_WRAP(MC_OP_Ialltoallv,
              PMPI_Ialltoallv(sbuf, scounts, sdispls, stype, rbuf, rcounts,
                              rdispls, rtype, comm, req),
              comm, sbuf, scounts, NULL, stype, rcounts, NULL, rtype);
}

int MPI_Ialltoallw(const void *sbuf, const int scounts[], const int sdispls[],
                   const MPI_Datatype stypes[], void *rbuf, const int rcounts[],
                   const int rdispls[], const MPI_Datatype rtypes[],
                   MPI_Comm comm, MPI_Request *req)
{
    A2AW_WRAP(MC_OP_Ialltoallw,
              PMPI_Ialltoallw(sbuf, scounts, sdispls, stypes, rbuf, rcounts,
                              rdispls, rtypes, comm, req),
              comm, sbuf, scounts, stypes, MPI_DATATYPE_NULL, rcounts, rtypes,
              MPI_DATATYPE_NULL);
}

int MPI_Ireduce(const void *sbuf, void *rbuf, int count, MPI_Datatype dt,
                MPI_Op op, int root, MPI_Comm comm, MPI_Request *req)
{
    COLL_WRAP(MC_OP_Ireduce,
              PMPI_Ireduce(sbuf, rbuf, count, dt, op, root, comm, req), comm,
              bytes_reduce(sbuf, count, dt, root, comm, &fl));
}

int MPI_Iallreduce(const void *sbuf, void *rbuf, int count, MPI_Datatype dt,
                   MPI_Op op, MPI_Comm comm, MPI_Request *req)
{
    COLL_WRAP(MC_OP_Iallreduce,
              PMPI_Iallreduce(sbuf, rbuf, count, dt, op, comm, req), comm,
              in_place_bytes(sbuf, count, dt, &fl));
}

int MPI_Ireduce_scatter(const void *sbuf, void *rbuf, const int rcounts[],
                        MPI_Datatype dt, MPI_Op op, MPI_Comm comm,
                        MPI_Request *req)
{
    COLL_WRAP(MC_OP_Ireduce_scatter,
              PMPI_Ireduce_scatter(sbuf, rbuf, rcounts, dt, op, comm, req),
              comm,
              (fl |= sbuf == MPI_IN_PLACE ? MC_RF_IN_PLACE : 0u,
               bytes_reduce_scatter(rcounts, dt, comm)));
}

int MPI_Ireduce_scatter_block(const void *sbuf, void *rbuf, int rcount,
                              MPI_Datatype dt, MPI_Op op, MPI_Comm comm,
                              MPI_Request *req)
{
    COLL_WRAP(MC_OP_Ireduce_scatter_block,
              PMPI_Ireduce_scatter_block(sbuf, rbuf, rcount, dt, op, comm, req),
              comm,
              (fl |= sbuf == MPI_IN_PLACE ? MC_RF_IN_PLACE : 0u,
               bytes_reduce_scatter_block(rcount, dt, comm)));
}

int MPI_Iscan(const void *sbuf, void *rbuf, int count, MPI_Datatype dt,
              MPI_Op op, MPI_Comm comm, MPI_Request *req)
{
    COLL_WRAP(MC_OP_Iscan, PMPI_Iscan(sbuf, rbuf, count, dt, op, comm, req),
              comm, in_place_bytes(sbuf, count, dt, &fl));
}

int MPI_Iexscan(const void *sbuf, void *rbuf, int count, MPI_Datatype dt,
                MPI_Op op, MPI_Comm comm, MPI_Request *req)
{
    COLL_WRAP(MC_OP_Iexscan, PMPI_Iexscan(sbuf, rbuf, count, dt, op, comm, req),
              comm, in_place_bytes(sbuf, count, dt, &fl));
}

/* ---- persistent (Open MPI 4.1: MPIX_ names of the MPI-4 functions) ------ */

#if defined(OMPI_HAVE_MPI_EXT_PCOLLREQ) && OMPI_HAVE_MPI_EXT_PCOLLREQ

int MPIX_Barrier_init(MPI_Comm comm, MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(MC_OP_Barrier_init, PMPIX_Barrier_init(comm, info, req), comm, 0,
               req);
}

int MPIX_Bcast_init(void *buf, int count, MPI_Datatype dt, int root,
                    MPI_Comm comm, MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(MC_OP_Bcast_init,
               PMPIX_Bcast_init(buf, count, dt, root, comm, info, req), comm,
               bytes_bcast(count, dt, root), req);
}

int MPIX_Gather_init(const void *sbuf, int scount, MPI_Datatype stype,
                     void *rbuf, int rcount, MPI_Datatype rtype, int root,
                     MPI_Comm comm, MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(
        MC_OP_Gather_init,
        PMPIX_Gather_init(sbuf, scount, stype, rbuf, rcount, rtype, root, comm,
                          info, req),
        comm, bytes_gather(sbuf, scount, stype, rcount, rtype, root, comm, &fl),
        req);
}

int MPIX_Gatherv_init(const void *sbuf, int scount, MPI_Datatype stype,
                      void *rbuf, const int rcounts[], const int displs[],
                      MPI_Datatype rtype, int root, MPI_Comm comm,
                      MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(
        MC_OP_Gatherv_init,
        PMPIX_Gatherv_init(sbuf, scount, stype, rbuf, rcounts, displs, rtype,
                           root, comm, info, req),
        comm,
        bytes_gatherv(sbuf, scount, stype, rcounts, rtype, root, comm, &fl),
        req);
}

int MPIX_Scatter_init(const void *sbuf, int scount, MPI_Datatype stype,
                      void *rbuf, int rcount, MPI_Datatype rtype, int root,
                      MPI_Comm comm, MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(
        MC_OP_Scatter_init,
        PMPIX_Scatter_init(sbuf, scount, stype, rbuf, rcount, rtype, root, comm,
                           info, req),
        comm,
        bytes_scatter(scount, stype, rbuf, rcount, rtype, root, comm, &fl),
        req);
}

int MPIX_Scatterv_init(const void *sbuf, const int scounts[],
                       const int displs[], MPI_Datatype stype, void *rbuf,
                       int rcount, MPI_Datatype rtype, int root, MPI_Comm comm,
                       MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(
        MC_OP_Scatterv_init,
        PMPIX_Scatterv_init(sbuf, scounts, displs, stype, rbuf, rcount, rtype,
                            root, comm, info, req),
        comm,
        bytes_scatterv(scounts, stype, rbuf, rcount, rtype, root, comm, &fl),
        req);
}

int MPIX_Allgather_init(const void *sbuf, int scount, MPI_Datatype stype,
                        void *rbuf, int rcount, MPI_Datatype rtype,
                        MPI_Comm comm, MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(MC_OP_Allgather_init,
               PMPIX_Allgather_init(sbuf, scount, stype, rbuf, rcount, rtype,
                                    comm, info, req),
               comm, bytes_allgather(sbuf, scount, stype, rcount, rtype, &fl),
               req);
}

int MPIX_Allgatherv_init(const void *sbuf, int scount, MPI_Datatype stype,
                         void *rbuf, const int rcounts[], const int displs[],
                         MPI_Datatype rtype, MPI_Comm comm, MPI_Info info,
                         MPI_Request *req)
{
    PCOLL_WRAP(MC_OP_Allgatherv_init,
               PMPIX_Allgatherv_init(sbuf, scount, stype, rbuf, rcounts, displs,
                                     rtype, comm, info, req),
               comm,
               bytes_allgatherv(sbuf, scount, stype, rcounts, rtype, comm, &fl),
               req);
}

int MPIX_Alltoall_init(const void *sbuf, int scount, MPI_Datatype stype,
                       void *rbuf, int rcount, MPI_Datatype rtype,
                       MPI_Comm comm, MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(MC_OP_Alltoall_init,
               PMPIX_Alltoall_init(sbuf, scount, stype, rbuf, rcount, rtype,
                                   comm, info, req),
               comm,
               bytes_alltoall(sbuf, scount, stype, rcount, rtype, comm, &fl),
               req);
}

int MPIX_Alltoallv_init(const void *sbuf, const int scounts[],
                        const int sdispls[], MPI_Datatype stype, void *rbuf,
                        const int rcounts[], const int rdispls[],
                        MPI_Datatype rtype, MPI_Comm comm, MPI_Info info,
                        MPI_Request *req)
{
    PCOLL_WRAP(MC_OP_Alltoallv_init,
               PMPIX_Alltoallv_init(sbuf, scounts, sdispls, stype, rbuf,
                                    rcounts, rdispls, rtype, comm, info, req),
               comm,
               alltoallw_peers(MC_OP_Alltoallv_init, comm, sbuf, scounts, NULL,
                               stype, rcounts, NULL, rtype, &fl, 0, 0, 0),
               req);
}

int MPIX_Alltoallw_init(const void *sbuf, const int scounts[],
                        const int sdispls[], const MPI_Datatype stypes[],
                        void *rbuf, const int rcounts[], const int rdispls[],
                        const MPI_Datatype rtypes[], MPI_Comm comm,
                        MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(MC_OP_Alltoallw_init,
               PMPIX_Alltoallw_init(sbuf, scounts, sdispls, stypes, rbuf,
                                    rcounts, rdispls, rtypes, comm, info, req),
               comm,
               alltoallw_peers(MC_OP_Alltoallw_init, comm, sbuf, scounts,
                               stypes, MPI_DATATYPE_NULL, rcounts, rtypes,
                               MPI_DATATYPE_NULL, &fl, 0, 0, 0),
               req);
}

int MPIX_Reduce_init(const void *sbuf, void *rbuf, int count, MPI_Datatype dt,
                     MPI_Op op, int root, MPI_Comm comm, MPI_Info info,
                     MPI_Request *req)
{
    PCOLL_WRAP(
        MC_OP_Reduce_init,
        PMPIX_Reduce_init(sbuf, rbuf, count, dt, op, root, comm, info, req),
        comm, bytes_reduce(sbuf, count, dt, root, comm, &fl), req);
}

int MPIX_Allreduce_init(const void *sbuf, void *rbuf, int count,
                        MPI_Datatype dt, MPI_Op op, MPI_Comm comm,
                        MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(MC_OP_Allreduce_init,
               PMPIX_Allreduce_init(sbuf, rbuf, count, dt, op, comm, info, req),
               comm, in_place_bytes(sbuf, count, dt, &fl), req);
}

int MPIX_Reduce_scatter_init(const void *sbuf, void *rbuf, const int rcounts[],
                             MPI_Datatype dt, MPI_Op op, MPI_Comm comm,
                             MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(
        MC_OP_Reduce_scatter_init,
        PMPIX_Reduce_scatter_init(sbuf, rbuf, rcounts, dt, op, comm, info, req),
        comm,
        (fl |= sbuf == MPI_IN_PLACE ? MC_RF_IN_PLACE : 0u,
         bytes_reduce_scatter(rcounts, dt, comm)),
        req);
}

int MPIX_Reduce_scatter_block_init(const void *sbuf, void *rbuf, int rcount,
                                   MPI_Datatype dt, MPI_Op op, MPI_Comm comm,
                                   MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(MC_OP_Reduce_scatter_block_init,
               PMPIX_Reduce_scatter_block_init(sbuf, rbuf, rcount, dt, op, comm,
                                               info, req),
               comm,
               (fl |= sbuf == MPI_IN_PLACE ? MC_RF_IN_PLACE : 0u,
                bytes_reduce_scatter_block(rcount, dt, comm)),
               req);
}

int MPIX_Scan_init(const void *sbuf, void *rbuf, int count, MPI_Datatype dt,
                   MPI_Op op, MPI_Comm comm, MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(MC_OP_Scan_init,
               PMPIX_Scan_init(sbuf, rbuf, count, dt, op, comm, info, req),
               comm, in_place_bytes(sbuf, count, dt, &fl), req);
}

int MPIX_Exscan_init(const void *sbuf, void *rbuf, int count, MPI_Datatype dt,
                     MPI_Op op, MPI_Comm comm, MPI_Info info, MPI_Request *req)
{
    PCOLL_WRAP(MC_OP_Exscan_init,
               PMPIX_Exscan_init(sbuf, rbuf, count, dt, op, comm, info, req),
               comm, in_place_bytes(sbuf, count, dt, &fl), req);
}

#endif /* OMPI_HAVE_MPI_EXT_PCOLLREQ */
