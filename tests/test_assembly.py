"""Unit tests of the orderly bond-matrix search (stage 2) and stage 1."""

from elucidate.formula import parse_formula
from elucidate.generate.assembly import bond_matrices
from elucidate.generate.atomtypes import AtomType, type_distributions


def _graphs(degrees, types):
    return [tuple(tuple(r) for r in m) for m in bond_matrices(degrees, types)]


def test_degree_sums_and_connectivity():
    # Butane skeletons: CH3 x2 (degree 1), CH2 x2 (degree 2): only n-butane.
    out = _graphs([1, 1, 2, 2], [0, 0, 1, 1])
    assert len(out) == 1
    m = out[0]
    assert [sum(r) for r in m] == [1, 1, 2, 2]


def test_no_disconnected_graphs():
    # Two C=C units (degrees 2,2,2,2 with bond order 2 allowed) must not give
    # two separate ethylenes; the only connected graph is the 4-cycle (and
    # chains with double bonds: C=C-C=C has degrees 2,3,3,2, not this list).
    for m in bond_matrices([2, 2, 2, 2], [0, 0, 0, 0]):
        seen = {0}
        stack = [0]
        while stack:
            a = stack.pop()
            for b, x in enumerate(m[a]):
                if x and b not in seen:
                    seen.add(b)
                    stack.append(b)
        assert seen == {0, 1, 2, 3}


def test_single_atom():
    assert _graphs([0], [0]) == [((0,),)]


def test_type_distribution_hydrogen_total():
    f = parse_formula("C3H6O")
    for dist in type_distributions(f):
        assert sum(t.hydrogens for t in dist) == 6
        assert sorted(t.element for t in dist) == ["C", "C", "C", "O"]


def test_hypervalent_atoms_carry_no_hydrogen():
    f = parse_formula("C2H6OS")
    dists = list(type_distributions(f, {"S": (2, 4, 6)}))
    for dist in dists:
        for t in dist:
            if t.element == "S" and t.valence > 2:
                assert t.hydrogens == 0
    assert any(t.valence == 4 for d in dists for t in d if t.element == "S")


def test_atomtype_degree():
    assert AtomType("C", 4, 1).degree == 3
