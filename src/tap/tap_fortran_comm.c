/* tap_fortran_comm.c - Fortran entry points of communicator and topology
 * constructors (through the tap's wrappers, so that a communicator a Fortran
 * program makes gets its id the same way as one a C program makes) and of
 * one-sided communication. See tap_fortran.c for how and why. */
#include "tap_fortran.h"

#if defined(MC_TAP_FORTRAN)

#include <stdlib.h> /* malloc, free */

/* ---- communicators ------------------------------------------------------- */

void mpi_comm_dup_(MPI_Fint *comm, MPI_Fint *newcomm, MPI_Fint *ierr)
{
    MPI_Comm nc = MPI_COMM_NULL;
    mc_f_set(ierr,
             mc_f_newcomm(MPI_Comm_dup(MC_F_COMM(comm), &nc), &nc, newcomm));
}

void mpi_comm_split_(MPI_Fint *comm, MPI_Fint *color, MPI_Fint *key,
                     MPI_Fint *newcomm, MPI_Fint *ierr)
{
    MPI_Comm nc = MPI_COMM_NULL;
    mc_f_set(ierr, mc_f_newcomm(MPI_Comm_split(MC_F_COMM(comm), (int)*color,
                                               (int)*key, &nc),
                                &nc, newcomm));
}

void mpi_comm_create_(MPI_Fint *comm, MPI_Fint *group, MPI_Fint *newcomm,
                      MPI_Fint *ierr)
{
    MPI_Comm nc = MPI_COMM_NULL;
    mc_f_set(ierr, mc_f_newcomm(MPI_Comm_create(MC_F_COMM(comm),
                                                PMPI_Group_f2c(*group), &nc),
                                &nc, newcomm));
}

/* Fortran LOGICALs @f[0..n) as C ints: gfortran's .TRUE. is 1, .FALSE. 0,
 * and any nonzero value is taken as true, as Open MPI's binding does. In
 * @small when n <= 16, else in memory the caller frees (the result !=
 * small); NULL when out of memory. */
static int *f_logicals(const MPI_Fint *f, int n, int small[16])
{
    int *c = n <= 16 ? small : malloc((size_t)n * sizeof *c);
    if (c)
        for (int i = 0; i < n; i++)
            c[i] = f[i] != 0;
    return c;
}

void mpi_cart_create_(MPI_Fint *comm, MPI_Fint *ndims, MPI_Fint *dims,
                      MPI_Fint *periods, MPI_Fint *reorder, MPI_Fint *newcomm,
                      MPI_Fint *ierr)
{
    const int n = (int)*ndims;
    int small[16], *per = f_logicals(periods, n, small);
    if (!per) {
        mc_f_set(ierr, MPI_ERR_NO_MEM);
        return;
    }
    MPI_Comm nc = MPI_COMM_NULL;
    const int rc = MPI_Cart_create(MC_F_COMM(comm), n, (int *)dims, per,
                                   *reorder != 0, &nc);
    if (per != small)
        free(per);
    mc_f_set(ierr, mc_f_newcomm(rc, &nc, newcomm));
}

void mpi_cart_sub_(MPI_Fint *comm, MPI_Fint *remain, MPI_Fint *newcomm,
                   MPI_Fint *ierr)
{
    int ndims = 0;
    int rc = PMPI_Cartdim_get(MC_F_COMM(comm), &ndims);
    if (rc != MPI_SUCCESS) {
        mc_f_set(ierr, rc);
        return;
    }
    int small[16], *rem = f_logicals(remain, ndims, small);
    if (!rem) {
        mc_f_set(ierr, MPI_ERR_NO_MEM);
        return;
    }
    MPI_Comm nc = MPI_COMM_NULL;
    rc = MPI_Cart_sub(MC_F_COMM(comm), rem, &nc);
    if (rem != small)
        free(rem);
    mc_f_set(ierr, mc_f_newcomm(rc, &nc, newcomm));
}

void mpi_comm_dup_with_info_(MPI_Fint *comm, MPI_Fint *info, MPI_Fint *newcomm,
                             MPI_Fint *ierr)
{
    MPI_Comm nc = MPI_COMM_NULL;
    mc_f_set(ierr, mc_f_newcomm(MPI_Comm_dup_with_info(MC_F_COMM(comm),
                                                       MC_F_INFO(info), &nc),
                                &nc, newcomm));
}

