/* tap_fortran.c - the Fortran entry points (mpif.h and `use mpi`) of the
 * calls the tap records, for Open MPI.
 *
 * Open MPI's Fortran bindings (libmpi_mpifh) convert their arguments and
 * call the C library's PMPI_ functions directly, past the tap's MPI_
 * wrappers, so a Fortran program would run unrecorded. The tap therefore
 * defines the Fortran symbols itself (lowercase with one trailing
 * underscore, the gfortran convention Open MPI's own bindings use) and
 * makes the same conversions, but calls the C MPI_ function: the tap's own
 * wrapper, which records and then calls PMPI_. Because the tap is loaded
 * before libmpi_mpifh (LD_PRELOAD, or linked ahead of it), these
 * definitions win. A C program never calls them.
 *
 * The conversions (tap_fortran.h) turn the Fortran sentinels MPI_IN_PLACE,
 * MPI_BOTTOM, MPI_STATUS(ES)_IGNORE, MPI_UNWEIGHTED and MPI_WEIGHTS_EMPTY,
 * which are addresses of Open MPI's common blocks, into the C constants,
 * as Open MPI's bindings do. MPI_Fint is the default INTEGER; count and
 * displacement arrays are passed through unchanged, which needs MPI_Fint
 * to be int (checked).
 *
 * This file: start and end, point-to-point, completion. Collectives are in
 * tap_fortran_coll.c, communicators and one-sided calls in
 * tap_fortran_comm.c. Not covered: the mpi_f08 module (other symbols and
 * argument forms) and the MPIX_ persistent collectives.
 * docs/recording.md lists what is recorded. */
#include "tap_fortran.h"

#if defined(MC_TAP_FORTRAN)

/* ---- start and end ------------------------------------------------------ */

void mpi_init_(MPI_Fint *ierr)
{
    int argc = 0;
    char **argv = NULL;
    mc_f_set(ierr, MPI_Init(&argc, &argv));
}

void mpi_init_thread_(MPI_Fint *required, MPI_Fint *provided, MPI_Fint *ierr)
{
    int argc = 0, prov = MPI_THREAD_SINGLE;
    char **argv = NULL;
    const int rc = MPI_Init_thread(&argc, &argv, (int)*required, &prov);
    if (rc == MPI_SUCCESS)
        *provided = (MPI_Fint)prov;
    mc_f_set(ierr, rc);
}

void mpi_finalize_(MPI_Fint *ierr) { mc_f_set(ierr, MPI_Finalize()); }

void mpi_pcontrol_(MPI_Fint *level) { MPI_Pcontrol((int)*level); }

/* ---- point-to-point ------------------------------------------------------ */

#define F_SEND(fname, cname)                                                   \
    void fname(void *buf, MPI_Fint *count, MPI_Fint *dt, MPI_Fint *dest,       \
               MPI_Fint *tag, MPI_Fint *comm, MPI_Fint *ierr)                  \
    {                                                                          \
        mc_f_set(ierr, cname(mc_f_buf(buf), (int)*count, MC_F_TYPE(dt),        \
                             (int)*dest, (int)*tag, MC_F_COMM(comm)));         \
    }
F_SEND(mpi_send_, MPI_Send)
F_SEND(mpi_bsend_, MPI_Bsend)
F_SEND(mpi_ssend_, MPI_Ssend)
F_SEND(mpi_rsend_, MPI_Rsend)

#define F_ISEND(fname, cname)                                                  \
    void fname(void *buf, MPI_Fint *count, MPI_Fint *dt, MPI_Fint *dest,       \
               MPI_Fint *tag, MPI_Fint *comm, MPI_Fint *req, MPI_Fint *ierr)   \
    {                                                                          \
        MPI_Request r = MPI_REQUEST_NULL;                                      \
        mc_f_set(ierr,                                                         \
                 mc_f_req(cname(mc_f_buf(buf), (int)*count, MC_F_TYPE(dt),     \
                                (int)*dest, (int)*tag, MC_F_COMM(comm), &r),   \
                          &r, req));                                           \
    }
