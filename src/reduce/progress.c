/* progress.c - bytes done over all reducer ranks and an early-stop flag, in
 * a passive-target window of two counters on rank 0. */
#include "reduce_internal.h"

#include <string.h> /* memset */

int mc__progress_open(mc__progress *p, MPI_Comm comm, uint64_t total,
                      double interval, double t0)
{
    int me = 0;
    MPI_Comm_rank(comm, &me);
    memset(p, 0, sizeof *p);
    p->comm = comm;
    p->total = total;
    p->interval = interval > 0 ? interval : 0.25;
    p->t0 = t0;
    const MPI_Aint size = me == 0 ? (MPI_Aint)(2 * sizeof(uint64_t)) : 0;
    if (MPI_Win_allocate(size, (int)sizeof(uint64_t), MPI_INFO_NULL, comm,
                         &p->base, &p->win) != MPI_SUCCESS)
        return MC_EMPI;
    if (me == 0) {
        MPI_Win_lock(MPI_LOCK_EXCLUSIVE, 0, 0, p->win);
        p->base[0] = 0;
        p->base[1] = 0;
        MPI_Win_unlock(0, p->win);
    }
    /* Nobody adds before the counters are zero. */
    MPI_Barrier(comm);
    p->last = MPI_Wtime();
    return 0;
}

void mc__progress_add(mc__progress *p, uint64_t bytes, int error, int force)
{
    p->pending += bytes;
    const double now = MPI_Wtime();
    if (!force && !error && now - p->last < p->interval)
        return;
    uint64_t delta[2] = {p->pending, error ? 1u : 0u};
    uint64_t before[2] = {0, 0};
    /* One atomic fetch-and-add of both counters: it publishes our bytes and
     * tells us whether another rank has failed. */
    MPI_Win_lock(MPI_LOCK_SHARED, 0, 0, p->win);
    MPI_Get_accumulate(delta, 2, MPI_UINT64_T, before, 2, MPI_UINT64_T, 0, 0, 2,
                       MPI_UINT64_T, MPI_SUM, p->win);
    MPI_Win_unlock(0, p->win);
    p->pending = 0;
    p->last = now;
    p->seen_done = before[0] + delta[0];
    if (before[1] > 0)
        p->stop = 1;
    int me = 0;
    MPI_Comm_rank(p->comm, &me);
    if (me == 0 && p->cb)
        p->cb(p->ud, p->seen_done, p->total, now - p->t0, 0);
}

void mc__progress_close(mc__progress *p)
{
    mc__progress_add(p, 0, 0, 1);
    MPI_Win_free(&p->win);
}