void mpi_comm_split_type_(MPI_Fint *comm, MPI_Fint *type, MPI_Fint *key,
                          MPI_Fint *info, MPI_Fint *newcomm, MPI_Fint *ierr)
{
    MPI_Comm nc = MPI_COMM_NULL;
    mc_f_set(ierr,
             mc_f_newcomm(MPI_Comm_split_type(MC_F_COMM(comm), (int)*type,
                                              (int)*key, MC_F_INFO(info), &nc),
                          &nc, newcomm));
}

void mpi_comm_create_group_(MPI_Fint *comm, MPI_Fint *group, MPI_Fint *tag,
                            MPI_Fint *newcomm, MPI_Fint *ierr)
{
    MPI_Comm nc = MPI_COMM_NULL;
    mc_f_set(ierr, mc_f_newcomm(MPI_Comm_create_group(MC_F_COMM(comm),
                                                      PMPI_Group_f2c(*group),
                                                      (int)*tag, &nc),
                                &nc, newcomm));
}

void mpi_intercomm_create_(MPI_Fint *local, MPI_Fint *local_leader,
                           MPI_Fint *peer, MPI_Fint *remote_leader,
                           MPI_Fint *tag, MPI_Fint *newcomm, MPI_Fint *ierr)
{
    MPI_Comm nc = MPI_COMM_NULL;
    mc_f_set(ierr, mc_f_newcomm(MPI_Intercomm_create(
                                    MC_F_COMM(local), (int)*local_leader,
                                    MC_F_COMM(peer), (int)*remote_leader,
                                    (int)*tag, &nc),
                                &nc, newcomm));
}

void mpi_intercomm_merge_(MPI_Fint *inter, MPI_Fint *high, MPI_Fint *newcomm,
                          MPI_Fint *ierr)
{
    MPI_Comm nc = MPI_COMM_NULL;
    mc_f_set(ierr, mc_f_newcomm(
                       MPI_Intercomm_merge(MC_F_COMM(inter), *high != 0, &nc),
                       &nc, newcomm));
}

void mpi_graph_create_(MPI_Fint *comm, MPI_Fint *nnodes, MPI_Fint *index,
                       MPI_Fint *edges, MPI_Fint *reorder, MPI_Fint *newcomm,
                       MPI_Fint *ierr)
{
    MPI_Comm nc = MPI_COMM_NULL;
    mc_f_set(ierr, mc_f_newcomm(MPI_Graph_create(MC_F_COMM(comm), (int)*nnodes,
                                                 (int *)index, (int *)edges,
                                                 *reorder != 0, &nc),
                                &nc, newcomm));
}

void mpi_dist_graph_create_(MPI_Fint *comm, MPI_Fint *n, MPI_Fint *sources,
                            MPI_Fint *degrees, MPI_Fint *dests,
                            MPI_Fint *weights, MPI_Fint *info,
                            MPI_Fint *reorder, MPI_Fint *newcomm,
                            MPI_Fint *ierr)
{
    MPI_Comm nc = MPI_COMM_NULL;
    mc_f_set(ierr, mc_f_newcomm(MPI_Dist_graph_create(
                                    MC_F_COMM(comm), (int)*n, (int *)sources,
                                    (int *)degrees, (int *)dests,
                                    mc_f_weights(weights), MC_F_INFO(info),
                                    *reorder != 0, &nc),
                                &nc, newcomm));
}

void mpi_dist_graph_create_adjacent_(MPI_Fint *comm, MPI_Fint *indegree,
                                     MPI_Fint *sources, MPI_Fint *sweights,
                                     MPI_Fint *outdegree, MPI_Fint *dests,
                                     MPI_Fint *dweights, MPI_Fint *info,
                                     MPI_Fint *reorder, MPI_Fint *newcomm,
                                     MPI_Fint *ierr)
{
    MPI_Comm nc = MPI_COMM_NULL;
    mc_f_set(ierr,
             mc_f_newcomm(MPI_Dist_graph_create_adjacent(
                              MC_F_COMM(comm), (int)*indegree, (int *)sources,
                              mc_f_weights(sweights), (int)*outdegree,
                              (int *)dests, mc_f_weights(dweights),
                              MC_F_INFO(info), *reorder != 0, &nc),
                          &nc, newcomm));
}

