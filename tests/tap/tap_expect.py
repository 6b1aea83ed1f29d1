# tap_expect.py - the records the tap must write for each scenario of tap_traffic.c.
#
# Sizes follow the MPI standard's definitions (MPI-4.0, cited from memory):
# a message carries count x MPI_Type_size(datatype) bytes (section 3.2.2 and
# 5.1 on type maps: the size counts data, not the extent); a receive's size
# is what MPI_Get_count reports for the arrived message (3.2.5), not the
# posted count; a communication with MPI_PROC_NULL moves nothing (3.11).
# The per-call conventions of collectives are the project's, stated in
# docs/trace-format.md, byte conventions, and derived from the argument semantics of each
# collective (chapter 6). Record directions: 0 none, 1 send, 2 receive.
# Flags: 2 = MC_RF_IN_PLACE, 4 = MC_RF_PER_PEER.

NONE, SEND, RECV = 0, 1, 2
IN_PLACE, PER_PEER = 2, 4
INT, DOUBLE, LONG, FLOAT, CHAR = 4, 8, 8, 4, 1  # sizes on x86-64 Linux (common practice)


def rec(op, d, peer, nbytes, comm, size, tag=-1, flags=0):
    return ("MPI_" + op, d, peer, nbytes, comm, size, tag, flags)


def dims_create_2d(n):
    """MPI_Dims_create(n, 2): dimensions as close to each other as possible,
    in non-increasing order (MPI-4.0 section 8.5.2, from memory)."""
    best = None
    for a in range(1, n + 1):
        if n % a == 0:
            b = n // a
            if a >= b and (best is None or a - b < best[0] - best[1]):
                best = (a, b)
    return best


def ring(w, n):
    right, left = (w + 1) % n, (w - 1) % n
    out = []
    for it in range(3):
        out.append(rec("Isend", SEND, right, INT * ((w + 1) * 10 + it), "world", n, 100 + it))
        out.append(rec("Recv", RECV, left, INT * ((left + 1) * 10 + it), "world", n, 100 + it))
    out.append(rec("Irecv", RECV, left, 0, "world", n, 7))
    out.append(rec("Send", SEND, right, 0, "world", n, 7))
    return out  # the send to MPI_PROC_NULL leaves no record


def p2pmore(w, n):
    right, left = (w + 1) % n, (w - 1) % n
    POSTED = 1  # MC_RF_POSTED_SIZE
    out = [rec("Send", SEND, right, 3 * INT, "world", n, 20),
           rec("Mrecv", RECV, left, 3 * INT, "world", n, 20),
           rec("Send", SEND, right, 5 * INT, "world", n, 21),
           rec("Imrecv", RECV, left, 5 * INT, "world", n, 21),
           rec("Irecv", RECV, left, 1 * INT, "world", n, 22),
           rec("Irecv", RECV, left, 2 * INT, "world", n, 23),
           rec("Send", SEND, right, 1 * INT, "world", n, 22),
           rec("Send", SEND, right, 2 * INT, "world", n, 23),
           rec("Irecv", RECV, left, 4 * INT, "world", n, 24),
           rec("Ssend", SEND, right, 4 * INT, "world", n, 24),
           # freed while pending: posted size 10 ints, posted source and tag
           rec("Irecv", RECV, left, 10 * INT, "world", n, 25, flags=POSTED),
           rec("Send", SEND, right, 7 * INT, "world", n, 25),
           rec("Irecv", RECV, left, 6 * INT, "world", n, 26),
           rec("Bsend", SEND, right, 6 * INT, "world", n, 26),
           rec("Barrier", NONE, -1, 0, "world", n),
           rec("Irecv", RECV, left, 9 * INT, "world", n, 27),
           rec("Rsend", SEND, right, 9 * INT, "world", n, 27),
           rec("Barrier", NONE, -1, 0, "world", n)]
    return out  # probes, the cancelled receive: no records


