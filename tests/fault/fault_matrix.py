#!/usr/bin/python3
"""fault_matrix.py - the damaged-campaign test matrix: verify and reduce on
small campaigns with one injected fault each.

Usage: fault_matrix.py FAULT_GEN [--markdown FILE] [--only NAME[,NAME...]]
                        [--keep]
       fault_matrix.py --list     (the case names, one per line)

Environment (set by mc_script_test): MC_CLI, MC_MPIRUN, MC_PYTHON; MC_FAULT_NP
chooses the number of reducer ranks (default 2).

Every row of CASES is one fault: how the campaign is damaged, what
`msgcensus verify` must say (exit status, one stderr pattern, the totals
line), what `msgcensus reduce` must do by default (stop with exit 1, name
file/block/offset, leave no output and no temporary file) and, where it
applies, what `msgcensus reduce --skip-damaged` must count. The skip-damaged
summary is compared, population by population (hist_sizes, hist_counts read
with h5py), with the summary of a *reference* campaign written without the
records the fault destroys (fault_gen --omit-block / --omit-record /
--records), so the check is "exactly the intact records, nothing else".

The byte offsets of blocks are found by walking the file with the layout of
docs/trace-format.md (128-byte header, 40-byte block headers whose
stored_len is at +16), written out here independently of the C reader.
"""
import argparse
import os
import re
import shutil
import signal
import struct
import subprocess
import sys
import tempfile

import h5py  # Debian python3-h5py: reads the summaries
import numpy as np  # Debian python3-numpy: compares histogram arrays

CLI = os.environ.get("MC_CLI", "msgcensus")
MPIRUN = os.environ.get("MC_MPIRUN", "mpirun --oversubscribe").split()
REDUCE_NP = int(os.environ.get("MC_FAULT_NP", "2"))  # reducer ranks
RANKS = 4
RECORDS = 40  # per rank: blocks of 16, 16 and 8 records
BLOCK = 16
VICTIM = 1  # the rank whose file is damaged
TIMEOUT = 60

HEADER_SIZE = 128
BLOCK_HEADER_SIZE = 40


def rank_name(rank):
    return "rank-%06d.mct" % rank


def gen(fault_gen, path, rank, size=RANKS, extra=()):
    """Write one trace with fault_gen; returns the records it wrote."""
    out = subprocess.run([fault_gen, path, "--rank", str(rank), "--size",
                          str(size), "--records", str(RECORDS),
                          "--block-records", str(BLOCK)] + list(extra),
                         check=True, capture_output=True, text=True)
    return int(out.stdout.strip())


def make_campaign(fault_gen, d, common=(), per_rank=None):
    """A campaign of RANKS files; per_rank maps rank -> extra fault_gen args
    (they come after the common ones, so a later --records wins)."""
    os.makedirs(d, exist_ok=True)
    total = 0
    for r in range(RANKS):
        extra = list(common) + list((per_rank or {}).get(r, ()))
        total += gen(fault_gen, os.path.join(d, rank_name(r)), r, extra=extra)
    return total


def block_offsets(path):
    """Offsets of the block headers, walking the file as the format says."""
    data = open(path, "rb").read()
    off, out = HEADER_SIZE, []
    while off + BLOCK_HEADER_SIZE <= len(data):
        magic, = struct.unpack_from("<I", data, off)
        if magic != 0x4B42434D:  # "MCBK"; the footer starts with "MCIX"
            break
        stored, = struct.unpack_from("<I", data, off + 16)
        out.append(off)
        off += BLOCK_HEADER_SIZE + stored
    return out


# ---- damage ---------------------------------------------------------------

def victim(d, rank=VICTIM):
    return os.path.join(d, rank_name(rank))


def truncate_to(n):
    def f(d, lay):
        os.truncate(victim(d), n(lay) if callable(n) else n)
    return f


def patch(at, data):
    """Overwrite bytes of the victim at offset at(lay)."""
    def f(d, lay):
        with open(victim(d), "r+b") as fh:
            fh.seek(at(lay))
            fh.write(data)
    return f


