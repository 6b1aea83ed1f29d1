/* tap_fortran_coll.c - Fortran entry points of the collectives: blocking,
 * nonblocking and neighbourhood. See tap_fortran.c for how and why. */
#include "tap_fortran.h"

#if defined(MC_TAP_FORTRAN)

/* ---- collectives --------------------------------------------------------- */

void mpi_barrier_(MPI_Fint *comm, MPI_Fint *ierr)
{
    mc_f_set(ierr, MPI_Barrier(MC_F_COMM(comm)));
}

void mpi_bcast_(void *buf, MPI_Fint *count, MPI_Fint *dt, MPI_Fint *root,
                MPI_Fint *comm, MPI_Fint *ierr)
{
    mc_f_set(ierr, MPI_Bcast(mc_f_buf(buf), (int)*count, MC_F_TYPE(dt),
                             (int)*root, MC_F_COMM(comm)));
}

void mpi_reduce_(void *sbuf, void *rbuf, MPI_Fint *count, MPI_Fint *dt,
                 MPI_Fint *op, MPI_Fint *root, MPI_Fint *comm, MPI_Fint *ierr)
{
    mc_f_set(ierr, MPI_Reduce(mc_f_buf(sbuf), mc_f_buf(rbuf), (int)*count,
                              MC_F_TYPE(dt), MC_F_OP(op), (int)*root,
                              MC_F_COMM(comm)));
}

#define F_ALLRED(fname, cname)                                                 \
    void fname(void *sbuf, void *rbuf, MPI_Fint *count, MPI_Fint *dt,          \
               MPI_Fint *op, MPI_Fint *comm, MPI_Fint *ierr)                   \
    {                                                                          \
        mc_f_set(ierr, cname(mc_f_buf(sbuf), mc_f_buf(rbuf), (int)*count,      \
                             MC_F_TYPE(dt), MC_F_OP(op), MC_F_COMM(comm)));    \
    }
F_ALLRED(mpi_allreduce_, MPI_Allreduce)
F_ALLRED(mpi_scan_, MPI_Scan)
F_ALLRED(mpi_exscan_, MPI_Exscan)

void mpi_reduce_scatter_block_(void *sbuf, void *rbuf, MPI_Fint *rcount,
                               MPI_Fint *dt, MPI_Fint *op, MPI_Fint *comm,
                               MPI_Fint *ierr)
{
    mc_f_set(ierr, MPI_Reduce_scatter_block(mc_f_buf(sbuf), mc_f_buf(rbuf),
                                            (int)*rcount, MC_F_TYPE(dt),
                                            MC_F_OP(op), MC_F_COMM(comm)));
}

void mpi_reduce_scatter_(void *sbuf, void *rbuf, MPI_Fint *rcounts,
                         MPI_Fint *dt, MPI_Fint *op, MPI_Fint *comm,
                         MPI_Fint *ierr)
{
    mc_f_set(ierr,
             MPI_Reduce_scatter(mc_f_buf(sbuf), mc_f_buf(rbuf), (int *)rcounts,
                                MC_F_TYPE(dt), MC_F_OP(op), MC_F_COMM(comm)));
}

/* Rooted and all-to-all collectives with a send and a receive side. */
#define F_ROOTED(fname, cname)                                                 \
    void fname(void *sbuf, MPI_Fint *scount, MPI_Fint *stype, void *rbuf,      \
               MPI_Fint *rcount, MPI_Fint *rtype, MPI_Fint *root,              \
               MPI_Fint *comm, MPI_Fint *ierr)                                 \
    {                                                                          \
        mc_f_set(ierr, cname(mc_f_buf(sbuf), (int)*scount, MC_F_TYPE(stype),   \
                             mc_f_buf(rbuf), (int)*rcount, MC_F_TYPE(rtype),   \
                             (int)*root, MC_F_COMM(comm)));                    \
    }
F_ROOTED(mpi_gather_, MPI_Gather)
F_ROOTED(mpi_scatter_, MPI_Scatter)

