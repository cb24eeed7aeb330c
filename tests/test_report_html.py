"""HTML report: self-contained, well-formed, faithful to the result data.

The result under test comes from a real solve of toluene (CDCl3 shifts
of Fulmer et al., Organometallics 2010, 29, 2176; from memory).  The browser
checks are in ``test_report_browser.py``.
"""

import copy
import json
import re
import xml.etree.ElementTree as ET
from datetime import datetime, timedelta, timezone
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from rdkit import Chem

import elucidate
from elucidate.errors import InputError
from elucidate.pipeline import solve
from elucidate.predict.model import default_table_path
from elucidate.report.html import check_result_data, depiction_svg, render_html, stick_spectrum_svg, trace_svg
from elucidate.report.runinfo import RunInfo
from elucidate.report.serialize import result_to_dict
from elucidate.spectrum.trace import spectrum_trace

ROOT = Path(__file__).resolve().parents[1]
KESTREL = ROOT / "scenarios" / "kestrel-coatings-jcamp"
FIXED = datetime(2026, 1, 15, 8, 30, 5, tzinfo=timezone.utc)  # an invented run time, injected for tests

ETHYL_ACETATE_PEAKS = "171.1 C, 60.5 CH2, 21.0 CH3, 14.2 CH3"  # Fulmer 2010, from memory
TOLUENE_PEAKS = "137.9 C, 129.1 CH, 128.3 CH, 125.4 CH, 21.5 CH3"  # Fulmer 2010, from memory; several candidates


@pytest.fixture(scope="module")
def result():
    return solve("C7H8", TOLUENE_PEAKS)


@pytest.fixture(scope="module")
def data(result):
    return result_to_dict(result, run=RunInfo(FIXED))


class _Collect(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))


def _svgs(page):
    return re.findall(r"<svg\b.*?</svg>", page, flags=re.S)


def test_page_is_self_contained(data):
    # No network and no scripts: nothing is loaded from elsewhere (issue 7
    # requirement; checked on the markup, common practice, no source).
    page = render_html(data)
    parser = _Collect()
    parser.feed(page)
    tags = [t for t, _ in parser.tags]
    assert "script" not in tags and "link" not in tags and "iframe" not in tags and "img" not in tags
    for tag, attrs in parser.tags:
        for key in ("src", "href"):
            value = attrs.get(key)
            if value is not None:
                assert value.startswith("#"), (tag, key, value)
    csp = [a for t, a in parser.tags if t == "meta" and a.get("http-equiv") == "Content-Security-Policy"]
    assert csp and "default-src 'none'" in csp[0]["content"]


def test_every_candidate_has_structure_and_spectrum_svg(data):
    page = render_html(data)
    svgs = _svgs(page)
    n = len(data["candidates"])
    assert n >= 2
    # small picture in the ranked table, numbered structure, stick spectrum; one per reference neighbour
    assert len(svgs) == 3 * n + len(data.get("reference_neighbours") or [])
    for svg in svgs:
        ET.fromstring(svg)  # well-formed XML, or this raises
    structures = [s for s in svgs if 'class="structure"' in s]
    assert len(structures) == n
    for cand, svg in zip(data["candidates"], structures):
        carbons = sum(1 for a in Chem.MolFromSmiles(cand["smiles"]).GetAtoms() if a.GetSymbol() == "C")
        # one atom note (carbon number) per carbon; RDKit draws each as paths of class 'note'
        assert svg.count("class='note'") >= carbons


def _ranked_section(page):
    end = page.find('<section class="neighbours">')
    return page[page.index("<h2>Ranked candidates</h2>"):end if end > 0 else page.index("<h2>Inputs</h2>")]


def test_ranked_table_has_one_structure_per_row(data):
    section = _ranked_section(render_html(data))
    table = section[section.index('<table class="ranked">'):section.index("</table>") + len("</table>")]
    rows = re.findall(r"<tr>(.*?)</tr>", table[table.index("<tbody>"):], flags=re.S)
    assert len(rows) == len(data["candidates"])
    for cand, row in zip(data["candidates"], rows):
        (svg,) = _svgs(row)
        assert 'class="thumb"' in svg
        assert f'aria-label="2D structure of {cand["smiles"]}"' in svg  # the row's own structure
        assert "class='note'" not in svg  # no carbon numbers in the small pictures
        # the drawing has as many heavy atoms as the SMILES: RDKit tags every bond path with its atoms
        atoms = {int(a) for a in re.findall(r"atom-(\d+)", svg)}
        assert atoms == set(range(Chem.MolFromSmiles(cand["smiles"]).GetNumAtoms()))