def flip_bit(at, mask=0x10):
    def f(d, lay):
        with open(victim(d), "r+b") as fh:
            fh.seek(at(lay))
            b = fh.read(1)[0]
            fh.seek(at(lay))
            fh.write(bytes([b ^ mask]))
    return f


def remove_ranks(*ranks):
    def f(d, lay):
        for r in ranks:
            os.remove(victim(d, r))
    return f


def remove_all(d, lay):
    for n in os.listdir(d):
        os.remove(os.path.join(d, n))


def replace_with_dir(d, lay):
    os.remove(victim(d, 2))
    os.mkdir(victim(d, 2))


def replace_with_dangling_link(d, lay):
    os.remove(victim(d, 2))
    os.symlink("lost-volume/" + rank_name(2), victim(d, 2))


def replace_with_fifo(d, lay):
    os.remove(victim(d, 2))
    os.mkfifo(victim(d, 2))


def chmod_000(d, lay):
    # Read as root any file is readable, so this row runs the command as
    # the unprivileged user "nobody" (setpriv) with the campaign readable
    # to all but this one file.
    os.chmod(d, 0o755)
    for n in os.listdir(d):
        os.chmod(os.path.join(d, n), 0o644)
    os.chmod(victim(d, 2), 0)


def nothing(d, lay):
    pass


# ---- the matrix -------------------------------------------------------------
#
# Fields of a row:
#   name      short id
#   fault     what is done to the campaign (documentation column)
#   gen       fault_gen arguments of every file (e.g. --zstd)
#   per_rank  rank -> fault_gen arguments of the damaged campaign
#   damage    function(dir, layout) applied after writing
#   verify    (exit, stderr pattern, stdout totals pattern or None)
#   reduce    (exit, stderr pattern) of the default reduce, or None when the
#             row is not run through reduce (see note)
#   skip      None (not run), a stderr pattern (reduce --skip-damaged must
#             still fail: campaign problems are not damage it steps over),
#             or (reference per_rank args, rejected records, skipped blocks
#             of the victim, status pattern of the victim's sources row, or
#             None when the victim has no row)
#   as_nobody run verify as the user nobody
#   note      what the row decides, for docs/reliability.md
# Patterns are str.format()ed with the victim's layout: b0, b1, b2 = block
# offsets, size = file size.

# docs/trace-format.md, "Files of a campaign": readers take the regular
# files ending in .mct and ignore other entries, so an entry that is not a
# regular file shows up as a missing rank.
IGNORED = ("documented: non-regular *.mct entries are ignored, the campaign "
           "then lacks rank 2")

V = rank_name(VICTIM).replace(".", r"\.")
D = rank_name(2).replace(".", r"\.")

