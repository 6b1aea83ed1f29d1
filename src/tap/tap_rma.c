/* tap_rma.c - one-sided wrappers: window creation, put/get/accumulate families,
 * atomics. */
#include "tap.h"

/* ---- windows: remember the group's world ranks ------------------------- */

int MPI_Win_create(void *base, MPI_Aint size, int disp_unit, MPI_Info info,
                   MPI_Comm comm, MPI_Win *win)
{
    if (!mc__tap_enter())
        return PMPI_Win_create(base, size, disp_unit, info, comm, win);
    const int rc = PMPI_Win_create(base, size, disp_unit, info, comm, win);
    if (rc == MPI_SUCCESS)
        mc__tap_win_attach(*win, comm);
    mc__tap_leave();
    return rc;
}

int MPI_Win_allocate(MPI_Aint size, int disp_unit, MPI_Info info, MPI_Comm comm,
                     void *baseptr, MPI_Win *win)
{
    if (!mc__tap_enter())
        return PMPI_Win_allocate(size, disp_unit, info, comm, baseptr, win);
    const int rc = PMPI_Win_allocate(size, disp_unit, info, comm, baseptr, win);
    if (rc == MPI_SUCCESS)
        mc__tap_win_attach(*win, comm);
    mc__tap_leave();
    return rc;
}

int MPI_Win_allocate_shared(MPI_Aint size, int disp_unit, MPI_Info info,
                            MPI_Comm comm, void *baseptr, MPI_Win *win)
{
    if (!mc__tap_enter())
        return PMPI_Win_allocate_shared(size, disp_unit, info, comm, baseptr,
                                        win);
    const int rc =
        PMPI_Win_allocate_shared(size, disp_unit, info, comm, baseptr, win);
    if (rc == MPI_SUCCESS)
        mc__tap_win_attach(*win, comm);
    mc__tap_leave();
    return rc;
}

int MPI_Win_create_dynamic(MPI_Info info, MPI_Comm comm, MPI_Win *win)
{
    if (!mc__tap_enter())
        return PMPI_Win_create_dynamic(info, comm, win);
    const int rc = PMPI_Win_create_dynamic(info, comm, win);
    if (rc == MPI_SUCCESS)
        mc__tap_win_attach(*win, comm);
    mc__tap_leave();
    return rc;
}

/* ---- records ------------------------------------------------------------ */

/* Send-side bytes @sbytes (origin to target) and, when @want_recv,
 * receive-side bytes @rbytes (target to origin), as separate records. */
static void rma_record(unsigned op, MPI_Win win, int target, uint64_t sbytes,
                       int want_send, uint64_t rbytes, int want_recv,
                       uint64_t t0, uint64_t t1)
{
    if (target == MPI_PROC_NULL)
        return; /* no data moves (MPI-4.0 12.3, from memory) */
    mc__tap_lock();
    const mc__tap_comm *ci = mc__tap_win_get_locked(win);
    if (ci) {
        mc_record r = mc__tap_record(op, MC_DIR_SEND, ci, t0, t1);
        r.peer = mc__tap_world_of(ci, target);
        if (want_send) {
            r.bytes = sbytes;
            r.dir = MC_DIR_SEND;
            mc__tap_emit_locked(&r);
        }
        if (want_recv) {
            r.bytes = rbytes;
            r.dir = MC_DIR_RECV;
            mc__tap_emit_locked(&r);
        }
    }
    mc__tap_unlock();
}

#define RMA_WRAP(op, call, win, target, sb, ws, rb, wr)                        \
    if (!mc__tap_enter())                                                      \
        return call;                                                           \
    const uint64_t t0 = mc__tap_now();                                         \
    const int rc = call;                                                       \
    const uint64_t t1 = mc__tap_now();                                         \
    if (rc == MPI_SUCCESS)                                                     \
        rma_record(op, win, target, sb, ws, rb, wr, t0, t1);                   \
    mc__tap_leave();                                                           \
    return rc

int MPI_Put(const void *oaddr, int ocount, MPI_Datatype otype, int target,
            MPI_Aint tdisp, int tcount, MPI_Datatype ttype, MPI_Win win)
{
    RMA_WRAP(MC_OP_Put,
             PMPI_Put(oaddr, ocount, otype, target, tdisp, tcount, ttype, win),
             win, target, mc__tap_bytes(ocount, otype), 1, 0, 0);
}

int MPI_Get(void *oaddr, int ocount, MPI_Datatype otype, int target,
            MPI_Aint tdisp, int tcount, MPI_Datatype ttype, MPI_Win win)
{
    RMA_WRAP(MC_OP_Get,
             PMPI_Get(oaddr, ocount, otype, target, tdisp, tcount, ttype, win),
             win, target, 0, 0, mc__tap_bytes(ocount, otype), 1);
}

