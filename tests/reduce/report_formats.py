#!/usr/bin/python3
"""report_formats.py - 'msgcensus report' output forms.

  text  every line fits 80 columns (also with a long campaign path and
        per-communicator populations) and each population is shown.
  csv   parses with Python's csv module, one value per row, and its values
        equal the summary's datasets read with h5py (Debian python3-h5py).
  json  parses with Python's json module and agrees with h5py likewise.
  html  --html with --population shows that population's section and
        overview row only (parsed with Python's html.parser); without it,
        every non-empty population has its section.
"""
import csv
import html.parser
import io
import json
import os
import sys
import tempfile

import h5py  # Debian python3-h5py

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from reduce_common import CLI, reduce_cmd, run, synth


def make_summary(tmp):
    camp = os.path.join(tmp, "a-rather-long-campaign-directory-name-" * 3)
    synth(camp, "--ranks", "4", "--steps", "15", "--input", "deck-b")
    out = os.path.join(tmp, "s.h5")
    run(reduce_cmd(2, camp, "-o", out, "--per-comm", "--label",
                   "deck-b, 4 ranks, strong scaling study of the halo solver"))
    return out


def pops_of(path):
    with h5py.File(path, "r") as h:
        res = {}
        for g in h["populations"].values():
            st = {r["metric"].decode().rstrip("\0"): r for r in g["stats"][...]}
            res[g.attrs["name"]] = (st, g["quantiles"][...], g["modes"][...])
        return res


def test_text(path):
    out = run([CLI, "report", path]).stdout
    long = [l for l in out.splitlines() if len(l) > 80]
    assert not long, "lines over 80 columns:\n" + "\n".join(long)
    for name in pops_of(path):
        assert "== population %s ==" % name in out, name
    assert " best" in out
    one = run([CLI, "report", path, "--population", "op/MPI_Isend"]).stdout
    assert one.count("== population") == 1
    r = run([CLI, "report", path, "--population", "nonesuch"], check=False)
    assert r.returncode == 1 and "no population 'nonesuch'" in r.stderr


class Sections(html.parser.HTMLParser):
    """Ids of the population sections and the overview's population links."""

    def __init__(self):
        super().__init__()
        self.sections, self.links = [], []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "section" and "population" in (a.get("class") or ""):
            self.sections.append(a["id"])
        if tag == "a" and (a.get("href") or "").startswith("#pop-"):
            self.links.append(a["href"][1:])


def sections_of(page):
    p = Sections()
    with open(page, encoding="utf-8") as f:
        p.feed(f.read())
    return p


def test_html(path):
    d = os.path.dirname(path)
    full = os.path.join(d, "all.html")
    run([CLI, "report", path, "--html", full])
    every = sections_of(full)
    nonempty = [n for n, (st, _, _) in pops_of(path).items()
                if int(st["count"]["exact"]) > 0]
    assert len(every.sections) == len(nonempty) > 1, every.sections
    one = os.path.join(d, "p2p.html")
    run([CLI, "report", path, "--html", one, "--population", "p2p"])
    only = sections_of(one)
    assert len(only.sections) == 1, only.sections
    assert only.sections[0] in every.sections
    assert set(only.links) == {only.sections[0]}, only.links
    print("html: %d population sections; with --population p2p only %s"
          % (len(every.sections), only.sections[0]))


def test_csv(path):
    out = run([CLI, "report", path, "--format", "csv"]).stdout
    rows = list(csv.DictReader(io.StringIO(out)))
    assert rows and set(rows[0]) == {"population", "section", "item", "field",
                                     "value"}
    val = {(r["population"], r["section"], r["item"], r["field"]): r["value"]
           for r in rows}
    assert len(val) == len(rows), "duplicate rows"
    for name, (st, q, top) in pops_of(path).items():
        assert int(val[(name, "count", "messages", "value")]) == st["count"]["exact"]
        assert int(val[(name, "count", "total_bytes", "value")]) == \
            st["total_bytes"]["exact"]
        if st["count"]["exact"] == 0:
            continue
        for c in ("mean", "median", "mode", "trimean"):
            assert float(val[(name, "center", c, "value")]) == st[c]["value"]
            assert float(val[(name, "center", c, "mad")]) == st[c]["mad"]
            assert int(val[(name, "center", c, "rank")]) == st[c]["rank"]
        for row in q:
            key = (name, "quantile", "%g" % row["level"], "by_messages")
            assert float(val[key]) == row["value"], key
        for i, t in enumerate(top):
            assert int(val[(name, "top", str(i + 1), "size")]) == t["size"]


def test_json(path):
    doc = json.loads(run([CLI, "report", path, "--format", "json"]).stdout)
    assert doc["format"] == "msgcensus-summary"
    ref = pops_of(path)
    assert [p["name"] for p in doc["populations"]] == list(ref)
    for p in doc["populations"]:
        st, q, top = ref[p["name"]]
        assert p["count"] == st["count"]["exact"]
        assert p["total_bytes"] == st["total_bytes"]["exact"]
        if p["count"] == 0:
            assert p["best"] is None
            continue
        best = [c for c in p["centers"] if c["rank"] == 1][0]["name"]
        assert p["best"] == best
        for c in p["centers"]:
            assert c["value"] == st[c["name"]]["value"]
            assert c["rel_mad"] == st[c["name"]]["rel_mad"]
        assert [t["size"] for t in p["top"]] == [int(t["size"]) for t in top]
        assert [x["by_messages"] for x in p["quantiles"]] == list(q["value"])


def main():
    with tempfile.TemporaryDirectory() as tmp:
        path = make_summary(tmp)
        {"text": test_text, "csv": test_csv, "json": test_json,
         "html": test_html}[sys.argv[1]](path)
    return 0


if __name__ == "__main__":
    sys.exit(main())