def halo(w, n):
    d0, d1 = dims_create_2d(n)
    c0, c1 = divmod(w, d1)  # row-major rank order (MPI-4.0 8.5.1, from memory)
    xlo = ((c0 - 1) % d0) * d1 + c1
    xhi = ((c0 + 1) % d0) * d1 + c1
    ylo = c0 * d1 + (c1 - 1) % d1
    yhi = c0 * d1 + (c1 + 1) % d1
    col, row = 4 * DOUBLE, 6 * DOUBLE  # vector of NY=4 doubles; NX=6 doubles
    out = []
    for _ in range(2):
        out += [rec("Irecv", RECV, xlo, col, "cart", n, 1),
                rec("Irecv", RECV, xhi, col, "cart", n, 2),
                rec("Irecv", RECV, ylo, row, "cart", n, 3),
                rec("Irecv", RECV, yhi, row, "cart", n, 4),
                rec("Isend", SEND, xhi, col, "cart", n, 1),
                rec("Isend", SEND, xlo, col, "cart", n, 2),
                rec("Isend", SEND, yhi, row, "cart", n, 3),
                rec("Isend", SEND, ylo, row, "cart", n, 4)]
    return out


def sendrecv(w, n):
    right, left = (w + 1) % n, (w - 1) % n
    return [rec("Sendrecv", SEND, right, DOUBLE * 3 * (w + 1), "world", n, 5),
            rec("Sendrecv", RECV, left, DOUBLE * 3 * (left + 1), "world", n, 5),
            rec("Sendrecv_replace", SEND, left, 4 * LONG, "world", n, 6),
            rec("Sendrecv_replace", RECV, right, 4 * LONG, "world", n, 6)]


def coll(w, n):
    color = w % 2
    members = [x for x in range(n) if x % 2 == color]
    r, m = members.index(w), len(members)
    sub = "sub%d" % color
    out = [rec("Allreduce", NONE, -1, 5 * DOUBLE, sub, m),
           rec("Allreduce", NONE, -1, 3 * INT, sub, m, flags=IN_PLACE),
           rec("Allreduce", NONE, -1, 0, sub, m)]
    blocks = [INT * ((r + j) % 3) for j in range(m)]
    out.append(rec("Alltoallv", NONE, -1, sum(blocks), sub, m))
    out += [rec("Alltoallv", SEND, members[j], b, sub, m, flags=PER_PEER)
            for j, b in enumerate(blocks) if b > 0]
    if r == 0:
        out.append(rec("Gatherv", NONE, -1, INT * sum(j + 1 for j in range(m)), sub, m))
        out.append(rec("Gatherv", NONE, -1, INT * sum(j + 1 for j in range(1, m)), sub, m,
                       flags=IN_PLACE))
    else:
        out += [rec("Gatherv", NONE, -1, INT * (r + 1), sub, m)] * 2
    out += [rec("Bcast", NONE, -1, 16 * CHAR, "world", n),
            rec("Gather", NONE, -1, (n if w == 0 else 1) * 2 * INT, "world", n),
            rec("Scatter", NONE, -1, (n if w == n - 1 else 1) * 3 * DOUBLE, "world", n),
            rec("Alltoall", NONE, -1, n * 2 * INT, "world", n),
            rec("Reduce_scatter_block", NONE, -1, n * 2 * INT, "world", n),
            rec("Barrier", NONE, -1, 0, "world", n),
            rec("Iallreduce", NONE, -1, 7 * FLOAT, "world", n)]
    return out


def persist(w, n, have_pcoll=True):
    right, left = (w + 1) % n, (w - 1) % n
    out = [rec("Send_init", SEND, right, 6 * INT, "world", n, 9)] * 3
    out += [rec("Recv_init", RECV, left, 6 * INT, "world", n, 9)] * 3
    if have_pcoll:
        out += [rec("Allreduce_init", NONE, -1, 4 * INT, "world", n)] * 2
    return out


def rma(w, n):
    right, left = (w + 1) % n, (w - 1) % n
    return [rec("Put", SEND, right, 4 * INT, "world", n),
            rec("Get", RECV, left, 2 * INT, "world", n),
            rec("Accumulate", SEND, right, 3 * INT, "world", n),
            rec("Fetch_and_op", SEND, right, INT, "world", n),
            rec("Fetch_and_op", RECV, right, INT, "world", n),
            rec("Get_accumulate", SEND, right, 2 * INT, "world", n),
            rec("Get_accumulate", RECV, right, 2 * INT, "world", n),
            rec("Compare_and_swap", SEND, left, 2 * INT, "world", n),
            rec("Compare_and_swap", RECV, left, INT, "world", n)]


