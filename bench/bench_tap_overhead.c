/* bench_tap_overhead.c - cost of MPI calls with and without the tap: ping-pong
 * and a small-message loop (run by bench/tap/run.sh). */
#include <mpi.h>
#include <stdio.h>  /* printf */
#include <stdlib.h> /* atoi, qsort */

#define REPS 9   /* timed repetitions; the median is reported */
#define BATCH 64 /* requests per Waitall in the message loop */

static int cmp_double(const void *a, const void *b)
{
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static double median(double *v, int n)
{
    qsort(v, (size_t)n, sizeof *v, cmp_double);
    return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

/* Ranks 0 and 1: @iters round trips of an 8-byte message, Send + Recv on
 * each side: four MPI calls on the critical path of one round trip.
 * @return the median time of one MPI call on that path, in ns. */
static double pingpong(int rank, int iters)
{
    char buf[8] = {0};
    double t[REPS];
    for (int rep = 0; rep < REPS; rep++) {
        MPI_Barrier(MPI_COMM_WORLD);
        const double t0 = MPI_Wtime();
        for (int i = 0; i < iters; i++) {
            if (rank == 0) {
                MPI_Send(buf, 8, MPI_CHAR, 1, 1, MPI_COMM_WORLD);
                MPI_Recv(buf, 8, MPI_CHAR, 1, 1, MPI_COMM_WORLD,
                         MPI_STATUS_IGNORE);
            } else if (rank == 1) {
                MPI_Recv(buf, 8, MPI_CHAR, 0, 1, MPI_COMM_WORLD,
                         MPI_STATUS_IGNORE);
                MPI_Send(buf, 8, MPI_CHAR, 0, 1, MPI_COMM_WORLD);
            }
        }
        t[rep] = (MPI_Wtime() - t0) * 1e9 / (4.0 * iters);
    }
    return median(t, REPS);
}

/* One rank alone: Irecv from itself, Send to itself, Wait: three MPI calls
 * per message, no waiting on another process, so the tap's cost is not
 * hidden behind the partner's. @return median ns per MPI call. */
static double self_loop(int iters)
{
    int v = 0, w = 0;
    double t[REPS];
    for (int rep = 0; rep < REPS; rep++) {
        const double t0 = MPI_Wtime();
        for (int i = 0; i < iters; i++) {
            MPI_Request q;
            MPI_Irecv(&w, 1, MPI_INT, 0, 2, MPI_COMM_SELF, &q);
            MPI_Send(&v, 1, MPI_INT, 0, 2, MPI_COMM_SELF);
            MPI_Wait(&q, MPI_STATUS_IGNORE);
        }
        t[rep] = (MPI_Wtime() - t0) * 1e9 / (3.0 * iters);
    }
    return median(t, REPS);
}

/* Ranks 0 and 1: rank 0 sends @iters 4-byte messages with Isend in batches
 * of BATCH completed by one Waitall; rank 1 receives with Irecv likewise.
 * @return median ns per Isend/Irecv on rank 0 (Waitall included). */
static double message_loop(int rank, int iters)
{
    int buf[BATCH] = {0};
    MPI_Request q[BATCH];
    double t[REPS];
    for (int rep = 0; rep < REPS; rep++) {
        MPI_Barrier(MPI_COMM_WORLD);
        const double t0 = MPI_Wtime();
        for (int i = 0; i < iters; i += BATCH) {
            for (int k = 0; k < BATCH; k++) {
                if (rank == 0)
                    MPI_Isend(&buf[k], 1, MPI_INT, 1, 3, MPI_COMM_WORLD, &q[k]);
                else if (rank == 1)
                    MPI_Irecv(&buf[k], 1, MPI_INT, 0, 3, MPI_COMM_WORLD, &q[k]);
            }
            if (rank <= 1)
                MPI_Waitall(BATCH, q, MPI_STATUSES_IGNORE);
        }
        t[rep] = (MPI_Wtime() - t0) * 1e9 / iters;
    }
    return median(t, REPS);
}

int main(int argc, char **argv)
{
    MPI_Init(&argc, &argv);
    int rank = 0, np = 1;
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    MPI_Comm_size(MPI_COMM_WORLD, &np);
    const int iters = argc > 1 ? atoi(argv[1]) : 20000;
    const char *label = argc > 2 ? argv[2] : "run";
    double pp = 0, ml = 0;
    if (np >= 2) {
        pp = pingpong(rank, iters);
        ml = message_loop(rank, iters - iters % BATCH);
    }
    const double sl = self_loop(iters);
    if (rank == 0)
        printf("%s pingpong_ns_per_call %.1f message_loop_ns_per_msg %.1f "
               "self_loop_ns_per_call %.1f\n",
               label, pp, ml, sl);
    MPI_Finalize();
    return 0;
}