/* ---- one-sided: windows
 * ------------------------------------------------------ Through the tap's
 * wrappers, which tie each window to its communicator. */

/* Store a new window *@w, as mc_f_req(). */
static int f_newwin(int rc, const MPI_Win *w, MPI_Fint *win)
{
    if (rc == MPI_SUCCESS)
        *win = PMPI_Win_c2f(*w);
    return rc;
}

void mpi_win_create_(void *base, MPI_Aint *size, MPI_Fint *disp_unit,
                     MPI_Fint *info, MPI_Fint *comm, MPI_Fint *win,
                     MPI_Fint *ierr)
{
    MPI_Win w = MPI_WIN_NULL;
    mc_f_set(ierr,
             f_newwin(MPI_Win_create(base, *size, (int)*disp_unit,
                                     MC_F_INFO(info), MC_F_COMM(comm), &w),
                      &w, win));
}

/* @baseptr is an INTEGER(KIND=MPI_ADDRESS_KIND): the C call stores the
 * window's address in it, as Open MPI's binding does. */
void mpi_win_allocate_(MPI_Aint *size, MPI_Fint *disp_unit, MPI_Fint *info,
                       MPI_Fint *comm, void *baseptr, MPI_Fint *win,
                       MPI_Fint *ierr)
{
    MPI_Win w = MPI_WIN_NULL;
    mc_f_set(ierr,
             f_newwin(MPI_Win_allocate(*size, (int)*disp_unit, MC_F_INFO(info),
                                       MC_F_COMM(comm), baseptr, &w),
                      &w, win));
}

void mpi_win_allocate_shared_(MPI_Aint *size, MPI_Fint *disp_unit,
                              MPI_Fint *info, MPI_Fint *comm, void *baseptr,
                              MPI_Fint *win, MPI_Fint *ierr)
{
    MPI_Win w = MPI_WIN_NULL;
    mc_f_set(ierr, f_newwin(MPI_Win_allocate_shared(
                                *size, (int)*disp_unit, MC_F_INFO(info),
                                MC_F_COMM(comm), baseptr, &w),
                            &w, win));
}

void mpi_win_create_dynamic_(MPI_Fint *info, MPI_Fint *comm, MPI_Fint *win,
                             MPI_Fint *ierr)
{
    MPI_Win w = MPI_WIN_NULL;
    mc_f_set(ierr, f_newwin(MPI_Win_create_dynamic(MC_F_INFO(info),
                                                   MC_F_COMM(comm), &w),
                            &w, win));
}

/* ---- one-sided: communication ----------------------------------------------
 */

#define F_PUTGET(fname, cname)                                                 \
    void fname(void *oaddr, MPI_Fint *ocount, MPI_Fint *otype,                 \
               MPI_Fint *target, MPI_Aint *tdisp, MPI_Fint *tcount,            \
               MPI_Fint *ttype, MPI_Fint *win, MPI_Fint *ierr)                 \
    {                                                                          \
        mc_f_set(ierr, cname(mc_f_buf(oaddr), (int)*ocount, MC_F_TYPE(otype),  \
                             (int)*target, *tdisp, (int)*tcount,               \
                             MC_F_TYPE(ttype), MC_F_WIN(win)));                \
    }
F_PUTGET(mpi_put_, MPI_Put)
F_PUTGET(mpi_get_, MPI_Get)

#define F_RPUTGET(fname, cname)                                                \
    void fname(void *oaddr, MPI_Fint *ocount, MPI_Fint *otype,                 \
               MPI_Fint *target, MPI_Aint *tdisp, MPI_Fint *tcount,            \
               MPI_Fint *ttype, MPI_Fint *win, MPI_Fint *req, MPI_Fint *ierr)  \
    {                                                                          \
        MPI_Request r = MPI_REQUEST_NULL;                                      \
        mc_f_set(ierr, mc_f_req(cname(mc_f_buf(oaddr), (int)*ocount,           \
                                      MC_F_TYPE(otype), (int)*target, *tdisp,  \
                                      (int)*tcount, MC_F_TYPE(ttype),          \
                                      MC_F_WIN(win), &r),                      \
                                &r, req));                                     \
    }
F_RPUTGET(mpi_rput_, MPI_Rput)
F_RPUTGET(mpi_rget_, MPI_Rget)

