"""The HTML report in a real headless browser (Debian's ``chromium``).

Checks (issues 7 and 17): the page loads with no console messages, every
SVG (the small structure of every row of the ranked table, the numbered
structure and stick spectrum of every candidate, the measured spectrum of
a JCAMP-DX run) is laid out with a non-empty drawing, the sign-off lines
are laid out as lines to write on, and a screenshot is written to the
test's temporary folder.  Console messages are read from Chromium's own log
(``--enable-logging=stderr``); a deliberately broken page checks that this
detection works.  Skipped, with the reason, when chromium is not installed.
"""

import json
import re
import shutil
import struct
import subprocess
import zlib
from datetime import datetime, timezone
from pathlib import Path

import pytest
from click.testing import CliRunner

from elucidate.cli import main
from elucidate.pipeline import solve
from elucidate.report.html import render_html
from elucidate.report.runinfo import RunInfo
from elucidate.report.serialize import result_to_dict

ROOT = Path(__file__).resolve().parents[1]
KESTREL = ROOT / "scenarios" / "kestrel-coatings-jcamp"

CHROMIUM = shutil.which("chromium") or ("/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None)
pytestmark = pytest.mark.skipif(
    CHROMIUM is None,
    reason="chromium is not installed (Debian: apt-get install -y chromium; .ci/run does this); "
           "the headless-browser check of the HTML report is skipped",
)
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--enable-logging=stderr", "--v=0"]
CONSOLE = re.compile(r":CONSOLE[^\]]*\]\s*(.*)")

# Runs after layout; measures every SVG and writes the result into the DOM.
PROBE = """<script>
window.addEventListener("load", function () {
  var out = [];
  document.querySelectorAll("body svg").forEach(function (svg) {
    var r = svg.getBoundingClientRect(), b = svg.getBBox();
    out.push({cls: svg.getAttribute("class"), w: r.width, h: r.height, bw: b.width, bh: b.height,
              shapes: svg.querySelectorAll("path, line, rect, text").length});
  });
  var lines = [];
  document.querySelectorAll("table.signoff td.line").forEach(function (td) {
    var r = td.getBoundingClientRect(), st = getComputedStyle(td);
    lines.push({w: r.width, h: r.height, border: parseFloat(st.borderBottomWidth)});
  });
  document.body.setAttribute("data-svg-check", JSON.stringify(out));
  document.body.setAttribute("data-signoff-check", JSON.stringify(lines));
});
</script>"""


def _run(page: Path, tmp: Path, *extra: str) -> subprocess.CompletedProcess:
    profile = tmp / f"profile-{len(list(tmp.glob('profile-*')))}"
    cmd = [CHROMIUM, *FLAGS, f"--user-data-dir={profile}", *extra, page.resolve().as_uri()]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=120, cwd=tmp)


def _console(proc) -> list[str]:
    return [m.group(1) for m in map(CONSOLE.search, proc.stderr.splitlines()) if m]


def _png_ink(path: Path) -> float:
    """Fraction of non-white bytes in a PNG's pixel data (stdlib zlib)."""
    data = path.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    pos, idat = 8, b""
    while pos < len(data):
        (length,) = struct.unpack(">I", data[pos:pos + 4])
        kind = data[pos + 4:pos + 8]
        if kind == b"IDAT":
            idat += data[pos + 8:pos + 8 + length]
        pos += 12 + length
    raw = zlib.decompress(idat)
    return sum(1 for b in raw[::7] if b < 200) / len(raw[::7])


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("browser")
    # ethyl acetate, CDCl3 (Fulmer et al., Organometallics 2010, 29, 2176; from memory)
    data = result_to_dict(solve("C4H8O2", "171.1 C, 60.5 CH2, 21.0 CH3, 14.2 CH3"),
                          run=RunInfo(datetime(2026, 1, 15, 8, 30, tzinfo=timezone.utc), sample_id="QC-101"))
    data["peaks_provenance"] = ["typed in (test)"]
    page = tmp / "report.html"
    page.write_text(render_html(data), encoding="utf-8")
    return tmp, page, data


def test_console_detection_works(tmp_path):
    # Control: a page that logs an error must be caught by the same reader.
    bad = tmp_path / "bad.html"
    bad.write_text('<!DOCTYPE html><html><head><meta charset="utf-8"><title>x</title></head><body>'
                   '<script>console.error("deliberate problem")</script></body></html>')
    proc = _run(bad, tmp_path, "--dump-dom")
    assert any("deliberate problem" in m for m in _console(proc)), proc.stderr[-2000:]


def test_report_loads_without_console_messages_and_screenshot(report):
    tmp, page, data = report
    shot = tmp / "report.png"
    proc = _run(page, tmp, f"--screenshot={shot}", "--window-size=1100,2400", "--hide-scrollbars")
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert _console(proc) == [], _console(proc)
    assert shot.exists() and shot.stat().st_size > 10_000
    assert _png_ink(shot) > 0.005, "the screenshot is blank"


