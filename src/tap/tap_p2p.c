/* tap_p2p.c - point-to-point wrappers: sends, receives, matched receives,
 * persistent requests, completion. */
#include "tap.h"

void mc__tap_send_record(unsigned op, MPI_Comm comm, int dest, int tag,
                         uint64_t bytes, uint64_t t0, uint64_t t1)
{
    if (dest == MPI_PROC_NULL) /* no message (MPI-4.0 3.11, null processes) */
        return;
    mc__tap_lock();
    const mc__tap_comm *ci = mc__tap_comm_get_locked(comm);
    if (ci) {
        mc_record r = mc__tap_record(op, MC_DIR_SEND, ci, t0, t1);
        r.bytes = bytes;
        r.peer = mc__tap_world_of(ci, dest);
        r.tag = tag;
        mc__tap_emit_locked(&r);
    }
    mc__tap_unlock();
}

void mc__tap_recv_complete_locked(mc_record *rec, mc__tap_comm *ci,
                                  MPI_Datatype dt, const MPI_Status *st)
{
    if (st->MPI_SOURCE == MPI_PROC_NULL)
        return; /* a receive from MPI_PROC_NULL moves nothing */
    int cancelled = 0;
    if (PMPI_Test_cancelled(st, &cancelled) == MPI_SUCCESS && cancelled)
        return;
    int cnt = MPI_UNDEFINED;
    if (dt != MPI_DATATYPE_NULL &&
        PMPI_Get_count(st, dt, &cnt) == MPI_SUCCESS && cnt != MPI_UNDEFINED) {
        rec->bytes = mc__tap_bytes(cnt, dt);
    } else if (PMPI_Get_count(st, MPI_BYTE, &cnt) == MPI_SUCCESS &&
               cnt != MPI_UNDEFINED && cnt >= 0) {
        /* Not a whole number of datatype elements: the byte count. */
        rec->bytes = (uint64_t)cnt;
    } else {
        rec->flags |= MC_RF_POSTED_SIZE;
    }
    rec->peer = mc__tap_world_of(ci, st->MPI_SOURCE);
    rec->tag = st->MPI_TAG;
    mc__tap_emit_locked(rec);
}

/* ---- sends -------------------------------------------------------------- */

#define SEND_WRAP(op, call, count, dt, dest, tag, comm)                        \
    if (!mc__tap_enter())                                                      \
        return call;                                                           \
    const uint64_t t0 = mc__tap_now();                                         \
    const int rc = call;                                                       \
    const uint64_t t1 = mc__tap_now();                                         \
    if (rc == MPI_SUCCESS)                                                     \
        mc__tap_send_record(op, comm, dest, tag, mc__tap_bytes(count, dt), t0, \
                            t1);                                               \
    mc__tap_leave();                                                           \
    return rc

int MPI_Send(const void *buf, int count, MPI_Datatype dt, int dest, int tag,
             MPI_Comm comm)
{
    SEND_WRAP(MC_OP_Send, PMPI_Send(buf, count, dt, dest, tag, comm), count, dt,
              dest, tag, comm);
}

int MPI_Bsend(const void *buf, int count, MPI_Datatype dt, int dest, int tag,
              MPI_Comm comm)
{
    SEND_WRAP(MC_OP_Bsend, PMPI_Bsend(buf, count, dt, dest, tag, comm), count,
              dt, dest, tag, comm);
}

int MPI_Ssend(const void *buf, int count, MPI_Datatype dt, int dest, int tag,
              MPI_Comm comm)
{
    SEND_WRAP(MC_OP_Ssend, PMPI_Ssend(buf, count, dt, dest, tag, comm), count,
              dt, dest, tag, comm);
}

int MPI_Rsend(const void *buf, int count, MPI_Datatype dt, int dest, int tag,
              MPI_Comm comm)
{
    SEND_WRAP(MC_OP_Rsend, PMPI_Rsend(buf, count, dt, dest, tag, comm), count,
              dt, dest, tag, comm);
}

