/* ring_app.c - a small MPI "application" for the campaign job test: a ring exchange of known message sizes. */
#include <mpi.h>

#include <stdio.h>  /* fprintf */
#include <stdlib.h> /* atoi, malloc, free */
#include <string.h> /* memset */

/* Step i sends sizes[i % 3] bytes to the right neighbour and receives as many
 * from the left one, with MPI_Isend / MPI_Irecv; one MPI_Allreduce of one
 * double ends the run. So over P ranks and S steps the census must find, for
 * MPI_Isend, P * ceil((S - k) / 3) messages of sizes[k] (k = 0, 1, 2). */
static const int sizes[3] = {16, 1024, 65536};

int main(int argc, char **argv)
{
    MPI_Init(&argc, &argv);
    int rank = 0, size = 1;
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    MPI_Comm_size(MPI_COMM_WORLD, &size);
    const int steps = argc > 1 ? atoi(argv[1]) : 10;
    char *out = malloc(65536), *in = malloc(65536);
    if (!out || !in || steps < 1) {
        fprintf(stderr, "ring_app: usage: ring_app [STEPS >= 1]\n");
        MPI_Abort(MPI_COMM_WORLD, 2);
        return 2;
    }
    memset(out, rank & 0xff, 65536);
    const int right = (rank + 1) % size, left = (rank + size - 1) % size;
    for (int i = 0; i < steps; i++) {
        MPI_Request req[2];
        const int n = sizes[i % 3];
        MPI_Irecv(in, n, MPI_BYTE, left, i, MPI_COMM_WORLD, &req[0]);
        MPI_Isend(out, n, MPI_BYTE, right, i, MPI_COMM_WORLD, &req[1]);
        MPI_Waitall(2, req, MPI_STATUSES_IGNORE);
    }
    double local = (double)rank, sum = 0.0;
    MPI_Allreduce(&local, &sum, 1, MPI_DOUBLE, MPI_SUM, MPI_COMM_WORLD);
    free(out);
    free(in);
    MPI_Finalize();
    return 0;
}