void mpi_accumulate_(void *oaddr, MPI_Fint *ocount, MPI_Fint *otype,
                     MPI_Fint *target, MPI_Aint *tdisp, MPI_Fint *tcount,
                     MPI_Fint *ttype, MPI_Fint *op, MPI_Fint *win,
                     MPI_Fint *ierr)
{
    mc_f_set(ierr,
             MPI_Accumulate(mc_f_buf(oaddr), (int)*ocount, MC_F_TYPE(otype),
                            (int)*target, *tdisp, (int)*tcount,
                            MC_F_TYPE(ttype), MC_F_OP(op), MC_F_WIN(win)));
}

void mpi_raccumulate_(void *oaddr, MPI_Fint *ocount, MPI_Fint *otype,
                      MPI_Fint *target, MPI_Aint *tdisp, MPI_Fint *tcount,
                      MPI_Fint *ttype, MPI_Fint *op, MPI_Fint *win,
                      MPI_Fint *req, MPI_Fint *ierr)
{
    MPI_Request r = MPI_REQUEST_NULL;
    mc_f_set(ierr,
             mc_f_req(MPI_Raccumulate(mc_f_buf(oaddr), (int)*ocount,
                                      MC_F_TYPE(otype), (int)*target, *tdisp,
                                      (int)*tcount, MC_F_TYPE(ttype),
                                      MC_F_OP(op), MC_F_WIN(win), &r),
                      &r, req));
}

void mpi_get_accumulate_(void *oaddr, MPI_Fint *ocount, MPI_Fint *otype,
                         void *raddr, MPI_Fint *rcount, MPI_Fint *rtype,
                         MPI_Fint *target, MPI_Aint *tdisp, MPI_Fint *tcount,
                         MPI_Fint *ttype, MPI_Fint *op, MPI_Fint *win,
                         MPI_Fint *ierr)
{
    mc_f_set(ierr,
             MPI_Get_accumulate(mc_f_buf(oaddr), (int)*ocount, MC_F_TYPE(otype),
                                mc_f_buf(raddr), (int)*rcount, MC_F_TYPE(rtype),
                                (int)*target, *tdisp, (int)*tcount,
                                MC_F_TYPE(ttype), MC_F_OP(op), MC_F_WIN(win)));
}

void mpi_rget_accumulate_(void *oaddr, MPI_Fint *ocount, MPI_Fint *otype,
                          void *raddr, MPI_Fint *rcount, MPI_Fint *rtype,
                          MPI_Fint *target, MPI_Aint *tdisp, MPI_Fint *tcount,
                          MPI_Fint *ttype, MPI_Fint *op, MPI_Fint *win,
                          MPI_Fint *req, MPI_Fint *ierr)
{
    MPI_Request r = MPI_REQUEST_NULL;
    mc_f_set(ierr,
             mc_f_req(MPI_Rget_accumulate(
                          mc_f_buf(oaddr), (int)*ocount, MC_F_TYPE(otype),
                          mc_f_buf(raddr), (int)*rcount, MC_F_TYPE(rtype),
                          (int)*target, *tdisp, (int)*tcount, MC_F_TYPE(ttype),
                          MC_F_OP(op), MC_F_WIN(win), &r),
                      &r, req));
}

void mpi_fetch_and_op_(void *oaddr, void *raddr, MPI_Fint *dt, MPI_Fint *target,
                       MPI_Aint *tdisp, MPI_Fint *op, MPI_Fint *win,
                       MPI_Fint *ierr)
{
    mc_f_set(ierr, MPI_Fetch_and_op(mc_f_buf(oaddr), mc_f_buf(raddr),
                                    MC_F_TYPE(dt), (int)*target, *tdisp,
                                    MC_F_OP(op), MC_F_WIN(win)));
}

void mpi_compare_and_swap_(void *oaddr, void *caddr, void *raddr, MPI_Fint *dt,
                           MPI_Fint *target, MPI_Aint *tdisp, MPI_Fint *win,
                           MPI_Fint *ierr)
{
    mc_f_set(ierr, MPI_Compare_and_swap(oaddr, caddr, raddr, MC_F_TYPE(dt),
                                        (int)*target, *tdisp, MC_F_WIN(win)));
}

#endif /* MC_TAP_FORTRAN */