int MPI_Isend(const void *buf, int count, MPI_Datatype dt, int dest, int tag,
              MPI_Comm comm, MPI_Request *req)
{
    SEND_WRAP(MC_OP_Isend, PMPI_Isend(buf, count, dt, dest, tag, comm, req),
              count, dt, dest, tag, comm);
}

int MPI_Ibsend(const void *buf, int count, MPI_Datatype dt, int dest, int tag,
               MPI_Comm comm, MPI_Request *req)
{
    SEND_WRAP(MC_OP_Ibsend, PMPI_Ibsend(buf, count, dt, dest, tag, comm, req),
              count, dt, dest, tag, comm);
}

int MPI_Issend(const void *buf, int count, MPI_Datatype dt, int dest, int tag,
               MPI_Comm comm, MPI_Request *req)
{
    SEND_WRAP(MC_OP_Issend, PMPI_Issend(buf, count, dt, dest, tag, comm, req),
              count, dt, dest, tag, comm);
}

int MPI_Irsend(const void *buf, int count, MPI_Datatype dt, int dest, int tag,
               MPI_Comm comm, MPI_Request *req)
{
    SEND_WRAP(MC_OP_Irsend, PMPI_Irsend(buf, count, dt, dest, tag, comm, req),
              count, dt, dest, tag, comm);
}

/* ---- blocking receives -------------------------------------------------- */

static void recv_record(unsigned op, MPI_Comm comm, int count, MPI_Datatype dt,
                        const MPI_Status *st, uint64_t t0, uint64_t t1)
{
    mc__tap_lock();
    mc__tap_comm *ci = mc__tap_comm_get_locked(comm);
    if (ci) {
        mc_record r = mc__tap_record(op, MC_DIR_RECV, ci, t0, t1);
        r.bytes = mc__tap_bytes(count, dt);
        mc__tap_recv_complete_locked(&r, ci, dt, st);
    }
    mc__tap_unlock();
}

int MPI_Recv(void *buf, int count, MPI_Datatype dt, int source, int tag,
             MPI_Comm comm, MPI_Status *status)
{
    if (!mc__tap_enter())
        return PMPI_Recv(buf, count, dt, source, tag, comm, status);
    MPI_Status local;
    MPI_Status *st = status == MPI_STATUS_IGNORE ? &local : status;
    const uint64_t t0 = mc__tap_now();
    const int rc = PMPI_Recv(buf, count, dt, source, tag, comm, st);
    const uint64_t t1 = mc__tap_now();
    if (rc == MPI_SUCCESS)
        recv_record(MC_OP_Recv, comm, count, dt, st, t0, t1);
    mc__tap_leave();
    return rc;
}

int MPI_Sendrecv(const void *sendbuf, int sendcount, MPI_Datatype sendtype,
                 int dest, int sendtag, void *recvbuf, int recvcount,
                 MPI_Datatype recvtype, int source, int recvtag, MPI_Comm comm,
                 MPI_Status *status)
{
    if (!mc__tap_enter())
        return PMPI_Sendrecv(sendbuf, sendcount, sendtype, dest, sendtag,
                             recvbuf, recvcount, recvtype, source, recvtag,
                             comm, status);
    MPI_Status local;
    MPI_Status *st = status == MPI_STATUS_IGNORE ? &local : status;
    const uint64_t t0 = mc__tap_now();
    const int rc =
        PMPI_Sendrecv(sendbuf, sendcount, sendtype, dest, sendtag, recvbuf,
                      recvcount, recvtype, source, recvtag, comm, st);
    const uint64_t t1 = mc__tap_now();
    if (rc == MPI_SUCCESS) {
        mc__tap_send_record(MC_OP_Sendrecv, comm, dest, sendtag,
                            mc__tap_bytes(sendcount, sendtype), t0, t1);
        recv_record(MC_OP_Sendrecv, comm, recvcount, recvtype, st, t0, t1);
    }
    mc__tap_leave();
    return rc;
}

