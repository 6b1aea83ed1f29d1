/* tap_neighbor.c - neighbourhood collective wrappers: a call record and one
 * per-peer record per destination. */
#include "tap.h"

#if defined(OPEN_MPI) && OPEN_MPI
#include <mpi-ext.h> /* MPIX_Neighbor_*_init of Open MPI 4.1 */
#endif

/* The destinations of the process topology of @c, in the order the
 * neighbourhood collectives use for send blocks (MPI-4.0 section 8.6, from
 * memory): Cartesian, per dimension the -1 then the +1 neighbour;
 * graph, MPI_Graph_neighbors; distributed graph, the destinations of
 * MPI_Dist_graph_neighbors. Entries may be MPI_PROC_NULL (Cartesian edges).
 * @return the count, or -1 when @c has no topology or memory ran out. */
static int destinations(MPI_Comm c, int **out)
{
    int topo = MPI_UNDEFINED, n = 0;
    PMPI_Topo_test(c, &topo);
    if (topo == MPI_CART) {
        int nd = 0;
        PMPI_Cartdim_get(c, &nd);
        int *d = mc__tap_scratch(MC_TAP_SCRATCH_TOPO,
                                 (size_t)(2 * nd + 1) * sizeof *d);
        if (!d)
            return -1;
        for (int i = 0; i < nd; i++)
            PMPI_Cart_shift(c, i, 1, &d[2 * i], &d[2 * i + 1]);
        *out = d;
        return 2 * nd;
    }
    if (topo == MPI_GRAPH) {
        int rank = 0;
        PMPI_Comm_rank(c, &rank);
        PMPI_Graph_neighbors_count(c, rank, &n);
        int *d =
            mc__tap_scratch(MC_TAP_SCRATCH_TOPO, (size_t)(n + 1) * sizeof *d);
        if (!d)
            return -1;
        PMPI_Graph_neighbors(c, rank, n, d);
        *out = d;
        return n;
    }
    if (topo == MPI_DIST_GRAPH) {
        int indeg = 0, outdeg = 0, weighted = 0;
        PMPI_Dist_graph_neighbors_count(c, &indeg, &outdeg, &weighted);
        /* sources, their weights, destinations, their weights */
        const size_t total = (size_t)(2 * indeg + 2 * outdeg + 4);
        int *d = mc__tap_scratch(MC_TAP_SCRATCH_TOPO, total * sizeof *d);
        if (!d)
            return -1;
        int *src = d, *sw = d + indeg + 1;
        int *dst = sw + indeg + 1, *dw = dst + outdeg + 1;
        PMPI_Dist_graph_neighbors(c, indeg, src, sw, outdeg, dst, dw);
        *out = dst;
        return outdeg;
    }
    return -1;
}

/* Sizes of the block sent to the j-th destination. */
typedef struct blocks {
    int count;                 /* same count for every destination ... */
    MPI_Datatype type;         /* ... of this type (allgather, alltoall) */
    const int *counts;         /* or per destination (alltoallv/w) */
    const MPI_Datatype *types; /* per destination (alltoallw) */
} blocks;

static uint64_t block_bytes(const blocks *b, int j)
{
    const int count = b->counts ? b->counts[j] : b->count;
    return mc__tap_bytes(count, b->types ? b->types[j] : b->type);
}

/* Total bytes sent to real destinations; with @emit, the call record and
 * one MC_RF_PER_PEER send record per destination with a nonzero block. */
static uint64_t neighbor_record(unsigned op, MPI_Comm c, const blocks *b,
                                int emit, uint64_t t0, uint64_t t1)
{
    int *dst = NULL;
    const int n = destinations(c, &dst);
    uint64_t total = 0;
    for (int j = 0; j < n; j++)
        if (dst[j] != MPI_PROC_NULL)
            total += block_bytes(b, j);
    if (!emit)
        return total;
    mc__tap_coll_record(op, c, total, 0, t0, t1);
    mc__tap_lock();
    const mc__tap_comm *ci = mc__tap_comm_get_locked(c);
    for (int j = 0; ci && j < n; j++) {
        const uint64_t bytes = dst[j] == MPI_PROC_NULL ? 0 : block_bytes(b, j);
        if (bytes == 0)
            continue;
        mc_record r = mc__tap_record(op, MC_DIR_SEND, ci, t0, t1);
        r.bytes = bytes;
        r.peer = mc__tap_world_of(ci, dst[j]);
        r.flags = MC_RF_PER_PEER;
        mc__tap_emit_locked(&r);
    }
    mc__tap_unlock();
    return total;
}

