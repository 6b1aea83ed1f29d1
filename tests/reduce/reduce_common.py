"""reduce_common.py - helpers shared by the reduce tests: run the CLI (under
mpirun), make campaigns, and read traces straight from the byte layout of
docs/trace-format.md with NumPy, independently of the project's reader."""
import os
import shlex
import subprocess

import h5py  # Debian python3-h5py
import numpy as np  # Debian python3-numpy

CLI = os.environ["MC_CLI"]
MPIRUN = shlex.split(os.environ.get("MC_MPIRUN", "mpirun --oversubscribe"))

# Record layout of trace formats 1.0 and 2.0 (docs/trace-format.md, 48 bytes).
REC = np.dtype([("bytes", "<u8"), ("t_start", "<u8"), ("t_end", "<u8"),
                ("comm", "<u4"), ("comm_size", "<u4"), ("peer", "<i4"),
                ("tag", "<i4"), ("op", "<u2"), ("dir", "u1"), ("flags", "u1"),
                ("reserved", "<u4")])
assert REC.itemsize == 48
BLOCK_MAGIC = 0x4B42434D  # "MCBK"


def run(args, check=True, **kw):
    """Run a command; return the CompletedProcess (text mode)."""
    p = subprocess.run(args, capture_output=True, text=True, **kw)
    if check and p.returncode != 0:
        raise AssertionError("%s failed (%d):\n%s%s" %
                             (" ".join(args), p.returncode, p.stdout, p.stderr))
    return p


def reduce_cmd(nprocs, *args):
    """The reduce command line under mpirun -np NPROCS (0 = no mpirun)."""
    base = [CLI, "reduce", "--quiet"] + list(args)
    if nprocs == 0:
        return base
    return MPIRUN + ["-np", str(nprocs)] + base


def synth(outdir, *args):
    run([CLI, "synth", "-q", "-o", outdir] + list(args))


def campaign_files(d):
    return sorted(f for f in os.listdir(d)
                  if f.endswith(".mct") and os.path.isfile(os.path.join(d, f)))


def blocks_of(path):
    """(offset, nrecords, stored_len) of every block, walking the 40-byte
    block headers from the end of the file header up to the footer."""
    data = open(path, "rb").read()
    assert data[:8] == b"MCTRACE\x1a", path
    off = int.from_bytes(data[16:20], "little")  # header_size
    out = []
    while off + 40 <= len(data):
        magic = int.from_bytes(data[off:off + 4], "little")
        if magic != BLOCK_MAGIC:
            break
        nrec = int.from_bytes(data[off + 8:off + 12], "little")
        stored = int.from_bytes(data[off + 16:off + 20], "little")
        out.append((off, nrec, stored))
        off += 40 + stored
    return out


def block_checksums(path):
    """The payload checksum (bytes 24..31 of each block header: XXH64 in
    trace format 1.x, XXH3_64bits in 2.x) of every block, in block order."""
    data = open(path, "rb").read()
    return [data[off + 24:off + 32] for off, _, _ in blocks_of(path)]


def records_of_file(path):
    """Number of records of a trace, from its block headers."""
    return sum(n for _, n, _ in blocks_of(path))


def flip_byte(path, offset):
    with open(path, "r+b") as f:
        f.seek(offset)
        b = f.read(1)
        f.seek(offset)
        f.write(bytes([b[0] ^ 0xFF]))


def datasets(path):
    """Every dataset of an HDF5 file, by path, read with h5py."""
    out = {}

    def visit(name, obj):
        if isinstance(obj, h5py.Dataset):
            out[name] = obj[...]
    with h5py.File(path, "r") as h:
        h.visititems(visit)
    return out


def same(a, b):
    """Bit-identical datasets: the raw bytes (NaN-safe), and for
    variable-length strings the decoded values."""
    if a.dtype != b.dtype or a.shape != b.shape:
        return False
    if a.dtype.hasobject or (a.dtype.names and any(
            a.dtype[n].hasobject for n in a.dtype.names)):
        return a.tolist() == b.tolist()
    return a.tobytes() == b.tobytes()
