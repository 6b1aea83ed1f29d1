#!/usr/bin/python3
"""synth_geometry.py - checks the halo sizes, counts and matching of 'msgcensus synth' against an independent NumPy model.

The files are read with NumPy straight from the byte layout of
docs/trace-format.md (file header, 40-byte block headers, 48-byte records),
not through the project's reader, and the expected halo messages are computed
here from the scenario rules of docs/synth.md with NumPy, independently of
src/lib/synth.c.
"""
import collections
import itertools
import os
import shutil
import subprocess
import sys
import tempfile

import numpy as np  # Debian python3-numpy: structured arrays for the records

CLI = os.environ["MC_CLI"]

# Record layout of trace formats 1.0 and 2.0 (docs/trace-format.md).
REC = np.dtype([("bytes", "<u8"), ("t_start", "<u8"), ("t_end", "<u8"),
                ("comm", "<u4"), ("comm_size", "<u4"), ("peer", "<i4"),
                ("tag", "<i4"), ("op", "<u2"), ("dir", "u1"), ("flags", "u1"),
                ("reserved", "<u4")])
assert REC.itemsize == 48

# Operation codes of include/msgcensus/ops.h (the MPI names are the MPI-4
# standard's).
ISEND, IRECV, PUT = 5, 10, 300
BCAST, GATHER, GATHERV, ALLTOALL, ALLREDUCE = 101, 102, 103, 108, 112
SEND, RECV = 1, 2


def read_trace(path):
    """Header fields and all records of an uncompressed trace file."""
    data = open(path, "rb").read()
    assert data[:8] == b"MCTRACE\x1a", path
    hsize = int.from_bytes(data[16:20], "little")
    hdr = {
        "rank": int.from_bytes(data[24:28], "little", signed=True),
        "size": int.from_bytes(data[28:32], "little", signed=True),
        "clock_res_ps": int.from_bytes(data[32:40], "little"),
        "created": int.from_bytes(data[40:48], "little", signed=True),
        "epoch": int.from_bytes(data[48:56], "little"),
        "host": data[56:120].split(b"\0")[0].decode(),
    }
    off, parts = hsize, []
    while off + 40 <= len(data) and data[off:off + 4] == b"MCBK":
        nrec = int.from_bytes(data[off + 8:off + 12], "little")
        stored = int.from_bytes(data[off + 16:off + 20], "little")
        assert data[off + 20] == 0, "test reads uncompressed files only"
        parts.append(np.frombuffer(data, REC, nrec, off + 40))
        off += 40 + stored
    recs = np.concatenate(parts) if parts else np.zeros(0, REC)
    return hdr, recs


def factor(P):
    """The rank grid rule of docs/synth.md, by brute force over all triples:
    a >= b >= c, a*b*c == P, smallest a*b + b*c + a*c, then smallest a."""
    best = None
    for a, b, c in itertools.product(range(1, P + 1), repeat=3):
        if a * b * c != P or not a >= b >= c:
            continue
        key = (a * b + b * c + a * c, a)
        if best is None or key < best[0]:
            best = (key, (a, b, c))
    return best[1]