F_ISEND(mpi_isend_, MPI_Isend)
F_ISEND(mpi_ibsend_, MPI_Ibsend)
F_ISEND(mpi_issend_, MPI_Issend)
F_ISEND(mpi_irsend_, MPI_Irsend)
F_ISEND(mpi_send_init_, MPI_Send_init)
F_ISEND(mpi_ssend_init_, MPI_Ssend_init)
F_ISEND(mpi_bsend_init_, MPI_Bsend_init)
F_ISEND(mpi_rsend_init_, MPI_Rsend_init)
F_ISEND(mpi_irecv_, MPI_Irecv)
F_ISEND(mpi_recv_init_, MPI_Recv_init)

void mpi_recv_(void *buf, MPI_Fint *count, MPI_Fint *dt, MPI_Fint *src,
               MPI_Fint *tag, MPI_Fint *comm, MPI_Fint *status, MPI_Fint *ierr)
{
    MPI_Status st;
    const int rc =
        MPI_Recv(mc_f_buf(buf), (int)*count, MC_F_TYPE(dt), (int)*src,
                 (int)*tag, MC_F_COMM(comm), mc_f_status_in(status, &st));
    mc_f_status_out(rc, status, &st);
    mc_f_set(ierr, rc);
}

void mpi_sendrecv_(void *sbuf, MPI_Fint *scount, MPI_Fint *stype,
                   MPI_Fint *dest, MPI_Fint *stag, void *rbuf, MPI_Fint *rcount,
                   MPI_Fint *rtype, MPI_Fint *src, MPI_Fint *rtag,
                   MPI_Fint *comm, MPI_Fint *status, MPI_Fint *ierr)
{
    MPI_Status st;
    const int rc = MPI_Sendrecv(
        mc_f_buf(sbuf), (int)*scount, MC_F_TYPE(stype), (int)*dest, (int)*stag,
        mc_f_buf(rbuf), (int)*rcount, MC_F_TYPE(rtype), (int)*src, (int)*rtag,
        MC_F_COMM(comm), mc_f_status_in(status, &st));
    mc_f_status_out(rc, status, &st);
    mc_f_set(ierr, rc);
}

void mpi_sendrecv_replace_(void *buf, MPI_Fint *count, MPI_Fint *dt,
                           MPI_Fint *dest, MPI_Fint *stag, MPI_Fint *src,
                           MPI_Fint *rtag, MPI_Fint *comm, MPI_Fint *status,
                           MPI_Fint *ierr)
{
    MPI_Status st;
    const int rc = MPI_Sendrecv_replace(
        mc_f_buf(buf), (int)*count, MC_F_TYPE(dt), (int)*dest, (int)*stag,
        (int)*src, (int)*rtag, MC_F_COMM(comm), mc_f_status_in(status, &st));
    mc_f_status_out(rc, status, &st);
    mc_f_set(ierr, rc);
}

/* ---- matched probe and receive --------------------------------------------
 */

void mpi_mprobe_(MPI_Fint *src, MPI_Fint *tag, MPI_Fint *comm, MPI_Fint *msg,
                 MPI_Fint *status, MPI_Fint *ierr)
{
    MPI_Message m = MPI_MESSAGE_NULL;
    MPI_Status st;
    const int rc = MPI_Mprobe((int)*src, (int)*tag, MC_F_COMM(comm), &m,
                              mc_f_status_in(status, &st));
    if (rc == MPI_SUCCESS) {
        *msg = PMPI_Message_c2f(m);
        mc_f_status_out(rc, status, &st);
    }
    mc_f_set(ierr, rc);
}