def test_score_probability_and_not_listed_are_explained_by_the_table(data):
    section = _ranked_section(render_html(data))
    key = section[section.index('<ul class="key">'):]
    assert "Score" in key and "lower is better" in key and "rarity cost" in key
    assert "given that the answer is listed" in key
    assert "none of these" in key and f"{data['unlisted_probability']:.2f}" in key
    # the score column shows each candidate's score
    for cand in data["candidates"]:
        assert f"{cand['score']:.2f}" in section


def test_ppm_axis_decreases_left_to_right(data):
    # NMR spectra are drawn with the shift decreasing to the right (common practice, no source).
    cand = data["candidates"][0]
    svg = ET.fromstring(stick_spectrum_svg(data["peaks"], cand["assignment"]))
    ns = "{http://www.w3.org/2000/svg}"
    sticks = [(float(el.get("data-ppm")), float(el.get("x1"))) for el in svg.iter(ns + "line")
              if el.get("class") in ("obs", "pred")]
    assert len(sticks) >= len(data["peaks"]) + len(cand["assignment"])
    by_ppm = sorted(sticks)
    xs = [x for _, x in by_ppm]
    assert all(a >= b for a, b in zip(xs, xs[1:])), "higher ppm must be further left"
    assert float(svg.get("data-left-ppm")) > float(svg.get("data-right-ppm"))
    # observed sticks go up from their baseline, predicted ones down
    for el in svg.iter(ns + "line"):
        if el.get("class") == "obs":
            assert float(el.get("y2")) < float(el.get("y1"))
        if el.get("class") == "pred":
            assert float(el.get("y2")) > float(el.get("y1"))
    pairs = [el for el in svg.iter(ns + "line") if el.get("class") == "pair"]
    assert len(pairs) == len(cand["assignment"])


def test_assignment_table_echoes_the_data(data):
    page = render_html(data)
    best = data["candidates"][0]
    section = page[page.index('id="cand-1"'):page.index('id="cand-2"')]
    for e in best["assignment"]:
        assert f"{e['observed']:.2f}" in section and f"{e['predicted']:.2f}" in section
        assert ", ".join(f"C{a + 1}" for a in e["atoms"]) in section
    for p in data["peaks"]:
        assert f"{p['shift']:.2f}" in page


def test_inputs_statement_and_cautions(data):
    page = render_html(data)
    assert "C7H8" in page and f"<dd>{data['dbe']}</dd>" in page
    assert "exhaustive under the stated constraints" in page  # data["complete"] is True
    for row in data["constraint_log"]:
        assert row["constraint"].replace("<", "&lt;") in page
    assert "hypotheses" in page and "reference standard" in page and "accredited procedures" in page
    assert "@media print" in page


def test_incomplete_search_is_said(data):
    cut = dict(data, complete=False)
    cut["completeness"] = {"status": "stopped at the time limit", "cost_bound": None}  # a result without statements
    assert "cut short" in render_html(cut)


def test_provenance_is_shown_and_text_is_escaped(data):
    odd = dict(data, peaks_provenance=["picked with <threshold> & 5 x noise"], observe_mhz=100.6)
    page = render_html(odd)
    assert "picked with &lt;threshold&gt; &amp; 5 x noise" in page
    assert "<threshold>" not in page
    assert "100.6 MHz" in page


def test_top_limits_candidates(data):
    page = render_html(data, top=1)
    assert len(_svgs(page)) == 3 + len(data.get("reference_neighbours") or [])
    with pytest.raises(InputError, match="top"):
        render_html(data, top=0)


def test_deterministic(data):
    assert render_html(copy.deepcopy(data)) == render_html(data)


def test_optional_keys_may_be_missing(data):
    minimal = {"formula": data["formula"],
               "candidates": [{"smiles": c["smiles"], "rank": c["rank"], "assignment": c["assignment"]}
                              for c in data["candidates"]]}
    page = render_html(minimal)
    assert len(_svgs(page)) == 3 * len(data["candidates"])
    assert "not recorded" in page  # completeness unknown is said, not guessed
    # a result saved before the run block existed: said, not invented; sign-off lines still there
    assert "<dt>Date and time of the run</dt><dd>not recorded in this result</dd>" in page
    assert page.count('<td class="line">&nbsp;</td>') == 6


@pytest.mark.parametrize("bad, message", [
    ([], "JSON object"),
    ({"formula": "C4H8O2"}, "'candidates'"),
    ({"formula": "C4H8O2", "candidates": "CCO"}, "must be a list"),
    ({"formula": "C4H8O2", "candidates": [{"rank": 1}]}, "no 'smiles'"),
])
def test_bad_data_raises_input_error(bad, message):
    with pytest.raises(InputError, match=message):
        check_result_data(bad)
    with pytest.raises(InputError):
        render_html(bad)