def neighbor(w, n):
    right, left = (w + 1) % n, (w - 1) % n
    # Cartesian neighbour order: per dimension the -1 then the +1 neighbour
    # (MPI-4.0 section 8.6, from memory).
    out = [rec("Neighbor_alltoall", NONE, -1, 2 * 2 * DOUBLE, "ring_c", n),
           rec("Neighbor_alltoall", SEND, left, 2 * DOUBLE, "ring_c", n, flags=PER_PEER),
           rec("Neighbor_alltoall", SEND, right, 2 * DOUBLE, "ring_c", n, flags=PER_PEER)]
    line = [p for p in (w - 1, w + 1) if 0 <= p < n]
    out.append(rec("Neighbor_allgather", NONE, -1, 3 * INT * len(line), "line_c", n))
    out += [rec("Neighbor_allgather", SEND, p, 3 * INT, "line_c", n, flags=PER_PEER)
            for p in line]
    # Distributed graph, destinations (right, left), counts (1, 2) doubles.
    out += [rec("Neighbor_alltoallv", NONE, -1, 3 * DOUBLE, "graph", n),
            rec("Neighbor_alltoallv", SEND, right, 1 * DOUBLE, "graph", n, flags=PER_PEER),
            rec("Neighbor_alltoallv", SEND, left, 2 * DOUBLE, "graph", n, flags=PER_PEER)]
    # Ialltoallw on MPI_COMM_WORLD: j+1 ints to rank j.
    out.append(rec("Ialltoallw", NONE, -1, INT * sum(j + 1 for j in range(n)), "world", n))
    out += [rec("Ialltoallw", SEND, j, INT * (j + 1), "world", n, flags=PER_PEER)
            for j in range(n)]
    return out


def comms(w, n):
    out = [rec("Barrier", NONE, -1, 0, "dup", n), rec("Barrier", NONE, -1, 0, "idup", n)]
    if n >= 2:
        color, r = w % 2, w // 2
        mine = (n + 1) // 2 if color == 0 else n // 2
        other = n - mine
        if r < other:
            if color == 0:  # to rank r of the odd group: world rank 2r+1
                out.append(rec("Send", SEND, 2 * r + 1, 2 * INT, "inter", mine, 8))
            else:
                out.append(rec("Recv", RECV, 2 * r, 2 * INT, "inter", mine, 8))
        # Bcast over the intercommunicator (MPI-4.0 6.4, intercommunicator
        # case, from memory): the root (MPI_ROOT) sends, its group's other
        # members (MPI_PROC_NULL) move nothing, the other group receives.
        bcast = 0 if (color == 0 and r > 0) else 2 * INT
        out.append(rec("Bcast", NONE, -1, bcast, "inter", mine))
        out.append(rec("Allreduce", NONE, -1, INT, "merged", n, flags=IN_PLACE))
    return out


def errors(w, n):
    right, left = (w + 1) % n, (w - 1) % n
    # The two truncated receives failed: no receive records for them.
    return [rec("Send", SEND, right, 4 * INT, "world", n, 30),
            rec("Send", SEND, right, 4 * INT, "world", n, 31),
            rec("Send", SEND, right, 3 * INT, "world", n, 32),
            rec("Irecv", RECV, left, 3 * INT, "world", n, 32)]


def pcontrol(w, n):
    right, left = (w + 1) % n, (w - 1) % n
    # Only the exchange after MPI_Pcontrol(1) is recorded.
    return [rec("Sendrecv", SEND, right, 2 * INT, "world", n, 41),
            rec("Sendrecv", RECV, left, 2 * INT, "world", n, 41)]