void mpi_improbe_(MPI_Fint *src, MPI_Fint *tag, MPI_Fint *comm, MPI_Fint *flag,
                  MPI_Fint *msg, MPI_Fint *status, MPI_Fint *ierr)
{
    MPI_Message m = MPI_MESSAGE_NULL;
    MPI_Status st;
    int fl = 0;
    const int rc = MPI_Improbe((int)*src, (int)*tag, MC_F_COMM(comm), &fl, &m,
                               mc_f_status_in(status, &st));
    if (rc == MPI_SUCCESS) {
        *flag = (MPI_Fint)fl;
        if (fl) {
            *msg = PMPI_Message_c2f(m);
            mc_f_status_out(rc, status, &st);
        }
    }
    mc_f_set(ierr, rc);
}

void mpi_mrecv_(void *buf, MPI_Fint *count, MPI_Fint *dt, MPI_Fint *msg,
                MPI_Fint *status, MPI_Fint *ierr)
{
    MPI_Message m = PMPI_Message_f2c(*msg);
    MPI_Status st;
    const int rc = MPI_Mrecv(mc_f_buf(buf), (int)*count, MC_F_TYPE(dt), &m,
                             mc_f_status_in(status, &st));
    if (rc == MPI_SUCCESS) {
        *msg = PMPI_Message_c2f(m);
        mc_f_status_out(rc, status, &st);
    }
    mc_f_set(ierr, rc);
}

void mpi_imrecv_(void *buf, MPI_Fint *count, MPI_Fint *dt, MPI_Fint *msg,
                 MPI_Fint *req, MPI_Fint *ierr)
{
    MPI_Message m = PMPI_Message_f2c(*msg);
    MPI_Request r = MPI_REQUEST_NULL;
    const int rc =
        MPI_Imrecv(mc_f_buf(buf), (int)*count, MC_F_TYPE(dt), &m, &r);
    if (rc == MPI_SUCCESS) {
        *msg = PMPI_Message_c2f(m);
        *req = PMPI_Request_c2f(r);
    }
    mc_f_set(ierr, rc);
}

/* ---- completion ---------------------------------------------------------- */

void mpi_wait_(MPI_Fint *req, MPI_Fint *status, MPI_Fint *ierr)
{
    MPI_Request r = PMPI_Request_f2c(*req);
    MPI_Status st;
    const int rc = MPI_Wait(&r, mc_f_status_in(status, &st));
    if (rc == MPI_SUCCESS) {
        *req = PMPI_Request_c2f(r);
        mc_f_status_out(rc, status, &st);
    }
    mc_f_set(ierr, rc);
}

void mpi_test_(MPI_Fint *req, MPI_Fint *flag, MPI_Fint *status, MPI_Fint *ierr)
{
    MPI_Request r = PMPI_Request_f2c(*req);
    MPI_Status st;
    int fl = 0;
    const int rc = MPI_Test(&r, &fl, mc_f_status_in(status, &st));
    if (rc == MPI_SUCCESS) {
        *req = PMPI_Request_c2f(r);
        *flag = (MPI_Fint)fl;
        if (fl)
            mc_f_status_out(rc, status, &st);
    }
    mc_f_set(ierr, rc);
}

/* C request and status arrays for @n Fortran requests: on the stack for
 * small n, else this thread's scratch space. */
#define F_SMALL 32
typedef struct f_arrays {
    MPI_Request small_r[F_SMALL];
    MPI_Status small_s[F_SMALL];
    MPI_Request *r;
    MPI_Status *s;
} f_arrays;

static int f_arrays_get(f_arrays *a, int n, const MPI_Fint *freqs)
{
    if (n <= F_SMALL) {
        a->r = a->small_r;
        a->s = a->small_s;
    } else {
        const size_t nn = (size_t)n;
        a->r = mc__tap_scratch(MC_TAP_SCRATCH_F_REQS, nn * sizeof *a->r);
        a->s = mc__tap_scratch(MC_TAP_SCRATCH_F_STATUS, nn * sizeof *a->s);
        if (!a->r || !a->s) {
            mc__tap_fail("out of memory converting %d Fortran requests", n);
            return MPI_ERR_NO_MEM;
        }
    }
    for (int i = 0; i < n; i++)
        a->r[i] = PMPI_Request_f2c(freqs[i]);
    return MPI_SUCCESS;
}

