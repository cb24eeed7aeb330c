"""SDF export read back by RDKit gives the same structures and properties.

Result from a real solve of toluene (CDCl3 shifts of Fulmer et al.,
Organometallics 2010, 29, 2176, from memory), which leaves several candidates.  NMReDATA tag layout
(Pupier et al., Magn. Reson. Chem. 2018, 56, 703) from memory.
"""

import pytest
from rdkit import Chem

from elucidate.errors import InputError
from elucidate.pipeline import solve
from elucidate.report.sdf import render_sdf
from elucidate.report.serialize import result_to_dict


@pytest.fixture(scope="module")
def data():
    d = result_to_dict(solve("C7H8", "137.9 C, 129.1 CH, 128.3 CH, 125.4 CH, 21.5 CH3"))
    d["observe_mhz"] = 100.6
    return d


def _read(text, tmp_path):
    path = tmp_path / "c.sdf"
    path.write_text(text)
    return [m for m in Chem.SDMolSupplier(str(path))]


def _canon(smi):
    return Chem.MolToSmiles(Chem.MolFromSmiles(smi))


def _rows(value):
    rows = [r.strip() for r in value.splitlines() if r.strip()]
    assert all(r.endswith("\\") for r in rows), "NMReDATA lines end with a backslash"
    return [[f.strip() for f in r[:-1].split(",")] for r in rows]


def test_structures_round_trip(data, tmp_path):
    mols = _read(render_sdf(data), tmp_path)
    assert len(mols) == len(data["candidates"]) >= 2
    for mol, cand in zip(mols, data["candidates"]):
        assert mol is not None
        assert Chem.MolToSmiles(mol) == _canon(cand["smiles"])
        assert mol.GetProp("NMREDATA_SMILES") == cand["smiles"]
        # atom n of the molfile is atom n-1 of the SMILES as written
        ref = Chem.MolFromSmiles(cand["smiles"])
        assert [a.GetSymbol() for a in mol.GetAtoms()] == [a.GetSymbol() for a in ref.GetAtoms()]
        assert sorted((b.GetBeginAtomIdx(), b.GetEndAtomIdx(), b.GetBondTypeAsDouble()) for b in mol.GetBonds()) \
            == sorted((b.GetBeginAtomIdx(), b.GetEndAtomIdx(), b.GetBondTypeAsDouble()) for b in ref.GetBonds())


def test_properties_round_trip(data, tmp_path):
    mols = _read(render_sdf(data), tmp_path)
    for mol, cand in zip(mols, data["candidates"]):
        assert int(mol.GetProp("ELUCIDATE_RANK")) == cand["rank"]
        assert float(mol.GetProp("ELUCIDATE_SCORE")) == pytest.approx(cand["score"], abs=1e-4)
        assert float(mol.GetProp("ELUCIDATE_PROBABILITY")) == pytest.approx(cand["probability"], abs=1e-4)
        assert float(mol.GetProp("ELUCIDATE_MAE_PPM")) == pytest.approx(cand["mae_ppm"], abs=0.005)
        assert float(mol.GetProp("ELUCIDATE_MAX_ERROR_PPM")) == pytest.approx(cand["max_error_ppm"], abs=0.005)
        assert mol.GetProp("ELUCIDATE_SEARCH_COMPLETE") == ("yes" if data["complete"] else "no")
        assert float(mol.GetProp("ELUCIDATE_UNLISTED_PROBABILITY")) == pytest.approx(
            data["unlisted_probability"], abs=1e-4)
        assert mol.GetProp("NMREDATA_FORMULA") == "C7H8"
        assert "hypotheses" in mol.GetProp("ELUCIDATE_CAUTION")
        # predicted shifts: one row per carbon, 1-based atoms
        pred = _rows(mol.GetProp("ELUCIDATE_PREDICTED_13C"))
        assert [(int(a) - 1, int(h)) for a, h, _, _ in pred] == \
            [(p["atom"], p["hydrogens"]) for p in cand["predicted_shifts"]]
        for (_, _, shift, sigma), p in zip(pred, cand["predicted_shifts"]):
            assert float(shift) == pytest.approx(p["shift"], abs=0.005)
            assert float(sigma) == pytest.approx(p["sigma"], abs=0.005)
        # assignment: label, observed shift, 1-based atoms; every atom named is a carbon
        got = sorted((int(r[0][1:]) - 1, float(r[1]), tuple(int(a) - 1 for a in r[2:]))
                     for r in _rows(mol.GetProp("NMREDATA_ASSIGNMENT")))
        want = sorted((e["peak_index"], e["observed"], tuple(e["atoms"])) for e in cand["assignment"])
        assert got == want
        for _, _, atoms in got:
            assert all(mol.GetAtomWithIdx(a).GetSymbol() == "C" for a in atoms)


def test_spectrum_tag(data, tmp_path):
    mol = _read(render_sdf(data), tmp_path)[0]
    rows = _rows(mol.GetProp("NMREDATA_1D_13C"))
    assert rows[0] == ["Larmor=100.6"]
    letters = {"C": "S=s", "CH": "S=d", "CH2": "S=t", "CH3": "S=q"}  # off-resonance letters
    assert rows[1:] == [[f"{p['shift']:.2f}", letters[p["mult"]], f"L=s{i + 1}"]
                        for i, p in enumerate(data["peaks"])]
    assert mol.GetProp("NMREDATA_VERSION") == "1.1"


def test_top_and_empty(data, tmp_path):
    assert len(_read(render_sdf(data, top=1), tmp_path)) == 1
    assert render_sdf(dict(data, candidates=[])) == ""
    with pytest.raises(InputError, match="top"):
        render_sdf(data, top=-1)


def test_damaged_results_raise_input_error(data):
    bad = dict(data, candidates=[dict(data["candidates"][0], smiles="C1CC")])
    with pytest.raises(InputError, match="cannot read candidate SMILES"):
        render_sdf(bad)
    cand = dict(data["candidates"][0])
    cand["assignment"] = [dict(cand["assignment"][0], atoms=[99])]
    with pytest.raises(InputError, match="has 7 atoms"):
        render_sdf(dict(data, candidates=[cand]))


def test_check_results_are_refused():
    doc = {"workflow": "check", "formula": "C4H8O2", "smiles": "CCOC(C)=O", "assignment": []}
    with pytest.raises(InputError, match="solve result"):
        render_sdf(doc)