CASES = [
    dict(name="clean", fault="none (control row)",
         damage=nothing,
         verify=(0, None, r"verify: 4 files ok, 0 damaged; 12 blocks, 160 "
                 r"records"),
         reduce=(0, None),
         skip=({}, 0, 0, r"^ok$")),
    dict(name="truncated-in-header",
         fault="rank 1 cut to 100 bytes (inside the 128-byte file header)",
         damage=truncate_to(100),
         verify=(1, V + r": offset 100: file truncated \(file header cut "
                 r"short after 100 of 128 bytes\)",
                 r"verify: 3 files ok, 1 damaged, 1 campaign problems; 9 "
                 r"blocks, 120 records"),
         reduce=(1, V + r": offset 100: file truncated"),
         skip=({VICTIM: ["--records", "0"]}, 0, 0, r"^skipped: file "
               r"truncated")),
    dict(name="truncated-in-block",
         fault="rank 1 cut 50 bytes into the payload of block 1 (footer lost "
               "with it)",
         damage=truncate_to(lambda lay: lay["b1"] + BLOCK_HEADER_SIZE + 50),
         verify=(1, V + r": block 1 at offset {b1}: file truncated \(block "
                 r"payload cut short: 50 of 768 bytes\)",
                 r"verify: 3 files ok, 1 damaged, 1 campaign problems; 9 "
                 r"blocks, 120 records"),
         reduce=(1, V + r": block 1 at offset {b1}: file truncated"),
         skip=({VICTIM: ["--records", str(BLOCK)]}, BLOCK, 1,
               r"^skipped: .*1 block")),
    dict(name="missing-footer",
         fault="rank 1 written without footer (last block flushed, as a "
               "writer that never closed)",
         per_rank={VICTIM: ["--no-footer"]},
         damage=nothing,
         verify=(0, None, r"verify: 4 files ok, 0 damaged; 12 blocks, 160 "
                 r"records, .*; 1 files without footer"),
         reduce=(0, None),
         skip=({}, 0, 0, r"^ok$"),
         note="decided: not damage; verify passes and counts it in the "
              "totals line, reduce walks the block headers"),
    dict(name="flipped-bit",
         fault="one bit flipped in the payload of block 1 of rank 1",
         damage=flip_bit(lambda lay: lay["b1"] + BLOCK_HEADER_SIZE + 100),
         verify=(1, V + r": block 1 at offset {b1}: block checksum mismatch "
                 r"\(stored 0x[0-9a-f]{{16}}, computed 0x[0-9a-f]{{16}}\)",
                 r"verify: 3 files ok, 1 damaged, 1 campaign problems; 9 "
                 r"blocks, 120 records"),
         reduce=(1, V + r": block 1 at offset {b1}: block checksum mismatch"),
         skip=({VICTIM: ["--omit-block", "1"]}, BLOCK, 1,
               r"^skipped: 1 block")),
    dict(name="flipped-bit-block-header",
         fault="one bit flipped in the record count of block 1's header",
         damage=flip_bit(lambda lay: lay["b1"] + 8, 0x01),
         verify=(1, V + r": block 1 at offset {b1}: block header damaged "
                 r"\(block header checksum",
                 r"verify: 3 files ok, 1 damaged, 1 campaign problems; 9 "
                 r"blocks, 120 records"),
         reduce=(1, V + r": block 1 at offset {b1}: block header damaged"),
         skip=({VICTIM: ["--omit-block", "1"]}, BLOCK, 1,
               r"^skipped: 1 block"),
         note="the footer index lets reduce --skip-damaged resume at block 2"),
    dict(name="corrupt-zstd-frame",
         fault="zstd campaign; the frame magic of block 1 of rank 1 "
               "overwritten",
         gen=["--zstd"],
         damage=patch(lambda lay: lay["b1"] + BLOCK_HEADER_SIZE,
                      b"\x00\x00\x00\x00"),
         verify=(1, V + r": block 1 at offset {b1}: block cannot be decoded "
                 r"\(payload is not a zstd frame\)",
                 r"verify: 3 files ok, 1 damaged, 1 campaign problems; 9 "
                 r"blocks, 120 records"),
         reduce=(1, V + r": block 1 at offset {b1}: block cannot be decoded"),
         skip=({VICTIM: ["--omit-block", "1"]}, BLOCK, 1,
               r"^skipped: 1 block")),
    dict(name="bad-magic",
         fault="first byte of rank 1 changed ('M' -> 'X')",
         damage=patch(lambda lay: 0, b"X"),
         verify=(1, V + r": offset 0: not a msgcensus trace \(bad magic\)",
                 r"verify: 3 files ok, 1 damaged, 1 campaign problems; 9 "
                 r"blocks, 120 records"),
         reduce=(1, V + r": offset 0: not a msgcensus trace"),
         skip=({VICTIM: ["--records", "0"]}, 0, 0,
               r"^skipped: not a msgcensus trace")),
    dict(name="unknown-version",
         fault="major version of rank 1 set to 3",
         damage=patch(lambda lay: 8, b"\x03\x00"),
         verify=(1, V + r": offset 8: unsupported format version \(file is "
                 r"version 3\.0, this reader reads 1\.x to 2\.x\)",
                 r"verify: 3 files ok, 1 damaged, 1 campaign problems; 9 "
                 r"blocks, 120 records"),
         reduce=(1, V + r": offset 8: unsupported format version"),
         skip=({VICTIM: ["--records", "0"]}, 0, 0,
               r"^skipped: unsupported format version")),
    dict(name="empty-file",
         fault="rank 1 truncated to 0 bytes",
         damage=truncate_to(0),
         verify=(1, V + r": offset 0: file truncated \(empty file",
                 r"verify: 3 files ok, 1 damaged, 1 campaign problems; 9 "
                 r"blocks, 120 records"),
         reduce=(1, V + r": offset 0: file truncated"),
         skip=({VICTIM: ["--records", "0"]}, 0, 0,
               r"^skipped: file truncated")),
    dict(name="empty-directory",
         fault="campaign directory with no files",
         damage=remove_all,
         verify=(1, r": no data \(no trace files", r"verify: 0 files ok, 0 "
                 r"damaged, 1 campaign problems"),
         reduce=(1, r"no data"),
         skip=r"no data"),
    dict(name="entry-is-directory",
         fault="rank-000002.mct is a directory (an unreadable entry; root "
               "reads any file, so unreadability is simulated)",
         damage=replace_with_dir,
         verify=(1, r"inconsistent campaign \(1 of 4 ranks have no intact trace file: 2\)",
                 r"verify: 3 files ok, 0 damaged, 1 campaign problems; 9 "
                 r"blocks, 120 records"),
         reduce=(1, r"inconsistent campaign.*\b2\b"),
         skip=r"inconsistent campaign.*\b2\b",
         note=IGNORED),
    dict(name="dangling-symlink",
         fault="rank-000002.mct is a symbolic link to a missing file",
         damage=replace_with_dangling_link,
         verify=(1, r"inconsistent campaign \(1 of 4 ranks have no intact trace file: 2\)",
                 r"verify: 3 files ok, 0 damaged, 1 campaign problems; 9 "
                 r"blocks, 120 records"),
         reduce=(1, r"inconsistent campaign.*\b2\b"),
         skip=r"inconsistent campaign.*\b2\b",
         note=IGNORED),
    dict(name="fifo",
         fault="rank-000002.mct is a FIFO (opening it for reading would "
               "block)",
         damage=replace_with_fifo,
         verify=(1, r"inconsistent campaign \(1 of 4 ranks have no intact trace file: 2\)",
                 r"verify: 3 files ok, 0 damaged, 1 campaign problems; 9 "
                 r"blocks, 120 records"),
         reduce=(1, r"inconsistent campaign.*\b2\b"),
         skip=r"inconsistent campaign.*\b2\b",
         note=IGNORED),
    dict(name="fifo-named-directly",
         fault="verify FIFO: the FIFO named on the command line",
         damage=replace_with_fifo,
         verify_args=lambda d: [victim(d, 2)],
         verify=(1, D + r": cannot open file \(not a regular file\)", None),
         reduce=None,
         skip=None),
    dict(name="permission-denied",
         fault="rank-000002.mct chmod 000, verify run as user nobody",
         damage=chmod_000,
         as_nobody=True,
         verify=(1, D + r": cannot open file: Permission denied", None),
         reduce=None,
         skip=None,
         note="reduce is not run as nobody (mpirun); the read error path "
              "is the one of the rows above"),
    dict(name="duplicate-rank",
         fault="rank-000003.mct claims application rank 2",
         per_rank={3: ["--rank", "2"]},
         damage=nothing,
         verify=(1, r"two files claim the same application rank \(" +
                 D + r" and rank-000003\.mct both claim rank 2\)",
                 r"verify: 4 files ok, 0 damaged, 2 campaign problems"),
         reduce=(1, r"rank-00000[23]\.mct: two files claim the same "
                 r"application rank"),
         skip=r"two files claim the same application rank"),
    dict(name="missing-ranks",
         fault="rank-000001.mct and rank-000002.mct deleted",
         damage=remove_ranks(1, 2),
         verify=(1, r"inconsistent campaign \(2 of 4 ranks have no intact "
                 r"trace file: 1-2\)",
                 r"verify: 2 files ok, 0 damaged, 1 campaign problems; 6 "
                 r"blocks, 80 records"),
         reduce=(1, r"inconsistent campaign.*(\b1-2\b|\b1\b.*\b2\b)"),
         skip=r"inconsistent campaign.*(\b1-2\b|\b1\b.*\b2\b)",
         note="reduce must not summarise half a campaign silently"),
    dict(name="rank-out-of-range",
         fault="rank-000003.mct claims rank 7 in a job of 4 ranks",
         per_rank={3: ["--rank", "7"]},
         damage=nothing,
         verify=(1, r"rank-000003\.mct claims rank 7, outside 0\.\.3",
                 r"verify: 4 files ok, 0 damaged, 2 campaign problems"),
         reduce=(1, r"rank-000003\.mct.*rank 7"),
         skip=r"rank-000003\.mct.*rank 7"),
    dict(name="size-disagreement",
         fault="rank-000003.mct says the job has 5 ranks, the others 4",
         per_rank={3: ["--size", "5"]},
         damage=nothing,
         verify=(1, r"inconsistent campaign \(files disagree on the "
                 r"application size", r"verify: 4 files ok, 0 damaged, 1 "
                 r"campaign problems"),
         reduce=(1, r"inconsistent campaign \(application size"),
         skip=r"inconsistent campaign \(application size"),
    dict(name="unknown-op-code",
         fault="record 20 of rank 1 (block 1, record 4) has operation code "
               "999",
         per_rank={VICTIM: ["--bad-op", "20"]},
         damage=nothing,
         verify=(1, V + r": block 1 at offset {b1}: invalid record \(record "
                 r"4 of the block: unknown operation code 999\)",
                 r"verify: 3 files ok, 1 damaged, 1 campaign problems; 9 "
                 r"blocks, 120 records"),
         reduce=(1, V + r": block 1 at offset {b1}: invalid record"),
         skip=({VICTIM: ["--omit-record", "20"]}, 1, 0,
               r"^skipped: .*1 invalid"),
         note="reduce --skip-damaged rejects the one record, not its block"),
    dict(name="time-runs-backwards",
         fault="record 20 of rank 1 ends 1 ns before it starts",
         per_rank={VICTIM: ["--backwards", "20"]},
         damage=nothing,
         verify=(1, V + r": block 1 at offset {b1}: invalid record \(record "
                 r"4 of the block: t_end_ns \d+ is earlier than t_start_ns "
                 r"\d+\)", r"verify: 3 files ok, 1 damaged, 1 campaign "
                 r"problems; 9 blocks, 120 records"),
         reduce=(1, V + r": block 1 at offset {b1}: invalid record"),
         skip=({VICTIM: ["--omit-record", "20"]}, 1, 0,
               r"^skipped: .*1 invalid")),
    dict(name="damaged-footer",
         fault="one bit flipped in the footer's first index entry",
         damage=flip_bit(lambda lay: lay["footer"] + 8),
         verify=(1, V + r": .*footer damaged", r"verify: 3 files ok, 1 "
                 r"damaged, 1 campaign problems; 9 blocks, 120 records"),
         reduce=(0, None),
         skip=({}, 0, 0, r"^ok$"),
         note="decided: reduce falls back to the block walk (all blocks "
              "intact), so it reads everything; verify reports the footer"),
]