def geometry(P, scaling, n, periodic):
    """Per rank: coordinates and sub-domain cells (NumPy arrays)."""
    dims = np.array(factor(P))
    ranks = np.arange(P)
    coord = np.stack([ranks % dims[0], (ranks // dims[0]) % dims[1],
                      ranks // (dims[0] * dims[1])], axis=1)
    if scaling == "weak":
        cells = np.tile(np.array(n), (P, 1))
    else:  # floor share, one more cell for the first (N mod p) coordinates
        N = np.array(n)
        cells = N // dims + (coord < (N % dims)).astype(int)
    return dims, coord, cells


def expected_halo(P, scaling, n, periodic, vars_, halo):
    """Counter of (rank, op, dir, peer, tag, bytes) for one step."""
    dims, coord, cells = geometry(P, scaling, n, periodic)
    exp = collections.Counter()
    for r in range(P):
        for d in itertools.product((-1, 0, 1), repeat=3):
            d = np.array(d[::-1])  # x varies fastest in the index
            if not d.any():
                continue
            nb = coord[r] + d
            if ((nb < 0) | (nb >= dims)).any():
                if not periodic:
                    continue
                nb = nb % dims
            peer = int(nb[0] + dims[0] * (nb[1] + dims[1] * nb[2]))
            ext = np.where(d != 0, halo, cells[r])
            size = int(np.prod(ext)) * vars_ * 8
            idx = int((d[0] + 1) + 3 * (d[1] + 1) + 9 * (d[2] + 1))
            exp[(r, ISEND, SEND, peer, 100 + idx, size)] += 1
            exp[(r, IRECV, RECV, peer, 100 + (26 - idx), size)] += 1
    return exp


_runs = itertools.count()


def synth(outdir, *args):
    """Run synth into a fresh directory next to @outdir; read every file."""
    outdir = "%s.%d" % (outdir, next(_runs))
    subprocess.run([CLI, "synth", "-q", "-o", outdir] + list(args),
                   check=True)
    return [read_trace(os.path.join(outdir, f))
            for f in sorted(os.listdir(outdir)) if f.endswith(".mct")]


def check_campaign(tmp, P, steps, scaling, n, periodic, deck, vars_, halo):
    out = os.path.join(tmp, "c")
    args = ["--ranks", str(P), "--steps", str(steps), "--input", deck,
            "--scaling", scaling]
    args += ["--local" if scaling == "weak" else "--global",
             "x".join(map(str, n))]
    if periodic:
        args.append("--periodic")
    files = synth(out, *args)
    assert len(files) == P
    got = collections.Counter()
    for hdr, recs in files:
        r = hdr["rank"]
        assert hdr["size"] == P and hdr["clock_res_ps"] == 1000
        assert hdr["host"] == "synth-node-%03d" % (r // 4)
        # Times increase on each rank and every call ends after it starts.
        assert (recs["t_end"] >= recs["t_start"]).all()
        assert (recs["t_start"][1:] >= recs["t_end"][:-1]).all()
        p2p = recs[np.isin(recs["op"], [ISEND, IRECV])]
        for rec in p2p:
            got[(r, int(rec["op"]), int(rec["dir"]), int(rec["peer"]),
                 int(rec["tag"]), int(rec["bytes"]))] += 1
        # Every step has one MPI_Allreduce on MPI_COMM_WORLD (comm 0).
        ar = recs[recs["op"] == ALLREDUCE]
        assert len(ar) == steps and (ar["comm"] == 0).all()
        # docs/synth.md deck table: 8 bytes (deck-a), 16 bytes (deck-b).
        assert (ar["bytes"] == {"deck-a": 8, "deck-b": 16}[deck]).all()
        assert (ar["comm_size"] == P).all()
    exp = expected_halo(P, scaling, n, periodic, vars_, halo)
    exp = collections.Counter({k: v * steps for k, v in exp.items()})
    assert got == exp, "halo records differ from the NumPy model: %s" % (
        list((got - exp).items())[:5] + list((exp - got).items())[:5])
    return files


def matching(files):
    """Sends and receives as multisets of (src, dst, bytes, tag, comm);
    MPI-4 standard, section 3.5: a receive matches a send by source, tag and
    communicator."""
    sends, recvs = collections.Counter(), collections.Counter()
    for hdr, recs in files:
        r = hdr["rank"]
        for rec in recs[recs["op"] == ISEND]:
            sends[(r, int(rec["peer"]), int(rec["bytes"]), int(rec["tag"]),
                   int(rec["comm"]))] += 1
        for rec in recs[recs["op"] == IRECV]:
            recvs[(int(rec["peer"]), r, int(rec["bytes"]), int(rec["tag"]),
                   int(rec["comm"]))] += 1
    return sends, recvs


def test_weak_face_edge_corner_sizes(tmp):
    # 8 ranks -> 2x2x2, 6x5x4 cells, deck-b (5 variables, halo 2).
    files = check_campaign(tmp, 8, 3, "weak", (6, 5, 4), False, "deck-b", 5, 2)
    sizes = {int(b) for _, recs in files
             for b in recs["bytes"][recs["op"] == ISEND]}
    # NumPy model: x face 2*5*4, y face 6*2*4, z face 6*5*2, z edge 2*2*4,
    # y edge 2*5*2, x edge 6*2*2, corner 2^3, each * 5 variables * 8 bytes.
    model = {int(np.prod(e)) * 40 for e in
             [(2, 5, 4), (6, 2, 4), (6, 5, 2), (2, 2, 4), (2, 5, 2),
              (6, 2, 2), (2, 2, 2)]}
    assert sizes == model, (sizes, model)


def test_strong_remainders_give_distinct_sizes(tmp):
    # 12 ranks -> 3x2x2; 10x7x5 global cells -> x 4,3,3; y 4,3; z 3,2.
    files = check_campaign(tmp, 12, 2, "strong", (10, 7, 5), False, "deck-a",
                           1, 1)
    dims, coord, cells = geometry(12, "strong", (10, 7, 5), False)
    assert tuple(dims) == (3, 2, 2)
    assert sorted(set(cells[:, 0])) == [3, 4]
    # The checkpoint uses MPI_Gatherv because the volumes differ.
    for _, recs in files:
        assert (recs["op"] == GATHERV).sum() == 1
        assert (recs["op"] == GATHER).sum() == 0


def test_periodic_grid_gives_every_rank_26_partners(tmp):
    files = check_campaign(tmp, 27, 1, "weak", (4, 4, 4), True, "deck-a", 1, 1)
    for _, recs in files:
        assert (recs["op"] == ISEND).sum() == 26


def test_every_send_has_a_matching_receive(tmp):
    for extra in ([], ["--periodic"], ["--uneven"]):
        files = synth(os.path.join(tmp, "m"), "--ranks", "6", "--steps", "7",
                      "--input", "deck-b", "--local", "6", *extra)
        sends, recvs = matching(files)
        assert sum(sends.values()) > 0
        assert sends == recvs, extra


def test_p2p_send_sizes_are_multimodal(tmp):
    files = synth(os.path.join(tmp, "h"), "--ranks", "8", "--steps", "10",
                  "--local", "16")
    sizes = np.concatenate([recs["bytes"][recs["op"] == ISEND]
                            for _, recs in files])
    values, counts = np.unique(sizes, return_counts=True)
    # Face, edge and corner sizes (three modes), each a large share.
    big = values[counts >= 0.1 * len(sizes)]
    assert len(big) >= 3, dict(zip(values.tolist(), counts.tolist()))
    # And far apart: the largest mode is at least 100x the smallest.
    assert big.max() >= 100 * big.min()


def test_send_durations_grow_with_size(tmp):
    # Latency + bandwidth model (docs/synth.md): mean MPI_Isend duration
    # per distinct size increases with the size (NumPy grouping).
    files = synth(os.path.join(tmp, "d"), "--ranks", "8", "--steps", "20",
                  "--local", "24", "--input", "deck-b")
    s = np.concatenate([recs[recs["op"] == ISEND] for _, recs in files])
    sizes = np.unique(s["bytes"])
    dur = s["t_end"].astype(np.int64) - s["t_start"].astype(np.int64)
    means = [dur[s["bytes"] == b].mean() for b in sizes]
    assert len(sizes) >= 3 and np.all(np.diff(means) > 0), (sizes, means)


def test_collectives_and_one_sided(tmp):
    # deck-b: MPI_Put every 5 steps to face neighbours, MPI_Alltoall on the
    # row communicator every 10 steps, MPI_Bcast at steps 0 and 25.
    P, S = 8, 30
    files = synth(os.path.join(tmp, "k"), "--ranks", str(P), "--steps",
                  str(S), "--input", "deck-b", "--local", "8")
    dims, coord, cells = geometry(P, "weak", (8, 8, 8), False)
    for hdr, recs in files:
        r = hdr["rank"]
        puts = recs[recs["op"] == PUT]
        faces = sum(1 for i in range(3) for s in (-1, 1)
                    if 0 <= coord[r][i] + s < dims[i])
        assert len(puts) == faces * len(range(0, S, 5))
        a2a = recs[recs["op"] == ALLTOALL]
        assert len(a2a) == S // 10
        # Row communicator: id 1 + y + py*z, size px; per-peer bytes are
        # the local volume * 5 variables * 8 / px.
        assert (a2a["comm"] == 1 + coord[r][1] + dims[1] * coord[r][2]).all()
        assert (a2a["comm_size"] == dims[0]).all()
        assert (a2a["bytes"] == 8 * 8 * 8 * 5 // dims[0] * 8).all()
        assert (recs["op"] == BCAST).sum() == 2
        # Checkpoints at steps 50k and at the end: only the end here.
        g = recs[recs["op"] == GATHER]
        assert len(g) == 1 and g["bytes"][0] == 8 ** 3 * 5 * 8


def main():
    tmp = tempfile.mkdtemp(prefix="synth_geometry.")
    try:
        for name, fn in sorted(globals().items()):
            if name.startswith("test_"):
                fn(tmp)
                print("ok", name)
    finally:
        shutil.rmtree(tmp)
    return 0


if __name__ == "__main__":
    sys.exit(main())
