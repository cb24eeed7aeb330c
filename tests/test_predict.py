"""Checks of the shipped 13C shift predictor against the outside world.

Reference shifts: Fulmer et al., Organometallics 2010, 29, 2176, CDCl3
column (values from memory).  Rule-of-thumb ranges: common practice, no
source.
"""

from __future__ import annotations

import time

import pytest
from rdkit import Chem

from elucidate.errors import InputError
from elucidate.predict import AtomShift, predict_mol, predict_smiles

TOL = 2.5

# (name, SMILES, {atom index: reference ppm}) — Fulmer et al. 2010, CDCl3,
# from memory.
FULMER_CDCL3 = [
    ("toluene", "Cc1ccccc1", {0: 21.46, 1: 137.89, 2: 129.07, 3: 128.26, 4: 125.33, 5: 128.26, 6: 129.07}),
    ("pyridine", "c1ccncc1", {0: 135.96, 1: 123.75, 2: 149.90, 4: 149.90, 5: 123.75}),
    ("ethyl acetate", "CC(=O)OCC", {0: 21.04, 1: 171.36, 4: 60.49, 5: 14.19}),
    ("acetone", "CC(C)=O", {0: 30.92, 1: 207.07, 2: 30.92}),
    ("ethanol", "CCO", {0: 18.41, 1: 58.28}),
    ("diethyl ether", "CCOCC", {0: 15.20, 1: 65.91, 3: 65.91, 4: 15.20}),
    ("acetonitrile", "CC#N", {0: 1.89, 1: 116.43}),
    ("N,N-dimethylformamide", "CN(C)C=O", {3: 162.62}),
    ("benzene", "c1ccccc1", {i: 128.37 for i in range(6)}),
    ("dichloromethane", "ClCCl", {1: 53.52}),
    ("methanol", "CO", {0: 50.41}),
    ("acetic acid", "CC(=O)O", {0: 20.81, 1: 175.99}),
    ("cyclohexane", "C1CCCCC1", {i: 26.94 for i in range(6)}),
    ("n-hexane", "CCCCCC", {0: 14.14, 1: 22.70, 2: 31.64, 3: 31.64, 4: 22.70, 5: 14.14}),
    ("tetrahydrofuran", "C1CCOC1", {0: 25.62, 1: 25.62, 2: 67.97, 4: 67.97}),
    ("tert-butyl methyl ether", "COC(C)(C)C", {0: 49.45, 2: 72.87, 3: 26.99}),
    ("1,4-dioxane", "C1COCCO1", {0: 67.14, 1: 67.14}),
    ("2-propanol", "CC(C)O", {0: 25.14, 1: 64.50}),
    ("1,2-dimethoxyethane", "COCCOC", {0: 59.08, 2: 71.84}),
    ("tert-butyl alcohol", "CC(C)(C)O", {0: 31.25, 1: 69.15}),
    ("N,N-dimethylacetamide", "CC(=O)N(C)C", {0: 21.53, 1: 171.07}),
]


def _by_index(smiles):
    return {a.index: a for a in predict_smiles(smiles)}


@pytest.mark.parametrize("name,smiles,ref", FULMER_CDCL3, ids=[x[0] for x in FULMER_CDCL3])
def test_fulmer_cdcl3_within_tolerance(name, smiles, ref):
    # reference: Fulmer et al., Organometallics 2010, 29, 2176, CDCl3 (from memory)
    pred = _by_index(smiles)
    for idx, value in ref.items():
        assert abs(pred[idx].shift - value) <= TOL, (name, idx, pred[idx].shift, value)


def test_dmf_methyls_average():
    # Fulmer et al. 2010 (from memory): N-CH3 36.50 and 31.39.  The two
    # methyls are topologically equivalent (they differ only by slow amide
    # rotation), so a constitution-based predictor gives both the average.
    p = _by_index("CN(C)C=O")
    assert p[0].shift == p[2].shift
    assert abs(p[0].shift - (36.50 + 31.39) / 2) <= TOL


def test_toluene_ring_order():
    # Fulmer et al. 2010 (from memory): ortho 129.07 > meta 128.26 > para 125.33
    p = _by_index("Cc1ccccc1")
    assert p[2].shift > p[3].shift > p[4].shift


def test_pyridine_order():
    # Fulmer et al. 2010 (from memory): C2 149.90 > C4 135.96 > C3 123.75
    p = _by_index("c1ccncc1")
    assert p[2].shift > p[0].shift > p[1].shift


@pytest.mark.parametrize("smiles,idx", [("CCC(C)=O", 2), ("O=C1CCCCC1", 1), ("CC(=O)c1ccccc1", 1)])
def test_ketone_carbonyl_above_195(smiles, idx):
    # common practice, no source: ketone C=O above 195 ppm
    assert _by_index(smiles)[idx].shift > 195


@pytest.mark.parametrize("smiles,idx", [("COC(=O)c1ccccc1", 2), ("CCCC(=O)O", 3), ("CCOC(=O)CC", 3),
                                        ("OC(=O)c1ccccc1", 1)])
def test_ester_acid_carbonyl_range(smiles, idx):
    # common practice, no source: ester/acid C=O between 160 and 185 ppm
    assert 160 <= _by_index(smiles)[idx].shift <= 185