int MPI_Sendrecv_replace(void *buf, int count, MPI_Datatype dt, int dest,
                         int sendtag, int source, int recvtag, MPI_Comm comm,
                         MPI_Status *status)
{
    if (!mc__tap_enter())
        return PMPI_Sendrecv_replace(buf, count, dt, dest, sendtag, source,
                                     recvtag, comm, status);
    MPI_Status local;
    MPI_Status *st = status == MPI_STATUS_IGNORE ? &local : status;
    const uint64_t t0 = mc__tap_now();
    const int rc = PMPI_Sendrecv_replace(buf, count, dt, dest, sendtag, source,
                                         recvtag, comm, st);
    const uint64_t t1 = mc__tap_now();
    if (rc == MPI_SUCCESS) {
        mc__tap_send_record(MC_OP_Sendrecv_replace, comm, dest, sendtag,
                            mc__tap_bytes(count, dt), t0, t1);
        recv_record(MC_OP_Sendrecv_replace, comm, count, dt, st, t0, t1);
    }
    mc__tap_leave();
    return rc;
}

/* ---- nonblocking and persistent requests -------------------------------- */

/* Remember a receive whose size and source are known only on completion. */
static void add_recv(unsigned op, int kind, MPI_Request req, MPI_Comm comm,
                     int count, MPI_Datatype dt, int source, int tag,
                     uint64_t t0)
{
    mc__tap_lock();
    mc__tap_comm *ci = mc__tap_comm_get_locked(comm);
    if (ci) {
        mc_record r = mc__tap_record(op, MC_DIR_RECV, ci, t0, t0);
        r.bytes = mc__tap_bytes(count, dt);
        r.peer = source == MPI_ANY_SOURCE ? MC_PEER_NONE
                                          : mc__tap_world_of(ci, source);
        r.tag = tag;
        mc__tap_req_add_locked(MC_TAP_KEY(req), kind, &r, dt, ci);
    }
    mc__tap_unlock();
}

int MPI_Irecv(void *buf, int count, MPI_Datatype dt, int source, int tag,
              MPI_Comm comm, MPI_Request *req)
{
    if (!mc__tap_enter())
        return PMPI_Irecv(buf, count, dt, source, tag, comm, req);
    const uint64_t t0 = mc__tap_now();
    const int rc = PMPI_Irecv(buf, count, dt, source, tag, comm, req);
    if (rc == MPI_SUCCESS && source != MPI_PROC_NULL)
        add_recv(MC_OP_Irecv, MC_TAP_REQ_RECV, *req, comm, count, dt, source,
                 tag, t0);
    mc__tap_leave();
    return rc;
}

int MPI_Recv_init(void *buf, int count, MPI_Datatype dt, int source, int tag,
                  MPI_Comm comm, MPI_Request *req)
{
    if (!mc__tap_enter())
        return PMPI_Recv_init(buf, count, dt, source, tag, comm, req);
    const int rc = PMPI_Recv_init(buf, count, dt, source, tag, comm, req);
    if (rc == MPI_SUCCESS && source != MPI_PROC_NULL)
        add_recv(MC_OP_Recv_init, MC_TAP_REQ_PRECV, *req, comm, count, dt,
                 source, tag, 0);
    mc__tap_leave();
    return rc;
}

static void add_psend(unsigned op, MPI_Request req, MPI_Comm comm, int count,
                      MPI_Datatype dt, int dest, int tag)
{
    if (dest == MPI_PROC_NULL)
        return;
    mc__tap_lock();
    mc__tap_comm *ci = mc__tap_comm_get_locked(comm);
    if (ci) {
        mc_record r = mc__tap_record(op, MC_DIR_SEND, ci, 0, 0);
        r.bytes = mc__tap_bytes(count, dt);
        r.peer = mc__tap_world_of(ci, dest);
        r.tag = tag;
        mc__tap_req_add_locked(MC_TAP_KEY(req), MC_TAP_REQ_PSEND, &r, dt, NULL);
    }
    mc__tap_unlock();
}

