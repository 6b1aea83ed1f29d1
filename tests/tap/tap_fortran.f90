! tap_fortran.f90 - known traffic from a Fortran program (the `mpi` module),
! for the tap's Fortran entry points. tap_expect.fortran() lists the records
! the tap must write; this program also checks, on the Fortran side, what
! the conversions hand back (statuses, 1-based indices, request handles,
! in-place results), and aborts with a message when one is wrong.
program tap_fortran
  use mpi
  implicit none
  integer :: ierr, w, n, right, left, i, cnt, idx, outcnt, color, sub, m
  integer :: req(2), preq(2), st(MPI_STATUS_SIZE), sts(MPI_STATUS_SIZE, 2)
  integer :: idxs(2), ring, shm, dupi, win, msg, dims(1), j
  integer :: scnt(64), sdsp(64), stys(64), rcnt(64), rdsp(64), rtys(64)
  integer, asynchronous :: wbuf(16)
  integer(kind=MPI_ADDRESS_KIND) :: wsize, tdisp
  logical :: periods(1), remain(1)
  integer :: reqs(4), bbuf(1000), ones(64), line, lsub, graph, dadj, dgr, wgrp
  integer :: cgrp, cgrp2, half, inter, merged, mine, nn, gidx(64), gedg(128)
  integer :: srcs(1), dsts(2), degs(1), win2, win3, win4, cnt3(2), dsp3(2), typ3(2)
  integer :: rc3(2), rd3(2), ag3(2)
  integer(kind=MPI_ADDRESS_KIND) :: wptr, adsp(2), rdsp2(2)
  ! Buffers that MPI fills behind the compiler's back (nonblocking calls,
  ! windows) are ASYNCHRONOUS and synchronised with MPI_F_sync_reg before
  ! they are read (MPI-4.0 19.1.17, code movement and register
  ! optimization; from memory).
  integer :: ibuf(100)
  integer, asynchronous :: rbuf(100), ia(64), ib(64)
  double precision :: d(10)
  double precision, asynchronous :: dr(10)
  real :: x(7)
  real, asynchronous :: xr(7)
  character(len=16) :: text
  logical :: flag
  character(len=32) :: scenario
  integer :: provided, dup

  ! "fortran_thread" starts MPI with MPI_Init_thread, anything else with
  ! MPI_Init; the traffic is the same.
  call get_command_argument(1, scenario)
  if (scenario == 'fortran_thread') then
    call MPI_Init_thread(MPI_THREAD_FUNNELED, provided, ierr)
    if (provided < MPI_THREAD_FUNNELED) error stop 'tap_fortran: no MPI_THREAD_FUNNELED'
  else
    call MPI_Init(ierr)
  end if
  call MPI_Comm_rank(MPI_COMM_WORLD, w, ierr)
  call MPI_Comm_size(MPI_COMM_WORLD, n, ierr)
  right = mod(w + 1, n)
  left = mod(w - 1 + n, n)
  ibuf = w

  ! 1. Irecv + Isend + Waitall with statuses: (rank + 1) * 3 integers.
  call MPI_Irecv(rbuf, 100, MPI_INTEGER, left, 10, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Isend(ibuf, (w + 1) * 3, MPI_INTEGER, right, 10, MPI_COMM_WORLD, req(2), ierr)
  call MPI_Waitall(2, req, sts, ierr)
  call MPI_Get_count(sts(:, 1), MPI_INTEGER, cnt, ierr)
  call check(sts(MPI_SOURCE, 1) == left .and. sts(MPI_TAG, 1) == 10 .and. &
             cnt == (left + 1) * 3, 'Waitall status')
  call check(req(1) == MPI_REQUEST_NULL .and. req(2) == MPI_REQUEST_NULL, &
             'Waitall requests')

  ! 2. Sendrecv of 5 double precision values.
  d = dble(w)
  call MPI_Sendrecv(d, 5, MPI_DOUBLE_PRECISION, right, 11, dr, 5, &
                    MPI_DOUBLE_PRECISION, left, 11, MPI_COMM_WORLD, st, ierr)
  call check(st(MPI_SOURCE) == left .and. dr(1) == dble(left), 'Sendrecv')

  ! 3. Isend + Wait, Irecv + Test until done: 8 integers.
  call MPI_Irecv(rbuf, 8, MPI_INTEGER, left, 12, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Isend(ibuf, 8, MPI_INTEGER, right, 12, MPI_COMM_WORLD, req(2), ierr)
  call MPI_Wait(req(2), MPI_STATUS_IGNORE, ierr)
  flag = .false.
  do while (.not. flag)
    call MPI_Test(req(1), flag, st, ierr)
  end do
  call check(st(MPI_TAG) == 12 .and. req(1) == MPI_REQUEST_NULL, 'Test')

  ! 4. Two Irecvs completed by Waitany (1-based indices): 1 and 2 integers.
  call MPI_Irecv(ia, 1, MPI_INTEGER, left, 13, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Irecv(ib, 2, MPI_INTEGER, left, 14, MPI_COMM_WORLD, req(2), ierr)
  call MPI_Send(ibuf, 1, MPI_INTEGER, right, 13, MPI_COMM_WORLD, ierr)
  call MPI_Send(ibuf, 2, MPI_INTEGER, right, 14, MPI_COMM_WORLD, ierr)
  do i = 1, 2
    call MPI_Waitany(2, req, idx, st, ierr)
    call check(idx == 1 .or. idx == 2, 'Waitany index')
    call check(st(MPI_TAG) == 12 + idx, 'Waitany status')
  end do

  ! 5. Waitsome: 3 integers each way.
  call MPI_Irecv(rbuf, 3, MPI_INTEGER, left, 15, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Isend(ibuf, 3, MPI_INTEGER, right, 15, MPI_COMM_WORLD, req(2), ierr)
  cnt = 0
  do while (cnt < 2)
    call MPI_Waitsome(2, req, outcnt, idxs, sts, ierr)
    if (outcnt == MPI_UNDEFINED) exit
    do i = 1, outcnt
      call check(idxs(i) == 1 .or. idxs(i) == 2, 'Waitsome index')
    end do
    cnt = cnt + outcnt
  end do
  call check(cnt == 2, 'Waitsome count')

  ! 6. Recv with MPI_STATUS_IGNORE: 1 integer.
  call MPI_Isend(ibuf, 1, MPI_INTEGER, right, 16, MPI_COMM_WORLD, req(2), ierr)
  call MPI_Recv(rbuf, 1, MPI_INTEGER, left, 16, MPI_COMM_WORLD, MPI_STATUS_IGNORE, ierr)
  call MPI_Wait(req(2), MPI_STATUS_IGNORE, ierr)
  call MPI_F_sync_reg(rbuf)
  call check(rbuf(1) == left, 'Recv')

  ! 7. Collectives on MPI_COMM_WORLD.
  text = 'halo-exchange-3d'
  call MPI_Bcast(text, 16, MPI_CHARACTER, 0, MPI_COMM_WORLD, ierr)
  d = 1.0d0
  call MPI_Allreduce(d, dr, 10, MPI_DOUBLE_PRECISION, MPI_SUM, MPI_COMM_WORLD, ierr)
  call check(dr(10) == dble(n), 'Allreduce')
  ia(1:3) = w + 1
  call MPI_Allreduce(MPI_IN_PLACE, ia, 3, MPI_INTEGER, MPI_SUM, MPI_COMM_WORLD, ierr)
  call check(ia(3) == n * (n + 1) / 2, 'Allreduce in place')
  call MPI_Reduce(ibuf, ia, 4, MPI_INTEGER, MPI_MAX, 0, MPI_COMM_WORLD, ierr)
  if (w == 0) call check(ia(1) == n - 1, 'Reduce')
  call MPI_Alltoall(ibuf, 1, MPI_INTEGER, ia, 1, MPI_INTEGER, MPI_COMM_WORLD, ierr)
  call check(ia(n) == n - 1, 'Alltoall')
  call MPI_Allgather(ibuf, 2, MPI_INTEGER, ia, 2, MPI_INTEGER, MPI_COMM_WORLD, ierr)
  call check(ia(2 * n) == n - 1, 'Allgather')
  call MPI_Gather(ibuf, 2, MPI_INTEGER, ia, 2, MPI_INTEGER, n - 1, MPI_COMM_WORLD, ierr)
  call MPI_Barrier(MPI_COMM_WORLD, ierr)
  x = 2.0
  call MPI_Iallreduce(x, xr, 7, MPI_REAL, MPI_SUM, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Wait(req(1), MPI_STATUS_IGNORE, ierr)
  call MPI_F_sync_reg(xr)
  call check(xr(7) == 2.0 * n, 'Iallreduce')

  ! 8. A communicator of the even and one of the odd ranks: 5 integers.
  color = mod(w, 2)
  call MPI_Comm_split(MPI_COMM_WORLD, color, w, sub, ierr)
  call MPI_Comm_size(sub, m, ierr)
  call MPI_Allreduce(ibuf, ia, 5, MPI_INTEGER, MPI_SUM, sub, ierr)
  call MPI_Comm_free(sub, ierr)

  ! 9. Persistent requests, started three times: 6 integers.
  call MPI_Send_init(ibuf, 6, MPI_INTEGER, right, 9, MPI_COMM_WORLD, preq(1), ierr)
  call MPI_Recv_init(rbuf, 6, MPI_INTEGER, left, 9, MPI_COMM_WORLD, preq(2), ierr)
  do i = 1, 3
    call MPI_Startall(2, preq, ierr)
    call MPI_Waitall(2, preq, MPI_STATUSES_IGNORE, ierr)
  end do
  call check(preq(1) /= MPI_REQUEST_NULL, 'persistent request kept')
  call MPI_Request_free(preq(1), ierr)
  call MPI_Request_free(preq(2), ierr)

  ! 10. Nonblocking collectives beyond the first.
  call MPI_Ialltoall(ibuf, 2, MPI_INTEGER, ia, 2, MPI_INTEGER, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Wait(req(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Igather(ibuf, 3, MPI_INTEGER, ia, 3, MPI_INTEGER, 0, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Wait(req(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Ireduce(d, dr, 4, MPI_DOUBLE_PRECISION, MPI_SUM, 0, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Wait(req(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Iscan(ibuf, ia, 2, MPI_INTEGER, MPI_SUM, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Wait(req(1), MPI_STATUS_IGNORE, ierr)
  call MPI_F_sync_reg(ia)
  call check(ia(1) == w * (w + 1) / 2, 'Iscan')

  ! 11. Alltoallw with one integer to every rank (datatype arrays converted).
  do j = 1, n
    scnt(j) = 1
    sdsp(j) = (j - 1) * 4
    stys(j) = MPI_INTEGER
    rcnt(j) = 1
    rdsp(j) = (j - 1) * 4
    rtys(j) = MPI_INTEGER
  end do
  call MPI_Alltoallw(ibuf, scnt, sdsp, stys, ia, rcnt, rdsp, rtys, MPI_COMM_WORLD, ierr)
  call check(ia(n) == n - 1, 'Alltoallw')

  ! 12. A periodic ring topology: neighbour alltoall of 2 doubles each way.
  dims(1) = n
  periods(1) = .true.
  call MPI_Cart_create(MPI_COMM_WORLD, 1, dims, periods, .false., ring, ierr)
  call MPI_Neighbor_alltoall(d, 2, MPI_DOUBLE_PRECISION, dr, 2, MPI_DOUBLE_PRECISION, &
                             ring, ierr)
  call MPI_Comm_free(ring, ierr)

  ! 13. One-sided: a window of 16 integers, put 4 right, get 2 from left,
  !     accumulate 3 right.
  wbuf = 0
  wsize = 64
  call MPI_Win_create(wbuf, wsize, 4, MPI_INFO_NULL, MPI_COMM_WORLD, win, ierr)
  call MPI_Win_fence(0, win, ierr)
  tdisp = 0
  call MPI_Put(ibuf, 4, MPI_INTEGER, right, tdisp, 4, MPI_INTEGER, win, ierr)
  call MPI_Win_fence(0, win, ierr)
  tdisp = 8
  call MPI_Get(ia, 2, MPI_INTEGER, left, tdisp, 2, MPI_INTEGER, win, ierr)
  call MPI_Accumulate(ibuf, 3, MPI_INTEGER, right, tdisp, 3, MPI_INTEGER, MPI_SUM, win, ierr)
  call MPI_Win_fence(0, win, ierr)
  call MPI_F_sync_reg(wbuf)
  call check(wbuf(1) == left, 'Put')
  call MPI_Win_free(win, ierr)

  ! 14. Matched probe and receive: 3 integers.
  call MPI_Isend(ibuf, 3, MPI_INTEGER, right, 20, MPI_COMM_WORLD, req(2), ierr)
  call MPI_Mprobe(left, 20, MPI_COMM_WORLD, msg, st, ierr)
  call MPI_Mrecv(rbuf, 3, MPI_INTEGER, msg, st, ierr)
  call MPI_Wait(req(2), MPI_STATUS_IGNORE, ierr)
  call check(msg == MPI_MESSAGE_NULL .and. st(MPI_SOURCE) == left, 'Mrecv')

  ! 15. Communicators from split_type and dup_with_info.
  call MPI_Comm_split_type(MPI_COMM_WORLD, MPI_COMM_TYPE_SHARED, w, MPI_INFO_NULL, shm, ierr)
  call MPI_Allreduce(ibuf, ia, 1, MPI_INTEGER, MPI_SUM, shm, ierr)
  call MPI_Comm_dup_with_info(MPI_COMM_WORLD, MPI_INFO_NULL, dupi, ierr)
  call MPI_Allreduce(ibuf, ia, 2, MPI_INTEGER, MPI_SUM, dupi, ierr)
  call MPI_Comm_free(shm, ierr)
  call MPI_Comm_free(dupi, ierr)

  ! 16. The other sends, and Testall, Testany, Testsome, Start, Improbe.
  call MPI_Irecv(rbuf, 1, MPI_INTEGER, left, 30, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Ssend(ibuf, 1, MPI_INTEGER, right, 30, MPI_COMM_WORLD, ierr)
  call MPI_Wait(req(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Buffer_attach(bbuf, 4000, ierr)
  call MPI_Irecv(rbuf, 2, MPI_INTEGER, left, 31, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Bsend(ibuf, 2, MPI_INTEGER, right, 31, MPI_COMM_WORLD, ierr)
  call MPI_Wait(req(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Irecv(rbuf, 3, MPI_INTEGER, left, 32, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Barrier(MPI_COMM_WORLD, ierr)  ! every receive is posted: ready mode
  call MPI_Rsend(ibuf, 3, MPI_INTEGER, right, 32, MPI_COMM_WORLD, ierr)
  call MPI_Wait(req(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Irecv(rbuf, 1, MPI_INTEGER, left, 33, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Issend(ibuf, 1, MPI_INTEGER, right, 33, MPI_COMM_WORLD, req(2), ierr)
  flag = .false.
  do while (.not. flag)
    call MPI_Testall(2, req, flag, sts, ierr)
  end do
  call check(sts(MPI_TAG, 1) == 33 .and. req(1) == MPI_REQUEST_NULL, 'Testall')
  call MPI_Irecv(rbuf, 1, MPI_INTEGER, left, 34, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Ibsend(ibuf, 1, MPI_INTEGER, right, 34, MPI_COMM_WORLD, req(2), ierr)
  cnt = 0
  do while (cnt < 2)
    call MPI_Testany(2, req, idx, flag, st, ierr)
    if (flag .and. idx /= MPI_UNDEFINED) then
      call check(idx == 1 .or. idx == 2, 'Testany index')
      cnt = cnt + 1
    end if
  end do
  call MPI_Buffer_detach(bbuf, cnt, ierr)
  call MPI_Irecv(rbuf, 1, MPI_INTEGER, left, 35, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Barrier(MPI_COMM_WORLD, ierr)
  call MPI_Irsend(ibuf, 1, MPI_INTEGER, right, 35, MPI_COMM_WORLD, req(2), ierr)
  cnt = 0
  do while (cnt < 2)
    call MPI_Testsome(2, req, outcnt, idxs, sts, ierr)
    if (outcnt == MPI_UNDEFINED) exit
    cnt = cnt + outcnt
  end do
  call check(cnt == 2, 'Testsome')
  call MPI_Sendrecv_replace(ia, 2, MPI_INTEGER, right, 36, left, 36, MPI_COMM_WORLD, st, ierr)
  call MPI_Buffer_attach(bbuf, 4000, ierr)
  call MPI_Bsend_init(ibuf, 2, MPI_INTEGER, right, 39, MPI_COMM_WORLD, preq(1), ierr)
  call MPI_Irecv(rbuf, 2, MPI_INTEGER, left, 39, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Start(preq(1), ierr)
  call MPI_Waitall(1, req, MPI_STATUSES_IGNORE, ierr)
  call MPI_Wait(preq(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Request_free(preq(1), ierr)
  call MPI_Buffer_detach(bbuf, cnt, ierr)
  call MPI_Rsend_init(ibuf, 3, MPI_INTEGER, right, 41, MPI_COMM_WORLD, preq(1), ierr)
  call MPI_Irecv(rbuf, 3, MPI_INTEGER, left, 41, MPI_COMM_WORLD, req(1), ierr)
  call MPI_Barrier(MPI_COMM_WORLD, ierr)
  call MPI_Start(preq(1), ierr)
  call MPI_Wait(req(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Wait(preq(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Request_free(preq(1), ierr)
  call MPI_Comm_dup(MPI_COMM_WORLD, dup, ierr)
  call MPI_Allreduce(ibuf, ia, 13, MPI_INTEGER, MPI_SUM, dup, ierr)
  call MPI_Comm_free(dup, ierr)
  call MPI_Ssend_init(ibuf, 1, MPI_INTEGER, right, 37, MPI_COMM_WORLD, preq(1), ierr)
  call MPI_Recv_init(rbuf, 1, MPI_INTEGER, left, 37, MPI_COMM_WORLD, preq(2), ierr)
  call MPI_Start(preq(2), ierr)
  call MPI_Start(preq(1), ierr)
  call MPI_Waitall(2, preq, MPI_STATUSES_IGNORE, ierr)
  call MPI_Request_free(preq(1), ierr)
  call MPI_Request_free(preq(2), ierr)
  call MPI_Isend(ibuf, 2, MPI_INTEGER, right, 38, MPI_COMM_WORLD, req(2), ierr)
  flag = .false.
  do while (.not. flag)
    call MPI_Improbe(left, 38, MPI_COMM_WORLD, flag, msg, st, ierr)
  end do
  call MPI_Imrecv(rbuf, 2, MPI_INTEGER, msg, req(1), ierr)
  call MPI_Waitall(2, req, MPI_STATUSES_IGNORE, ierr)

  ! 17. The other collectives, one integer per block.
  ones = 1
  do j = 1, n
    gidx(j) = j - 1
  end do
  call MPI_Scatter(ibuf, 2, MPI_INTEGER, ia, 2, MPI_INTEGER, 0, MPI_COMM_WORLD, ierr)
  call MPI_Gatherv(ibuf, 1, MPI_INTEGER, ia, ones, gidx, MPI_INTEGER, 0, MPI_COMM_WORLD, ierr)
  call MPI_Scatterv(ibuf, ones, gidx, MPI_INTEGER, ia, 1, MPI_INTEGER, 0, MPI_COMM_WORLD, ierr)
  call MPI_Allgatherv(ibuf, 1, MPI_INTEGER, ia, ones, gidx, MPI_INTEGER, MPI_COMM_WORLD, ierr)
  call MPI_Alltoallv(ibuf, ones, gidx, MPI_INTEGER, ia, ones, gidx, MPI_INTEGER, &
                     MPI_COMM_WORLD, ierr)
  call MPI_Reduce_scatter(ibuf, ia, ones, MPI_INTEGER, MPI_SUM, MPI_COMM_WORLD, ierr)
  call MPI_Reduce_scatter_block(ibuf, ia, 1, MPI_INTEGER, MPI_SUM, MPI_COMM_WORLD, ierr)
  call MPI_Scan(ibuf, ia, 1, MPI_INTEGER, MPI_SUM, MPI_COMM_WORLD, ierr)
  call check(ia(1) == w * (w + 1) / 2, 'Scan')
  call MPI_Exscan(ibuf, ia, 1, MPI_INTEGER, MPI_SUM, MPI_COMM_WORLD, ierr)
  call MPI_Ibarrier(MPI_COMM_WORLD, reqs(1), ierr)
  call MPI_Ibcast(ib, 3, MPI_INTEGER, 0, MPI_COMM_WORLD, reqs(2), ierr)
  call MPI_Waitall(2, reqs, MPI_STATUSES_IGNORE, ierr)
  call MPI_Iexscan(ibuf, ia, 1, MPI_INTEGER, MPI_SUM, MPI_COMM_WORLD, reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Ireduce_scatter(ibuf, ia, ones, MPI_INTEGER, MPI_SUM, MPI_COMM_WORLD, reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Ireduce_scatter_block(ibuf, ia, 1, MPI_INTEGER, MPI_SUM, MPI_COMM_WORLD, reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Iscatter(ibuf, 1, MPI_INTEGER, ia, 1, MPI_INTEGER, 0, MPI_COMM_WORLD, reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Iscatterv(ibuf, ones, gidx, MPI_INTEGER, ia, 1, MPI_INTEGER, 0, MPI_COMM_WORLD, &
                     reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Igatherv(ibuf, 1, MPI_INTEGER, ia, ones, gidx, MPI_INTEGER, 0, MPI_COMM_WORLD, &
                    reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Iallgather(ibuf, 1, MPI_INTEGER, ia, 1, MPI_INTEGER, MPI_COMM_WORLD, reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Iallgatherv(ibuf, 1, MPI_INTEGER, ia, ones, gidx, MPI_INTEGER, MPI_COMM_WORLD, &
                       reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Ialltoallv(ibuf, ones, gidx, MPI_INTEGER, ia, ones, gidx, MPI_INTEGER, &
                      MPI_COMM_WORLD, reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Ialltoallw(ibuf, scnt, sdsp, stys, ia, rcnt, rdsp, rtys, MPI_COMM_WORLD, &
                      reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_F_sync_reg(ia)
  call check(ia(n) == n - 1, 'Ialltoallw')

  ! 18. Topologies and the other communicator constructors.
  dims(1) = n
  periods(1) = .false.
  call MPI_Cart_create(MPI_COMM_WORLD, 1, dims, periods, .false., line, ierr)
  remain(1) = .true.
  call MPI_Cart_sub(line, remain, lsub, ierr)
  call MPI_Neighbor_allgather(ibuf, 3, MPI_INTEGER, ia, 3, MPI_INTEGER, lsub, ierr)
  call MPI_Ineighbor_allgather(ibuf, 1, MPI_INTEGER, ia, 1, MPI_INTEGER, lsub, reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Comm_free(lsub, ierr)
  call MPI_Comm_free(line, ierr)
  periods(1) = .true.
  call MPI_Cart_create(MPI_COMM_WORLD, 1, dims, periods, .false., ring, ierr)
  ! Send 1 integer to the -1 and 2 to the +1 neighbour; so 2 arrive from
  ! the -1 neighbour (its +1 block) and 1 from the +1 neighbour.
  cnt3 = (/ 1, 2 /)
  dsp3 = (/ 0, 1 /)
  rc3 = (/ 2, 1 /)
  rd3 = (/ 0, 2 /)
  ag3 = (/ 2, 2 /)
  typ3 = MPI_INTEGER
  adsp = (/ 0_MPI_ADDRESS_KIND, 4_MPI_ADDRESS_KIND /)
  rdsp2 = (/ 0_MPI_ADDRESS_KIND, 8_MPI_ADDRESS_KIND /)
  call MPI_Neighbor_allgatherv(ibuf, 2, MPI_INTEGER, ia, ag3, rd3, MPI_INTEGER, ring, ierr)
  call MPI_Neighbor_alltoallv(ibuf, cnt3, dsp3, MPI_INTEGER, ia, rc3, rd3, MPI_INTEGER, &
                              ring, ierr)
  call MPI_Neighbor_alltoallw(ibuf, cnt3, adsp, typ3, ia, rc3, rdsp2, typ3, ring, ierr)
  call MPI_Ineighbor_alltoall(ibuf, 1, MPI_INTEGER, ia, 1, MPI_INTEGER, ring, reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Ineighbor_allgatherv(ibuf, 2, MPI_INTEGER, ia, ag3, rd3, MPI_INTEGER, ring, &
                                reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  ! The nonblocking v and w forms send 2 integers each way: with 2 ranks
  ! both neighbours are one process, and Open MPI 4.1's nonblocking
  ! schedule then matches the two blocks in posting order, which unequal
  ! blocks would truncate.
  adsp(2) = 8
  call MPI_Ineighbor_alltoallv(ibuf, ag3, rd3, MPI_INTEGER, ia, ag3, rd3, MPI_INTEGER, &
                               ring, reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Ineighbor_alltoallw(ibuf, ag3, adsp, typ3, ia, ag3, adsp, typ3, ring, &
                               reqs(1), ierr)
  call MPI_Wait(reqs(1), MPI_STATUS_IGNORE, ierr)
  call MPI_Comm_free(ring, ierr)
  ! A ring as a graph: node j has the edges j-1 and j+1 (mod n).
  do j = 1, n
    gidx(j) = 2 * j
    gedg(2 * j - 1) = mod(j - 2 + n, n)
    gedg(2 * j) = mod(j, n)
  end do
  call MPI_Graph_create(MPI_COMM_WORLD, n, gidx, gedg, .false., graph, ierr)
  call MPI_Allreduce(ibuf, ia, 6, MPI_INTEGER, MPI_SUM, graph, ierr)
  call MPI_Comm_free(graph, ierr)
  srcs(1) = left
  dsts(1) = right
  call MPI_Dist_graph_create_adjacent(MPI_COMM_WORLD, 1, srcs, MPI_UNWEIGHTED, 1, dsts, &
                                      MPI_UNWEIGHTED, MPI_INFO_NULL, .false., dadj, ierr)
  call MPI_Allreduce(ibuf, ia, 7, MPI_INTEGER, MPI_SUM, dadj, ierr)
  call MPI_Comm_free(dadj, ierr)
  srcs(1) = w
  degs(1) = 1
  dsts(1) = right
  call MPI_Dist_graph_create(MPI_COMM_WORLD, 1, srcs, degs, dsts, MPI_UNWEIGHTED, &
                             MPI_INFO_NULL, .false., dgr, ierr)
  call MPI_Allreduce(ibuf, ia, 8, MPI_INTEGER, MPI_SUM, dgr, ierr)
  call MPI_Comm_free(dgr, ierr)
  call MPI_Comm_group(MPI_COMM_WORLD, wgrp, ierr)
  call MPI_Comm_create(MPI_COMM_WORLD, wgrp, cgrp, ierr)
  call MPI_Allreduce(ibuf, ia, 9, MPI_INTEGER, MPI_SUM, cgrp, ierr)
  call MPI_Comm_create_group(MPI_COMM_WORLD, wgrp, 5, cgrp2, ierr)
  call MPI_Allreduce(ibuf, ia, 10, MPI_INTEGER, MPI_SUM, cgrp2, ierr)
  call MPI_Comm_free(cgrp, ierr)
  call MPI_Comm_free(cgrp2, ierr)
  call MPI_Group_free(wgrp, ierr)
  if (n >= 2) then
    ! Even and odd ranks, joined by an intercommunicator (leaders: world
    ! ranks 0 and 1), then merged.
    call MPI_Comm_split(MPI_COMM_WORLD, mod(w, 2), w, half, ierr)
    call MPI_Intercomm_create(half, 0, MPI_COMM_WORLD, 1 - mod(w, 2), 40, inter, ierr)
    call MPI_Allreduce(ibuf, ia, 1, MPI_INTEGER, MPI_SUM, inter, ierr)
    call MPI_Intercomm_merge(inter, mod(w, 2) == 1, merged, ierr)
    call MPI_Allreduce(ibuf, ia, 11, MPI_INTEGER, MPI_SUM, merged, ierr)
    call MPI_Comm_free(merged, ierr)
    call MPI_Comm_free(inter, ierr)
    call MPI_Comm_free(half, ierr)
  end if

  ! 19. Request-based and atomic one-sided calls in a passive-target epoch,
  !     on a window MPI allocates; the other window constructors.
  wsize = 64
  call MPI_Win_allocate(wsize, 4, MPI_INFO_NULL, MPI_COMM_WORLD, wptr, win2, ierr)
  call MPI_Win_lock_all(0, win2, ierr)
  tdisp = 0
  call MPI_Rput(ibuf, 2, MPI_INTEGER, right, tdisp, 2, MPI_INTEGER, win2, reqs(1), ierr)
  call MPI_Rget(ia, 1, MPI_INTEGER, left, tdisp, 1, MPI_INTEGER, win2, reqs(2), ierr)
  call MPI_Raccumulate(ibuf, 1, MPI_INTEGER, right, tdisp, 1, MPI_INTEGER, MPI_SUM, win2, &
                       reqs(3), ierr)
  call MPI_Rget_accumulate(ibuf, 1, MPI_INTEGER, ib, 1, MPI_INTEGER, right, tdisp, 1, &
                           MPI_INTEGER, MPI_SUM, win2, reqs(4), ierr)
  call MPI_Waitall(4, reqs, MPI_STATUSES_IGNORE, ierr)
  call MPI_Get_accumulate(ibuf, 2, MPI_INTEGER, ib, 2, MPI_INTEGER, right, tdisp, 2, &
                          MPI_INTEGER, MPI_SUM, win2, ierr)
  call MPI_Fetch_and_op(ibuf, ib, MPI_INTEGER, right, tdisp, MPI_SUM, win2, ierr)
  call MPI_Compare_and_swap(ibuf, ibuf(2), ib, MPI_INTEGER, left, tdisp, win2, ierr)
  call MPI_Win_unlock_all(win2, ierr)
  call MPI_Win_free(win2, ierr)
  call MPI_Comm_split_type(MPI_COMM_WORLD, MPI_COMM_TYPE_SHARED, w, MPI_INFO_NULL, shm, ierr)
  call MPI_Win_allocate_shared(wsize, 4, MPI_INFO_NULL, shm, wptr, win3, ierr)
  call MPI_Win_free(win3, ierr)
  call MPI_Comm_free(shm, ierr)
  call MPI_Win_create_dynamic(MPI_INFO_NULL, MPI_COMM_WORLD, win4, ierr)
  call MPI_Win_free(win4, ierr)

  ! 20. Paused: nothing between MPI_Pcontrol(0) and MPI_Pcontrol(1).
  call MPI_Pcontrol(0)
  call MPI_Allreduce(ibuf, ia, 12, MPI_INTEGER, MPI_SUM, MPI_COMM_WORLD, ierr)
  call MPI_Pcontrol(1)

  call MPI_Finalize(ierr)

contains

  subroutine check(ok, what)
    logical, intent(in) :: ok
    character(len=*), intent(in) :: what
    integer :: e
    if (.not. ok) then
      write (0, '(a, i0, a, a)') 'tap_fortran: rank ', w, ': wrong result of ', what
      call MPI_Abort(MPI_COMM_WORLD, 3, e)
    end if
  end subroutine check

end program tap_fortran