int MPI_Accumulate(const void *oaddr, int ocount, MPI_Datatype otype,
                   int target, MPI_Aint tdisp, int tcount, MPI_Datatype ttype,
                   MPI_Op op, MPI_Win win)
{
    RMA_WRAP(MC_OP_Accumulate,
             PMPI_Accumulate(oaddr, ocount, otype, target, tdisp, tcount, ttype,
                             op, win),
             win, target, mc__tap_bytes(ocount, otype), 1, 0, 0);
}

/* With MPI_NO_OP the origin buffer is not sent (the call is an atomic get). */
int MPI_Get_accumulate(const void *oaddr, int ocount, MPI_Datatype otype,
                       void *raddr, int rcount, MPI_Datatype rtype, int target,
                       MPI_Aint tdisp, int tcount, MPI_Datatype ttype,
                       MPI_Op op, MPI_Win win)
{
    RMA_WRAP(MC_OP_Get_accumulate,
             PMPI_Get_accumulate(oaddr, ocount, otype, raddr, rcount, rtype,
                                 target, tdisp, tcount, ttype, op, win),
             win, target, op == MPI_NO_OP ? 0 : mc__tap_bytes(ocount, otype), 1,
             mc__tap_bytes(rcount, rtype), 1);
}

int MPI_Fetch_and_op(const void *oaddr, void *raddr, MPI_Datatype dt,
                     int target, MPI_Aint tdisp, MPI_Op op, MPI_Win win)
{
    RMA_WRAP(MC_OP_Fetch_and_op,
             PMPI_Fetch_and_op(oaddr, raddr, dt, target, tdisp, op, win), win,
             target, op == MPI_NO_OP ? 0 : mc__tap_bytes(1, dt), 1,
             mc__tap_bytes(1, dt), 1);
}

/* The origin sends the new value and the compare value; one value returns. */
int MPI_Compare_and_swap(const void *oaddr, const void *caddr, void *raddr,
                         MPI_Datatype dt, int target, MPI_Aint tdisp,
                         MPI_Win win)
{
    RMA_WRAP(MC_OP_Compare_and_swap,
             PMPI_Compare_and_swap(oaddr, caddr, raddr, dt, target, tdisp, win),
             win, target, mc__tap_bytes(2, dt), 1, mc__tap_bytes(1, dt), 1);
}

int MPI_Rput(const void *oaddr, int ocount, MPI_Datatype otype, int target,
             MPI_Aint tdisp, int tcount, MPI_Datatype ttype, MPI_Win win,
             MPI_Request *req)
{
    RMA_WRAP(
        MC_OP_Rput,
        PMPI_Rput(oaddr, ocount, otype, target, tdisp, tcount, ttype, win, req),
        win, target, mc__tap_bytes(ocount, otype), 1, 0, 0);
}

int MPI_Rget(void *oaddr, int ocount, MPI_Datatype otype, int target,
             MPI_Aint tdisp, int tcount, MPI_Datatype ttype, MPI_Win win,
             MPI_Request *req)
{
    RMA_WRAP(
        MC_OP_Rget,
        PMPI_Rget(oaddr, ocount, otype, target, tdisp, tcount, ttype, win, req),
        win, target, 0, 0, mc__tap_bytes(ocount, otype), 1);
}

int MPI_Raccumulate(const void *oaddr, int ocount, MPI_Datatype otype,
                    int target, MPI_Aint tdisp, int tcount, MPI_Datatype ttype,
                    MPI_Op op, MPI_Win win, MPI_Request *req)
{
    RMA_WRAP(MC_OP_Raccumulate,
             PMPI_Raccumulate(oaddr, ocount, otype, target, tdisp, tcount,
                              ttype, op, win, req),
             win, target, mc__tap_bytes(ocount, otype), 1, 0, 0);
}

int MPI_Rget_accumulate(const void *oaddr, int ocount, MPI_Datatype otype,
                        void *raddr, int rcount, MPI_Datatype rtype, int target,
                        MPI_Aint tdisp, int tcount, MPI_Datatype ttype,
                        MPI_Op op, MPI_Win win, MPI_Request *req)
{
    RMA_WRAP(MC_OP_Rget_accumulate,
             PMPI_Rget_accumulate(oaddr, ocount, otype, raddr, rcount, rtype,
                                  target, tdisp, tcount, ttype, op, win, req),
             win, target, op == MPI_NO_OP ? 0 : mc__tap_bytes(ocount, otype), 1,
             mc__tap_bytes(rcount, rtype), 1);
}
