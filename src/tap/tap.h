/* tap.h - internal interface shared by the files of the PMPI tap. */
#ifndef MSGCENSUS_TAP_H
#define MSGCENSUS_TAP_H

#include <stddef.h> /* size_t */
#include <stdint.h> /* fixed-width integers */
#include <time.h>   /* clock_gettime, CLOCK_MONOTONIC */

#include <mpi.h>

#include <msgcensus/ops.h>   /* MC_OP_* codes, mc_dir */
#include <msgcensus/trace.h> /* mc_record, MC_RF_*, MC_PEER_NONE */

/* Thread-local storage in the initial-exec model: one instruction to reach,
 * instead of a __tls_get_addr call per MPI call. The tap is loaded at start
 * (LD_PRELOAD or linked), so static TLS space is available. */
#if defined(__GNUC__)
#define MC_TAP_TLS _Thread_local __attribute__((tls_model("initial-exec")))
#else
#define MC_TAP_TLS _Thread_local
#endif

/* ---- state (tap_state.c) ------------------------------------------------ */

extern int mc__tap_on; /* recording: initialised, enabled, no error */
extern int mc__tap_mt; /* MPI_THREAD_MULTIPLE granted: take the lock */
extern int mc__tap_world_rank;
extern uint64_t mc__tap_t0;          /* CLOCK_MONOTONIC at start, ns */
extern MC_TAP_TLS int mc__tap_depth; /* > 0 inside a wrapper of this thread */

/* Nanoseconds since the trace epoch, from the vDSO clock (no system call). */
static inline uint64_t mc__tap_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (uint64_t)ts.tv_sec * 1000000000u + (uint64_t)ts.tv_nsec -
           mc__tap_t0;
}

/* A wrapper records only when the tap is on and the call comes from the
 * application: a nested MPI_ call made while this thread is already inside
 * a wrapper (an MPI library calling its own MPI_ entry points, or our own
 * use of MPI) passes straight through. */
static inline int mc__tap_enter(void)
{
    if (!mc__tap_on || mc__tap_depth)
        return 0;
    mc__tap_depth = 1;
    return 1;
}
static inline void mc__tap_leave(void) { mc__tap_depth = 0; }

void mc__tap_lock(void);
void mc__tap_unlock(void);

/* Append one record (lock held by the caller when mc__tap_mt). On a writer
 * error, reports once and turns recording off. */
void mc__tap_emit_locked(const mc_record *rec);

/* Report a problem once on stderr ("msgcensus-tap: ...") and stop
 * recording; the application carries on. */
void mc__tap_fail(const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 1, 2)))
#endif
    ;

/* Grow-only scratch space of this thread, at least @bytes; NULL when out of
 * memory. Reused from call to call, so a call allocates only when it needs
 * more than any call of this thread before it. */
void *mc__tap_scratch(int slot, size_t bytes);
#define MC_TAP_SCRATCH_STATUS 0
#define MC_TAP_SCRATCH_HANDLES 1
#define MC_TAP_SCRATCH_SLOTS 2
#define MC_TAP_SCRATCH_TOPO 3
#define MC_TAP_SCRATCH_F_REQS 4   /* tap_fortran.c: C requests */
#define MC_TAP_SCRATCH_F_STATUS 5 /* tap_fortran.c: C statuses */
#define MC_TAP_SCRATCH_F_STYPES 6 /* tap_fortran_coll.c: send types */
#define MC_TAP_SCRATCH_F_RTYPES 7 /* tap_fortran_coll.c: receive types */
#define MC_TAP_SCRATCH_N 8

/* Payload bytes of @count elements of @dt: count x MPI_Type_size (the data,
 * not the extent). 0 for count <= 0 or a null datatype, so that arguments a
 * rank must not rely on are never passed to MPI. */
static inline uint64_t mc__tap_bytes(int count, MPI_Datatype dt)
{
    MPI_Count sz = 0;
    if (count <= 0 || dt == MPI_DATATYPE_NULL)
        return 0;
    if (PMPI_Type_size_x(dt, &sz) != MPI_SUCCESS || sz <= 0)
        return 0;
    return (uint64_t)count * (uint64_t)sz;
}

/* ---- communicators (tap_comm.c) ----------------------------------------- */

typedef struct mc__tap_comm {
    uint32_t id;    /* same on every member rank */
    uint32_t size;  /* MPI_Comm_size (local group for intercommunicators) */
    int32_t *world; /* rank -> world rank (remote group for inter), or NULL */
    int32_t nworld; /* entries of world */
    int32_t min_world; /* smallest world rank among the members */
    uint32_t next_seq; /* communicators created from this one so far */
    int refs;          /* attribute + pending requests holding it */
} mc__tap_comm;

int mc__tap_comm_setup(void); /* keyvals, world and self; at init */
void mc__tap_comm_teardown(void);