@pytest.mark.parametrize("smiles", ["COc1ccccc1", "Clc1ccccc1", "Cc1ccc(C)cc1", "O=Cc1ccccc1"])
def test_aromatic_ch_range(smiles):
    # common practice, no source: aromatic CH between 110 and 140 ppm
    for a in predict_smiles(smiles):
        if a.hydrogens == 1 and Chem.MolFromSmiles(smiles).GetAtomWithIdx(a.index).GetIsAromatic():
            assert 110 <= a.shift <= 140, (smiles, a)


@pytest.mark.parametrize("smiles,idx", [("COc1ccccc1", 0), ("COC(=O)C", 0), ("COCCO", 0)])
def test_methoxy_range(smiles, idx):
    # common practice, no source: methoxy carbon between 50 and 62 ppm
    assert 50 <= _by_index(smiles)[idx].shift <= 62


@pytest.mark.parametrize("smiles", ["CCCCC", "CC(C)CC(C)C", "CCC(C)(C)CC"])
def test_alkane_methyl_below_35(smiles):
    # common practice, no source: alkane CH3 below 35 ppm
    for a in predict_smiles(smiles):
        if a.hydrogens == 3:
            assert a.shift < 35


def test_result_shape_and_sigma():
    res = predict_smiles("CC(=O)Oc1ccccc1C(=O)O")
    mol = Chem.MolFromSmiles("CC(=O)Oc1ccccc1C(=O)O")
    carbons = [a.GetIdx() for a in mol.GetAtoms() if a.GetSymbol() == "C"]
    assert [a.index for a in res] == carbons
    for a in res:
        assert isinstance(a, AtomShift)
        assert a.element == "C" and a.sigma > 0 and 0 <= a.sphere <= 5
    assert [a.hydrogens for a in res] == [mol.GetAtomWithIdx(i).GetTotalNumHs() for i in carbons]


def test_explicit_hydrogens_and_kekule_input_agree():
    # common practice, no source: the same constitution gives the same answer
    # whatever the hydrogen representation / Kekulé input form
    smi = "CC(=O)Nc1ccc(O)cc1"
    plain = predict_smiles(smi)
    withh = predict_mol(Chem.AddHs(Chem.MolFromSmiles(smi)))
    kek = Chem.MolFromSmiles("CC(=O)NC1=CC=C(O)C=C1")
    assert [(a.hydrogens, a.shift) for a in plain] == [(a.hydrogens, a.shift) for a in withh]
    assert [a.shift for a in plain] == [a.shift for a in predict_mol(kek)]


def test_deterministic():
    smi = ["CC(C)Cc1ccc(C(C)C(=O)O)cc1", "CN1C=NC2=C1C(=O)N(C)C(=O)N2C", "OCC(O)CO"]
    first = [predict_smiles(s) for s in smi]
    second = [predict_smiles(s) for s in reversed(smi)][::-1]
    assert first == second


@pytest.mark.parametrize("bad", ["C1CC", "not a smiles", "", "C(C)(C)(C)(C)C"])
def test_bad_smiles_raises_input_error(bad):
    with pytest.raises(InputError) as exc:
        predict_smiles(bad)
    assert "SMILES" in str(exc.value)


def test_predict_mol_rejects_non_mol():
    with pytest.raises(InputError):
        predict_mol("CCO")


def test_speed_generous():
    # target is >= 2000 molecules/s of ~15 heavy atoms; the test threshold is
    # generous (shared CI machines): >= 300/s after warm-up.
    smiles = ["CC(C)Cc1ccc(C(C)C(=O)O)cc1", "CCOC(=O)c1ccc(N)cc1C", "CN(C)CCOC(c1ccccc1)C",
              "O=C(O)CCc1ccc(Cl)cc1OC", "CCCCCCCC(=O)OCC(C)CO", "COc1cc(C=O)ccc1OCC=C"]
    mols = [Chem.MolFromSmiles(s) for s in smiles]
    for m in mols:
        predict_mol(m)
    n = 0
    t0 = time.perf_counter()
    while time.perf_counter() - t0 < 0.5:
        for m in mols:
            predict_mol(m)
            n += 1
    rate = n / (time.perf_counter() - t0)
    assert rate >= 300, rate


def test_cli_molecule_without_carbon_gets_a_note_not_silence():
    # Water and the ammonium ion have no carbon, hence no 13C lines
    # (common practice, no source); listed with a note, the others predicted.
    import json

    from click.testing import CliRunner

    from elucidate.cli import main

    text = CliRunner().invoke(main, ["predict", "O", "CCO", "[NH4+]"])
    assert text.exit_code == 0, text.output
    lines = text.stdout.splitlines()
    assert lines[0] == "O" and lines[1].strip() == "no carbon atoms: nothing to predict"
    assert lines[2] == "CCO" and len([ln for ln in lines if ln.strip().startswith("C0")]) == 1
    assert lines[-2:] == ["[NH4+]", "  no carbon atoms: nothing to predict"]
    out = CliRunner().invoke(main, ["predict", "[NH4+]", "CCO", "--format", "json"])
    assert out.exit_code == 0, out.output
    rows = json.loads(out.stdout)
    assert rows[0] == {"smiles": "[NH4+]", "atoms": [], "note": "no carbon atoms: nothing to predict"}
    assert "note" not in rows[1] and [a["index"] for a in rows[1]["atoms"]] == [0, 1]
