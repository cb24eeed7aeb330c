"""Carbon classes used to break the shift predictor's errors down.

Sources: which atoms are bonded to which, bond orders, aromaticity flags and
hydrogen counts are graph facts, computed by RDKit from the SMILES; the class
boundaries themselves (carbonyl, triple bond, aromatic, olefinic, sp3 by
neighbour, sp3 by substitution) are common practice, no source.  Atom
indices are RDKit's, in SMILES order.
"""

from __future__ import annotations

import math

import pytest
from rdkit import Chem

from elucidate.errors import InputError
from elucidate.predict.carbon_classes import CLASS_ORDER, carbon_class, class_breakdown

# (SMILES, {atom index: expected label}) -- graph facts, computed by RDKit;
# class boundaries: common practice, no source.
CASES = [
    # ethyl acetate: ester C=O, O-CH2, two plain methyls
    ("CC(=O)OCC", {0: "sp3 CH3", 1: "carbonyl/carboxyl C", 4: "sp3 C next to O", 5: "sp3 CH3"}),
    # acid, amide, aldehyde, ketone, carbon dioxide: all double-bonded to O
    ("CC(=O)O", {1: "carbonyl/carboxyl C"}),
    ("CC(N)=O", {0: "sp3 CH3", 1: "carbonyl/carboxyl C"}),
    ("CC=O", {1: "carbonyl/carboxyl C"}),
    ("CC(C)=O", {1: "carbonyl/carboxyl C"}),
    ("O=C=O", {1: "carbonyl/carboxyl C"}),
    # thioamide C=S counts as carbonyl
    ("CC(=S)N", {1: "carbonyl/carboxyl C"}),
    # 2-pyridone: the ring C=O carbon is aromatic in RDKit, carbonyl rule wins
    ("O=c1cccc[nH]1", {1: "carbonyl/carboxyl C", 2: "aromatic CH"}),
    # acrolein: carbonyl wins over the C=C the same carbon does not have; vinyl carbons
    ("C=CC=O", {0: "alkene CH/CH2", 1: "alkene CH/CH2", 2: "carbonyl/carboxyl C"}),
    # acetonitrile, propyne
    ("CC#N", {0: "sp3 CH3", 1: "nitrile/alkyne C"}),
    ("C#CC", {0: "nitrile/alkyne C", 1: "nitrile/alkyne C", 2: "sp3 CH3"}),
    # toluene
    ("Cc1ccccc1", {0: "sp3 CH3", 1: "aromatic C (quaternary)", 2: "aromatic CH", 4: "aromatic CH"}),
    # pyridine C2 and furan C2: heteroaromatic CH stay aromatic CH
    ("n1ccccc1", {1: "aromatic CH", 3: "aromatic CH"}),
    ("c1ccoc1", {2: "aromatic CH"}),
    # propene, isobutene
    ("C=CC", {0: "alkene CH/CH2", 1: "alkene CH/CH2", 2: "sp3 CH3"}),
    ("C=C(C)C", {0: "alkene CH/CH2", 1: "alkene C (quaternary)", 2: "sp3 CH3"}),
    # sp3 carbons next to one heteroatom
    ("CN", {0: "sp3 C next to N"}),
    ("C[N+](=O)[O-]", {0: "sp3 C next to N"}),
    ("C1CCNCC1", {0: "sp3 CH2", 1: "sp3 CH2", 2: "sp3 C next to N"}),
    ("CS", {0: "sp3 C next to S"}),
    ("CF", {0: "sp3 C next to halogen"}),
    ("CCl", {0: "sp3 C next to halogen"}),
    ("CBr", {0: "sp3 C next to halogen"}),
    ("CI", {0: "sp3 C next to halogen"}),
    ("CO", {0: "sp3 C next to O"}),
    # priority between neighbours: N > S > halogen > O
    ("NCS", {1: "sp3 C next to N"}),
    ("NCO", {1: "sp3 C next to N"}),
    ("SCCl", {1: "sp3 C next to S"}),
    ("SCO", {1: "sp3 C next to S"}),
    ("OCCl", {1: "sp3 C next to halogen"}),
    # plain sp3 by hydrogen count: propane, isobutane, neopentane
    ("CCC", {0: "sp3 CH3", 1: "sp3 CH2"}),
    ("CC(C)C", {1: "sp3 CH"}),
    ("CC(C)(C)C", {0: "sp3 CH3", 1: "sp3 C (quaternary)"}),
    # a silicon neighbour has no class of its own
    ("C[Si](C)(C)C", {0: "sp3 CH3"}),
    # other: methane, imine and oxime carbons (C=N), a carbocation
    ("C", {0: "other"}),
    ("CC=NC", {0: "sp3 CH3", 1: "other", 3: "sp3 C next to N"}),
    ("CC=NO", {1: "other"}),
    ("C[CH2+]", {1: "other"}),
]