def fortran(w, n):
    """tap_fortran.f90: the same conventions reached through the Fortran
    entry points. Fortran INTEGER 4 bytes, DOUBLE PRECISION 8, REAL 4,
    CHARACTER 1 (gfortran defaults, common practice)."""
    right, left = (w + 1) % n, (w - 1) % n
    F_INT, F_DBL, F_REAL, F_CHAR = 4, 8, 4, 1
    color = w % 2
    m = len([x for x in range(n) if x % 2 == color])
    out = [rec("Isend", SEND, right, F_INT * (w + 1) * 3, "world", n, 10),
           rec("Irecv", RECV, left, F_INT * (left + 1) * 3, "world", n, 10),
           rec("Sendrecv", SEND, right, 5 * F_DBL, "world", n, 11),
           rec("Sendrecv", RECV, left, 5 * F_DBL, "world", n, 11),
           rec("Isend", SEND, right, 8 * F_INT, "world", n, 12),
           rec("Irecv", RECV, left, 8 * F_INT, "world", n, 12),
           rec("Send", SEND, right, 1 * F_INT, "world", n, 13),
           rec("Send", SEND, right, 2 * F_INT, "world", n, 14),
           rec("Irecv", RECV, left, 1 * F_INT, "world", n, 13),
           rec("Irecv", RECV, left, 2 * F_INT, "world", n, 14),
           rec("Isend", SEND, right, 3 * F_INT, "world", n, 15),
           rec("Irecv", RECV, left, 3 * F_INT, "world", n, 15),
           rec("Isend", SEND, right, 1 * F_INT, "world", n, 16),
           rec("Recv", RECV, left, 1 * F_INT, "world", n, 16),
           rec("Bcast", NONE, -1, 16 * F_CHAR, "world", n),
           rec("Allreduce", NONE, -1, 10 * F_DBL, "world", n),
           rec("Allreduce", NONE, -1, 3 * F_INT, "world", n, flags=IN_PLACE),
           rec("Reduce", NONE, -1, 4 * F_INT, "world", n),
           rec("Alltoall", NONE, -1, n * F_INT, "world", n),
           rec("Allgather", NONE, -1, 2 * F_INT, "world", n),
           rec("Gather", NONE, -1, (n if w == n - 1 else 1) * 2 * F_INT, "world", n),
           rec("Barrier", NONE, -1, 0, "world", n),
           rec("Iallreduce", NONE, -1, 7 * F_REAL, "world", n),
           rec("Allreduce", NONE, -1, 5 * F_INT, "sub%d" % color, m)]
    out += [rec("Send_init", SEND, right, 6 * F_INT, "world", n, 9)] * 3
    out += [rec("Recv_init", RECV, left, 6 * F_INT, "world", n, 9)] * 3
    out += [rec("Ialltoall", NONE, -1, n * 2 * F_INT, "world", n),
            rec("Igather", NONE, -1, (n if w == 0 else 1) * 3 * F_INT, "world", n),
            rec("Ireduce", NONE, -1, 4 * F_DBL, "world", n),
            rec("Iscan", NONE, -1, 2 * F_INT, "world", n),
            rec("Alltoallw", NONE, -1, n * F_INT, "world", n)]
    out += [rec("Alltoallw", SEND, j, F_INT, "world", n, flags=PER_PEER) for j in range(n)]
    # Periodic ring: the -1 then the +1 neighbour (MPI-4.0 8.6, from memory).
    out += [rec("Neighbor_alltoall", NONE, -1, 2 * 2 * F_DBL, "ring_f", n),
            rec("Neighbor_alltoall", SEND, left, 2 * F_DBL, "ring_f", n, flags=PER_PEER),
            rec("Neighbor_alltoall", SEND, right, 2 * F_DBL, "ring_f", n, flags=PER_PEER)]
    out += [rec("Put", SEND, right, 4 * F_INT, "world", n),
            rec("Get", RECV, left, 2 * F_INT, "world", n),
            rec("Accumulate", SEND, right, 3 * F_INT, "world", n),
            rec("Isend", SEND, right, 3 * F_INT, "world", n, 20),
            rec("Mrecv", RECV, left, 3 * F_INT, "world", n, 20),
            rec("Allreduce", NONE, -1, 1 * F_INT, "shm", n),
            rec("Allreduce", NONE, -1, 2 * F_INT, "dupi", n)]
    # 16. the other sends and completion calls
    for op, cnt, tag in (("Ssend", 1, 30), ("Bsend", 2, 31), ("Rsend", 3, 32),
                         ("Issend", 1, 33), ("Ibsend", 1, 34), ("Irsend", 1, 35)):
        out += [rec(op, SEND, right, cnt * F_INT, "world", n, tag),
                rec("Irecv", RECV, left, cnt * F_INT, "world", n, tag)]
    out += [rec("Barrier", NONE, -1, 0, "world", n)] * 3
    out += [rec("Bsend_init", SEND, right, 2 * F_INT, "world", n, 39),
            rec("Irecv", RECV, left, 2 * F_INT, "world", n, 39),
            rec("Rsend_init", SEND, right, 3 * F_INT, "world", n, 41),
            rec("Irecv", RECV, left, 3 * F_INT, "world", n, 41),
            rec("Allreduce", NONE, -1, 13 * F_INT, "dup", n)]
    out += [rec("Sendrecv_replace", SEND, right, 2 * F_INT, "world", n, 36),
            rec("Sendrecv_replace", RECV, left, 2 * F_INT, "world", n, 36),
            rec("Ssend_init", SEND, right, F_INT, "world", n, 37),
            rec("Recv_init", RECV, left, F_INT, "world", n, 37),
            rec("Isend", SEND, right, 2 * F_INT, "world", n, 38),
            rec("Imrecv", RECV, left, 2 * F_INT, "world", n, 38)]
    # 17. the other collectives, one integer per block
    root = w == 0
    out += [rec("Scatter", NONE, -1, (n if root else 1) * 2 * F_INT, "world", n),
            rec("Gatherv", NONE, -1, (n if root else 1) * F_INT, "world", n),
            rec("Scatterv", NONE, -1, (n if root else 1) * F_INT, "world", n),
            rec("Allgatherv", NONE, -1, F_INT, "world", n),
            rec("Alltoallv", NONE, -1, n * F_INT, "world", n),
            rec("Reduce_scatter", NONE, -1, n * F_INT, "world", n),
            rec("Reduce_scatter_block", NONE, -1, n * F_INT, "world", n),
            rec("Scan", NONE, -1, F_INT, "world", n),
            rec("Exscan", NONE, -1, F_INT, "world", n),
            rec("Ibarrier", NONE, -1, 0, "world", n),
            rec("Ibcast", NONE, -1, 3 * F_INT, "world", n),
            rec("Iexscan", NONE, -1, F_INT, "world", n),
            rec("Ireduce_scatter", NONE, -1, n * F_INT, "world", n),
            rec("Ireduce_scatter_block", NONE, -1, n * F_INT, "world", n),
            rec("Iscatter", NONE, -1, (n if root else 1) * F_INT, "world", n),
            rec("Iscatterv", NONE, -1, (n if root else 1) * F_INT, "world", n),
            rec("Igatherv", NONE, -1, (n if root else 1) * F_INT, "world", n),
            rec("Iallgather", NONE, -1, F_INT, "world", n),
            rec("Iallgatherv", NONE, -1, F_INT, "world", n),
            rec("Ialltoallv", NONE, -1, n * F_INT, "world", n),
            rec("Ialltoallw", NONE, -1, n * F_INT, "world", n)]
    for op in ("Alltoallv", "Ialltoallv", "Ialltoallw"):
        out += [rec(op, SEND, j, F_INT, "world", n, flags=PER_PEER) for j in range(n)]
    # 18. topologies: a line (non-periodic, through Cart_sub) and a ring
    line = [p for p in (w - 1, w + 1) if 0 <= p < n]
    for op, cnt in (("Neighbor_allgather", 3), ("Ineighbor_allgather", 1)):
        out.append(rec(op, NONE, -1, cnt * F_INT * len(line), "line_s", n))
        out += [rec(op, SEND, p, cnt * F_INT, "line_s", n, flags=PER_PEER) for p in line]
    # ring: destination 0 is the -1 neighbour, destination 1 the +1 one;
    # cnt3 = (1, 2) integers per destination for the v and w forms.
    for op in ("Neighbor_allgatherv", "Ineighbor_allgatherv"):
        out.append(rec(op, NONE, -1, 2 * 2 * F_INT, "ring_g", n))
        out += [rec(op, SEND, p, 2 * F_INT, "ring_g", n, flags=PER_PEER) for p in (left, right)]
    for op in ("Neighbor_alltoallv", "Neighbor_alltoallw"):
        out.append(rec(op, NONE, -1, 3 * F_INT, "ring_g", n))
        out += [rec(op, SEND, left, 1 * F_INT, "ring_g", n, flags=PER_PEER),
                rec(op, SEND, right, 2 * F_INT, "ring_g", n, flags=PER_PEER)]
    for op in ("Ineighbor_alltoallv", "Ineighbor_alltoallw"):  # 2 integers each way
        out.append(rec(op, NONE, -1, 4 * F_INT, "ring_g", n))
        out += [rec(op, SEND, p, 2 * F_INT, "ring_g", n, flags=PER_PEER) for p in (left, right)]
    out.append(rec("Ineighbor_alltoall", NONE, -1, 2 * F_INT, "ring_g", n))
    out += [rec("Ineighbor_alltoall", SEND, p, F_INT, "ring_g", n, flags=PER_PEER)
            for p in (left, right)]
    for cnt, sym in ((6, "graph"), (7, "dist_adj"), (8, "dist"), (9, "created"),
                     (10, "created_group")):
        out.append(rec("Allreduce", NONE, -1, cnt * F_INT, sym, n))
    if n >= 2:
        mine = len([x for x in range(n) if x % 2 == w % 2])
        out += [rec("Allreduce", NONE, -1, F_INT, "inter", mine),
                rec("Allreduce", NONE, -1, 11 * F_INT, "merged", n)]
    # 19. request-based and atomic one-sided calls
    out += [rec("Rput", SEND, right, 2 * F_INT, "world", n),
            rec("Rget", RECV, left, F_INT, "world", n),
            rec("Raccumulate", SEND, right, F_INT, "world", n),
            rec("Rget_accumulate", SEND, right, F_INT, "world", n),
            rec("Rget_accumulate", RECV, right, F_INT, "world", n),
            rec("Get_accumulate", SEND, right, 2 * F_INT, "world", n),
            rec("Get_accumulate", RECV, right, 2 * F_INT, "world", n),
            rec("Fetch_and_op", SEND, right, F_INT, "world", n),
            rec("Fetch_and_op", RECV, right, F_INT, "world", n),
            rec("Compare_and_swap", SEND, left, 2 * F_INT, "world", n),
            rec("Compare_and_swap", RECV, left, F_INT, "world", n)]
    return out


