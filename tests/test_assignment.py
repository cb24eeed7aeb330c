"""Assignment of observed lines to carbon classes."""

from types import SimpleNamespace as P

import numpy as np
import itertools

from elucidate.rank.assignment import CarbonClass, assign_lines
from elucidate.rank.hungarian import solve_assignment


def test_hungarian_matches_brute_force():
    rng = np.random.default_rng(7)
    for n in range(1, 7):
        for _ in range(20):
            c = rng.integers(0, 30, (n, n)).astype(float)
            cols = solve_assignment(c)
            best = min(sum(c[i, p[i]] for i in range(n)) for p in itertools.permutations(range(n)))
            assert sorted(cols.tolist()) == list(range(n))
            assert c[np.arange(n), cols].sum() == best


def test_multiplicities_decide_the_order():
    # A CH3 predicted at 30 and a CH2 predicted at 20 against lines CH3 21 / CH2 29:
    # shift closeness alone would swap them; multiplicities forbid that.
    peaks = [P(shift=21.0, hydrogens=3, count=None), P(shift=29.0, hydrogens=2, count=None)]
    classes = [CarbonClass(3, (0,), 30.0, 2.0), CarbonClass(2, (1,), 20.0, 2.0)]
    a = assign_lines(peaks, classes)
    assert [(e.peak_index, e.atoms) for e in a.entries] == [(0, (0,)), (1, (1,))]


def test_symmetric_molecule_with_accidental_overlap():
    # para-disubstituted ring: two CH classes (2 carbons each) and two C classes,
    # but the two CH classes overlap on one line (accidental overlap).
    peaks = [P(shift=128.5, hydrogens=1, count=None), P(shift=140.0, hydrogens=0, count=None),
             P(shift=135.0, hydrogens=0, count=None)]
    classes = [CarbonClass(1, (1, 5), 128.2, 1.5), CarbonClass(1, (2, 4), 128.9, 1.5),
               CarbonClass(0, (0,), 139.5, 2.0), CarbonClass(0, (3,), 135.4, 2.0)]
    a = assign_lines(peaks, classes)
    line0 = [e for e in a.entries if e.peak_index == 0]
    assert sorted(e.atoms for e in line0) == [(1, 5), (2, 4)]
    assert a.overlaps == 1 and a.splits == 0 and not a.unfilled
    kinds = sorted(e.kind for e in line0)
    assert kinds == ["overlap", "primary"]


def test_split_class_covers_two_lines():
    # DMF-like: one class of two equivalent CH3 shows two lines (slow amide rotation).
    peaks = [P(shift=36.5, hydrogens=3, count=None), P(shift=31.4, hydrogens=3, count=None),
             P(shift=162.6, hydrogens=1, count=None)]
    classes = [CarbonClass(3, (0, 2), 34.0, 2.0), CarbonClass(1, (3,), 163.0, 2.0)]
    a = assign_lines(peaks, classes)
    assert a.splits == 1 and not a.unfilled
    assert {e.peak_index for e in a.entries} == {0, 1, 2}


def test_counts_given_use_carbon_level_matching():
    peaks = [P(shift=128.0, hydrogens=1, count=2), P(shift=20.0, hydrogens=3, count=1)]
    classes = [CarbonClass(1, (1, 2), 127.0, 2.0), CarbonClass(3, (0,), 21.0, 2.0)]
    a = assign_lines(peaks, classes)
    assert {(e.peak_index, e.atoms) for e in a.entries} == {(0, (1, 2)), (1, (0,))}


def test_incompatible_multiplicity_gives_infinite_cost():
    peaks = [P(shift=20.0, hydrogens=3, count=None)]
    classes = [CarbonClass(2, (0,), 20.0, 2.0)]
    assert assign_lines(peaks, classes).cost == float("inf")
