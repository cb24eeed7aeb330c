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


# --- large molecules: no recursion limit, no materialised stage-1 lists ------


def test_sixty_atom_path_is_the_only_tree_with_two_leaves():
    # A tree whose degrees are 1, 1 and 2 everywhere else is a path (graph
    # theory, common practice, no source): exactly one graph.  Sixty atoms
    # is past the depth at which a recursive row search exceeds Python's
    # default recursion limit (about n^2 / 2 nested frames).
    out = _graphs([1, 1] + [2] * 58, [0, 0] + [1] * 58)
    assert len(out) == 1
    m = out[0]
    assert [sum(r) for r in m] == [1, 1] + [2] * 58
    assert sum(map(sum, m)) // 2 == 59  # a tree on 60 atoms has 59 bonds


def test_sixty_atom_ring_is_the_only_connected_two_regular_graph():
    # Every atom of degree 2, one type: the only connected multigraph is
    # the 60-membered ring (common practice, no source).
    out = _graphs([2] * 60, [0] * 60)
    assert len(out) == 1
    assert all(sorted(r)[-2:] == [1, 1] for r in out[0])


def test_stage1_multisets_follow_combinations_with_replacement_order():
    # The lazy stage-1 enumerator must list exactly the multisets
    # itertools.combinations_with_replacement lists, in the same order, kept
    # when their hydrogen sum lies in the window (definition, no source).
    from itertools import combinations_with_replacement

    from elucidate.generate.atomtypes import _multisets

    opts = [AtomType("C", 4, h) for h in range(4)] + [AtomType("C", 4, 2)]
    for size in range(0, 6):
        for lo, hi in [(0, 99), (3, 5), (7, 7), (20, 30)]:
            want = [
                (sum(t.hydrogens for t in c), c)
                for c in combinations_with_replacement(opts, size)
                if lo <= sum(t.hydrogens for t in c) <= hi
            ]
            assert list(_multisets(opts, size, lo, hi)) == want, (size, lo, hi)


def test_stage1_first_distribution_of_a_large_formula_is_cheap():
    # C60H122 has C(63, 3) = 39,711 carbon multisets; listing them all
    # before the first distribution costs tens of MB (and gigabytes for a
    # few hundred carbons).  Only the distributions that can meet the
    # hydrogen count should be built.
    import tracemalloc

    f = parse_formula("C60H122")
    tracemalloc.start()
    try:
        first = next(iter(type_distributions(f)))
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert sum(t.hydrogens for t in first) == 122
    assert peak < 4_000_000, f"peak {peak / 1e6:.1f} MB for the first C60H122 distribution"


def test_stage1_alkane_distribution_count():
    # CnH2n+2 carbons: a CH3, b CH2, c CH, d C with a + b + c + d = n and
    # 3a + 2b + c = 2n + 2; the tree handshake then gives a = c + 2d + 2
    # (common practice, no source).  So the distributions are the (c, d)
    # with c + 2d + 2 + c + d <= n, i.e. 2c + 3d <= n - 2.
    n = 30
    want = sum(1 for c in range(n) for d in range(n) if 2 * c + 3 * d <= n - 2)
    assert sum(1 for _ in type_distributions(parse_formula(f"C{n}H{2 * n + 2}"))) == want
