"""A short exhaustive list is followed by near alternatives, each saying which
stated assumption it needs set aside; the statements about the constrained list
do not change.

Tetrahydrofuran, C4H8O: 13C 67.97 and 25.62 ppm, both CH2 (Gottlieb, Kotlyar,
Nudelman, J. Org. Chem. 1997, 62, 7512, CDCl3 — values from memory). With DEPT
it is the only C4H8O isomer with two CH2 lines of two carbons each that fits
(graph reasoning, checked by the exhaustive search); a chemist still wants to
see what a misread DEPT would allow (common practice, no source).
"""

from __future__ import annotations

import json
import re

import pytest
from click.testing import CliRunner
from rdkit import Chem

from elucidate.cli import main
from elucidate.errors import InputError
from elucidate.pipeline import SolveSettings, solve

THF = "67.97 CH2 2, 25.62 CH2 2"
NAMES = {"C": 0, "CH": 1, "CH2": 2, "CH3": 3}


@pytest.fixture(scope="module")
def padded():
    return solve("C4H8O", THF, SolveSettings(time_limit=60, neighbours=0))


@pytest.fixture(scope="module")
def bare():
    return solve("C4H8O", THF, SolveSettings(time_limit=60, neighbours=0, near_alternatives=0))


def test_short_exhaustive_list_is_filled_with_labelled_alternatives(padded, bare):
    assert bare.completeness[0] == "complete"
    assert [c.smiles for c in bare.candidates] == ["C1CCOC1"]
    assert len(padded.candidates) >= 5
    first, rest = padded.candidates[0], padded.candidates[1:]
    assert first.smiles == "C1CCOC1" and first.set_aside == ""
    assert all(c.set_aside.startswith("DEPT multiplicities set aside") for c in rest)
    assert all(c.probability == 0.0 for c in rest)
    assert len({c.smiles for c in padded.candidates}) == len(padded.candidates)
    assert any("near alternative" in w for w in padded.warnings)


def test_statements_about_the_constrained_list_do_not_change(padded, bare):
    assert padded.completeness == bare.completeness
    assert padded.unlisted_probability == pytest.approx(bare.unlisted_probability)
    assert padded.candidates[0].probability == pytest.approx(bare.candidates[0].probability)


def test_each_alternative_names_the_lines_whose_multiplicity_it_changes(padded):
    for c in padded.candidates[1:]:
        mol = Chem.AddHs(Chem.MolFromSmiles(c.smiles))
        hs = {a.GetIdx(): sum(1 for n in a.GetNeighbors() if n.GetAtomicNum() == 1)
              for a in mol.GetAtoms() if a.GetAtomicNum() == 6}
        named = {int(m.group(1)) for m in re.finditer(r"line (\d+) \(", c.set_aside)}
        carried: dict[int, set] = {}
        for e in c.assignment:
            carried.setdefault(e.peak_index + 1, set()).update(hs[a] for a in e.atoms)
        changed = {line for line, h in carried.items() if h != {2}}  # both given lines are CH2
        assert named == changed, (c.smiles, c.set_aside)


def test_cli_says_so_in_text_and_json_and_can_switch_it_off():
    runner = CliRunner()
    base = ["solve", "-f", "C4H8O", "-p", THF, "--time-limit", "60", "--neighbours", "0"]
    text = runner.invoke(main, base)
    assert text.exit_code == 0, text.output
    assert "near alternative, not rated" in text.output
    doc = json.loads(runner.invoke(main, base + ["--format", "json"]).output)
    assert doc["candidates"][0]["set_aside"] == ""
    assert all(c["set_aside"] for c in doc["candidates"][1:]) and len(doc["candidates"]) >= 5
    off = json.loads(runner.invoke(main, base + ["--format", "json", "--near-alternatives", "0"]).output)
    assert [c["smiles"] for c in off["candidates"]] == ["C1CCOC1"]
    html = runner.invoke(main, base + ["--format", "html"]).output
    assert "near alternative, not rated" in html and "DEPT multiplicities set aside" in html
    assert "--near-alternatives" in runner.invoke(main, ["solve", "--help"]).output


@pytest.mark.parametrize("bad", [-1, 2.5, True, "5"])
def test_bad_setting_is_one_clear_error(bad):
    with pytest.raises(InputError, match="near-alternatives"):
        SolveSettings(near_alternatives=bad)


def test_sdf_marks_the_near_alternatives(tmp_path):
    runner = CliRunner()
    out = tmp_path / "c.sdf"
    res = runner.invoke(main, ["solve", "-f", "C4H8O", "-p", THF, "--time-limit", "60", "--neighbours", "0",
                               "--format", "sdf", "-o", str(out)])
    assert res.exit_code == 0, res.output
    mols = [m for m in Chem.SDMolSupplier(str(out)) if m is not None]
    assert len(mols) >= 5
    assert not mols[0].HasProp("ELUCIDATE_SET_ASIDE")
    assert all(m.GetProp("ELUCIDATE_SET_ASIDE").startswith("DEPT multiplicities set aside") for m in mols[1:])


def test_check_never_offers_a_near_alternative():
    # verifying THF: every structure the isomer search offers must fit the data as given
    # (near alternatives contradict the DEPT lines, so they are no alternative to the expected one)
    import elucidate

    report = elucidate.check("C1CCOC1", THF, time_limit=20)
    assert all(a.smiles != "OC1CCC1" for a in report.alternatives)
    assert all(not getattr(a, "set_aside", "") for a in report.alternatives)
    assert report.verdict == "consistent"