@pytest.fixture(scope="module")
def check_report(tmp_path_factory):
    from elucidate.workflows.check import check_structure, check_to_dict

    tmp = tmp_path_factory.mktemp("browser-check")
    data = check_to_dict(check_structure("CCOC(C)=O", "171.1 C, 60.5 CH2, 21.0 CH3, 14.2 CH3",
                                         formula="C4H8O2", time_limit=20))
    page = tmp / "check.html"
    page.write_text(render_html(data), encoding="utf-8")
    # a check page shows one structure: present it as a one-candidate result
    return tmp, page, {"candidates": [data]}


@pytest.fixture(scope="module")
def jcamp_report(tmp_path_factory):
    # scenarios/kestrel-coatings-jcamp (invented): JCAMP-DX files -> solve -> JSON -> report
    tmp = tmp_path_factory.mktemp("browser-jcamp")
    meta = json.loads((KESTREL / "scenario.json").read_text())
    out = tmp / "result.json"
    res = CliRunner().invoke(main, [
        "solve", "-f", meta["formula"], "-p", str(KESTREL / meta["peaks"]), "--dept135",
        str(KESTREL / meta["dept135"]), "--dept90", str(KESTREL / meta["dept90"]), "--solvent", meta["solvent"],
        "--sample-id", "KC-2211", "--analyst", "R. Okafor (invented)", "--format", "json", "-o", str(out)])
    assert res.exit_code == 0, res.output
    page = tmp / "report.html"
    res = CliRunner().invoke(main, ["report", str(out), "-o", str(page)])
    assert res.exit_code == 0, res.output
    return tmp, page, json.loads(out.read_text())


def test_jcamp_report_screenshot(jcamp_report):
    tmp, page, _ = jcamp_report
    shot = tmp / "report.png"
    proc = _run(page, tmp, f"--screenshot={shot}", "--window-size=1100,1800", "--hide-scrollbars")
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert _console(proc) == [], _console(proc)
    assert _png_ink(shot) > 0.005, "the screenshot is blank"


@pytest.mark.parametrize("which", ["report", "check_report", "jcamp_report"])
def test_every_svg_renders(which, request):
    tmp, page, data = request.getfixturevalue(which)
    html = page.read_text(encoding="utf-8")
    # The report forbids scripts (CSP); the probe copy allows inline ones.
    probe = html.replace("default-src 'none';", "default-src 'none'; script-src 'unsafe-inline';")
    probe = probe.replace("</body>", PROBE + "</body>")
    probed = tmp / "probe.html"
    probed.write_text(probe, encoding="utf-8")
    proc = _run(probed, tmp, "--dump-dom", "--window-size=1100,2400")
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert _console(proc) == [], _console(proc)
    m = re.search(r'data-svg-check="([^"]*)"', proc.stdout)
    assert m, "the probe did not run"
    boxes = json.loads(m.group(1).replace("&quot;", '"').replace("&amp;", "&"))
    n = len(data["candidates"])
    assert sum(1 for b in boxes if b["cls"] == "structure") == n
    assert sum(1 for b in boxes if b["cls"] == "sticks") == n
    # ranked table of a solve result: one small structure per row (a check page has no table)
    assert sum(1 for b in boxes if b["cls"] == "thumb") == (0 if which == "check_report" else n)
    assert sum(1 for b in boxes if b["cls"] == "trace") == (1 if "spectrum_trace" in data else 0)
    assert (which == "jcamp_report") == ("spectrum_trace" in data)
    for b in boxes:
        assert b["w"] > 100 and b["h"] > 100, b
        assert b["bw"] > 20 and b["bh"] > 20, b
        assert b["shapes"] >= 5, b
    # sign-off: name, signature and date lines for the analyst and the reviewer, drawn and wide enough
    m = re.search(r'data-signoff-check="([^"]*)"', proc.stdout)
    cells = json.loads(m.group(1).replace("&quot;", '"').replace("&amp;", "&"))
    assert len(cells) == 6
    for c in cells:
        assert c["w"] > 100 and c["h"] > 20 and c["border"] >= 1, c


def test_prints_to_pdf_with_a_page_per_candidate(report):
    # Print CSS starts every candidate on a new page (break-before: page).
    tmp, page, data = report
    pdf = tmp / "report.pdf"
    proc = _run(page, tmp, f"--print-to-pdf={pdf}", "--no-pdf-header-footer")
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert _console(proc) == [], _console(proc)
    raw = pdf.read_bytes()
    assert raw.startswith(b"%PDF")
    pages = len(re.findall(rb"/Type\s*/Page\b", raw))
    assert pages >= len(data["candidates"]) + 1