# ---- running ------------------------------------------------------------------

def run(cmd, timeout=TIMEOUT, user=None):
    """Run @cmd in its own process group; on a hang the whole group (mpirun
    and the ranks it started) is killed."""
    if user:
        cmd = ["setpriv", "--reuid=" + user, "--regid=nogroup",
               "--clear-groups"] + cmd
    p = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                         stdin=subprocess.DEVNULL, text=True,
                         start_new_session=True)
    try:
        out, err = p.communicate(timeout=timeout)
        return p.returncode, out, err
    except subprocess.TimeoutExpired:
        os.killpg(p.pid, signal.SIGKILL)
        p.communicate()
        return None, "", "(no answer within %d s: the command hung)" % timeout


def reduce_cmd(camp, out, extra=()):
    return MPIRUN + ["-np", str(REDUCE_NP), CLI, "reduce", "--quiet", camp,
                     "-o", out] + list(extra)


def summary_facts(path):
    """Totals, populations and sources of a summary, read with h5py."""
    with h5py.File(path, "r") as f:
        pops = {}

        def visit(name, obj):
            if isinstance(obj, h5py.Group) and "hist_sizes" in obj:
                pops[name] = (np.asarray(obj["hist_sizes"][()]),
                              np.asarray(obj["hist_counts"][()]))
        f["populations"].visititems(visit)
        src = {}
        for row in f["sources"][()]:
            p = row["path"]
            p = p.decode() if isinstance(p, bytes) else p
            st = row["status"]
            st = st.decode() if isinstance(st, bytes) else st
            src[p] = dict(records=int(row["records"]),
                          skipped_blocks=int(row["skipped_blocks"]),
                          skipped_records=int(row["skipped_records"]),
                          status=st)
        return dict(read=int(f.attrs["records_read"]),
                    rejected=int(f.attrs["records_rejected"]),
                    pops=pops, sources=src)


