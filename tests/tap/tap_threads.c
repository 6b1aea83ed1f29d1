/* tap_threads.c - two threads per rank sending concurrently under
 * MPI_THREAD_MULTIPLE, for the tap's lock. */
#include <mpi.h>
#include <pthread.h> /* pthread_create, pthread_join */
#include <stdio.h>   /* fprintf */

#define MSGS 200 /* messages per thread; tap_env_test.py expects this */

static int rank, np;
static MPI_Comm comms[2];

/* Thread t: MSGS messages of t+1 ints to the right on its own communicator. */
static void *worker(void *arg)
{
    const int t = *(const int *)arg;
    int s[2] = {0, 0}, r[2];
    for (int i = 0; i < MSGS; i++) {
        MPI_Request q;
        MPI_Isend(s, t + 1, MPI_INT, (rank + 1) % np, i, comms[t], &q);
        MPI_Recv(r, 2, MPI_INT, (rank + np - 1) % np, i, comms[t],
                 MPI_STATUS_IGNORE);
        MPI_Wait(&q, MPI_STATUS_IGNORE);
    }
    return NULL;
}

int main(int argc, char **argv)
{
    int provided = 0;
    MPI_Init_thread(&argc, &argv, MPI_THREAD_MULTIPLE, &provided);
    if (provided != MPI_THREAD_MULTIPLE) {
        fprintf(stderr, "tap_threads: MPI_THREAD_MULTIPLE not granted\n");
        MPI_Finalize();
        return 77;
    }
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    MPI_Comm_size(MPI_COMM_WORLD, &np);
    MPI_Comm_dup(MPI_COMM_WORLD, &comms[0]);
    MPI_Comm_dup(MPI_COMM_WORLD, &comms[1]);
    pthread_t th[2];
    int ids[2] = {0, 1};
    for (int t = 0; t < 2; t++)
        pthread_create(&th[t], NULL, worker, &ids[t]);
    for (int t = 0; t < 2; t++)
        pthread_join(th[t], NULL);
    MPI_Comm_free(&comms[0]);
    MPI_Comm_free(&comms[1]);
    MPI_Finalize();
    return 0;
}