def test_unreadable_smiles_raises_input_error():
    with pytest.raises(InputError, match="cannot read candidate SMILES"):
        depiction_svg("C1CC")


@pytest.fixture(scope="module")
def check_data():
    from elucidate.workflows.check import check_structure, check_to_dict

    # ethyl acetate checked against its own lines (Fulmer 2010, from memory)
    return check_to_dict(check_structure("CCOC(C)=O", ETHYL_ACETATE_PEAKS, formula="C4H8O2", time_limit=20))


def test_check_result_gets_its_own_page(check_data):
    page = render_html(check_data)
    svgs = _svgs(page)
    assert len(svgs) == 2  # expected structure + its stick spectrum
    for svg in svgs:
        ET.fromstring(svg)
    assert f"Verdict: {check_data['verdict']}" in page
    for reason in check_data["reasons"]:
        assert reason.replace("'", "&#x27;") in page
    for e in check_data["assignment"]:
        assert f"{e['observed']:.2f}" in page and ", ".join(f"C{a + 1}" for a in e["atoms"]) in page
    assert "hypothes" in page and "accredited procedures" in page


def test_batch_sample_block_is_shown(data):
    doc = {"sample": {"id": "KC-2211", "row": 3, "status": "ok", "fingerprint": "abc123"}, **data}
    page = render_html(doc)
    assert "<dd>KC-2211</dd>" in page and "abc123" not in page


def test_no_candidates_is_said(data):
    page = render_html(dict(data, candidates=[], reference_neighbours=[]))
    assert "No structure fits" in page and not _svgs(page)


# ----------------------------------------------------------------- run block, header and sign-off
def test_json_run_block_carries_time_and_versions(result):
    data = result_to_dict(result, run=RunInfo(FIXED, sample_id="KC-2211"))
    run = data["run"]
    assert run["timestamp_utc"] == "2026-01-15T08:30:05Z"
    assert run["elucidate_version"] == elucidate.__version__
    # the shipped table's provenance header (written by build-table): build date + training-data checksum
    with np.load(default_table_path(), allow_pickle=False) as z:
        header = json.loads(str(z["header"]))
    assert run["shift_table_version"] == f"{header['build_date']}+{header['data_sha256'][:8]}"
    assert re.fullmatch(r"\d{4}-\d{2}-\d{2}\+[0-9a-f]{8}", run["shift_table_version"])
    assert run["sample_id"] == "KC-2211" and run["analyst"] is None and run["reviewer"] is None
    json.dumps(data)  # plain data