/* Our information about @c, created on first use (lock held). NULL only
 * when out of memory or MPI refuses; the caller then records nothing. */
mc__tap_comm *mc__tap_comm_get_locked(MPI_Comm c);

/* World rank of @rank of @ci (a rank of the remote group for an
 * intercommunicator); MC_PEER_NONE when out of range. */
static inline int32_t mc__tap_world_of(const mc__tap_comm *ci, int rank)
{
    if (rank < 0)
        return MC_PEER_NONE;
    if (!ci->world)
        return rank;
    return rank < ci->nworld ? ci->world[rank] : MC_PEER_NONE;
}

/* A record of @op in direction @dir on @ci between @t0 and @t1, no peer,
 * no tag, no flags, 0 bytes: the callers fill in the rest. */
static inline mc_record mc__tap_record(unsigned op, unsigned dir,
                                       const mc__tap_comm *ci, uint64_t t0,
                                       uint64_t t1)
{
    mc_record r;
    r.bytes = 0;
    r.t_start_ns = t0;
    r.t_end_ns = t1;
    r.comm_id = ci->id;
    r.comm_size = ci->size;
    r.peer = MC_PEER_NONE;
    r.tag = MC_TAG_NONE;
    r.op = (uint16_t)op;
    r.dir = (uint8_t)dir;
    r.flags = 0;
    r.reserved = 0;
    return r;
}

void mc__tap_comm_ref(mc__tap_comm *ci);
void mc__tap_comm_unref(mc__tap_comm *ci);

/* Windows: the communicator information of the window's group. */
int mc__tap_win_attach(MPI_Win win, MPI_Comm comm);
mc__tap_comm *mc__tap_win_get_locked(MPI_Win win);

/* ---- request table (tap_req.c) ------------------------------------------ */

enum {
    MC_TAP_REQ_RECV = 1, /* nonblocking receive: record on completion */
    MC_TAP_REQ_PSEND,    /* persistent send: record on every start */
    MC_TAP_REQ_PRECV,    /* persistent receive: record on completion */
    MC_TAP_REQ_PCOLL,    /* persistent collective: record on every start */
    MC_TAP_REQ_MSG       /* matched message from MPI_(I)mprobe */
};

typedef struct mc__tap_req {
    uintptr_t key;  /* the request or message handle */
    int32_t next;   /* hash chain, -1 ends it */
    uint8_t kind;   /* MC_TAP_REQ_* */
    uint8_t active; /* persistent: started and not yet completed */
    uint16_t pad;
    uint32_t gen;       /* bumped when the slot is reused */
    mc_record rec;      /* the record to emit, times and size filled later */
    MPI_Datatype dt;    /* receive datatype, for MPI_Get_count */
    mc__tap_comm *comm; /* counted reference, for source translation */
} mc__tap_req;

/* Handle -> key, whatever the handle's type (pointer in Open MPI). */
#define MC_TAP_KEY(h) mc__tap_key(&(h), sizeof(h))
static inline uintptr_t mc__tap_key(const void *h, size_t n)
{
    uintptr_t k = 0;
    const unsigned char *p = (const unsigned char *)h;
    for (size_t i = 0; i < n && i < sizeof k; i++)
        k |= (uintptr_t)p[i] << (8 * i);
    return k;
}

extern size_t mc__tap_req_count; /* entries in the table */

/* Add an entry (lock held); returns its slot index or -1 (out of memory,
 * reported once). The slot index stays valid until removal. */
int32_t mc__tap_req_add_locked(uintptr_t key, int kind, const mc_record *rec,
                               MPI_Datatype dt, mc__tap_comm *comm);
int32_t mc__tap_req_find_locked(uintptr_t key);
mc__tap_req *mc__tap_req_at(int32_t slot);
void mc__tap_req_remove_locked(int32_t slot);
void mc__tap_req_teardown(void);

/* ---- point-to-point helpers (tap_p2p.c) --------------------------------- */

/* Record a send-side record of @op on @comm to @dest (a rank of @comm). */
void mc__tap_send_record(unsigned op, MPI_Comm comm, int dest, int tag,
                         uint64_t bytes, uint64_t t0, uint64_t t1);

/* Record the receive completed with @st, of datatype @dt, on @ci. */
void mc__tap_recv_complete_locked(mc_record *rec, mc__tap_comm *ci,
                                  MPI_Datatype dt, const MPI_Status *st);

/* ---- collectives (tap_coll.c) ------------------------------------------- */

/* Record one collective call record of @op on @comm. */
void mc__tap_coll_record(unsigned op, MPI_Comm comm, uint64_t bytes,
                         unsigned flags, uint64_t t0, uint64_t t1);

/* Keep the call record of a persistent collective with its request. */
void mc__tap_pcoll_register(unsigned op, MPI_Comm comm, uint64_t bytes,
                            unsigned flags, MPI_Request req);

#endif /* MSGCENSUS_TAP_H */