class Row:
    def __init__(self, case):
        self.case = case
        self.problems = []
        self.cells = {}
        self.skipped = False

    def expect(self, what, ok, detail):
        if not ok:
            self.problems.append("%s: %s" % (what, detail))
        return ok


def check_verify(row, camp, lay):
    c = row.case
    exit_code, err_pat, out_pat = c["verify"]
    args = c.get("verify_args", lambda d: [d])(camp)
    user = "nobody" if c.get("as_nobody") else None
    rc, out, err = run([CLI, "verify"] + args, user=user)
    row.cells["verify"] = "exit %s" % rc
    row.cells["verify_msg"] = (err.strip().splitlines() or [""])[0]
    row.expect("verify exit", rc == exit_code,
               "expected %d, got %s; stderr: %s" % (exit_code, rc, err.strip()))
    if err_pat:
        pat = err_pat.format(**lay)
        row.expect("verify message", re.search(pat, err),
                   "no match for /%s/ in: %s" % (pat, err.strip()))
    if out_pat:
        pat = out_pat.format(**lay)
        row.expect("verify totals", re.search(pat, out),
                   "no match for /%s/ in: %s" % (pat, out.strip()))
        m = re.search(r"verify: .*", out)
        row.cells["verify_totals"] = m.group(0) if m else ""