#define PSEND_WRAP(op, call, count, dt, dest, tag, comm, req)                  \
    if (!mc__tap_enter())                                                      \
        return call;                                                           \
    const int rc = call;                                                       \
    if (rc == MPI_SUCCESS)                                                     \
        add_psend(op, *(req), comm, count, dt, dest, tag);                     \
    mc__tap_leave();                                                           \
    return rc

int MPI_Send_init(const void *buf, int count, MPI_Datatype dt, int dest,
                  int tag, MPI_Comm comm, MPI_Request *req)
{
    PSEND_WRAP(MC_OP_Send_init,
               PMPI_Send_init(buf, count, dt, dest, tag, comm, req), count, dt,
               dest, tag, comm, req);
}

int MPI_Bsend_init(const void *buf, int count, MPI_Datatype dt, int dest,
                   int tag, MPI_Comm comm, MPI_Request *req)
{
    PSEND_WRAP(MC_OP_Bsend_init,
               PMPI_Bsend_init(buf, count, dt, dest, tag, comm, req), count, dt,
               dest, tag, comm, req);
}

int MPI_Ssend_init(const void *buf, int count, MPI_Datatype dt, int dest,
                   int tag, MPI_Comm comm, MPI_Request *req)
{
    PSEND_WRAP(MC_OP_Ssend_init,
               PMPI_Ssend_init(buf, count, dt, dest, tag, comm, req), count, dt,
               dest, tag, comm, req);
}

int MPI_Rsend_init(const void *buf, int count, MPI_Datatype dt, int dest,
                   int tag, MPI_Comm comm, MPI_Request *req)
{
    PSEND_WRAP(MC_OP_Rsend_init,
               PMPI_Rsend_init(buf, count, dt, dest, tag, comm, req), count, dt,
               dest, tag, comm, req);
}

/* One start of a persistent request: sends and collectives are recorded
 * now (their size is fixed at init), receives when they complete. */
static void started_locked(MPI_Request req, uint64_t t0, uint64_t t1)
{
    const int32_t s = mc__tap_req_find_locked(MC_TAP_KEY(req));
    if (s < 0)
        return;
    mc__tap_req *e = mc__tap_req_at(s);
    if (e->kind == MC_TAP_REQ_PSEND || e->kind == MC_TAP_REQ_PCOLL) {
        mc_record r = e->rec;
        r.t_start_ns = t0;
        r.t_end_ns = t1;
        mc__tap_emit_locked(&r);
    } else if (e->kind == MC_TAP_REQ_PRECV) {
        e->active = 1;
        e->rec.t_start_ns = t0;
    }
}

int MPI_Start(MPI_Request *req)
{
    if (!mc__tap_enter())
        return PMPI_Start(req);
    const uint64_t t0 = mc__tap_now();
    const int rc = PMPI_Start(req);
    const uint64_t t1 = mc__tap_now();
    if (rc == MPI_SUCCESS) {
        mc__tap_lock();
        started_locked(*req, t0, t1);
        mc__tap_unlock();
    }
    mc__tap_leave();
    return rc;
}

int MPI_Startall(int count, MPI_Request reqs[])
{
    if (!mc__tap_enter())
        return PMPI_Startall(count, reqs);
    const uint64_t t0 = mc__tap_now();
    const int rc = PMPI_Startall(count, reqs);
    const uint64_t t1 = mc__tap_now();
    if (rc == MPI_SUCCESS) {
        mc__tap_lock();
        for (int i = 0; i < count; i++)
            started_locked(reqs[i], t0, t1);
        mc__tap_unlock();
    }
    mc__tap_leave();
    return rc;
}

/* ---- matched probe and receive ------------------------------------------ */

static void add_message(MPI_Message msg, MPI_Comm comm)
{
    if (msg == MPI_MESSAGE_NO_PROC || msg == MPI_MESSAGE_NULL)
        return;
    mc__tap_lock();
    mc__tap_comm *ci = mc__tap_comm_get_locked(comm);
    if (ci) {
        const mc_record r = mc__tap_record(0, MC_DIR_RECV, ci, 0, 0);
        mc__tap_req_add_locked(MC_TAP_KEY(msg), MC_TAP_REQ_MSG, &r,
                               MPI_DATATYPE_NULL, ci);
    }
    mc__tap_unlock();
}