#define NB_WRAP(op, call, comm, ...)                                           \
    if (!mc__tap_enter())                                                      \
        return call;                                                           \
    const uint64_t t0 = mc__tap_now();                                         \
    const int rc = call;                                                       \
    const uint64_t t1 = mc__tap_now();                                         \
    if (rc == MPI_SUCCESS) {                                                   \
        const blocks b = {__VA_ARGS__};                                        \
        neighbor_record(op, comm, &b, 1, t0, t1);                              \
    }                                                                          \
    mc__tap_leave();                                                           \
    return rc

#define NB_PWRAP(op, call, comm, req, ...)                                     \
    if (!mc__tap_enter())                                                      \
        return call;                                                           \
    const int rc = call;                                                       \
    if (rc == MPI_SUCCESS) {                                                   \
        const blocks b = {__VA_ARGS__};                                        \
        mc__tap_pcoll_register(                                                \
            op, comm, neighbor_record(op, comm, &b, 0, 0, 0), 0, *(req));      \
    }                                                                          \
    mc__tap_leave();                                                           \
    return rc

int MPI_Neighbor_allgather(const void *sbuf, int scount, MPI_Datatype stype,
                           void *rbuf, int rcount, MPI_Datatype rtype,
                           MPI_Comm comm)
{
    NB_WRAP(
        MC_OP_Neighbor_allgather,
        PMPI_Neighbor_allgather(sbuf, scount, stype, rbuf, rcount, rtype, comm),
        comm, scount, stype, NULL, NULL);
}

int MPI_Neighbor_allgatherv(const void *sbuf, int scount, MPI_Datatype stype,
                            void *rbuf, const int rcounts[], const int displs[],
                            MPI_Datatype rtype, MPI_Comm comm)
{
    NB_WRAP(MC_OP_Neighbor_allgatherv,
            PMPI_Neighbor_allgatherv(sbuf, scount, stype, rbuf, rcounts, displs,
                                     rtype, comm),
            comm, scount, stype, NULL, NULL);
}

int MPI_Neighbor_alltoall(const void *sbuf, int scount, MPI_Datatype stype,
                          void *rbuf, int rcount, MPI_Datatype rtype,
                          MPI_Comm comm)
{
    NB_WRAP(
        MC_OP_Neighbor_alltoall,
        PMPI_Neighbor_alltoall(sbuf, scount, stype, rbuf, rcount, rtype, comm),
        comm, scount, stype, NULL, NULL);
}

int MPI_Neighbor_alltoallv(const void *sbuf, const int scounts[],
                           const int sdispls[], MPI_Datatype stype, void *rbuf,
                           const int rcounts[], const int rdispls[],
                           MPI_Datatype rtype, MPI_Comm comm)
{
    NB_WRAP(MC_OP_Neighbor_alltoallv,
            PMPI_Neighbor_alltoallv(sbuf, scounts, sdispls, stype, rbuf,
                                    rcounts, rdispls, rtype, comm),
            comm, 0, stype, scounts, NULL);
}

int MPI_Neighbor_alltoallw(const void *sbuf, const int scounts[],
                           const MPI_Aint sdispls[],
                           const MPI_Datatype stypes[], void *rbuf,
                           const int rcounts[], const MPI_Aint rdispls[],
                           const MPI_Datatype rtypes[], MPI_Comm comm)
{
    NB_WRAP(MC_OP_Neighbor_alltoallw,
            PMPI_Neighbor_alltoallw(sbuf, scounts, sdispls, stypes, rbuf,
                                    rcounts, rdispls, rtypes, comm),
            comm, 0, MPI_DATATYPE_NULL, scounts, stypes);
}

int MPI_Ineighbor_allgather(const void *sbuf, int scount, MPI_Datatype stype,
                            void *rbuf, int rcount, MPI_Datatype rtype,
                            MPI_Comm comm, MPI_Request *req)
{
    NB_WRAP(MC_OP_Ineighbor_allgather,
            PMPI_Ineighbor_allgather(sbuf, scount, stype, rbuf, rcount, rtype,
                                     comm, req),
            comm, scount, stype, NULL, NULL);
}

int MPI_Ineighbor_allgatherv(const void *sbuf, int scount, MPI_Datatype stype,
                             void *rbuf, const int rcounts[],
                             const int displs[], MPI_Datatype rtype,
                             MPI_Comm comm, MPI_Request *req)
{
    NB_WRAP(MC_OP_Ineighbor_allgatherv,
            PMPI_Ineighbor_allgatherv(sbuf, scount, stype, rbuf, rcounts,
                                      displs, rtype, comm, req),
            comm, scount, stype, NULL, NULL);
}

int MPI_Ineighbor_alltoall(const void *sbuf, int scount, MPI_Datatype stype,
                           void *rbuf, int rcount, MPI_Datatype rtype,
                           MPI_Comm comm, MPI_Request *req)
{
    NB_WRAP(MC_OP_Ineighbor_alltoall,
            PMPI_Ineighbor_alltoall(sbuf, scount, stype, rbuf, rcount, rtype,
                                    comm, req),
            comm, scount, stype, NULL, NULL);
}