def check_reduce(row, camp, lay, work, fault_gen):
    c = row.case
    exit_code, err_pat = c["reduce"]
    outdir = os.path.join(work, "out-default")
    os.makedirs(outdir)
    out = os.path.join(outdir, "summary.h5")
    rc, _, err = run(reduce_cmd(camp, out))
    row.cells["reduce"] = "exit %s" % rc
    if rc not in (0, None):
        row.cells["reduce_msg"] = next(
            (l for l in err.splitlines() if l.startswith("msgcensus")),
            (err.strip().splitlines() or [""])[0])
    row.expect("reduce exit", rc == exit_code,
               "expected %d, got %s; stderr: %s" % (exit_code, rc, err.strip()))
    if exit_code != 0:
        if err_pat:
            pat = err_pat.format(**lay)
            row.expect("reduce message", re.search(pat, err),
                       "no match for /%s/ in: %s" % (pat, err.strip()))
        left = os.listdir(outdir)
        row.expect("reduce leaves nothing", not left,
                   "files left in the output directory: %s" % left)
    elif rc == 0:
        # A campaign reduce accepts as intact: the summary must hold every
        # record (reference: the same campaign written without the fault).
        compare_with_reference(row, out, work, fault_gen, {}, 0, None, None,
                               "reduce")