#define F_ALL(fname, cname)                                                    \
    void fname(void *sbuf, MPI_Fint *scount, MPI_Fint *stype, void *rbuf,      \
               MPI_Fint *rcount, MPI_Fint *rtype, MPI_Fint *comm,              \
               MPI_Fint *ierr)                                                 \
    {                                                                          \
        mc_f_set(ierr, cname(mc_f_buf(sbuf), (int)*scount, MC_F_TYPE(stype),   \
                             mc_f_buf(rbuf), (int)*rcount, MC_F_TYPE(rtype),   \
                             MC_F_COMM(comm)));                                \
    }
F_ALL(mpi_allgather_, MPI_Allgather)
F_ALL(mpi_alltoall_, MPI_Alltoall)
F_ALL(mpi_neighbor_allgather_, MPI_Neighbor_allgather)
F_ALL(mpi_neighbor_alltoall_, MPI_Neighbor_alltoall)

void mpi_gatherv_(void *sbuf, MPI_Fint *scount, MPI_Fint *stype, void *rbuf,
                  MPI_Fint *rcounts, MPI_Fint *displs, MPI_Fint *rtype,
                  MPI_Fint *root, MPI_Fint *comm, MPI_Fint *ierr)
{
    mc_f_set(ierr, MPI_Gatherv(mc_f_buf(sbuf), (int)*scount, MC_F_TYPE(stype),
                               mc_f_buf(rbuf), (int *)rcounts, (int *)displs,
                               MC_F_TYPE(rtype), (int)*root, MC_F_COMM(comm)));
}

void mpi_scatterv_(void *sbuf, MPI_Fint *scounts, MPI_Fint *displs,
                   MPI_Fint *stype, void *rbuf, MPI_Fint *rcount,
                   MPI_Fint *rtype, MPI_Fint *root, MPI_Fint *comm,
                   MPI_Fint *ierr)
{
    mc_f_set(ierr, MPI_Scatterv(mc_f_buf(sbuf), (int *)scounts, (int *)displs,
                                MC_F_TYPE(stype), mc_f_buf(rbuf), (int)*rcount,
                                MC_F_TYPE(rtype), (int)*root, MC_F_COMM(comm)));
}

void mpi_allgatherv_(void *sbuf, MPI_Fint *scount, MPI_Fint *stype, void *rbuf,
                     MPI_Fint *rcounts, MPI_Fint *displs, MPI_Fint *rtype,
                     MPI_Fint *comm, MPI_Fint *ierr)
{
    mc_f_set(ierr,
             MPI_Allgatherv(mc_f_buf(sbuf), (int)*scount, MC_F_TYPE(stype),
                            mc_f_buf(rbuf), (int *)rcounts, (int *)displs,
                            MC_F_TYPE(rtype), MC_F_COMM(comm)));
}

void mpi_alltoallv_(void *sbuf, MPI_Fint *scounts, MPI_Fint *sdispls,
                    MPI_Fint *stype, void *rbuf, MPI_Fint *rcounts,
                    MPI_Fint *rdispls, MPI_Fint *rtype, MPI_Fint *comm,
                    MPI_Fint *ierr)
{
    mc_f_set(ierr,
             MPI_Alltoallv(mc_f_buf(sbuf), (int *)scounts, (int *)sdispls,
                           MC_F_TYPE(stype), mc_f_buf(rbuf), (int *)rcounts,
                           (int *)rdispls, MC_F_TYPE(rtype), MC_F_COMM(comm)));
}

/* Nonblocking forms of the most used collectives (the others below). */
void mpi_ibarrier_(MPI_Fint *comm, MPI_Fint *req, MPI_Fint *ierr)
{
    MPI_Request r = MPI_REQUEST_NULL;
    mc_f_set(ierr, mc_f_req(MPI_Ibarrier(MC_F_COMM(comm), &r), &r, req));
}

void mpi_ibcast_(void *buf, MPI_Fint *count, MPI_Fint *dt, MPI_Fint *root,
                 MPI_Fint *comm, MPI_Fint *req, MPI_Fint *ierr)
{
    MPI_Request r = MPI_REQUEST_NULL;
    mc_f_set(ierr,
             mc_f_req(MPI_Ibcast(mc_f_buf(buf), (int)*count, MC_F_TYPE(dt),
                                 (int)*root, MC_F_COMM(comm), &r),
                      &r, req));
}

