#!/usr/bin/python3
"""The HTML report in a real browser: Debian's chromium, headless. The page
must load from a file with every network lookup refused, log nothing on the
console, contain every figure inline with a non-zero size, and render (a
screenshot is kept in study_html/report.png for a human to look at).
Skipped (exit 77) when chromium is not installed."""
import html.parser
import json
import os
import re
import shlex
import shutil
import subprocess
import sys
import tempfile

CLI = os.environ["MC_CLI"]
MPIRUN = shlex.split(os.environ.get("MC_MPIRUN", "mpirun --oversubscribe"))
WORK = os.path.abspath("study_html")
CHROMIUM = shutil.which("chromium") or ("/usr/bin/chromium"
                                         if os.path.exists("/usr/bin/chromium") else None)


def run(args, expect=0, **kw):
    p = subprocess.run(args, capture_output=True, text=True, **kw)
    if p.returncode != expect:
        sys.exit(f"FAIL: {' '.join(args)} -> {p.returncode}\n{p.stdout}\n{p.stderr}")
    return p


def chromium(url, *extra):
    profile = tempfile.mkdtemp(prefix="mc-chromium-")
    try:
        return run(["timeout", "120", CHROMIUM, "--headless", "--no-sandbox",
                    "--disable-gpu", "--disable-quic", "--no-first-run",
                    "--disable-background-networking", "--disable-component-update",
                    "--disable-sync", f"--user-data-dir={profile}",
                    # Any attempt to reach a host fails, and would be logged.
                    "--host-resolver-rules=MAP * ~NOTFOUND",
                    "--enable-logging=stderr", "--v=0", *extra, url])
    finally:
        shutil.rmtree(profile, ignore_errors=True)


class Scan(html.parser.HTMLParser):
    """Collects figures and anything that would fetch a resource."""

    def __init__(self):
        super().__init__()
        self.figures, self.fetching, self.svgs = [], [], 0

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "figure":
            self.figures.append(a.get("class", ""))
        if tag == "svg":
            self.svgs += 1
        if tag in ("script", "link", "img", "iframe", "object", "embed", "image"):
            self.fetching.append(tag)
        for k in ("src", "href", "xlink:href"):
            if k in a and not a[k].startswith("#"):
                self.fetching.append(f"{tag} {k}={a[k]}")


def console_lines(stderr):
    return [l for l in stderr.splitlines() if "CONSOLE" in l]


def main():
    if not CHROMIUM:
        print("SKIP: chromium is not installed (apt-get install -y chromium)")
        sys.exit(77)
    shutil.rmtree(WORK, ignore_errors=True)
    os.makedirs(WORK)
    camp = os.path.join(WORK, "b16")
    run([CLI, "synth", "-o", camp, "--ranks", "16", "--steps", "12", "--input",
         "deck-b", "--scaling", "strong", "-q"])
    summary = os.path.join(WORK, "b16.h5")
    run(MPIRUN + ["-np", "2", CLI, "reduce", camp, "-o", summary, "--label", "deck-b",
                  "-q"])
    shared = os.path.join(WORK, "b16-shared.h5")
    run([CLI, "share", summary, "-o", shared, "-q"])

    import h5py  # Debian python3-h5py: the populations the page must show
    with h5py.File(summary, "r") as f:
        nonempty = sum(1 for g in f["populations"].values() if g["hist_counts"].size)
        has_matrix = f["matrix/src"].shape[0] > 0
    want_figures = 1 + 2 * nonempty + (2 if has_matrix else 0)

    page = os.path.join(WORK, "report.html")
    run([CLI, "report", summary, "--html", page, "--force"])
    text = open(page, encoding="utf-8").read()
    scan = Scan()
    scan.feed(text)
    assert not scan.fetching, f"page fetches: {scan.fetching}"
    assert not re.search(r"url\(|@import|@font-face", text), "CSS fetches"
    assert set(re.findall(r"https?://[^\s\"'<>]*", text)) <= {"http://www.w3.org/2000/svg"}
    assert len(scan.figures) == want_figures, (len(scan.figures), want_figures)
    assert "deck-b" in text and "16" in text

    # 1. The page as written: loads, logs nothing, DOM has every figure.
    url = "file://" + page
    p = chromium(url, "--dump-dom")
    assert not console_lines(p.stderr), console_lines(p.stderr)
    assert p.stdout.count("<figure") == want_figures
    assert "Population all" in p.stdout

    # 2. A copy with a probe script appended (the page itself has none):
    # the rendered size of every figure and any script error.
    probe = os.path.join(WORK, "probe.html")
    script = ("<script>var errs=[];window.addEventListener('error',function(e)"
              "{errs.push(String(e.message));});window.addEventListener('load',"
              "function(){var r=[];document.querySelectorAll('figure svg').forEach("
              "function(s){var b=s.getBoundingClientRect();r.push([b.width,b.height]);});"
              "var p=document.createElement('pre');p.id='probe';p.textContent="
              "JSON.stringify({sizes:r,errs:errs});document.body.appendChild(p);});"
              "</script>")
    open(probe, "w", encoding="utf-8").write(text.replace("</body>", script + "</body>"))
    p = chromium("file://" + probe, "--dump-dom", "--window-size=1200,2000")
    m = re.search(r'<pre id="probe">(.*?)</pre>', p.stdout, re.S)
    assert m, "probe did not run"
    res = json.loads(html.unescape(m.group(1)))
    assert not res["errs"], res["errs"]
    assert len(res["sizes"]) == want_figures, res
    assert all(w > 100 and h > 100 for w, h in res["sizes"]), res["sizes"]

    # 3. A screenshot, kept for a human to judge.
    shot = os.path.join(WORK, "report.png")
    p = chromium(url, f"--screenshot={shot}", "--window-size=1200,2000")
    with open(shot, "rb") as f:
        head = f.read(8)
    assert head == b"\x89PNG\r\n\x1a\n" and os.path.getsize(shot) > 20000

    # 4. The page of a shared copy says it is approximate.
    page2 = os.path.join(WORK, "shared.html")
    run([CLI, "report", shared, "--html", page2, "--force"])
    text2 = open(page2, encoding="utf-8").read()
    assert "Approximate: this is a coarsened copy" in text2
    p = chromium("file://" + page2, "--dump-dom")
    assert not console_lines(p.stderr), console_lines(p.stderr)
    shutil.rmtree(camp, ignore_errors=True)  # keep only the pages and the PNG
    print(f"ok: {want_figures} figures rendered; screenshot {shot}")


if __name__ == "__main__":
    main()