def test_only_the_timestamp_varies_between_serialisations(result):
    a = result_to_dict(result, run=RunInfo(FIXED))
    b = result_to_dict(result, run=RunInfo(FIXED + timedelta(hours=1)))
    assert a["run"]["timestamp_utc"] != b["run"]["timestamp_utc"]
    a["run"].pop("timestamp_utc"), b["run"].pop("timestamp_utc")
    assert a == b
    assert result_to_dict(result, run=RunInfo(FIXED)) == result_to_dict(result, run=RunInfo(FIXED))
    # without an injected time, "now" (UTC) is recorded
    before = datetime.now(timezone.utc).replace(microsecond=0)
    stamp = result_to_dict(result)["run"]["timestamp_utc"]
    after = datetime.now(timezone.utc)
    assert before <= datetime.strptime(stamp, "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=timezone.utc) <= after


def test_run_time_is_stored_in_utc():
    local = datetime(2026, 1, 15, 10, 30, 5, tzinfo=timezone(timedelta(hours=2)))
    assert RunInfo(local).to_dict()["timestamp_utc"] == "2026-01-15T08:30:05Z"


@pytest.mark.parametrize("kwargs, message", [
    ({"timestamp": datetime(2026, 1, 15, 8, 30)}, "timezone"),
    ({"timestamp": "2026-01-15"}, "datetime"),
    ({"timestamp": FIXED, "analyst": "A. Person\nB. Person"}, "one line"),
    ({"timestamp": FIXED, "reviewer": "x" * 200}, "at most"),
    ({"timestamp": FIXED, "sample_id": 17}, "must be text"),
])
def test_run_info_rejects_bad_input(kwargs, message):
    with pytest.raises(InputError, match=message):
        RunInfo(**kwargs)


def test_header_shows_sample_time_versions_and_names(result):
    data = result_to_dict(result, run=RunInfo(FIXED, sample_id="KC-2211", analyst="R. Okafor",
                                              reviewer="J. Lindqvist & Co <QA>"))
    page = render_html(data)
    header = page[:page.index("<h2>Ranked candidates</h2>")]
    assert "<dt>Sample ID</dt><dd>KC-2211</dd>" in header
    assert "2026-01-15T08:30:05Z (UTC)" in header
    assert f"elucidate {elucidate.__version__}" in header
    assert data["run"]["shift_table_version"] in header
    assert '<td class="line">R. Okafor</td>' in header
    assert '<td class="line">J. Lindqvist &amp; Co &lt;QA&gt;</td>' in header  # escaped
    # signature and date stay blank lines to be filled in by hand
    assert header.count('<td class="line">&nbsp;</td>') == 4


def test_blank_signoff_lines_without_names(data):
    page = render_html(data)
    signoff = page[page.index('<table class="signoff">'):]
    signoff = signoff[:signoff.index("</table>")]
    for role in ("Analyst", "Reviewer"):
        row = re.search(rf'<th scope="row">{role}</th>(.*?)</tr>', signoff).group(1)
        assert row.count('<td class="line">&nbsp;</td>') == 3  # name, signature, date
    assert "<th scope=\"col\">signature</th>" in signoff and "<th scope=\"col\">date</th>" in signoff
    assert "<dt>Sample ID</dt><dd>not given</dd>" in page


# ----------------------------------------------------------------- settings, completeness, footer
def test_settings_have_plain_language_labels(data):
    page = render_html(data)
    settings = page[page.index("Search settings and structural constraints"):]
    settings = settings[:settings.index("</table>")]
    assert "Implausible motifs kept" in settings and "Accidental overlaps allowed (max" in settings
    for raw in ("allow_all", "symmetry_overlap", "symmetry_split", "charged_nitrogen", "time_limit"):
        assert raw not in settings
        assert raw in data["settings"]  # the JSON keeps the raw keys
    assert "60 s" in settings  # time limit with its unit


def test_complete_up_to_cost_is_not_called_cut_short(data):
    bounded = dict(data, complete=False, completeness={"status": "complete up to cost", "cost_bound": 12.8})
    page = render_html(bounded)
    assert "exhaustive up to an approximate cost of 12.8" in page and "cut short" not in page


def test_footer_says_how_the_page_was_made(data):
    direct = render_html(data, origin="run")
    footer = direct[direct.index("<footer>"):]
    assert "directly from this run" in footer and "saved" not in footer
    saved = render_html(data, origin="file", saved_file="/lab/archive/2026/result.json")
    footer = saved[saved.index("<footer>"):]
    assert "Re-rendered" in footer and "<code>result.json</code>" in footer and "/lab/archive" not in footer
    assert "2026-01-15T08:30:05Z" in footer  # when the run itself was made
    neutral = render_html(data)
    footer = neutral[neutral.index("<footer>"):]
    assert "saved" not in footer and "directly" not in footer
    with pytest.raises(InputError, match="origin"):
        render_html(data, origin="disk")


# ----------------------------------------------------------------- measured spectrum
@pytest.fixture(scope="module")
def kestrel_trace():
    return spectrum_trace(KESTREL / "drum-rinse-KC-2211_c13.jdx").to_dict()


def test_trace_svg_marks_the_lines_on_the_spectrum(kestrel_trace):
    # 4-methylpentan-2-one lines of the scenario (make_spectra.py; CDCl3 shifts from memory)
    peaks = [{"shift": 208.7}, {"shift": 52.7}, {"shift": 30.3}, {"shift": 24.6}, {"shift": 22.5}]
    svg = ET.fromstring(trace_svg(kestrel_trace, peaks))
    ns = "{http://www.w3.org/2000/svg}"
    (line,) = [el for el in svg.iter(ns + "polyline") if el.get("class") == "spectrum"]
    pts = [tuple(map(float, p.split(","))) for p in line.get("points").split()]
    assert len(pts) == len(kestrel_trace["ppm"])
    xs = [x for x, _ in pts]
    assert all(a <= b for a, b in zip(xs, xs[1:])), "higher ppm must be further left"
    marks = [el for el in svg.iter(ns + "path") if el.get("class") == "mark"]
    assert [float(m.get("data-ppm")) for m in marks] == [p["shift"] for p in peaks]
    for m in marks:
        x_tip, y_tip = map(float, re.match(r"M([\d.]+),([\d.]+)", m.get("d")).groups())
        # the mark sits just above the tallest point of the trace near its line (SVG y grows downwards)
        near = [y for x, y in pts if abs(x - x_tip) <= 3]
        assert near and y_tip <= min(near) and min(near) - y_tip <= 10


def test_damaged_trace_raises_input_error(data):
    for bad in ({"ppm": [1.0], "intensity": [0.5]}, {"ppm": [1, 2], "intensity": ["a", 1]}, [1, 2]):
        with pytest.raises(InputError, match="spectrum_trace"):
            render_html(dict(data, spectrum_trace=bad))