void mpi_neighbor_allgatherv_(void *sbuf, MPI_Fint *scount, MPI_Fint *stype,
                              void *rbuf, MPI_Fint *rcounts, MPI_Fint *displs,
                              MPI_Fint *rtype, MPI_Fint *comm, MPI_Fint *ierr)
{
    mc_f_set(ierr, MPI_Neighbor_allgatherv(mc_f_buf(sbuf), (int)*scount,
                                           MC_F_TYPE(stype), mc_f_buf(rbuf),
                                           (int *)rcounts, (int *)displs,
                                           MC_F_TYPE(rtype), MC_F_COMM(comm)));
}

void mpi_neighbor_alltoallv_(void *sbuf, MPI_Fint *scounts, MPI_Fint *sdispls,
                             MPI_Fint *stype, void *rbuf, MPI_Fint *rcounts,
                             MPI_Fint *rdispls, MPI_Fint *rtype, MPI_Fint *comm,
                             MPI_Fint *ierr)
{
    mc_f_set(ierr, MPI_Neighbor_alltoallv(
                       mc_f_buf(sbuf), (int *)scounts, (int *)sdispls,
                       MC_F_TYPE(stype), mc_f_buf(rbuf), (int *)rcounts,
                       (int *)rdispls, MC_F_TYPE(rtype), MC_F_COMM(comm)));
}

/* ---- datatype arrays: the w forms ------------------------------------------
 */

/* Send and receive blocks of an alltoallw on @c: the size of the group,
 * of the remote group for an intercommunicator (MPI-4.0 6.8). */
static int blocks_of(MPI_Comm c, int *nsend, int *nrecv)
{
    int inter = 0, n = 0;
    int rc = PMPI_Comm_test_inter(c, &inter);
    if (rc == MPI_SUCCESS)
        rc = inter ? PMPI_Comm_remote_size(c, &n) : PMPI_Comm_size(c, &n);
    *nsend = *nrecv = n;
    return rc;
}

/* Out- and in-degree of the process topology of @c (MPI-4.0 8.6: a
 * Cartesian topology has 2 ndims neighbours each way, a graph the
 * neighbours of the rank, a distributed graph its sources and
 * destinations). */
static int degrees_of(MPI_Comm c, int *nsend, int *nrecv)
{
    int kind = MPI_UNDEFINED, rc = PMPI_Topo_test(c, &kind);
    *nsend = *nrecv = 0;
    if (rc != MPI_SUCCESS)
        return rc;
    if (kind == MPI_CART) {
        int nd = 0;
        rc = PMPI_Cartdim_get(c, &nd);
        *nsend = *nrecv = 2 * nd;
    } else if (kind == MPI_GRAPH) {
        int me = 0, k = 0;
        rc = PMPI_Comm_rank(c, &me);
        if (rc == MPI_SUCCESS)
            rc = PMPI_Graph_neighbors_count(c, me, &k);
        *nsend = *nrecv = k;
    } else if (kind == MPI_DIST_GRAPH) {
        int weighted = 0;
        rc = PMPI_Dist_graph_neighbors_count(c, nrecv, nsend, &weighted);
    } else {
        rc = MPI_ERR_TOPOLOGY;
    }
    return rc;
}

/* The C datatype arrays of a w collective: @ns send and @nr receive types
 * (the send side is not read with MPI_IN_PLACE). */
static int w_types(void *sbuf, MPI_Fint *stypes, MPI_Fint *rtypes, int ns,
                   int nr, MPI_Datatype **st, MPI_Datatype **rt)
{
    *st = NULL;
    if (mc_f_buf(sbuf) != MPI_IN_PLACE &&
        !(*st = mc__tap_f_types(MC_TAP_SCRATCH_F_STYPES, stypes, ns)))
        return MPI_ERR_NO_MEM;
    if (!(*rt = mc__tap_f_types(MC_TAP_SCRATCH_F_RTYPES, rtypes, nr)))
        return MPI_ERR_NO_MEM;
    return MPI_SUCCESS;
}