/* Copy back the requests and the statuses @which (all when NULL). */
static void f_arrays_put(const f_arrays *a, int n, MPI_Fint *freqs,
                         MPI_Fint *fst, int rc)
{
    for (int i = 0; i < n; i++)
        freqs[i] = PMPI_Request_c2f(a->r[i]);
    if (fst != MPI_F_STATUSES_IGNORE &&
        (rc == MPI_SUCCESS || rc == MPI_ERR_IN_STATUS))
        for (int i = 0; i < n; i++)
            PMPI_Status_c2f(&a->s[i], fst + (size_t)i * MC_F_STATUS_SIZE);
}

static MPI_Status *f_statuses_in(MPI_Fint *fst, const f_arrays *a)
{
    return fst == MPI_F_STATUSES_IGNORE ? MPI_STATUSES_IGNORE : a->s;
}

void mpi_waitall_(MPI_Fint *count, MPI_Fint *reqs, MPI_Fint *statuses,
                  MPI_Fint *ierr)
{
    const int n = (int)*count;
    f_arrays a;
    int rc = f_arrays_get(&a, n, reqs);
    if (rc == MPI_SUCCESS) {
        rc = MPI_Waitall(n, a.r, f_statuses_in(statuses, &a));
        f_arrays_put(&a, n, reqs, statuses, rc);
    }
    mc_f_set(ierr, rc);
}

void mpi_testall_(MPI_Fint *count, MPI_Fint *reqs, MPI_Fint *flag,
                  MPI_Fint *statuses, MPI_Fint *ierr)
{
    const int n = (int)*count;
    f_arrays a;
    int fl = 0;
    int rc = f_arrays_get(&a, n, reqs);
    if (rc == MPI_SUCCESS) {
        rc = MPI_Testall(n, a.r, &fl, f_statuses_in(statuses, &a));
        *flag = (MPI_Fint)fl;
        f_arrays_put(&a, n, reqs,
                     fl || rc == MPI_ERR_IN_STATUS ? statuses
                                                   : MPI_F_STATUSES_IGNORE,
                     rc);
    }
    mc_f_set(ierr, rc);
}

static void f_any(int waiting, MPI_Fint *count, MPI_Fint *reqs, MPI_Fint *index,
                  MPI_Fint *flag, MPI_Fint *status, MPI_Fint *ierr)
{
    const int n = (int)*count;
    f_arrays a;
    MPI_Status st;
    int idx = MPI_UNDEFINED, fl = 1;
    int rc = f_arrays_get(&a, n, reqs);
    if (rc == MPI_SUCCESS) {
        rc = waiting
                 ? MPI_Waitany(n, a.r, &idx, mc_f_status_in(status, &st))
                 : MPI_Testany(n, a.r, &idx, &fl, mc_f_status_in(status, &st));
        if (rc == MPI_SUCCESS) {
            for (int i = 0; i < n; i++)
                reqs[i] = PMPI_Request_c2f(a.r[i]);
            *index = (MPI_Fint)(idx == MPI_UNDEFINED ? MPI_UNDEFINED : idx + 1);
            if (flag)
                *flag = (MPI_Fint)fl;
            if (fl && idx != MPI_UNDEFINED)
                mc_f_status_out(rc, status, &st);
        }
    }
    mc_f_set(ierr, rc);
}

void mpi_waitany_(MPI_Fint *count, MPI_Fint *reqs, MPI_Fint *index,
                  MPI_Fint *status, MPI_Fint *ierr)
{
    f_any(1, count, reqs, index, NULL, status, ierr);
}