def compare_with_reference(row, out, work, fault_gen, ref_per_rank,
                           rejected, skipped_blocks, status_pat, what):
    c = row.case
    ref_dir = os.path.join(work, "ref-" + what)
    ref_total = make_campaign(fault_gen, ref_dir, c.get("gen", ()),
                              ref_per_rank)
    ref_out = os.path.join(work, "ref-" + what + ".h5")
    rc, _, err = run(reduce_cmd(ref_dir, ref_out))
    if not row.expect(what + " reference reduce", rc == 0, err.strip()):
        return
    got, ref = summary_facts(out), summary_facts(ref_out)
    row.cells[what + "_records"] = "%d (ref %d)" % (got["read"], ref["read"])
    row.expect(what + " records", got["read"] == ref["read"] == ref_total,
               "summary counts %d records, reference summary %d, reference "
               "files hold %d" % (got["read"], ref["read"], ref_total))
    # Outside check: the per-operation histograms partition the records.
    per_op = sum(int(v[1].sum()) for k, v in got["pops"].items()
                 if k.startswith("op:"))
    row.expect(what + " op histograms", per_op == got["read"],
               "op:* histograms hold %d records, records_read %d"
               % (per_op, got["read"]))
    row.expect(what + " populations", set(got["pops"]) == set(ref["pops"]),
               "populations differ: %s vs %s" % (sorted(got["pops"]),
                                                 sorted(ref["pops"])))
    for name in sorted(set(got["pops"]) & set(ref["pops"])):
        gs, gc = got["pops"][name]
        rs, rc_ = ref["pops"][name]
        row.expect(what + " histogram " + name,
                   np.array_equal(gs, rs) and np.array_equal(gc, rc_),
                   "differs from the reference")
    if rejected is not None:
        row.expect(what + " rejected", got["rejected"] == rejected,
                   "records_rejected %d, expected %d" % (got["rejected"],
                                                         rejected))
    row.cells[what + "_rejected"] = str(got["rejected"])
    vname = rank_name(VICTIM)
    srow = got["sources"].get(vname)
    if status_pat is not None:
        if row.expect(what + " sources row", srow is not None,
                      "no row for %s in the sources table" % vname):
            row.cells[what + "_status"] = srow["status"]
            row.expect(what + " source status",
                       re.search(status_pat, srow["status"]),
                       "status '%s' does not match /%s/" % (srow["status"],
                                                            status_pat))
            if skipped_blocks is not None:
                row.expect(what + " skipped blocks",
                           srow["skipped_blocks"] == skipped_blocks,
                           "sources row says %d skipped blocks, expected %d"
                           % (srow["skipped_blocks"], skipped_blocks))
            row.cells[what + "_skipped_blocks"] = str(srow["skipped_blocks"])


def check_skip(row, camp, lay, work, fault_gen):
    out = os.path.join(work, "skip.h5")
    rc, _, err = run(reduce_cmd(camp, out, ["--skip-damaged"]))
    row.cells["skip"] = "exit %s" % rc
    if isinstance(row.case["skip"], str):
        # Not damage that skipping can step over: it must still fail.
        pat = row.case["skip"].format(**lay)
        row.cells["skip_msg"] = next(
            (l for l in err.splitlines() if l.startswith("msgcensus")), "")
        row.expect("reduce --skip-damaged exit", rc == 1,
                   "expected 1, got %s; stderr: %s" % (rc, err.strip()))
        row.expect("reduce --skip-damaged message", re.search(pat, err),
                   "no match for /%s/ in: %s" % (pat, err.strip()))
        row.expect("reduce --skip-damaged leaves nothing",
                   not os.path.exists(out), "%s was written" % out)
        return
    ref_per_rank, rejected, skipped_blocks, status_pat = row.case["skip"]
    if not row.expect("reduce --skip-damaged exit", rc == 0,
                      "got %s; stderr: %s" % (rc, err.strip())):
        return
    compare_with_reference(row, out, work, fault_gen, ref_per_rank, rejected,
                           skipped_blocks, status_pat, "skip")


def layout_of(path):
    lay = dict(b0=-1, b1=-1, b2=-1, footer=-1, size=-1)
    if os.path.isfile(path):
        offs = block_offsets(path)
        for i, o in enumerate(offs[:3]):
            lay["b%d" % i] = o
        data = open(path, "rb").read()
        lay["size"] = len(data)
        if len(data) >= 16 and data[-8:-4] == b"MCND":
            lay["footer"] = struct.unpack_from("<Q", data, len(data) - 16)[0]
    return lay


def run_case(case, fault_gen, tmp, have_reduce):
    row = Row(case)
    work = os.path.join(tmp, case["name"])
    camp = os.path.join(work, "campaign")
    make_campaign(fault_gen, camp, case.get("gen", ()), case.get("per_rank"))
    lay = layout_of(victim(camp))
    case["damage"](camp, lay)
    if case.get("as_nobody") and not shutil.which("setpriv"):
        row.cells["verify"] = "not run (no setpriv)"
        row.skipped = True
        return row
    check_verify(row, camp, lay)
    if case["reduce"] is None:
        row.cells["reduce"] = "n/a"
    elif not have_reduce:
        row.cells["reduce"] = "PENDING"
    else:
        check_reduce(row, camp, lay, work, fault_gen)
    if case["skip"] is None:
        row.cells["skip"] = "n/a"
    elif not have_reduce:
        row.cells["skip"] = "PENDING"
    else:
        check_skip(row, camp, lay, work, fault_gen)
    return row