void mpi_alltoallw_(void *sbuf, MPI_Fint *scounts, MPI_Fint *sdispls,
                    MPI_Fint *stypes, void *rbuf, MPI_Fint *rcounts,
                    MPI_Fint *rdispls, MPI_Fint *rtypes, MPI_Fint *comm,
                    MPI_Fint *ierr)
{
    const MPI_Comm c = MC_F_COMM(comm);
    MPI_Datatype *st, *rt;
    int ns = 0, nr = 0, rc = blocks_of(c, &ns, &nr);
    if (rc == MPI_SUCCESS)
        rc = w_types(sbuf, stypes, rtypes, ns, nr, &st, &rt);
    if (rc == MPI_SUCCESS)
        rc = MPI_Alltoallw(mc_f_buf(sbuf), (int *)scounts, (int *)sdispls, st,
                           mc_f_buf(rbuf), (int *)rcounts, (int *)rdispls, rt,
                           c);
    mc_f_set(ierr, rc);
}

void mpi_neighbor_alltoallw_(void *sbuf, MPI_Fint *scounts, MPI_Aint *sdispls,
                             MPI_Fint *stypes, void *rbuf, MPI_Fint *rcounts,
                             MPI_Aint *rdispls, MPI_Fint *rtypes,
                             MPI_Fint *comm, MPI_Fint *ierr)
{
    const MPI_Comm c = MC_F_COMM(comm);
    MPI_Datatype *st, *rt;
    int ns = 0, nr = 0, rc = degrees_of(c, &ns, &nr);
    if (rc == MPI_SUCCESS)
        rc = w_types(sbuf, stypes, rtypes, ns, nr, &st, &rt);
    if (rc == MPI_SUCCESS)
        rc = MPI_Neighbor_alltoallw(mc_f_buf(sbuf), (int *)scounts, sdispls, st,
                                    mc_f_buf(rbuf), (int *)rcounts, rdispls, rt,
                                    c);
    mc_f_set(ierr, rc);
}

/* ---- nonblocking collectives ------------------------------------------------
 * The C type arrays of the nonblocking w forms are reused at the thread's
 * next w call, while the standard lets the library read its arguments
 * until completion. Open MPI 4.1's own Fortran binding frees its converted
 * arrays as soon as the call returns (from memory), so the library takes
 * what it needs at the start, and reuse here is no worse. */

#define I_ALLRED(fname, cname)                                                 \
    void fname(void *sbuf, void *rbuf, MPI_Fint *count, MPI_Fint *dt,          \
               MPI_Fint *op, MPI_Fint *comm, MPI_Fint *req, MPI_Fint *ierr)    \
    {                                                                          \
        MPI_Request r = MPI_REQUEST_NULL;                                      \
        mc_f_set(ierr, mc_f_req(cname(mc_f_buf(sbuf), mc_f_buf(rbuf),          \
                                      (int)*count, MC_F_TYPE(dt), MC_F_OP(op), \
                                      MC_F_COMM(comm), &r),                    \
                                &r, req));                                     \
    }
I_ALLRED(mpi_iallreduce_, MPI_Iallreduce)
I_ALLRED(mpi_iscan_, MPI_Iscan)
I_ALLRED(mpi_iexscan_, MPI_Iexscan)
I_ALLRED(mpi_ireduce_scatter_block_, MPI_Ireduce_scatter_block)

void mpi_ireduce_(void *sbuf, void *rbuf, MPI_Fint *count, MPI_Fint *dt,
                  MPI_Fint *op, MPI_Fint *root, MPI_Fint *comm, MPI_Fint *req,
                  MPI_Fint *ierr)
{
    MPI_Request r = MPI_REQUEST_NULL;
    mc_f_set(ierr, mc_f_req(MPI_Ireduce(mc_f_buf(sbuf), mc_f_buf(rbuf),
                                        (int)*count, MC_F_TYPE(dt), MC_F_OP(op),
                                        (int)*root, MC_F_COMM(comm), &r),
                            &r, req));
}

void mpi_ireduce_scatter_(void *sbuf, void *rbuf, MPI_Fint *rcounts,
                          MPI_Fint *dt, MPI_Fint *op, MPI_Fint *comm,
                          MPI_Fint *req, MPI_Fint *ierr)
{
    MPI_Request r = MPI_REQUEST_NULL;
    mc_f_set(ierr,
             mc_f_req(MPI_Ireduce_scatter(mc_f_buf(sbuf), mc_f_buf(rbuf),
                                          (int *)rcounts, MC_F_TYPE(dt),
                                          MC_F_OP(op), MC_F_COMM(comm), &r),
                      &r, req));
}