int MPI_Mprobe(int source, int tag, MPI_Comm comm, MPI_Message *msg,
               MPI_Status *status)
{
    if (!mc__tap_enter())
        return PMPI_Mprobe(source, tag, comm, msg, status);
    const int rc = PMPI_Mprobe(source, tag, comm, msg, status);
    if (rc == MPI_SUCCESS)
        add_message(*msg, comm);
    mc__tap_leave();
    return rc;
}

int MPI_Improbe(int source, int tag, MPI_Comm comm, int *flag, MPI_Message *msg,
                MPI_Status *status)
{
    if (!mc__tap_enter())
        return PMPI_Improbe(source, tag, comm, flag, msg, status);
    const int rc = PMPI_Improbe(source, tag, comm, flag, msg, status);
    if (rc == MPI_SUCCESS && *flag)
        add_message(*msg, comm);
    mc__tap_leave();
    return rc;
}

/* Take the message entry of @key out of the table: its communicator
 * (referenced; the caller unrefs) or NULL. */
static mc__tap_comm *take_message_locked(uintptr_t key)
{
    const int32_t s = mc__tap_req_find_locked(key);
    if (s < 0 || mc__tap_req_at(s)->kind != MC_TAP_REQ_MSG)
        return NULL;
    mc__tap_comm *ci = mc__tap_req_at(s)->comm;
    mc__tap_comm_ref(ci);
    mc__tap_req_remove_locked(s);
    return ci;
}

int MPI_Mrecv(void *buf, int count, MPI_Datatype dt, MPI_Message *msg,
              MPI_Status *status)
{
    if (!mc__tap_enter())
        return PMPI_Mrecv(buf, count, dt, msg, status);
    MPI_Status local;
    MPI_Status *st = status == MPI_STATUS_IGNORE ? &local : status;
    const uintptr_t key = MC_TAP_KEY(*msg);
    const uint64_t t0 = mc__tap_now();
    const int rc = PMPI_Mrecv(buf, count, dt, msg, st);
    const uint64_t t1 = mc__tap_now();
    mc__tap_lock();
    mc__tap_comm *ci = take_message_locked(key);
    if (ci && rc == MPI_SUCCESS) {
        mc_record r = mc__tap_record(MC_OP_Mrecv, MC_DIR_RECV, ci, t0, t1);
        r.bytes = mc__tap_bytes(count, dt);
        mc__tap_recv_complete_locked(&r, ci, dt, st);
    }
    mc__tap_comm_unref(ci);
    mc__tap_unlock();
    mc__tap_leave();
    return rc;
}

int MPI_Imrecv(void *buf, int count, MPI_Datatype dt, MPI_Message *msg,
               MPI_Request *req)
{
    if (!mc__tap_enter())
        return PMPI_Imrecv(buf, count, dt, msg, req);
    const uintptr_t key = MC_TAP_KEY(*msg);
    const uint64_t t0 = mc__tap_now();
    const int rc = PMPI_Imrecv(buf, count, dt, msg, req);
    mc__tap_lock();
    mc__tap_comm *ci = take_message_locked(key);
    if (ci && rc == MPI_SUCCESS) {
        mc_record r = mc__tap_record(MC_OP_Imrecv, MC_DIR_RECV, ci, t0, t0);
        r.bytes = mc__tap_bytes(count, dt);
        mc__tap_req_add_locked(MC_TAP_KEY(*req), MC_TAP_REQ_RECV, &r, dt, ci);
    }
    mc__tap_comm_unref(ci);
    mc__tap_unlock();
    mc__tap_leave();
    return rc;
}

/* ---- completion --------------------------------------------------------- */