@pytest.mark.parametrize("smiles,expected", CASES, ids=[c[0] for c in CASES])
def test_carbon_class_hand_picked(smiles, expected):
    # graph facts, computed by RDKit; class boundaries common practice, no source
    mol = Chem.MolFromSmiles(smiles)
    got = {i: carbon_class(mol, i) for i in expected}
    assert got == expected


def test_every_class_is_covered_by_the_hand_picked_molecules():
    # guards the table above: each rule of CLASS_ORDER is exercised at least once
    seen = {label for _, expected in CASES for label in expected.values()}
    assert seen == set(CLASS_ORDER)
    assert len(CLASS_ORDER) == len(set(CLASS_ORDER)) == 15


def test_every_carbon_gets_a_label_from_class_order():
    # graph facts, computed by RDKit: one label per carbon, whatever the molecule
    mol = Chem.MolFromSmiles("CC(=O)Nc1ccc(OCC(O)CN2CCOCC2)cc1C#N")
    for atom in mol.GetAtoms():
        if atom.GetAtomicNum() == 6:
            assert carbon_class(mol, atom.GetIdx()) in CLASS_ORDER


def test_explicit_hydrogen_atoms_count_as_hydrogens():
    # graph facts, computed by RDKit: ethane with H atoms in the graph is still CH3-CH3
    mol = Chem.AddHs(Chem.MolFromSmiles("CC"))
    assert carbon_class(mol, 0) == carbon_class(mol, 1) == "sp3 CH3"
    # isobutene with explicit hydrogens: CH2= and the quaternary alkene carbon
    mol = Chem.AddHs(Chem.MolFromSmiles("C=C(C)C"))
    assert carbon_class(mol, 0) == "alkene CH/CH2"
    assert carbon_class(mol, 1) == "alkene C (quaternary)"


@pytest.mark.parametrize("mol_smiles,index,fragment", [
    ("CO", 1, "not carbon"),          # oxygen
    ("CC", 2, "out of range"),
    ("CC", -1, "out of range"),
    ("CC", 0.0, "must be an integer"),
    ("CC", True, "must be an integer"),
])
def test_carbon_class_rejects_bad_atoms(mol_smiles, index, fragment):
    with pytest.raises(InputError, match=fragment):
        carbon_class(Chem.MolFromSmiles(mol_smiles), index)


def test_carbon_class_rejects_hydrogen_atom_and_non_molecule():
    mol = Chem.AddHs(Chem.MolFromSmiles("C"))
    with pytest.raises(InputError, match="not carbon"):
        carbon_class(mol, 1)
    with pytest.raises(InputError, match="RDKit Mol"):
        carbon_class("CC", 0)


def test_class_breakdown_numbers():
    # mean and numpy's linear-interpolation 95th percentile, computed by hand:
    # errors 0..4 -> mean 2.0, p95 at rank 0.95*4 = 3.8 -> 3.8
    rows = [("sp3 CH3", float(e)) for e in range(5)] + [("carbonyl/carboxyl C", 2.5)]
    out = class_breakdown(rows)
    assert [r["class"] for r in out] == ["carbonyl/carboxyl C", "sp3 CH3"]
    carbonyl, methyl = out
    assert carbonyl == {"class": "carbonyl/carboxyl C", "carbons": 1, "mae": 2.5, "p95": 2.5}
    assert methyl["carbons"] == 5
    assert math.isclose(methyl["mae"], 2.0)
    assert math.isclose(methyl["p95"], 3.8)


def test_class_breakdown_follows_class_order_and_omits_empty_classes():
    rows = [(label, 1.0) for label in reversed(CLASS_ORDER[::2])]
    out = class_breakdown(iter(rows))  # any iterable
    assert [r["class"] for r in out] == list(CLASS_ORDER[::2])
    assert sum(r["carbons"] for r in out) == len(rows)
    assert class_breakdown([]) == []


@pytest.mark.parametrize("rows,fragment", [
    ([("sp3 CH5", 1.0)], "unknown class"),
    ([("sp3 CH3", -0.1)], "finite absolute error"),
    ([("sp3 CH3", float("nan"))], "finite absolute error"),
    ([("sp3 CH3", float("inf"))], "finite absolute error"),
    ([("sp3 CH3", "big")], "not a number"),
    ([("sp3 CH3",)], "pair"),
    ([42], "pair"),
])
def test_class_breakdown_rejects_bad_rows(rows, fragment):
    with pytest.raises(InputError, match=fragment):
        class_breakdown(rows)