#define I_ROOTED(fname, cname)                                                 \
    void fname(void *sbuf, MPI_Fint *scount, MPI_Fint *stype, void *rbuf,      \
               MPI_Fint *rcount, MPI_Fint *rtype, MPI_Fint *root,              \
               MPI_Fint *comm, MPI_Fint *req, MPI_Fint *ierr)                  \
    {                                                                          \
        MPI_Request r = MPI_REQUEST_NULL;                                      \
        mc_f_set(ierr, mc_f_req(cname(mc_f_buf(sbuf), (int)*scount,            \
                                      MC_F_TYPE(stype), mc_f_buf(rbuf),        \
                                      (int)*rcount, MC_F_TYPE(rtype),          \
                                      (int)*root, MC_F_COMM(comm), &r),        \
                                &r, req));                                     \
    }
I_ROOTED(mpi_igather_, MPI_Igather)
I_ROOTED(mpi_iscatter_, MPI_Iscatter)

#define I_ALL(fname, cname)                                                    \
    void fname(void *sbuf, MPI_Fint *scount, MPI_Fint *stype, void *rbuf,      \
               MPI_Fint *rcount, MPI_Fint *rtype, MPI_Fint *comm,              \
               MPI_Fint *req, MPI_Fint *ierr)                                  \
    {                                                                          \
        MPI_Request r = MPI_REQUEST_NULL;                                      \
        mc_f_set(ierr, mc_f_req(cname(mc_f_buf(sbuf), (int)*scount,            \
                                      MC_F_TYPE(stype), mc_f_buf(rbuf),        \
                                      (int)*rcount, MC_F_TYPE(rtype),          \
                                      MC_F_COMM(comm), &r),                    \
                                &r, req));                                     \
    }
I_ALL(mpi_iallgather_, MPI_Iallgather)
I_ALL(mpi_ialltoall_, MPI_Ialltoall)
I_ALL(mpi_ineighbor_allgather_, MPI_Ineighbor_allgather)
I_ALL(mpi_ineighbor_alltoall_, MPI_Ineighbor_alltoall)

void mpi_igatherv_(void *sbuf, MPI_Fint *scount, MPI_Fint *stype, void *rbuf,
                   MPI_Fint *rcounts, MPI_Fint *displs, MPI_Fint *rtype,
                   MPI_Fint *root, MPI_Fint *comm, MPI_Fint *req,
                   MPI_Fint *ierr)
{
    MPI_Request r = MPI_REQUEST_NULL;
    mc_f_set(ierr, mc_f_req(MPI_Igatherv(mc_f_buf(sbuf), (int)*scount,
                                         MC_F_TYPE(stype), mc_f_buf(rbuf),
                                         (int *)rcounts, (int *)displs,
                                         MC_F_TYPE(rtype), (int)*root,
                                         MC_F_COMM(comm), &r),
                            &r, req));
}

void mpi_iscatterv_(void *sbuf, MPI_Fint *scounts, MPI_Fint *displs,
                    MPI_Fint *stype, void *rbuf, MPI_Fint *rcount,
                    MPI_Fint *rtype, MPI_Fint *root, MPI_Fint *comm,
                    MPI_Fint *req, MPI_Fint *ierr)
{
    MPI_Request r = MPI_REQUEST_NULL;
    mc_f_set(ierr, mc_f_req(MPI_Iscatterv(mc_f_buf(sbuf), (int *)scounts,
                                          (int *)displs, MC_F_TYPE(stype),
                                          mc_f_buf(rbuf), (int)*rcount,
                                          MC_F_TYPE(rtype), (int)*root,
                                          MC_F_COMM(comm), &r),
                            &r, req));
}