def markdown(rows, tmp):
    def esc(s):
        # Campaign paths as DIR/..., without the temporary directory.
        s = str(s)
        for r in rows:
            s = s.replace(os.path.join(tmp, r.case["name"], "campaign"), "DIR")
        return s.replace("|", "\\|").replace("\n", " ")
    lines = ["| case | fault | verify | verify says | reduce | reduce says "
             "| --skip-damaged: records (reference), rejected, victim's "
             "sources row | result |",
             "|---|---|---|---|---|---|---|---|"]
    for r in rows:
        c, k = r.case, r.cells
        skip = k.get("skip", "")
        if "skip_records" in k:
            skip += ": %s, rejected %s" % (k["skip_records"],
                                           k.get("skip_rejected", "?"))
            if "skip_status" in k:
                skip += ", '%s', %s skipped block(s)" % (
                    k["skip_status"], k.get("skip_skipped_blocks", "?"))
        if k.get("skip_msg"):
            skip += ": `%s`" % k["skip_msg"]
        red = k.get("reduce", "")
        if "reduce_records" in k:
            red += ", " + k["reduce_records"] + " records"
        verify_says = k.get("verify_msg", "") or k.get("verify_totals", "")
        result = "pass" if not r.problems else "FAIL: " + "; ".join(
            r.problems)
        lines.append("| %s |" % " | ".join(esc(x) for x in [
            c["name"], c["fault"], k.get("verify", ""),
            "`%s`" % verify_says if verify_says else "", red,
            "`%s`" % k["reduce_msg"] if k.get("reduce_msg") else "",
            skip, result]))
    return "\n".join(lines) + "\n"


def main():
    if sys.argv[1:] == ["--list"]:
        print("\n".join(c["name"] for c in CASES))
        return 0
    ap = argparse.ArgumentParser()
    ap.add_argument("fault_gen")
    ap.add_argument("--markdown")
    ap.add_argument("--only")
    ap.add_argument("--keep", action="store_true")
    a = ap.parse_args()
    rc, out, err = run([CLI, "reduce", "--help"])
    have_reduce = rc == 0 and "usage" in out
    cases = CASES
    if a.only:
        want = set(a.only.split(","))
        cases = [c for c in CASES if c["name"] in want]
        if len(cases) != len(want):
            print("unknown case in --only %s" % a.only)
            return 2
    tmp = tempfile.mkdtemp(prefix="mc-fault-")
    os.chmod(tmp, 0o755)  # the row run as nobody must reach its campaign
    rows = []
    try:
        for c in cases:
            r = run_case(c, os.path.abspath(a.fault_gen), tmp, have_reduce)
            rows.append(r)
            print("%-26s %s" % (c["name"], "FAIL" if r.problems else
                                "skipped" if r.skipped else "ok"))
            for p in r.problems:
                print("    " + p)
            sys.stdout.flush()
    finally:
        if not a.keep:
            shutil.rmtree(tmp, ignore_errors=True)
        else:
            print("kept", tmp)
    if a.markdown:
        with open(a.markdown, "w") as f:
            f.write(markdown(rows, tmp))
    failed = [r.case["name"] for r in rows if r.problems]
    pending = [r.case["name"] for r in rows
               if "PENDING" in (r.cells.get("reduce"), r.cells.get("skip"))]
    print("fault matrix: %d cases, %d failed%s" % (
        len(rows), len(failed), ", reduce pending in %d" % len(pending)
        if pending else ""))
    if failed:
        return 1
    # 77 = skipped (SKIP_RETURN_CODE in tests/fault/CMakeLists.txt) when no
    # selected row could run.
    return 77 if rows and all(r.skipped for r in rows) else 0


if __name__ == "__main__":
    sys.exit(main())
