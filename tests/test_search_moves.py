"""Every move of the stochastic search keeps the formula and the valences.

A move that changed the formula, left an atom at a valence its element does
not take, or split the molecule would let the search list structures that do
not answer the question.  Checked over random structures: random skeletons of
random formulas (the project's own generator of starting points) and common
compounds, with hypothesis drawing the moves.  The valence rules are the
generator's (elucidate/generate/atomtypes.py: lowest valence, S 2/4/6 and P 3/5
without H above the lowest valence) -- common practice, no source.
"""

from __future__ import annotations

import random
from collections import Counter

from hypothesis import given, settings
from hypothesis import strategies as st
from rdkit import Chem
from rdkit.Chem import rdMolDescriptors

from elucidate.formula import VALENCES, parse_formula
from elucidate.generate.atomtypes import WIDE_VALENCES, type_distributions
from elucidate.search.moves import (
    MOVE_KINDS,
    Skeleton,
    move_hydrogen,
    random_move,
    random_skeleton,
    shift_bonds,
    skeleton_from_mol,
    swap_atoms,
)

# Common compounds (structures from memory; only their graphs matter here).
START_SMILES = [
    "CCOC(C)=O",                      # ethyl acetate
    "Cc1ccc(C(C)=O)cc1",              # 4-methylacetophenone
    "CCN(CC)C(=O)c1cccc(C)c1",        # DEET
    "O=C(O)c1ccccc1O",                # salicylic acid
    "CS(=O)(=O)c1ccc(Cl)cc1",         # a sulfone
    "c1ccc2[nH]ccc2c1",               # indole
    "CC(C)(C)OC(=O)N1CCCC1C#N",       # a Boc-protected nitrile
    "COP(=O)(OC)OC",                  # trimethyl phosphate
]

FORMULAS = ["C6H12O2", "C8H9NO", "C7H5ClO2", "C9H10O", "C5H11NS", "C10H12O3", "C6H6BrN"]


def _check(before: Skeleton, after: Skeleton) -> None:
    # formula: elements and total hydrogens
    assert Counter(before.elements) == Counter(after.elements)
    assert sum(before.hydrogens) == sum(after.hydrogens)
    n = after.size
    for i in range(n):
        assert after.bonds[i][i] == 0
        for j in range(n):
            assert after.bonds[i][j] == after.bonds[j][i]
            assert 0 <= after.bonds[i][j] <= 3
        el = after.elements[i]
        v = after.valence(i)
        assert v in WIDE_VALENCES.get(el, VALENCES[el][:1]), (el, v)
        assert after.hydrogens[i] >= 0
        if v != VALENCES[el][0]:
            assert after.hydrogens[i] == 0  # hypervalent atoms carry no H
    assert after.connected()


def _starts(seed: int) -> list[Skeleton]:
    rng = random.Random(seed)
    out = [skeleton_from_mol(Chem.MolFromSmiles(s)) for s in START_SMILES]
    for text in FORMULAS:
        dists = list(type_distributions(parse_formula(text), WIDE_VALENCES))
        sk = random_skeleton(dists[rng.randrange(len(dists))], rng)
        assert sk is not None, text
        out.append(sk)
    return out


@settings(max_examples=60, deadline=None)
@given(st.integers(min_value=0, max_value=10**6), st.integers(min_value=1, max_value=60))
def test_random_walks_keep_formula_and_valences(seed, steps):
    rng = random.Random(seed)
    for start in _starts(seed % 7):
        cur = start
        kinds = Counter()
        for _ in range(steps):
            kind, nxt = random_move(cur, rng, WIDE_VALENCES)
            assert kind in MOVE_KINDS
            if nxt is None:
                continue
            _check(start, nxt)
            kinds[kind] += 1
            cur = nxt
        # the walk ends at a molecule RDKit accepts or rejects, never at a broken graph
        mol = cur.to_mol()
        if mol is not None:
            formula = rdMolDescriptors.CalcMolFormula(mol)
            assert formula == rdMolDescriptors.CalcMolFormula(start.to_mol())


def test_random_skeletons_have_the_types_asked_for():
    rng = random.Random(3)
    for text in FORMULAS:
        for dist in type_distributions(parse_formula(text), WIDE_VALENCES):
            sk = random_skeleton(dist, rng)
            if sk is None:
                continue
            assert sorted(sk.types()) == sorted(dist)
            assert sk.connected()


def test_each_move_kind_reaches_a_known_isomer():
    valences = {"C": (4,), "O": (2,), "N": (3,)}
    # hydrogen move: propan-2-ol -> propan-1-ol (the OH moves along the chain)
    sk = skeleton_from_mol(Chem.MolFromSmiles("CC(O)C"))
    assert Chem.MolToSmiles(move_hydrogen(sk, 0, 1, 2, valences).to_mol()) == "CCCO"
    # atom swap: methyl ethyl ether -> the same ether read the other way round (O moves)
    sk = skeleton_from_mol(Chem.MolFromSmiles("COCC"))
    assert Chem.MolToSmiles(swap_atoms(sk, 1, 2, valences).to_mol()) == "CCOC"
    # bond shift: 1,2-dimethylcyclobutane ring bonds rewired into 1,3-dimethylcyclobutane
    mol = Chem.MolFromSmiles("CC1CCC1C")  # C0 C1 C2 C3 C4 C5; ring C1-C2-C3-C4
    sk = skeleton_from_mol(mol)
    out = shift_bonds(sk, 1, 4, 3, 2)  # C1-C4 and C3-C2 out, C1-C3 and C4-C2 in
    assert out is not None
    assert Chem.MolToSmiles(out.to_mol()) == Chem.MolToSmiles(Chem.MolFromSmiles("CC1CC(C)C1"))


def test_moves_that_break_rules_are_refused():
    valences = {"C": (4,), "O": (2,)}
    sk = skeleton_from_mol(Chem.MolFromSmiles("CCCC"))
    assert shift_bonds(sk, 1, 0, 2, 3) is None  # would cut the chain in two
    assert shift_bonds(sk, 0, 1, 1, 2) is None  # atoms must differ
    sk = skeleton_from_mol(Chem.MolFromSmiles("CC(C)=O"))
    # the carbonyl O has no H to give
    assert move_hydrogen(sk, 3, 0, 1, valences) is None