/* The request in @slot (still generation @gen) completed with @st at @t1. */
static void completed_locked(int32_t slot, uint32_t gen, const MPI_Status *st,
                             uint64_t t1)
{
    if (slot < 0)
        return;
    mc__tap_req *e = mc__tap_req_at(slot);
    if (e->gen != gen || e->kind == 0)
        return; /* the slot was reused meanwhile */
    if (e->kind == MC_TAP_REQ_RECV) {
        mc_record r = e->rec;
        r.t_end_ns = t1;
        mc__tap_recv_complete_locked(&r, e->comm, e->dt, st);
        mc__tap_req_remove_locked(slot);
    } else if (e->kind == MC_TAP_REQ_PRECV && e->active) {
        mc_record r = e->rec;
        r.t_end_ns = t1;
        e->active = 0;
        mc__tap_recv_complete_locked(&r, e->comm, e->dt, st);
    }
}

/* The request in @slot completed with an error (MPI_ERRORS_RETURN): no data
 * arrived, so no record; the entry goes, so that a later request at the
 * same handle address is not mistaken for it. */
static void failed_locked(int32_t slot, uint32_t gen)
{
    if (slot < 0)
        return;
    mc__tap_req *e = mc__tap_req_at(slot);
    if (e->gen != gen || e->kind == 0)
        return;
    if (e->kind == MC_TAP_REQ_RECV)
        mc__tap_req_remove_locked(slot);
    else if (e->kind == MC_TAP_REQ_PRECV)
        e->active = 0;
}

/* One request of an array call that returned @rc: on MPI_ERR_IN_STATUS its
 * own status says whether it completed, failed, or is still pending. */
static void settled_locked(int32_t slot, uint32_t gen, const MPI_Status *st,
                           int rc, uint64_t t1)
{
    if (rc == MPI_SUCCESS || st->MPI_ERROR == MPI_SUCCESS)
        completed_locked(slot, gen, st, t1);
    else if (st->MPI_ERROR != MPI_ERR_PENDING)
        failed_locked(slot, gen);
}

/* Looked-up slots of the requests a completion call is given. */
typedef struct lookup {
    int32_t slot;
    uint32_t gen;
} lookup;

/* Find the entries of @n requests; @return the scratch array, or NULL when
 * none of them is ours (the call then passes straight through). */
static lookup *lookup_requests(int n, const MPI_Request reqs[])
{
    if (n <= 0)
        return NULL;
    mc__tap_lock();
    lookup *lk = NULL;
    if (mc__tap_req_count > 0) {
        lk = mc__tap_scratch(MC_TAP_SCRATCH_SLOTS, (size_t)n * sizeof *lk);
        int any = 0;
        for (int i = 0; lk && i < n; i++) {
            lk[i].slot = mc__tap_req_find_locked(MC_TAP_KEY(reqs[i]));
            lk[i].gen = lk[i].slot >= 0 ? mc__tap_req_at(lk[i].slot)->gen : 0;
            any |= lk[i].slot >= 0;
        }
        if (!any)
            lk = NULL;
    }
    mc__tap_unlock();
    return lk;
}

/* Statuses the call can fill: the caller's, or scratch when ignored. */
static MPI_Status *statuses_for(int n, MPI_Status *given)
{
    if (given != MPI_STATUSES_IGNORE)
        return given;
    return mc__tap_scratch(MC_TAP_SCRATCH_STATUS,
                           (size_t)(n > 0 ? n : 1) * sizeof(MPI_Status));
}

int MPI_Wait(MPI_Request *req, MPI_Status *status)
{
    if (!mc__tap_enter())
        return PMPI_Wait(req, status);
    lookup *lk = lookup_requests(1, req);
    if (!lk) {
        mc__tap_leave();
        return PMPI_Wait(req, status);
    }
    const lookup one = lk[0];
    MPI_Status local;
    MPI_Status *st = status == MPI_STATUS_IGNORE ? &local : status;
    const int rc = PMPI_Wait(req, st);
    const uint64_t t1 = mc__tap_now();
    mc__tap_lock();
    if (rc == MPI_SUCCESS)
        completed_locked(one.slot, one.gen, st, t1);
    else
        failed_locked(one.slot, one.gen);
    mc__tap_unlock();
    mc__tap_leave();
    return rc;
}