int MPI_Ineighbor_alltoallv(const void *sbuf, const int scounts[],
                            const int sdispls[], MPI_Datatype stype, void *rbuf,
                            const int rcounts[], const int rdispls[],
                            MPI_Datatype rtype, MPI_Comm comm, MPI_Request *req)
{
    NB_WRAP(MC_OP_Ineighbor_alltoallv,
            PMPI_Ineighbor_alltoallv(sbuf, scounts, sdispls, stype, rbuf,
                                     rcounts, rdispls, rtype, comm, req),
            comm, 0, stype, scounts, NULL);
}

int MPI_Ineighbor_alltoallw(const void *sbuf, const int scounts[],
                            const MPI_Aint sdispls[],
                            const MPI_Datatype stypes[], void *rbuf,
                            const int rcounts[], const MPI_Aint rdispls[],
                            const MPI_Datatype rtypes[], MPI_Comm comm,
                            MPI_Request *req)
{
    NB_WRAP(MC_OP_Ineighbor_alltoallw,
            PMPI_Ineighbor_alltoallw(sbuf, scounts, sdispls, stypes, rbuf,
                                     rcounts, rdispls, rtypes, comm, req),
            comm, 0, MPI_DATATYPE_NULL, scounts, stypes);
}

#if defined(OMPI_HAVE_MPI_EXT_PCOLLREQ) && OMPI_HAVE_MPI_EXT_PCOLLREQ

int MPIX_Neighbor_allgather_init(const void *sbuf, int scount,
                                 MPI_Datatype stype, void *rbuf, int rcount,
                                 MPI_Datatype rtype, MPI_Comm comm,
                                 MPI_Info info, MPI_Request *req)
{
    NB_PWRAP(MC_OP_Neighbor_allgather_init,
             PMPIX_Neighbor_allgather_init(sbuf, scount, stype, rbuf, rcount,
                                           rtype, comm, info, req),
             comm, req, scount, stype, NULL, NULL);
}

int MPIX_Neighbor_allgatherv_init(const void *sbuf, int scount,
                                  MPI_Datatype stype, void *rbuf,
                                  const int rcounts[], const int displs[],
                                  MPI_Datatype rtype, MPI_Comm comm,
                                  MPI_Info info, MPI_Request *req)
{
    NB_PWRAP(MC_OP_Neighbor_allgatherv_init,
             PMPIX_Neighbor_allgatherv_init(sbuf, scount, stype, rbuf, rcounts,
                                            displs, rtype, comm, info, req),
             comm, req, scount, stype, NULL, NULL);
}

int MPIX_Neighbor_alltoall_init(const void *sbuf, int scount,
                                MPI_Datatype stype, void *rbuf, int rcount,
                                MPI_Datatype rtype, MPI_Comm comm,
                                MPI_Info info, MPI_Request *req)
{
    NB_PWRAP(MC_OP_Neighbor_alltoall_init,
             PMPIX_Neighbor_alltoall_init(sbuf, scount, stype, rbuf, rcount,
                                          rtype, comm, info, req),
             comm, req, scount, stype, NULL, NULL);
}

int MPIX_Neighbor_alltoallv_init(const void *sbuf, const int scounts[],
                                 const int sdispls[], MPI_Datatype stype,
                                 void *rbuf, const int rcounts[],
                                 const int rdispls[], MPI_Datatype rtype,
                                 MPI_Comm comm, MPI_Info info, MPI_Request *req)
{
    NB_PWRAP(MC_OP_Neighbor_alltoallv_init,
             PMPIX_Neighbor_alltoallv_init(sbuf, scounts, sdispls, stype, rbuf,
                                           rcounts, rdispls, rtype, comm, info,
                                           req),
             comm, req, 0, stype, scounts, NULL);
}

int MPIX_Neighbor_alltoallw_init(const void *sbuf, const int scounts[],
                                 const MPI_Aint sdispls[],
                                 const MPI_Datatype stypes[], void *rbuf,
                                 const int rcounts[], const MPI_Aint rdispls[],
                                 const MPI_Datatype rtypes[], MPI_Comm comm,
                                 MPI_Info info, MPI_Request *req)
{
    NB_PWRAP(MC_OP_Neighbor_alltoallw_init,
             PMPIX_Neighbor_alltoallw_init(sbuf, scounts, sdispls, stypes, rbuf,
                                           rcounts, rdispls, rtypes, comm, info,
                                           req),
             comm, req, 0, MPI_DATATYPE_NULL, scounts, stypes);
}

#endif /* OMPI_HAVE_MPI_EXT_PCOLLREQ */
