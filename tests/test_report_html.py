"""HTML report: self-contained, well-formed, faithful to the result data.

The result under test comes from a real solve of toluene (CDCl3 shifts
of Fulmer et al., Organometallics 2010, 29, 2176; from memory).  The browser
checks are in ``test_report_browser.py``.
"""

import copy
import re
import xml.etree.ElementTree as ET
from html.parser import HTMLParser

import pytest
from rdkit import Chem

from elucidate.errors import InputError
from elucidate.pipeline import solve
from elucidate.report.html import check_result_data, depiction_svg, render_html, stick_spectrum_svg
from elucidate.report.serialize import result_to_dict

ETHYL_ACETATE_PEAKS = "171.1 C, 60.5 CH2, 21.0 CH3, 14.2 CH3"  # Fulmer 2010, from memory
TOLUENE_PEAKS = "137.9 C, 129.1 CH, 128.3 CH, 125.4 CH, 21.5 CH3"  # Fulmer 2010, from memory; several candidates


@pytest.fixture(scope="module")
def data():
    return result_to_dict(solve("C7H8", TOLUENE_PEAKS))


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
    assert len(svgs) == 2 * n
    for svg in svgs:
        ET.fromstring(svg)  # well-formed XML, or this raises
    structures = [s for s in svgs if 'class="structure"' in s]
    assert len(structures) == n
    for cand, svg in zip(data["candidates"], structures):
        carbons = sum(1 for a in Chem.MolFromSmiles(cand["smiles"]).GetAtoms() if a.GetSymbol() == "C")
        # one atom note (carbon number) per carbon; RDKit draws each as paths of class 'note'
        assert svg.count("class='note'") >= carbons


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
    assert "cut short" in render_html(cut)


def test_provenance_is_shown_and_text_is_escaped(data):
    odd = dict(data, peaks_provenance=["picked with <threshold> & 5 x noise"], observe_mhz=100.6)
    page = render_html(odd)
    assert "picked with &lt;threshold&gt; &amp; 5 x noise" in page
    assert "<threshold>" not in page
    assert "100.6 MHz" in page


def test_top_limits_candidates(data):
    page = render_html(data, top=1)
    assert len(_svgs(page)) == 2
    with pytest.raises(InputError, match="top"):
        render_html(data, top=0)


def test_deterministic(data):
    assert render_html(copy.deepcopy(data)) == render_html(data)


def test_optional_keys_may_be_missing(data):
    minimal = {"formula": data["formula"],
               "candidates": [{"smiles": c["smiles"], "rank": c["rank"], "assignment": c["assignment"]}
                              for c in data["candidates"]]}
    page = render_html(minimal)
    assert len(_svgs(page)) == 2 * len(data["candidates"])
    assert "not recorded" in page  # completeness unknown is said, not guessed


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
    page = render_html(dict(data, candidates=[]))
    assert "No structure fits" in page and not _svgs(page)