int MPI_Test(MPI_Request *req, int *flag, MPI_Status *status)
{
    if (!mc__tap_enter())
        return PMPI_Test(req, flag, status);
    lookup *lk = lookup_requests(1, req);
    if (!lk) {
        mc__tap_leave();
        return PMPI_Test(req, flag, status);
    }
    const lookup one = lk[0];
    MPI_Status local;
    MPI_Status *st = status == MPI_STATUS_IGNORE ? &local : status;
    const int rc = PMPI_Test(req, flag, st);
    const uint64_t t1 = mc__tap_now();
    mc__tap_lock();
    if (rc == MPI_SUCCESS && *flag)
        completed_locked(one.slot, one.gen, st, t1);
    else if (rc != MPI_SUCCESS)
        failed_locked(one.slot, one.gen);
    mc__tap_unlock();
    mc__tap_leave();
    return rc;
}

int MPI_Waitall(int n, MPI_Request reqs[], MPI_Status statuses[])
{
    if (!mc__tap_enter())
        return PMPI_Waitall(n, reqs, statuses);
    lookup *lk = lookup_requests(n, reqs);
    MPI_Status *st = lk ? statuses_for(n, statuses) : NULL;
    if (!st) {
        mc__tap_leave();
        return PMPI_Waitall(n, reqs, statuses);
    }
    const int rc = PMPI_Waitall(n, reqs, st);
    const uint64_t t1 = mc__tap_now();
    if (rc == MPI_SUCCESS || rc == MPI_ERR_IN_STATUS) {
        mc__tap_lock();
        for (int i = 0; i < n; i++)
            settled_locked(lk[i].slot, lk[i].gen, &st[i], rc, t1);
        mc__tap_unlock();
    }
    mc__tap_leave();
    return rc;
}

int MPI_Testall(int n, MPI_Request reqs[], int *flag, MPI_Status statuses[])
{
    if (!mc__tap_enter())
        return PMPI_Testall(n, reqs, flag, statuses);
    lookup *lk = lookup_requests(n, reqs);
    MPI_Status *st = lk ? statuses_for(n, statuses) : NULL;
    if (!st) {
        mc__tap_leave();
        return PMPI_Testall(n, reqs, flag, statuses);
    }
    const int rc = PMPI_Testall(n, reqs, flag, st);
    const uint64_t t1 = mc__tap_now();
    if ((rc == MPI_SUCCESS && *flag) || rc == MPI_ERR_IN_STATUS) {
        mc__tap_lock();
        for (int i = 0; i < n; i++)
            settled_locked(lk[i].slot, lk[i].gen, &st[i], rc, t1);
        mc__tap_unlock();
    }
    mc__tap_leave();
    return rc;
}

/* After MPI_Waitany/MPI_Testany: request @index (if any) completed, or
 * failed when the call returned an error. */
static void any_settled(const lookup *lk, int n, int index, int flag,
                        const MPI_Status *st, int rc, uint64_t t1)
{
    if (index == MPI_UNDEFINED || index < 0 || index >= n)
        return;
    mc__tap_lock();
    if (rc == MPI_SUCCESS && flag)
        completed_locked(lk[index].slot, lk[index].gen, st, t1);
    else if (rc != MPI_SUCCESS)
        failed_locked(lk[index].slot, lk[index].gen);
    mc__tap_unlock();
}

int MPI_Waitany(int n, MPI_Request reqs[], int *index, MPI_Status *status)
{
    if (!mc__tap_enter())
        return PMPI_Waitany(n, reqs, index, status);
    lookup *lk = lookup_requests(n, reqs);
    if (!lk) {
        mc__tap_leave();
        return PMPI_Waitany(n, reqs, index, status);
    }
    MPI_Status local;
    MPI_Status *st = status == MPI_STATUS_IGNORE ? &local : status;
    const int rc = PMPI_Waitany(n, reqs, index, st);
    any_settled(lk, n, *index, 1, st, rc, mc__tap_now());
    mc__tap_leave();
    return rc;
}