#define I_ALLV(fname, cname)                                                   \
    void fname(void *sbuf, MPI_Fint *scount, MPI_Fint *stype, void *rbuf,      \
               MPI_Fint *rcounts, MPI_Fint *displs, MPI_Fint *rtype,           \
               MPI_Fint *comm, MPI_Fint *req, MPI_Fint *ierr)                  \
    {                                                                          \
        MPI_Request r = MPI_REQUEST_NULL;                                      \
        mc_f_set(ierr, mc_f_req(cname(mc_f_buf(sbuf), (int)*scount,            \
                                      MC_F_TYPE(stype), mc_f_buf(rbuf),        \
                                      (int *)rcounts, (int *)displs,           \
                                      MC_F_TYPE(rtype), MC_F_COMM(comm), &r),  \
                                &r, req));                                     \
    }
I_ALLV(mpi_iallgatherv_, MPI_Iallgatherv)
I_ALLV(mpi_ineighbor_allgatherv_, MPI_Ineighbor_allgatherv)

#define I_A2AV(fname, cname)                                                   \
    void fname(void *sbuf, MPI_Fint *scounts, MPI_Fint *sdispls,               \
               MPI_Fint *stype, void *rbuf, MPI_Fint *rcounts,                 \
               MPI_Fint *rdispls, MPI_Fint *rtype, MPI_Fint *comm,             \
               MPI_Fint *req, MPI_Fint *ierr)                                  \
    {                                                                          \
        MPI_Request r = MPI_REQUEST_NULL;                                      \
        mc_f_set(ierr, mc_f_req(cname(mc_f_buf(sbuf), (int *)scounts,          \
                                      (int *)sdispls, MC_F_TYPE(stype),        \
                                      mc_f_buf(rbuf), (int *)rcounts,          \
                                      (int *)rdispls, MC_F_TYPE(rtype),        \
                                      MC_F_COMM(comm), &r),                    \
                                &r, req));                                     \
    }
I_A2AV(mpi_ialltoallv_, MPI_Ialltoallv)
I_A2AV(mpi_ineighbor_alltoallv_, MPI_Ineighbor_alltoallv)

void mpi_ialltoallw_(void *sbuf, MPI_Fint *scounts, MPI_Fint *sdispls,
                     MPI_Fint *stypes, void *rbuf, MPI_Fint *rcounts,
                     MPI_Fint *rdispls, MPI_Fint *rtypes, MPI_Fint *comm,
                     MPI_Fint *req, MPI_Fint *ierr)
{
    const MPI_Comm c = MC_F_COMM(comm);
    MPI_Datatype *st, *rt;
    MPI_Request r = MPI_REQUEST_NULL;
    int ns = 0, nr = 0, rc = blocks_of(c, &ns, &nr);
    if (rc == MPI_SUCCESS)
        rc = w_types(sbuf, stypes, rtypes, ns, nr, &st, &rt);
    if (rc == MPI_SUCCESS)
        rc = mc_f_req(MPI_Ialltoallw(mc_f_buf(sbuf), (int *)scounts,
                                     (int *)sdispls, st, mc_f_buf(rbuf),
                                     (int *)rcounts, (int *)rdispls, rt, c, &r),
                      &r, req);
    mc_f_set(ierr, rc);
}

void mpi_ineighbor_alltoallw_(void *sbuf, MPI_Fint *scounts, MPI_Aint *sdispls,
                              MPI_Fint *stypes, void *rbuf, MPI_Fint *rcounts,
                              MPI_Aint *rdispls, MPI_Fint *rtypes,
                              MPI_Fint *comm, MPI_Fint *req, MPI_Fint *ierr)
{
    const MPI_Comm c = MC_F_COMM(comm);
    MPI_Datatype *st, *rt;
    MPI_Request r = MPI_REQUEST_NULL;
    int ns = 0, nr = 0, rc = degrees_of(c, &ns, &nr);
    if (rc == MPI_SUCCESS)
        rc = w_types(sbuf, stypes, rtypes, ns, nr, &st, &rt);
    if (rc == MPI_SUCCESS)
        rc = mc_f_req(MPI_Ineighbor_alltoallw(
                          mc_f_buf(sbuf), (int *)scounts, sdispls, st,
                          mc_f_buf(rbuf), (int *)rcounts, rdispls, rt, c, &r),
                      &r, req);
    mc_f_set(ierr, rc);
}

#endif /* MC_TAP_FORTRAN */