void mpi_testany_(MPI_Fint *count, MPI_Fint *reqs, MPI_Fint *index,
                  MPI_Fint *flag, MPI_Fint *status, MPI_Fint *ierr)
{
    f_any(0, count, reqs, index, flag, status, ierr);
}

static void f_some(int waiting, MPI_Fint *incount, MPI_Fint *reqs,
                   MPI_Fint *outcount, MPI_Fint *indices, MPI_Fint *statuses,
                   MPI_Fint *ierr)
{
    const int n = (int)*incount;
    f_arrays a;
    int out = MPI_UNDEFINED;
    int rc = f_arrays_get(&a, n, reqs);
    if (rc == MPI_SUCCESS) {
        /* indices is a Fortran INTEGER array of at least n: C fills it. */
        int *idx = (int *)indices;
        MPI_Status *st = f_statuses_in(statuses, &a);
        rc = waiting ? MPI_Waitsome(n, a.r, &out, idx, st)
                     : MPI_Testsome(n, a.r, &out, idx, st);
        if (rc == MPI_SUCCESS || rc == MPI_ERR_IN_STATUS) {
            for (int i = 0; i < n; i++)
                reqs[i] = PMPI_Request_c2f(a.r[i]);
            *outcount = (MPI_Fint)out;
            if (out != MPI_UNDEFINED) {
                /* The statuses of the completed requests, in order; then
                 * the indices made 1-based. */
                if (statuses != MPI_F_STATUSES_IGNORE)
                    for (int i = 0; i < out; i++)
                        PMPI_Status_c2f(
                            &a.s[i], statuses + (size_t)i * MC_F_STATUS_SIZE);
                for (int i = 0; i < out; i++)
                    indices[i] = (MPI_Fint)(idx[i] + 1);
            }
        }
    }
    mc_f_set(ierr, rc);
}

void mpi_waitsome_(MPI_Fint *incount, MPI_Fint *reqs, MPI_Fint *outcount,
                   MPI_Fint *indices, MPI_Fint *statuses, MPI_Fint *ierr)
{
    f_some(1, incount, reqs, outcount, indices, statuses, ierr);
}

void mpi_testsome_(MPI_Fint *incount, MPI_Fint *reqs, MPI_Fint *outcount,
                   MPI_Fint *indices, MPI_Fint *statuses, MPI_Fint *ierr)
{
    f_some(0, incount, reqs, outcount, indices, statuses, ierr);
}

void mpi_request_free_(MPI_Fint *req, MPI_Fint *ierr)
{
    MPI_Request r = PMPI_Request_f2c(*req);
    const int rc = MPI_Request_free(&r);
    if (rc == MPI_SUCCESS)
        *req = PMPI_Request_c2f(r);
    mc_f_set(ierr, rc);
}

void mpi_start_(MPI_Fint *req, MPI_Fint *ierr)
{
    MPI_Request r = PMPI_Request_f2c(*req);
    mc_f_set(ierr, MPI_Start(&r));
}

void mpi_startall_(MPI_Fint *count, MPI_Fint *reqs, MPI_Fint *ierr)
{
    const int n = (int)*count;
    f_arrays a;
    int rc = f_arrays_get(&a, n, reqs);
    if (rc == MPI_SUCCESS)
        rc = MPI_Startall(n, a.r);
    mc_f_set(ierr, rc);
}

/* ---- datatype arrays ------------------------------------------------------
 */

MPI_Datatype *mc__tap_f_types(int slot, const MPI_Fint *f, int n)
{
    MPI_Datatype *t =
        mc__tap_scratch(slot, (size_t)(n > 0 ? n : 1) * sizeof *t);
    if (!t) {
        mc__tap_fail("out of memory converting %d Fortran datatypes", n);
        return NULL;
    }
    for (int i = 0; i < n; i++)
        t[i] = PMPI_Type_f2c(f[i]);
    return t;
}

#endif /* MC_TAP_FORTRAN */
