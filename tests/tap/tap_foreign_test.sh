#!/bin/bash
# tap_foreign_test.sh - record a real MPI program nobody here wrote (NetPIPE's NPopenmpi, Debian package netpipe-openmpi) and check its traces.
#
# usage: tap_foreign_test.sh TAP_SO TRAFFIC TRAFFIC_LINKED DUMP
# Checks: the program succeeds under the tap; every trace verifies with the
# library and with 'msgcensus verify'; 'msgcensus export' gives one CSV line
# per record; for every ordered pair of ranks the messages and bytes that
# one rank's send records name equal those the other's receive records name
# (point-to-point: every message sent is received, MPI-4.0 3.5, from
# memory; NetPIPE sends each message with a matching receive).
set -euo pipefail
tap=$1 dump=$4
np_bin=/usr/bin/NPopenmpi
if [[ ! -x $np_bin ]]; then
  echo "skip: $np_bin missing (apt-get install netpipe-openmpi)"
  exit 77
fi
export OMPI_MCA_osc=${OMPI_MCA_osc:-sm,pt2pt,rdma}
# A sanitizer build of the tap needs the sanitizer runtimes loaded first
# into a program that was not built with them.
# (ASan's first, in the order ldd lists them).
preload=$(ldd "$tap" | awk '/lib(asan|ubsan)\.so/ {printf "%s:", $3}')$tap
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
read -r -a mpirun <<< "$MC_MPIRUN"

# Two runs: blocking ping-pong, and -a (receives preposted with MPI_Irecv).
for mode in plain async; do
  opt=()
  [[ $mode == async ]] && opt=(-a)
  dir=$tmp/$mode
  (cd "$tmp" && "${mpirun[@]}" -np 2 -x LD_PRELOAD="$preload" -x MSGCENSUS_TAP_DIR="$dir" \
      "$np_bin" "${opt[@]}" -u 65536 -n 10 -o "$tmp/np-$mode.out" > "$tmp/stdout-$mode" 2> "$tmp/stderr-$mode")
  if grep -q "msgcensus-tap:" "$tmp/stderr-$mode"; then
    echo "FAIL: $mode: the tap reported a problem:"; cat "$tmp/stderr-$mode"; exit 1
  fi
  "$MC_CLI" verify -q "$dir"
  "$dump" "$dir"/rank-*.mct > "$tmp/dump-$mode.csv"
  "$MC_PYTHON" - "$tmp/dump-$mode.csv" "$mode" "$dir" "$MC_CLI" <<'PY'
import collections, csv, subprocess, sys, io
path, mode, d, cli = sys.argv[1:5]
sends, recvs, n_by_rank = collections.Counter(), collections.Counter(), collections.Counter()
nbytes_s, nbytes_r = collections.Counter(), collections.Counter()
heads = {}
for line in open(path):
    f = line.rstrip("\n").split(",")
    if f[0] == "#file":
        heads[int(f[1])] = int(f[4])
        continue
    rank, op, d_, peer, b = int(f[0]), f[1], int(f[2]), int(f[3]), int(f[4])
    n_by_rank[rank] += 1
    if d_ == 1:
        sends[(rank, peer)] += 1; nbytes_s[(rank, peer)] += b
    elif d_ == 2:
        recvs[(peer, rank)] += 1; nbytes_r[(peer, rank)] += b
assert sorted(heads) == [0, 1], heads
assert sends and sends == recvs, (mode, sends, recvs)
assert nbytes_s == nbytes_r, (mode, nbytes_s, nbytes_r)
assert sum(nbytes_s.values()) > 0
# msgcensus export: one CSV data row per record, same sizes (the CLI's own
# reader, a second path through the format).
for r in (0, 1):
    out = subprocess.run([cli, "export", "%s/rank-%06d.mct" % (d, r)], check=True,
                         capture_output=True, text=True).stdout
    rows = [x for x in out.splitlines() if x and not x.startswith("#")]
    assert rows[0].startswith("op,dir,peer,bytes"), rows[0]
    data = list(csv.DictReader(io.StringIO("\n".join(rows))))
    assert len(data) == n_by_rank[r] == heads[r], (r, len(data), n_by_rank[r])
    sent = sum(int(x["bytes"]) for x in data if x["dir"] == "send")
    assert sent == sum(v for (a, _), v in nbytes_s.items() if a == r)
print("ok: %s: %s messages each way, bytes %s" % (mode, dict(sends), dict(nbytes_s)))
PY
  # Reduce the campaign; the summary must agree with the traces (h5py).
  "${mpirun[@]}" -np 2 "$MC_CLI" reduce --quiet "$dir" -o "$tmp/$mode.h5"
  "$MC_PYTHON" - "$tmp/dump-$mode.csv" "$tmp/$mode.h5" <<'PY'
import collections, sys
import h5py
dump, h5 = sys.argv[1:3]
sent = collections.Counter(); sent_b = collections.Counter()
recv_n = recv_b = 0
for line in open(dump):
    f = line.split(",")
    if f[0] == "#file":
        continue
    if f[2] == "1":
        sent[(int(f[0]), int(f[3]))] += 1; sent_b[(int(f[0]), int(f[3]))] += int(f[4])
    elif f[2] == "2":
        recv_n += 1; recv_b += int(f[4])
with h5py.File(h5, "r") as s:
    def total(name):
        st = {r["metric"].decode().rstrip("\0"): r for r in s["populations"][name]["stats"][()]}
        return int(st["count"]["exact"]), int(st["total_bytes"]["exact"])
    p2p, p2p_recv = total("p2p"), total("p2p_recv")
    m = s["matrix"]
    mat = {(int(a), int(b)): (int(n), int(x)) for a, b, n, x in
           zip(m["src"][()], m["dst"][()], m["msgs"][()], m["bytes"][()])}
assert p2p == (sum(sent.values()), sum(sent_b.values())), (p2p, sent)
assert p2p_recv == (recv_n, recv_b), (p2p_recv, recv_n, recv_b)
assert p2p == p2p_recv, "point-to-point sent %s != received %s" % (p2p, p2p_recv)
assert mat == {k: (sent[k], sent_b[k]) for k in sent}, mat
print("ok: reduced: p2p %s = p2p_recv %s, matrix %s" % (p2p, p2p_recv, mat))
PY
done
