! tap_fortran_f08.f90 - a program using the mpi_f08 module, whose
! bindings the tap does not intercept: it must run normally, and the tap
! must say on stderr that nothing was recorded (tap_fortran_f08_test.py).
program tap_fortran_f08
  use mpi_f08
  implicit none
  integer :: w, a(2), b(2)
  call MPI_Init()
  call MPI_Comm_rank(MPI_COMM_WORLD, w)
  a = w
  call MPI_Allreduce(a, b, 2, MPI_INTEGER, MPI_SUM, MPI_COMM_WORLD)
  call MPI_Finalize()
end program tap_fortran_f08