SCENARIOS = {"ring": ring, "p2pmore": p2pmore, "halo": halo, "sendrecv": sendrecv, "coll": coll,
             "persist": persist, "rma": rma, "neighbor": neighbor,
             "comms": comms, "errors": errors, "pcontrol": pcontrol, "fortran": fortran,
             "fortran_thread": fortran}


ORDER = ("ring", "p2pmore", "halo", "sendrecv", "coll", "persist", "rma", "neighbor",
         "comms", "errors", "pcontrol")


def expected(scenario, w, n):
    """Records of one scenario (or "all") on world rank w of n."""
    if scenario == "all":
        out = []
        for name in ORDER:
            out += SCENARIOS[name](w, n)
        return out
    return SCENARIOS[scenario](w, n)


ONESIDED = {"MPI_" + x for x in ("Put", "Get", "Accumulate", "Get_accumulate", "Fetch_and_op",
                                 "Compare_and_swap", "Rput", "Rget", "Raccumulate",
                                 "Rget_accumulate")}
def category(op):
    """'p2p', 'coll' (neighbourhood included) or 'onesided', as the
    operation table of include/msgcensus/ops.h files them."""
    if op in ONESIDED:
        return "onesided"
    base = op[4:]
    if base.endswith("_init") and base[:-5] in ("Send", "Bsend", "Ssend", "Rsend", "Recv"):
        return "p2p"
    if base in ("Send", "Bsend", "Ssend", "Rsend", "Isend", "Ibsend", "Issend", "Irsend",
                "Recv", "Irecv", "Mrecv", "Imrecv", "Sendrecv", "Sendrecv_replace"):
        return "p2p"
    return "coll"
