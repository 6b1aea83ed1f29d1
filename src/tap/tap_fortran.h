/* tap_fortran.h - what the tap's Fortran entry points (tap_fortran*.c)
 * share: Open MPI's Fortran sentinels and the argument conversions. The
 * conversions are those of the MPI standard's language interoperability
 * section (MPI-4.0 19.3, from memory): MPI_*_f2c / MPI_*_c2f for handles,
 * MPI_Status_c2f for statuses, Fortran indices 1-based. */
#ifndef MSGCENSUS_TAP_FORTRAN_H
#define MSGCENSUS_TAP_FORTRAN_H

#include "tap.h"

#if defined(OPEN_MPI) && OPEN_MPI
#define MC_TAP_FORTRAN 1

/* Entry points called from Fortran only: no C header declares them. */
#if defined(__GNUC__)
#pragma GCC diagnostic ignored "-Wmissing-prototypes"
#endif

_Static_assert(sizeof(MPI_Fint) == sizeof(int),
               "Fortran INTEGER arrays are passed as C int arrays");

/* Open MPI's Fortran sentinels: common blocks defined in libmpi, whose
 * addresses the Fortran constants are (mpif-sentinels.h). */
extern int mpi_fortran_in_place_;
extern int mpi_fortran_bottom_;
extern int mpi_fortran_unweighted_;
extern int mpi_fortran_weights_empty_;

/* Fortran status size: Open MPI's Fortran status is the C status read as
 * INTEGERs (mpif-config.h: MPI_STATUS_SIZE = 6 for a 24-byte MPI_Status). */
#define MC_F_STATUS_SIZE (sizeof(MPI_Status) / sizeof(MPI_Fint))

static inline void *mc_f_buf(void *b)
{
    if (b == (void *)&mpi_fortran_in_place_)
        return MPI_IN_PLACE;
    if (b == (void *)&mpi_fortran_bottom_)
        return MPI_BOTTOM;
    return b;
}

static inline int *mc_f_weights(MPI_Fint *w)
{
    if (w == (MPI_Fint *)&mpi_fortran_unweighted_)
        return MPI_UNWEIGHTED;
    if (w == (MPI_Fint *)&mpi_fortran_weights_empty_)
        return MPI_WEIGHTS_EMPTY;
    return (int *)w;
}

#define MC_F_COMM(c) PMPI_Comm_f2c(*(c))
#define MC_F_TYPE(t) PMPI_Type_f2c(*(t))
#define MC_F_OP(o) PMPI_Op_f2c(*(o))
#define MC_F_INFO(i) PMPI_Info_f2c(*(i))
#define MC_F_WIN(w) PMPI_Win_f2c(*(w))

static inline MPI_Status *mc_f_status_in(MPI_Fint *f, MPI_Status *c)
{
    return f == MPI_F_STATUS_IGNORE ? MPI_STATUS_IGNORE : c;
}

static inline void mc_f_status_out(int rc, MPI_Fint *f, const MPI_Status *c)
{
    if ((rc == MPI_SUCCESS || rc == MPI_ERR_IN_STATUS) &&
        f != MPI_F_STATUS_IGNORE)
        PMPI_Status_c2f(c, f);
}

static inline void mc_f_set(MPI_Fint *ierr, int rc)
{
    if (ierr)
        *ierr = (MPI_Fint)rc;
}

/* Store the C request *@r of a successful initiating call, whose return
 * code is @rc: mc_f_req(MPI_Ixxx(..., &r), &r, req). The handle is passed
 * by address because C leaves the order of argument evaluation open: a
 * handle passed by value could be read before the call has set it. */
static inline int mc_f_req(int rc, const MPI_Request *r, MPI_Fint *req)
{
    if (rc == MPI_SUCCESS)
        *req = PMPI_Request_c2f(*r);
    return rc;
}

/* Store a new communicator *@c, as mc_f_req(). */
static inline int mc_f_newcomm(int rc, const MPI_Comm *c, MPI_Fint *newcomm)
{
    if (rc == MPI_SUCCESS)
        *newcomm = PMPI_Comm_c2f(*c);
    return rc;
}

/* C datatype array of @n Fortran handles, in this thread's scratch slot
 * @slot; NULL (and a report) when out of memory. */
MPI_Datatype *mc__tap_f_types(int slot, const MPI_Fint *f, int n);

#endif /* OPEN_MPI */
#endif