int MPI_Testany(int n, MPI_Request reqs[], int *index, int *flag,
                MPI_Status *status)
{
    if (!mc__tap_enter())
        return PMPI_Testany(n, reqs, index, flag, status);
    lookup *lk = lookup_requests(n, reqs);
    if (!lk) {
        mc__tap_leave();
        return PMPI_Testany(n, reqs, index, flag, status);
    }
    MPI_Status local;
    MPI_Status *st = status == MPI_STATUS_IGNORE ? &local : status;
    const int rc = PMPI_Testany(n, reqs, index, flag, st);
    any_settled(lk, n, *index, *flag, st, rc, mc__tap_now());
    mc__tap_leave();
    return rc;
}

static void some_completed(const lookup *lk, int n, int outcount,
                           const int indices[], const MPI_Status *st, int rc,
                           uint64_t t1)
{
    if (outcount == MPI_UNDEFINED)
        return;
    mc__tap_lock();
    for (int k = 0; k < outcount; k++)
        if (indices[k] >= 0 && indices[k] < n)
            settled_locked(lk[indices[k]].slot, lk[indices[k]].gen, &st[k], rc,
                           t1);
    mc__tap_unlock();
}

/* MPI_Waitsome and MPI_Testsome have one signature and one treatment. */
typedef int (*some_fn)(int, MPI_Request[], int *, int[], MPI_Status[]);

static int some_call(some_fn call, int n, MPI_Request reqs[], int *outcount,
                     int indices[], MPI_Status statuses[])
{
    if (!mc__tap_enter())
        return call(n, reqs, outcount, indices, statuses);
    lookup *lk = lookup_requests(n, reqs);
    MPI_Status *st = lk ? statuses_for(n, statuses) : NULL;
    if (!st) {
        mc__tap_leave();
        return call(n, reqs, outcount, indices, statuses);
    }
    const int rc = call(n, reqs, outcount, indices, st);
    if (rc == MPI_SUCCESS || rc == MPI_ERR_IN_STATUS)
        some_completed(lk, n, *outcount, indices, st, rc, mc__tap_now());
    mc__tap_leave();
    return rc;
}

int MPI_Waitsome(int n, MPI_Request reqs[], int *outcount, int indices[],
                 MPI_Status statuses[])
{
    return some_call(PMPI_Waitsome, n, reqs, outcount, indices, statuses);
}

int MPI_Testsome(int n, MPI_Request reqs[], int *outcount, int indices[],
                 MPI_Status statuses[])
{
    return some_call(PMPI_Testsome, n, reqs, outcount, indices, statuses);
}

/* A request freed before its completion was seen: a receive can then only
 * be recorded with its posted size (MC_RF_POSTED_SIZE). */
int MPI_Request_free(MPI_Request *req)
{
    if (!mc__tap_enter())
        return PMPI_Request_free(req);
    const uintptr_t key = MC_TAP_KEY(*req);
    const int rc = PMPI_Request_free(req);
    const uint64_t t1 = mc__tap_now();
    if (rc == MPI_SUCCESS) {
        mc__tap_lock();
        const int32_t s = mc__tap_req_find_locked(key);
        if (s >= 0) {
            mc__tap_req *e = mc__tap_req_at(s);
            if (e->kind == MC_TAP_REQ_RECV ||
                (e->kind == MC_TAP_REQ_PRECV && e->active)) {
                mc_record r = e->rec;
                r.t_end_ns = t1;
                r.flags |= MC_RF_POSTED_SIZE;
                mc__tap_emit_locked(&r);
            }
            if (e->kind != MC_TAP_REQ_MSG)
                mc__tap_req_remove_locked(s);
        }
        mc__tap_unlock();
    }
    mc__tap_leave();
    return rc;
}
