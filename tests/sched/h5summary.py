#!/usr/bin/python3
"""h5summary.py - what the batch-script tests read from summaries, with h5py (Debian's python3-h5py).

  h5summary.py same A.h5 B.h5          exit 0 when every dataset (names, dtypes, values) and
                                       every root attribute but the run's own (created,
                                       elapsed_seconds, host, reducer_ranks) are identical
  h5summary.py attr FILE NAME          print a root attribute
  h5summary.py sources FILE            print "path bytes records checksum(hex)" per source
"""
import sys

import h5py  # Debian's python3-h5py: the outside reader of our HDF5 files
import numpy as np

# Root attributes that describe the run rather than the campaign: they may differ between
# two reductions of the same campaign (docs/summary-format.md lists them).
RUN_ATTRS = {"created", "elapsed_seconds", "host", "reducer_ranks"}


def items(path):
    """Every dataset of the file: name -> array."""
    out = {}
    with h5py.File(path, "r") as f:
        def visit(name, obj):
            if isinstance(obj, h5py.Dataset):
                out[name] = obj[()]
        f.visititems(visit)
        attrs = {k: f.attrs[k] for k in f.attrs if k not in RUN_ATTRS}
    return out, attrs


def same(a, b):
    da, aa = items(a)
    db, ab = items(b)
    diffs = []
    for name in sorted(set(da) | set(db)):
        if name not in da or name not in db:
            diffs.append(f"dataset {name} only in {'B' if name not in da else 'A'}")
            continue
        x, y = da[name], db[name]
        if x.dtype != y.dtype or x.shape != y.shape or not np.array_equal(x, y):
            diffs.append(f"dataset {name} differs")
    for k in sorted(set(aa) | set(ab)):
        if k not in aa or k not in ab or not np.array_equal(np.asarray(aa[k]), np.asarray(ab[k])):
            diffs.append(f"root attribute {k} differs: {aa.get(k)!r} vs {ab.get(k)!r}")
    for d in diffs:
        print(d)
    print(f"{len(da)} datasets compared, {len(diffs)} differences")
    return 0 if not diffs and da else 1


def main(argv):
    if len(argv) >= 4 and argv[1] == "same":
        return same(argv[2], argv[3])
    if len(argv) == 4 and argv[1] == "attr":
        with h5py.File(argv[2], "r") as f:
            v = f.attrs[argv[3]]
        print(v.decode() if isinstance(v, bytes) else v)
        return 0
    if len(argv) == 3 and argv[1] == "sources":
        with h5py.File(argv[2], "r") as f:
            t = f["sources"][()]
        for row in t:
            p = row["path"]
            p = p.decode() if isinstance(p, bytes) else str(p)
            print(p, int(row["bytes"]), int(row["records"]), format(int(row["checksum"]), "016x"))
        return 0
    print(__doc__, file=sys.stderr)
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv))
